"""Plain windows to compare our chunks with: fixed-size windows and sliding windows.

For comparison only, small and plain on purpose. Both cut the same text: the whole document as
our renderer writes it (headings, paragraphs, `- ` lists, pipe tables, fenced code, in reading
order), so the only difference from our chunks is where the cuts fall. A window holds whole
whitespace-separated words up to the token budget (the common practice of cutting every N
tokens); a sliding window starts `overlap` tokens before the previous window's end.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from segment.kinds import render_block
from segment.tokens import TokenCounter
from segment.tree import Block, Document, Section, Table

WORD = re.compile(r"\S+\s*")
SEPARATOR = re.compile(r"^[|\s:-]+$")
"""The line under a pipe table's header (`| --- | --- |`): not a row."""


@dataclass(slots=True)
class Piece:
    """One heading or block in the flat text."""

    start: int
    end: int
    kind: str
    anchor: str | None
    """Anchor of the section the piece belongs to."""
    lines: tuple[int, int] | None
    pages: tuple[int, int] | None


@dataclass(slots=True)
class FlatDocument:
    """A document's text in reading order, with where its structures lie in it."""

    source: str
    format: str
    text: str
    pieces: list[Piece] = field(default_factory=list)
    rows: list[tuple[int, int]] = field(default_factory=list)
    """Character ranges of every table row (header rows included)."""
    codes: list[tuple[int, int]] = field(default_factory=list)
    """Character ranges of every fenced code block."""
    headings: set[int] = field(default_factory=set)
    """Start offsets of heading lines."""


@dataclass(slots=True)
class Window:
    """One baseline chunk: a character range of the flat text."""

    source: str
    seq: int
    start: int
    end: int
    text: str
    tokens: int


def flatten(document: Document) -> FlatDocument:
    """The document's text as our renderer writes it, with the ranges of rows, code and headings."""
    flat = FlatDocument(document.source, document.format, "")
    parts: list[str] = []
    offset = 0

    def add(
        text: str, kind: str, anchor: str | None, lines: tuple[int, int] | None, pages: tuple[int, int] | None
    ) -> int:
        nonlocal offset
        if parts:
            parts.append("\n\n")
            offset += 2
        start = offset
        parts.append(text)
        offset += len(text)
        flat.pieces.append(Piece(start, offset, kind, anchor, lines, pages))
        return start

    stack: list[tuple[Section, str | None]] = [(document.root, None)]
    while stack:
        section, anchor = stack.pop()
        if section.heading is not None:
            anchor = section.heading.anchor or anchor
            h = section.heading
            flat.headings.add(add(h.text, "heading", anchor, h.span.lines, h.span.pages))
        for block in section.blocks:
            text = render_block(block)
            if not text.strip():
                continue
            start = add(text, block.kind.value, anchor, block.span.lines, block.span.pages)
            _structures(flat, block, text, start)
        stack.extend((child, anchor) for child in reversed(section.children))
    flat.text = "".join(parts)
    return flat


def _structures(flat: FlatDocument, block: Block, text: str, start: int) -> None:
    if block.kind.value == "code":
        flat.codes.append((start, start + len(text)))
    elif isinstance(block, Table):
        pos = start
        for line in text.split("\n"):
            if line.startswith("|") and line.endswith("|") and not SEPARATOR.match(line):
                flat.rows.append((pos, pos + len(line)))
            pos += len(line) + 1


def _word_spans(flat: FlatDocument, counter: TokenCounter) -> list[tuple[int, int, int]]:
    return [(m.start(), m.end(), counter.count(m.group())) for m in WORD.finditer(flat.text)]


def windows(flat: FlatDocument, budget: int, overlap: int, counter: TokenCounter) -> list[Window]:
    """Windows of whole words up to `budget` tokens; each starts `overlap` tokens before the last end.

    `overlap=0` gives plain fixed-size windows.
    """
    words = _word_spans(flat, counter)
    out: list[Window] = []
    i = 0
    while i < len(words):
        j, total = i, 0
        while j < len(words) and (total + words[j][2] <= budget or j == i):
            total += words[j][2]
            j += 1
        j = _fill(flat.text, words, i, j, budget, counter)
        start, end = words[i][0], words[j - 1][1]
        text = flat.text[start:end].rstrip()
        out.append(Window(flat.source, len(out), start, start + len(text), text, counter.count(text)))
        if j >= len(words):
            break
        # step back over up to `overlap` tokens of the window's tail, but always move forward
        back, k = 0, j
        while overlap and k - 1 > i + 1 and back + words[k - 1][2] <= overlap:
            k -= 1
            back += words[k][2]
        i = k
    return out


def _fill(
    text: str, words: list[tuple[int, int, int]], i: int, j: int, budget: int, counter: TokenCounter
) -> int:
    """The largest word end >= j whose window from word i still counts within the budget.

    Word counts summed over-count a joined text (each word rounds up), so the window is grown by
    a binary search on the count of the joined text itself: windows come out as full as ours can.
    """
    lo, hi = j, min(len(words), i + 2 * (j - i) + 8)
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if counter.count(text[words[i][0] : words[mid - 1][1]].rstrip()) <= budget:
            lo = mid
        else:
            hi = mid - 1
    return lo
