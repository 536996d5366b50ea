"""Boilerplate out, main content found, inline markers set: one pass over the parsed tree.

The rule, in order:
1. Dropped with their content: `script`, `style`, `noscript`, `template`, `nav`, `footer`,
   `aside` (unless it is an admonition box), forms and their controls, embedded media, hidden
   elements (`hidden`, `aria-hidden="true"`, inline `display:none`), elements whose ARIA role
   marks page chrome (navigation, banner, contentinfo, complementary, search, menus) and
   elements whose class or id is a known boilerplate token (`tags.DROP_CLASSES`, e.g. DocBook's
   `navheader`/`navfooter`, Sphinx's `sphinxsidebar`). A `header` is dropped unless it sits
   inside `main`/`article` (there it is the article's own header and often holds the `h1`).
2. The main content is the first `main`, else the first `role="main"`, if it holds at least 30%
   of the page's non-link text (an empty placeholder `main` filled by scripts does not count),
   else a lone `article` (several articles: their common parent) holding at least half of it,
   else the result of descending from `body` while one wrapper child (`div`, `section`,
   `article`, `center`; not an admonition box or a tab set) holds at least 90% of the remaining
   non-link text and every heading (so a page without landmarks keeps all its headed content,
   and sidebars of links fall away).
3. Permalink marks outside headings (a `¶` after a table caption or an API entry's term) are
   dropped; inside headings the heading pass strips them and reads the anchor from them.
4. Inline markers for the text pass: `<br>` becomes a line-break marker (a newline inside
   `pre`), `<img alt>` its alt text.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lxml import etree

from segment.adapters.html.boxes import is_tab_set
from segment.adapters.html.element_text import is_permalink
from segment.adapters.html.tags import (
    BREAK,
    DROP_CLASSES,
    DROP_ROLES,
    DROP_TAGS,
    HEADING_TAGS,
    PRE_TAGS,
    is_admonition,
    is_hidden,
)

LANDMARK_SHARE = 0.3
"""A `main` landmark is used only when it holds this share of the page's text (a script-filled
`<main></main>` placeholder must not empty the page)."""

ARTICLE_SHARE = 0.5
"""An `article` is a weaker mark (cards, teasers, comments): it must hold half the text."""

MAIN_SHARE = 0.9
"""A child must hold this share of its parent's non-link text for the heuristic to descend."""


@dataclass(slots=True)
class Cleaned:
    """The result of the cleaning pass."""

    main: etree._Element | None
    title: str | None
    dropped: dict[str, int] = field(default_factory=dict)
    """How many elements each rule dropped (for reports and tests)."""


def clean(root: etree._Element) -> Cleaned:
    """Drop boilerplate in place, set inline markers, and find the main content element."""
    title_el = root.find("head/title")
    if title_el is None:
        title_el = root.find(".//title")
    title = " ".join("".join(title_el.itertext()).split()) if title_el is not None else None
    body = root.find("body")
    if body is None:
        body = root
    drop: list[etree._Element] = []
    counts: dict[str, int] = {}
    mains: list[etree._Element] = []
    role_mains: list[etree._Element] = []
    articles: list[etree._Element] = []
    pres: list[etree._Element] = []
    walker = etree.iterwalk(body, events=("start",))
    for _, el in walker:
        tag = el.tag
        if tag.__class__ is not str:
            continue
        keys = el.keys()
        reason = _drop_reason(el, tag, keys) if (keys or tag in _TAG_RULES) else None
        if reason:
            drop.append(el)
            counts[reason] = counts.get(reason, 0) + 1
            walker.skip_subtree()
        elif tag == "br":
            el.tail = BREAK + (el.tail or "")
        elif tag == "a" and keys and _stray_permalink(el):
            drop.append(el)
            counts["permalink"] = counts.get("permalink", 0) + 1
            walker.skip_subtree()
        elif tag == "img":
            alt = el.get("alt")
            if alt:
                el.tail = alt + (el.tail or "")
        elif tag in PRE_TAGS:
            pres.append(el)
            walker.skip_subtree()
        elif tag == "main":
            mains.append(el)
        elif tag == "article":
            articles.append(el)
        elif keys and el.get("role") == "main":
            role_mains.append(el)
    for pre in pres:
        _clean_pre(pre, drop, counts)
    for el in reversed(drop):
        remove_keep_tail(el)
    main = _choose_main(body, mains, role_mains, articles)
    return Cleaned(main=main, title=title or None, dropped=counts)


_TAG_RULES = DROP_TAGS | {"header"}


def _clean_pre(pre: etree._Element, drop: list[etree._Element], counts: dict[str, int]) -> None:
    """Inside `pre`: `<br>` is a newline, hidden or script content still goes."""
    for el in pre.iter():
        if el is pre or el.tag.__class__ is not str:
            continue
        if el.tag == "br":
            el.tail = "\n" + (el.tail or "")
        elif el.tag in ("script", "style", "template") or is_hidden(el):
            drop.append(el)
            counts["pre-hidden"] = counts.get("pre-hidden", 0) + 1


def _stray_permalink(a: etree._Element) -> bool:
    """A permalink mark outside a heading (captions, API terms): dropped here. Marks inside
    headings are left for the heading pass, which reads the anchor from them."""
    href = a.get("href")
    if href is None or not href.startswith("#") or not is_permalink(a):
        return False
    return not any(anc.tag in HEADING_TAGS for anc in a.iterancestors())


def _in_main(el: etree._Element) -> bool:
    for anc in el.iterancestors():
        if anc.tag in ("main", "article") or anc.get("role") == "main":
            return True
    return False


def _drop_reason(el: etree._Element, tag: str, keys: list[str]) -> str | None:
    if tag in DROP_TAGS:
        if tag == "aside" and is_admonition(el):
            return None
        return tag
    if tag == "header" and not _in_main(el):
        return "header"
    if not keys:
        return None
    if ("hidden" in keys or "aria-hidden" in keys or "style" in keys) and is_hidden(el):
        return "hidden"
    if "role" in keys:
        role = el.get("role", "").lower()
        if role in DROP_ROLES and not (role == "banner" and _in_main(el)):
            return f"role={role}"
    for attr in ("class", "id"):
        if attr in keys:
            for token in el.get(attr, "").lower().split():
                if token in DROP_CLASSES:
                    return f"{attr}={token}"
    return None


def remove_keep_tail(el: etree._Element) -> None:
    """Remove an element and its content, keeping the text that follows it."""
    parent = el.getparent()
    if parent is None:
        return
    tail = el.tail
    if tail:
        prev = el.getprevious()
        if prev is not None:
            prev.tail = (prev.tail or "") + tail
        else:
            parent.text = (parent.text or "") + tail
    parent.remove(el)


def _choose_main(
    body: etree._Element,
    mains: list[etree._Element],
    role_mains: list[etree._Element],
    articles: list[etree._Element],
) -> etree._Element:
    def holds_content(el: etree._Element) -> bool:
        return _holds_share(el, body, LANDMARK_SHARE)

    def holds_most(el: etree._Element) -> bool:
        return _holds_share(el, body, ARTICLE_SHARE)

    for candidates in (mains, role_mains):
        for el in candidates:
            if (el is body or _attached(el, body)) and holds_content(el):
                return el
    live = [a for a in articles if _attached(a, body)]
    if len(live) == 1 and holds_most(live[0]):
        return live[0]
    if len(live) > 1:
        parent = live[0].getparent()
        if parent is not None and all(a.getparent() is parent for a in live) and holds_most(parent):
            return parent
    return _densest(body)


def _holds_share(el: etree._Element, body: etree._Element, share: float) -> bool:
    """True when `el` holds at least `share` of the text under `body`.

    The text outside `el` (siblings along its ancestor path, usually small once boilerplate is
    gone) is weighed first; `el`'s own text is then counted only until it is enough, so a page
    that is mostly one big `main` costs little.
    """
    outside = 0
    node = el
    while node is not body:
        parent = node.getparent()
        if parent is None:
            break
        outside += len((parent.text or "").strip())
        for sib in parent:
            if sib is not node and isinstance(sib.tag, str):
                outside += _text_weight(sib)
            outside += len((sib.tail or "").strip())
        node = parent
    need = share / (1 - share) * outside
    have = 0
    for text in el.itertext():
        have += len(text.strip())
        if have >= need and have > 0:
            return True
    return have >= need and have > 0


def _attached(el: etree._Element, body: etree._Element) -> bool:
    for anc in el.iterancestors():
        if anc is body:
            return True
    return False


def _densest(body: etree._Element) -> etree._Element:
    """Descend from body while one child holds >= MAIN_SHARE of the non-link text and all headings.

    Each step scans the subtree of the current node once (in lxml's C iterators), and the descent
    is a few levels deep, so this stays linear in practice without a per-element table.
    """
    node = body
    total = _text_weight(node)
    heads = _heading_count(node)
    while total > 0:
        best, best_weight = None, -1
        for child in node:
            if child.tag in _WRAPPER_TAGS and not is_admonition(child) and not is_tab_set(child):
                weight = _text_weight(child)
                if weight > best_weight:
                    best, best_weight = child, weight
        if best is None or best_weight < MAIN_SHARE * total or _heading_count(best) < heads:
            return node
        node, total = best, best_weight
    return node


_WRAPPER_TAGS = frozenset({"div", "section", "article", "main", "center"})
"""Elements the heuristic may descend into: generic block wrappers, never a table, list or code
block, nor an inline element. An admonition box or a tab set is a block of the content, never its
wrapper."""

_ALL_TEXT = etree.XPath(".//text()", smart_strings=False)
_LINK_TEXT = etree.XPath(".//a//text()", smart_strings=False)
_NOT_COUNTED = " \t\n\r\f" + BREAK


def _text_weight(el: etree._Element) -> int:
    """Characters of text outside links (whitespace at the ends of text nodes not counted)."""
    everything = sum(len(t.strip(_NOT_COUNTED)) for t in _ALL_TEXT(el))
    links = sum(len(t.strip(_NOT_COUNTED)) for t in _LINK_TEXT(el))
    return everything - links


def _heading_count(el: etree._Element) -> int:
    return sum(1 for _ in el.iter(*HEADING_TAGS))
