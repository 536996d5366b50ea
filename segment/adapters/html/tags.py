"""Element classes the HTML adapter relies on: what is a block, what is boilerplate, and so on.

Tag sets follow the HTML standard's rendering section (elements displayed as blocks) plus the
legacy tags libxml2 still produces; class and role lists are common practice of documentation
generators (Sphinx, MkDocs, DocBook XSL, Docusaurus, Hugo themes) and are listed here in one place.
"""

from __future__ import annotations

import re

from lxml import etree

BREAK = "\ufdd0"
"""Marks a `<br>` in text outside `pre`: a Unicode noncharacter, never meant to appear in pages
(lxml refuses NUL in text). A stray U+FDD0 in a page would read as a line break."""

HEADING_TAGS: tuple[str, ...] = ("h1", "h2", "h3", "h4", "h5", "h6")
HEADING_LEVEL: dict[str, int] = {t: i + 1 for i, t in enumerate(HEADING_TAGS)}

BLOCK_TAGS: frozenset[str] = frozenset(
    {
        "address",
        "article",
        "aside",
        "blockquote",
        "body",
        "caption",
        "center",
        "col",
        "colgroup",
        "dd",
        "details",
        "dialog",
        "dir",
        "div",
        "dl",
        "dt",
        "fieldset",
        "figcaption",
        "figure",
        "footer",
        "form",
        "header",
        "hgroup",
        "hr",
        "html",
        "legend",
        "li",
        "listing",
        "main",
        "menu",
        "nav",
        "ol",
        "p",
        "plaintext",
        "pre",
        "search",
        "section",
        "summary",
        "table",
        "tbody",
        "td",
        "tfoot",
        "th",
        "thead",
        "tr",
        "ul",
        "xmp",
        *HEADING_TAGS,
    }
)
"""Elements that start a new block; everything else is inline (the HTML default for unknown tags)."""

PARAGRAPH_TAGS: frozenset[str] = frozenset(
    {"p", "address", "figcaption", "legend", "caption", "summary", "dt"}
)
"""Blocks whose text is one paragraph (unless they hold other blocks)."""

PRE_TAGS: frozenset[str] = frozenset({"pre", "listing", "xmp", "plaintext"})
LIST_TAGS: frozenset[str] = frozenset({"ul", "ol", "menu", "dir"})

DROP_TAGS: frozenset[str] = frozenset(
    {
        "script",
        "style",
        "noscript",
        "template",
        "nav",
        "footer",
        "aside",
        "form",
        "button",
        "input",
        "select",
        "textarea",
        "option",
        "optgroup",
        "datalist",
        "iframe",
        "object",
        "embed",
        "svg",
        "math-field",
        "canvas",
        "audio",
        "video",
        "map",
        "dialog",
        "head",
        "link",
        "meta",
        "base",
        "title",
        "frameset",
        "frame",
    }
)
"""Boilerplate and non-text elements, dropped with their content (`header` has its own rule)."""

DROP_ROLES: frozenset[str] = frozenset(
    {
        "navigation",
        "banner",
        "contentinfo",
        "complementary",
        "search",
        "menu",
        "menubar",
        "toolbar",
        "dialog",
        "alertdialog",
        "tablist",
        "tree",
    }
)
"""ARIA landmark and widget roles that mark page chrome, not content."""

DROP_CLASSES: frozenset[str] = frozenset(
    {
        "navheader",
        "navfooter",
        "navbar",
        "nav",
        "navigation",
        "breadcrumb",
        "breadcrumbs",
        "sidebar",
        "sphinxsidebar",
        "related",
        "site-header",
        "site-footer",
        "skip-link",
        "skiplink",
        "skip-to-content",
        "cookie-banner",
        "cookie-notice",
        "cookie-consent",
        "edit-this-page",
        "feedback",
        "pagination",
        "prev-next",
        "md-sidebar",
        "md-header",
        "md-footer",
        "theme-doc-sidebar-container",
        "theme-doc-footer",
        "table-of-contents-sidebar",
    }
)
"""Class (or id) tokens of boilerplate containers; matched as whole tokens, case-insensitively."""

ADMONITION_CLASSES: frozenset[str] = frozenset(
    {
        "admonition",
        "note",
        "notice",
        "tip",
        "hint",
        "warning",
        "caution",
        "important",
        "danger",
        "attention",
        "callout",
        "markdown-alert",
        "theme-admonition",
        "alert",
    }
)
"""Class tokens of admonition boxes (a titled note kept as one block)."""

PERMALINK_CLASSES: frozenset[str] = frozenset(
    {
        "headerlink",
        "anchor",
        "anchorjs-link",
        "hash-link",
        "permalink",
        "header-anchor",
        "heading-anchor",
        "anchor-link",
        "anchor-icon",
        "direct-link",
        "deep-link",
        "autolink-heading",
    }
)
PERMALINK_TEXTS: frozenset[str] = frozenset({"", "¶", "#", "§", "🔗", "⚓", "⚓︎", "link", "permalink", "∞"})
"""Texts of a permalink marker inside a heading (common practice: Sphinx ¶, MkDocs ¶, GitHub icon)."""

_HIDDEN_STYLE = re.compile(r"display\s*:\s*none|visibility\s*:\s*hidden", re.IGNORECASE)


def tag_of(el: etree._Element) -> str:
    """Tag name, or "" for comments and processing instructions. libxml2's HTML parser (and our
    bs4 conversion) already lower-case element names."""
    tag = el.tag
    return tag if tag.__class__ is str else ""


def class_tokens(el: etree._Element) -> set[str]:
    """Class tokens, lower-cased."""
    value = el.get("class")
    return set(value.lower().split()) if value else set()


def is_hidden(el: etree._Element) -> bool:
    """The `hidden` attribute, `aria-hidden="true"` or an inline style that hides the element."""
    if el.get("hidden") is not None or el.get("aria-hidden", "").lower() == "true":
        return True
    style = el.get("style")
    return bool(style and _HIDDEN_STYLE.search(style))


def is_admonition(el: etree._Element) -> bool:
    """A note/warning/tip box: an admonition class token or `role="note"`."""
    if el.get("role", "").lower() == "note":
        return True
    classes = class_tokens(el)
    return bool(classes and classes & ADMONITION_CLASSES)


def heading_level(el: etree._Element, tag: str) -> int:
    """1-6 for `h1`-`h6` and `role="heading"` (its `aria-level`, default 2 per WAI-ARIA); else 0."""
    level = HEADING_LEVEL.get(tag)
    if level:
        return level
    if el.get("role", "").lower() == "heading":
        try:
            return min(max(int(el.get("aria-level", "2")), 1), 6)
        except ValueError:
            return 2
    return 0
