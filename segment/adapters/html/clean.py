"""Boilerplate out, main content found, inline markers set: one pass over the parsed tree.

The rule, in order:
1. Dropped with their content: `script`, `style`, `noscript`, `template`, `nav`, `footer`,
   `aside` (unless it is an admonition box), forms and their controls, embedded media, hidden
   elements (`hidden`, `aria-hidden="true"`, inline `display:none`), elements whose ARIA role
   marks page chrome (navigation, banner, contentinfo, complementary, search, menus) and
   elements whose class or id is a known boilerplate token (`tags.DROP_CLASSES`, e.g. DocBook's
   `navheader`/`navfooter`, Sphinx's `sphinxsidebar`). A `header` is dropped unless it sits
   inside `main`/`article` (there it is the article's own header and often holds the `h1`).
2. The main content is the first `main`, else the first `role="main"`, else a lone `article`
   (several articles: their common parent), else the result of descending from `body` while one
   child holds at least 90% of the remaining non-link text and every heading (so a page without
   landmarks keeps all its headed content, and sidebars of links fall away).
3. Inline markers for the text pass: `<br>` becomes a line-break marker, `<img alt>` its alt
   text, and block elements get a space at both ends so flattened text never glues words.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from lxml import etree

from segment.adapters.html.tags import (
    BLOCK_TAGS,
    DROP_CLASSES,
    DROP_ROLES,
    DROP_TAGS,
    HEADING_TAGS,
    PRE_TAGS,
    class_tokens,
    is_admonition,
    is_hidden,
    tag_of,
)

BREAK = "\ufdd0"
"""Marks a `<br>` in text outside `pre`: a Unicode noncharacter, never meant to appear in pages
(lxml refuses NUL in text). A stray U+FDD0 in a page would read as a line break."""

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
    in_pre = 0
    in_main = 0
    walker = etree.iterwalk(body, events=("start", "end"))
    for event, el in walker:
        tag = el.tag
        if not isinstance(tag, str):
            continue
        tag = tag.lower()
        if event == "end":
            if tag in PRE_TAGS:
                in_pre -= 1
            elif tag == "main" or tag == "article" or el.get("role") == "main":
                in_main -= 1
            continue
        reason = _drop_reason(el, tag, in_main)
        if reason:
            drop.append(el)
            counts[reason] = counts.get(reason, 0) + 1
            walker.skip_subtree()
            # The end event still comes: undo the counters it will decrement.
            if tag in PRE_TAGS:
                in_pre += 1
            elif tag == "main" or tag == "article" or el.get("role") == "main":
                in_main += 1
            continue
        if tag == "br":
            el.tail = ("\n" if in_pre else BREAK) + (el.tail or "")
        elif tag == "img":
            alt = el.get("alt")
            if alt:
                el.tail = alt + (el.tail or "")
        elif tag in BLOCK_TAGS:
            if tag in PRE_TAGS:
                in_pre += 1
            elif not in_pre:
                el.text = " " + (el.text or "")
            if not in_pre:
                el.tail = " " + (el.tail or "")
            if tag == "main":
                mains.append(el)
                in_main += 1
            elif tag == "article":
                articles.append(el)
                in_main += 1
            elif el.get("role") == "main":
                role_mains.append(el)
                in_main += 1
        elif el.get("role") == "main":
            role_mains.append(el)
            in_main += 1
    for el in reversed(drop):
        remove_keep_tail(el)
    main = _choose_main(body, mains, role_mains, articles)
    return Cleaned(main=main, title=title or None, dropped=counts)


def _drop_reason(el: etree._Element, tag: str, in_main: int) -> str | None:
    if tag in DROP_TAGS:
        if tag == "aside" and is_admonition(el):
            return None
        return tag
    if tag == "header" and not in_main:
        return "header"
    if is_hidden(el):
        return "hidden"
    role = el.get("role")
    if role and role.lower() in DROP_ROLES:
        if role.lower() == "banner" and in_main:
            return None
        return f"role={role.lower()}"
    for attr in ("class", "id"):
        value = el.get(attr)
        if value:
            for token in value.lower().split():
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
    for candidates in (mains, role_mains):
        for el in candidates:
            if el is body or _attached(el, body):
                return el
    live = [a for a in articles if _attached(a, body)]
    if len(live) == 1:
        return live[0]
    if len(live) > 1:
        parent = live[0].getparent()
        if parent is not None and all(a.getparent() is parent for a in live):
            return parent
        return body
    return _densest(body)


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
            if isinstance(child.tag, str):
                weight = _text_weight(child)
                if weight > best_weight:
                    best, best_weight = child, weight
        if best is None or best_weight < MAIN_SHARE * total or _heading_count(best) < heads:
            return node
        node, total = best, best_weight
    return node


def _text_weight(el: etree._Element) -> int:
    """Characters of non-whitespace text outside links."""
    everything = sum(len(t.strip()) for t in el.itertext())
    links = sum(len(t.strip()) for a in el.iter("a") for t in a.itertext())
    return everything - links


def _heading_count(el: etree._Element) -> int:
    return sum(1 for _ in el.iter(*HEADING_TAGS))
