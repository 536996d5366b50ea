"""Documentation-site boxes as generators render them: admonitions, collapsible notes, tab sets.

Admonitions: `<div class="admonition warning"><p class="admonition-title">Mind the lid</p>...`
(Python-Markdown's admonition extension, mdit-py-plugins' `admon` plugin, docutils' HTML writer)
and collapsible ones, `<details class="note"><summary>Title</summary>...` (pymdown-extensions'
details). Their label is the kind capitalised, then ": " and the title when there is one
("Warning: Mind the lid"), as the Markdown adapter labels `!!! warning "Mind the lid"`; a title
that only repeats the kind ("Note", which the generators write for an untitled box) gives the kind
alone. Boxes without an admonition class (DocBook's `div.note > h3.title`, GitHub's alerts) take
their kind from a known kind class and their title from a first heading or `*title*` element.

Tab sets: `div.tabbed-set` of pymdown-extensions' tabbed extension, in its two styles (labels
gathered in `div.tabbed-labels` before `div.tabbed-content > div.tabbed-block`s, or each `label`
straight before its `div.tabbed-content`), and sphinx-design's `div.sd-tab-set` (the second
shape). Each tab is read as its label, a line of text ending in ":" (so that the segmenter keeps it
with the start of its body), then its body.
"""

from __future__ import annotations

from itertools import zip_longest

from lxml import etree

from segment.adapters.html.element_text import flat_text
from segment.adapters.html.tags import HEADING_TAGS, class_tokens, tag_of

MAX_TITLE = 80
"""A box's first element longer than this many characters is body text, not its title."""

KNOWN_KINDS: tuple[str, ...] = (
    "note",
    "tip",
    "hint",
    "important",
    "warning",
    "caution",
    "danger",
    "attention",
    "error",
    "info",
    "seealso",
    "todo",
)
"""Kinds of the reStructuredText admonition directives and the common additions of site themes."""

_NOT_KINDS = frozenset(
    {"admonition", "is-collapsible", "collapsible-open", "collapsible-closed", "inline", "end"}
)
"""Class tokens of an admonition box that say how it is shown, not what kind it is."""

_TAB_SETS = frozenset({"tabbed-set", "sd-tab-set"})


def admonition_label(el: etree._Element) -> tuple[str | None, etree._Element | None]:
    """The label of an admonition box or a collapsible note, and the title element it came from
    (to be skipped by the walk): "Kind: Title", "Kind", "Title" or None."""
    kind = admonition_kind(el)
    title, title_el = _title(el)
    return box_label(kind, title), title_el


def box_label(kind: str | None, title: str | None) -> str | None:
    """ "Warning: Mind the lid" from ("warning", "Mind the lid"); a missing title, or one equal to
    the kind, gives "Warning"; a title that is the kind with punctuation ("Caution!", as docutils
    writes it) is the label as written; a title without a kind is the label as it is."""
    if not kind:
        return title or None
    name = kind.capitalize()
    if not title or title.casefold() == kind.casefold():
        return name
    if title.rstrip("!.:").casefold() == kind.casefold():
        return title
    return f"{name}: {title}"


def admonition_kind(el: etree._Element) -> str | None:
    """The box's kind from its classes: after `admonition`, the first token that is not a way of
    showing it (`admonition-*` tokens are titles turned into classes by docutils); otherwise the
    first known kind among its classes."""
    tokens = (el.get("class") or "").lower().split()
    if "admonition" in tokens or tag_of(el) == "details":
        for token in tokens:
            if token not in _NOT_KINDS and not token.startswith("admonition-"):
                return token
        return None
    known = set(KNOWN_KINDS)
    return next((t for t in tokens if t in known), None)


def _title(el: etree._Element) -> tuple[str | None, etree._Element | None]:
    """A first child that is a heading, a `summary` or has a `*title*` class, and its text."""
    first = next((c for c in el if isinstance(c.tag, str)), None)
    if first is None:
        return None, None
    tag = tag_of(first)
    if tag in HEADING_TAGS or tag == "summary" or any("title" in t for t in class_tokens(first)):
        text = flat_text(first)
        if text and len(text) <= MAX_TITLE:
            return text, first
    return None, None


def is_tab_set(el: etree._Element) -> bool:
    """A tab set of pymdown-extensions or sphinx-design (see the module's note)."""
    value = el.get("class")
    return bool(value) and not _TAB_SETS.isdisjoint(value.lower().split())


def tab_children(tab_set: etree._Element) -> list[etree._Element]:
    """The tab set's children with each tab's `label` straight before its body.

    The labels-first style is reordered (the n-th label with the n-th block); in the other style
    the children already alternate."""
    labels_box = _child_with_class(tab_set, "tabbed-labels")
    content = _child_with_class(tab_set, "tabbed-content")
    if labels_box is None or content is None or any(_loose_text(el) for el in (labels_box, content)):
        return list(tab_set)  # not the labels-first shape, or text would be lost: read it in order
    labels = [c for c in labels_box if tag_of(c) == "label"]
    if len(labels) != len(labels_box):
        return list(tab_set)
    bodies = [c for c in content if isinstance(c.tag, str)]
    out: list[etree._Element] = []
    for label, body in zip_longest(labels, bodies):
        if label is not None:
            out.append(label)
        if body is not None:
            out.append(body)
    out.extend(c for c in tab_set if c is not labels_box and c is not content)
    return out


def tab_label(label: etree._Element) -> str:
    """A tab's label as a lead-in line: its text ending in ":" (empty when it has no text)."""
    text = flat_text(label)
    return text if not text or text.endswith(":") else text + ":"


def _loose_text(el: etree._Element) -> bool:
    """Text right inside `el` or after it, outside elements (which a reordering would lose)."""
    loose = [el.text, el.tail, *(c.tail for c in el)]
    return any(text and text.strip() for text in loose)


def _child_with_class(el: etree._Element, token: str) -> etree._Element | None:
    for child in el:
        if token in class_tokens(child):
            return child
    return None
