"""Inline text: whitespace collapsed as HTML renders it, `<br>` kept as a line break."""

from __future__ import annotations

from lxml import etree

from segment.adapters.html.tags import BLOCK_TAGS, BREAK, PERMALINK_CLASSES, PERMALINK_TEXTS, class_tokens


def collapse(raw: str, breaks: bool = True) -> str:
    """Collapse whitespace runs to one space; `<br>` markers become `\n` (or a space).

    Python's `str.split()` is the collapsing rule: it covers HTML's ASCII whitespace and also the
    no-break space (a page's `&nbsp;` is layout: DocBook writes "Table&nbsp;9.4", and search text
    reads better with a plain space) and the other Unicode spaces. It is also far faster than a
    regular expression on long runs of text.
    """
    if BREAK not in raw:
        return " ".join(raw.split())
    if not breaks:
        return " ".join(raw.replace(BREAK, " ").split())
    lines = [" ".join(line.split()) for line in raw.split(BREAK)]
    while lines and not lines[0]:
        lines.pop(0)
    while lines and not lines[-1]:
        lines.pop()
    return "\n".join(lines)


def flat_text(el: etree._Element, breaks: bool = False) -> str:
    """All text under `el` (not its tail) on one line, or with `<br>` breaks when asked.

    Block elements inside (paragraphs in a table cell, a nested table) are kept apart by a space.
    """
    if not len(el):
        return collapse(el.text or "", breaks)
    if not has_block(el):
        return collapse("".join(el.itertext()), breaks)
    return collapse(spaced_text(el), breaks)


def spaced_text(el: etree._Element) -> str:
    """Raw text under `el` with a space at both ends of every block element inside."""
    pieces: list[str] = [el.text or ""]
    for event, node in etree.iterwalk(el, events=("start", "end")):
        if node is el:
            continue
        tag = node.tag
        block = tag.__class__ is str and tag in BLOCK_TAGS
        if event == "start":
            if block:
                pieces.append(" ")
            pieces.append(node.text or "")
        else:
            if block:
                pieces.append(" ")
            pieces.append(node.tail or "")
    return "".join(pieces)


def has_block(el: etree._Element) -> bool:
    """True when a block element lies inside `el`."""
    if not len(el):
        return False
    for node in el.iterdescendants():  # a Python loop beats iter(*56 tags) on small subtrees
        if node.tag in BLOCK_TAGS:
            return True
    return False


def line_range(first_line: int | None, raw: str) -> tuple[int, int] | None:
    """Lines covered by the visible part of `raw`, which starts on `first_line`."""
    if first_line is None:
        return None
    body = raw.strip()
    if not body:
        return (first_line, first_line)
    lead = raw.index(body[0])
    start = first_line + raw.count("\n", 0, lead)
    return (start, start + body.count("\n"))


def is_permalink(a: etree._Element) -> bool:
    """A same-page link that is only a mark: a permalink class, or text like ¶, #, § or nothing."""
    href = a.get("href")
    if class_tokens(a) & PERMALINK_CLASSES and (href is None or href.startswith("#")):
        return True
    if href is None or not href.startswith("#"):
        return False
    return collapse("".join(a.itertext()), breaks=False) in PERMALINK_TEXTS
