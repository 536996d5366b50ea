"""Navigation tables, told by what they are: a label that says so, or a bar of moves between pages.

A table is navigation when its `role` is `navigation` or its `summary`/`aria-label` names
navigation, whatever its size; or when it is a bar of moves: at most three rows, no `thead` or
`caption`, every link in it a move link, and the moves unmistakable (one move marked by `rel`, an
access key or an arrow; a previous/next link; or two different moves, like Up and Home).

A move link goes to the previous, next, parent, first or contents page:
- its `rel` is one of the HTML standard's link types for that (`prev`, `next`; `up`, `index`,
  `contents`, `start`, `first`, `last` are older registered types, from memory);
- its `accesskey` is one DocBook XSL gives its Prev / Up / Home / Next links (p, u, h, n: as on
  every page of the shared corpus's PostgreSQL documentation);
- its text starts or ends with an arrow mark (`« Queues`, `Topics →`), or is a move word
  (Prev, Previous, Next, Up, Home, Top, Back, Contents, Index; common practice of documentation
  generators and site themes), with "page", "chapter", "section" or "topic" after it, or a page
  number of a pager.
A link whose text is code (`<code>next()</code>`) names an API entry and is never a move.

Size and link density alone decide nothing: a summary table of API entries, each linked to its
description on the same site beside a one-line description, is content.
"""

from __future__ import annotations

import re

from lxml import etree

from segment.adapters.html.element_text import flat_text
from segment.adapters.html.tags import tag_of

MAX_BAR_ROWS = 3
"""A bar of moves has at most this many rows (DocBook's navigation footer has two)."""

_NAV_LABEL = re.compile(r"navigat", re.IGNORECASE)
_MOVE_RELS = frozenset(
    {"prev", "previous", "next", "up", "index", "contents", "toc", "start", "first", "last"}
)
_MOVE_ACCESSKEYS = frozenset({"p", "u", "h", "n"})
_ARROWS = "«»‹›←→↑⇐⇒⇑⟵⟶◀▶◄►<>"
_ORDERED_MOVES = frozenset({"previous", "next"})
"""Moves to the sibling pages in order: one of them alone makes a bar."""
_MOVES = {
    "prev": "previous",
    "previous": "previous",
    "back": "previous",
    "next": "next",
    "forward": "next",
    "up": "up",
    "top": "up",
    "parent": "up",
    "home": "home",
    "start": "home",
    "contents": "contents",
    "table of contents": "contents",
    "toc": "contents",
    "index": "contents",
}
"""Move words (lower case) and the move each names."""
_MOVE_NOUNS = (" page", " chapter", " section", " topic")
"""Words that may follow a move word ("Next page", "Previous chapter")."""
_CODE_TAGS = frozenset({"code", "tt", "kbd", "samp", "var"})


def says_navigation(table: etree._Element) -> bool:
    """`role="navigation"`, or a `summary`/`aria-label` that names navigation."""
    if (table.get("role") or "").lower() == "navigation":
        return True
    label = (table.get("summary") or "") + " " + (table.get("aria-label") or "")
    return bool(_NAV_LABEL.search(label))


def is_bar_of_moves(table: etree._Element) -> bool:
    """At most three rows, every link a move, and the moves unmistakable (the module's rule)."""
    links = [a for a in table.iter("a") if a.get("href") is not None]
    if not links or table.find("thead") is not None or table.find("caption") is not None:
        return False
    if _row_count(table) > MAX_BAR_ROWS:
        return False
    moves: set[str] = set()
    marked = False
    for link in links:
        move, by_mark = _move_of(link)
        if move is None:
            return False
        moves.add(move)
        marked = marked or by_mark
    return marked or bool(moves & _ORDERED_MOVES) or len(moves) >= 2


def _move_of(link: etree._Element) -> tuple[str | None, bool]:
    """The move a link makes ("previous", "next", "up", "home", "contents", "page") and whether an
    attribute or an arrow marks it; (None, False) for any other link."""
    if any(tag_of(el) in _CODE_TAGS for el in link.iter()) or any(
        tag_of(el) in _CODE_TAGS for el in link.iterancestors()
    ):
        return None, False
    rels = (link.get("rel") or "").lower().split()
    rel = next((r for r in rels if r in _MOVE_RELS), None)
    if rel is not None:
        return _MOVES.get(rel, rel), True
    if (link.get("accesskey") or "").lower() in _MOVE_ACCESSKEYS:
        return "page", True
    text = flat_text(link)
    words = text.strip(_ARROWS + " ").strip()
    if text and (text[0] in _ARROWS or text[-1] in _ARROWS) and words:
        return "page", True
    key = " ".join(words.lower().split())
    for noun in _MOVE_NOUNS:
        if key.endswith(noun):
            key = key[: -len(noun)]
            break
    move = _MOVES.get(key)
    if move is not None:
        return move, False
    if key.isdigit():
        return "page", False
    return None, False


def _row_count(table: etree._Element) -> int:
    count = 0
    for child in table:
        tag = tag_of(child)
        if tag == "tr":
            count += 1
        elif tag in ("thead", "tbody", "tfoot"):
            count += sum(1 for tr in child if tag_of(tr) == "tr")
    return count
