"""Blocks in reading order classified as text, list item, code, definitions or table; text joined
across lines; code, tables and paragraphs cut by page or column breaks joined back.

List markers live in `lists`, code layout in `code`. Words broken with a hyphen at a line end are joined back when the joined word is
used elsewhere in the document, or when the hyphen is a soft hyphen (U+00AD).
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field

from segment.adapters.pdf.code import code_lines
from segment.adapters.pdf.extract import Line
from segment.adapters.pdf.figures import FigureText
from segment.adapters.pdf.hanging import HangingList
from segment.adapters.pdf.layout import TextBlock
from segment.adapters.pdf.lists import marker as _marker
from segment.adapters.pdf.lists import marker_is_mono as _marker_is_mono
from segment.adapters.pdf.table_words import FoundTable

_WORD = re.compile(r"[^\W\d_]+")


@dataclass(slots=True)
class Item:
    """One unit of the page flow."""

    kind: str
    """"text", "item" (list item), "code" or "table"."""
    blocks: list[TextBlock]
    text: str = ""
    code_lines: list[str] = field(default_factory=list)
    ordered: bool = False
    number: int = 1
    marker_x: float = 0.0
    level: int | None = None
    """Heading level once the heading stage has chosen this item."""
    label: bool = False
    """A chapter label ("CHAPTER ONE") that introduces the next heading."""
    notes: str = ""
    """Processing marks (e.g. "merged" code)."""
    cache: tuple[int, tuple[float, float, float]] | None = None
    pairs: list[tuple[str, str]] = field(default_factory=list)
    """Key/description pairs of a "definitions" item."""
    extra_rows: list[tuple[list[str], int]] = field(default_factory=list)
    """Rows of a table's continuation on later pages (cells, page)."""

    @property
    def first(self) -> TextBlock:
        """The first block."""
        return self.blocks[0]

    @property
    def lines(self) -> list[Line]:
        """All lines of the item."""
        return [ln for b in self.blocks for ln in b.lines]

    @property
    def pages(self) -> tuple[int, int]:
        """First and last page."""
        return (self.blocks[0].page, self.blocks[-1].page)

    @property
    def size(self) -> float:
        """Dominant font size over the item's characters."""
        return self._style()[0]

    @property
    def bold(self) -> float:
        """Share of characters in bold."""
        return self._style()[1]

    @property
    def mono(self) -> float:
        """Share of characters in a monospaced font."""
        return self._style()[2]

    def _style(self) -> tuple[float, float, float]:
        # Cached per number of blocks (merges append blocks and so refresh it).
        if self.cache is not None and self.cache[0] == len(self.blocks):
            return self.cache[1]
        weights: dict[float, int] = {}
        total = bold = mono = 0.0
        for ln in self.lines:
            n = len(ln.text.strip())
            weights[ln.size] = weights.get(ln.size, 0) + n
            total += n
            bold += ln.bold * n
            mono += ln.mono * n
        size = max(weights, key=lambda k: (weights[k], k)) if weights else 0.0
        style = (size, bold / (total or 1), mono / (total or 1))
        self.cache = (len(self.blocks), style)
        return style


class Vocabulary(set[str]):
    """Lower-cased words of a document (runs of letters), to decide hyphen joins; `once` holds
    the words seen a single time (the two halves of a word broken at a line end usually are)."""

    once: frozenset[str] = frozenset()


def vocabulary(lines: list[Line]) -> Vocabulary:
    """Lower-cased words of the document (runs of letters), to decide hyphen joins."""
    # Split at white space first (fast), then cut only the distinct tokens that hold more than
    # letters: the same words as running the letter pattern over the whole text.
    counts: dict[str, int] = {}
    for token, n in Counter("\n".join([ln.text for ln in lines]).lower().split()).items():
        for word in (token,) if token.isalpha() else _WORD.findall(token):
            counts[word] = counts.get(word, 0) + n
    words = Vocabulary(counts)
    words.once = frozenset(w for w, n in counts.items() if n == 1)
    return words


def join_lines(lines: list[str], vocab: set[str]) -> str:
    """Join text lines with spaces, repairing words hyphenated at the line ends."""
    out = ""
    for raw in lines:
        text = raw.strip()
        if not text:
            continue
        if not out:
            out = text
            continue
        if out.endswith("\u00ad"):
            out = out[:-1] + text
        elif out.endswith(("-", "\u2010")) and len(out) > 1 and out[-2].isalpha() and text[:1].isalpha():
            head = _WORD.findall(out[:-1])
            tail = _WORD.findall(text)
            first = head[-1] if head else ""
            rest = tail[0] if tail else ""
            joined = first + rest
            if joined.lower() in vocab or _halves(first, rest, vocab):
                out = out[:-1] + text  # "infor-" + "mation", "MN-" + "RAS", "ap-" + "pearance"
            else:
                out = out + text  # a compound broken at its own hyphen: "state-" + "of-the-art"
        else:
            out = out + " " + text
    return out.replace("\u00ad", "")


def _halves(first: str, rest: str, vocab: set[str]) -> bool:
    """Both parts of a lower-case word broken at a line end occur nowhere else in the document:
    they are halves of one word ("ap-" / "pearance"), not two words of a compound."""
    once = vocab.once if isinstance(vocab, Vocabulary) else frozenset()
    return len(first) >= 2 and first.islower() and rest.islower() and first in once and rest in once


def classify(block: TextBlock, vocab: set[str]) -> Item:
    """Decide what one block is and compute its text."""
    if isinstance(block.payload, FigureText):
        return Item("text", [block], text=block.payload.text, notes="figure")
    if isinstance(block.payload, HangingList):
        pairs = [
            (join_lines([ln.text for ln in term], vocab), join_lines([ln.text for ln in text], vocab))
            for term, text in block.payload.entries
        ]
        return Item("definitions", [block], pairs=pairs)
    if block.payload is not None:
        return Item("table", [block])
    lines = block.lines
    chars = mono = 0.0
    for ln in lines:
        n = len(ln.text)
        chars += n
        mono += ln.mono * n
    mono = mono / (chars or 1)
    marker = _marker(lines[0].text)
    if marker is not None and _marker_is_mono(lines[0]):
        marker = None  # "- item" inside a code listing
    if mono >= 0.8 and marker is None:
        return Item("code", [block], code_lines=code_lines(lines))
    if _pairs_block(lines):
        return Item("definitions", [block], pairs=_pairs(lines, vocab))
    if marker is not None:
        first = lines[0]
        hanging = all(ln.x0 >= first.x0 + 1.5 for ln in lines[1:])
        if hanging:
            token, ordered, number = marker
            body = [first.text.strip()[len(token.strip()) :].strip()] + [ln.text for ln in lines[1:]]
            return Item(
                "item",
                [block],
                text=join_lines(body, vocab),
                ordered=ordered,
                number=number,
                marker_x=first.x0,
            )
    return Item("text", [block], text=join_lines([ln.text for ln in lines], vocab))


def _pairs_block(lines: list[Line]) -> bool:
    """Most lines are a key, a wide gap, then a description."""
    paired = sum(1 for ln in lines if ln.split > 0)
    return paired >= 2 and paired >= 0.6 * len(lines)


def _pairs(lines: list[Line], vocab: set[str]) -> list[tuple[str, str]]:
    """(key, description) of each pair; an unpaired line indented to the descriptions continues
    the one above, one at the keys' margin is an entry of its own."""
    out: list[tuple[str, list[str]]] = []
    key_x = min(ln.x0 for ln in lines)
    for ln in lines:
        if ln.split <= 0 and abs(ln.x0 - key_x) <= 2:
            out.append((ln.text.strip(), []))  # a key whose description runs on without a gap
        elif ln.split > 0:
            key = "".join(p.text for p in ln.pieces[: ln.split]).strip()
            value = "".join(p.text for p in ln.pieces[ln.split :]).strip()
            out.append((key, [value]))
        elif out:
            out[-1][1].append(ln.text)
        else:
            out.append((ln.text.strip(), []))
    return [(key, join_lines(parts, vocab)) for key, parts in out]


def merge_code(items: list[Item]) -> list[Item]:
    """Join consecutive code items of one listing (separate blocks per line, page breaks)."""
    out: list[Item] = []
    for item in items:
        if item.kind == "code" and out and out[-1].kind == "code":
            prev = out[-1]
            last = prev.blocks[-1]
            first = item.first
            same_page = last.page == first.page
            gap = first.y0 - last.y1
            size = max(prev.lines[-1].size, 1.0)
            if (same_page and first.column == last.column and -1 <= gap < 2.5 * size) or (
                not same_page and first.page == last.page + 1
            ):
                prev.blocks.append(first)
                prev.notes = "merged"
                continue
        out.append(item)
    for item in out:
        if item.kind == "code" and item.notes == "merged":
            item.code_lines = code_lines(item.lines)
    return out


def merge_split_tables(items: list[Item]) -> list[Item]:
    """Join a table cut by a page break: consecutive in the flow, on consecutive pages, with the
    same number of columns. A header row repeated on the new page is dropped."""
    out: list[Item] = []
    for item in items:
        if item.kind == "table" and out and out[-1].kind == "table":
            prev, here = out[-1].blocks[-1].payload, item.first.payload
            first = out[-1].first.payload
            if (
                isinstance(prev, FoundTable)
                and isinstance(here, FoundTable)
                and isinstance(first, FoundTable)
                and here.page == prev.page + 1
                and _width(prev) == _width(here)
            ):
                rows = here.rows
                if here.header and here.header != first.header:
                    rows = here.header + rows
                out[-1].blocks.append(item.first)
                out[-1].notes = "joined"
                out[-1].extra_rows.extend((row, here.page) for row in rows)
                continue
        out.append(item)
    return out


def _width(table: FoundTable) -> int:
    """Number of columns (of the first row), 0 for an empty table."""
    rows = table.header + table.rows
    return len(rows[0]) if rows else 0


def merge_continuations(items: list[Item], vocab: set[str]) -> list[Item]:
    """Join a paragraph cut by a column or page break (no final stop, next starts lower-case)."""
    out: list[Item] = []
    for item in items:
        if item.kind == "text" and out and out[-1].kind in ("text", "item") and out[-1].level is None:
            prev = out[-1]
            moved = prev.blocks[-1].page != item.first.page or prev.blocks[-1].column != item.first.column
            if (
                moved
                and item.level is None
                and prev.text
                and item.text[:1].islower()
                and prev.text[-1] not in ".:!?"
            ):
                prev.blocks.append(item.first)
                prev.text = join_lines([prev.text, item.text], vocab)
                continue
        out.append(item)
    return out
