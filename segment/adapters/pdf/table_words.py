"""What the table detectors share: words placed on the page from the text pass, cell text, the
bold share of a box, and the record of a found table."""

from __future__ import annotations

import re
from bisect import bisect_right
from collections.abc import Callable
from dataclasses import dataclass

from segment.adapters.pdf.extract import Box, Line, Piece

SPACE = re.compile(r"\s+")
_WORD = re.compile(r"\S+")


@dataclass(slots=True)
class FoundTable:
    """A table found on a page: header rows and body rows of cell texts."""

    page: int
    bbox: Box
    header: list[list[str]]
    rows: list[list[str]]
    row_boxes: list[Box]
    method: str


@dataclass(slots=True)
class Word:
    """A word with its box and centre; `key` orders words in reading order within a cell."""

    x0: float
    y0: float
    x1: float
    y1: float
    text: str
    key: tuple[int, int, int]
    cx: float
    cy: float


def line_words(lines: list[Line], bands: list[tuple[float, float]]) -> list[Word]:
    """Words of the lines whose centre lies in one of the (top, bottom) bands: the detectors look
    nowhere else. A word's box is placed inside its span by character count; the text pass gives
    span boxes, not character boxes.

    pymupdf's own word list (`get_text("words")`) costs about as much per page as the whole
    "dict" pass, since it boxes every character. When these words replaced it, the chunks of the
    shared PDFs and the fixtures stayed byte-identical: cells are separate spans, or split at
    spaces. Only body lines are read, so a running head never lands in a cell.
    """
    out: list[Word] = []
    for index, ln in enumerate(lines):
        cy = (ln.y0 + ln.y1) / 2
        for top, bottom in bands:
            if top <= cy <= bottom:
                break
        else:
            continue
        edges = _char_edges(ln.pieces)
        for n, m in enumerate(_WORD.finditer(ln.text)):
            x0 = edges(m.start(), False)
            x1 = edges(m.end() - 1, True)
            out.append(Word(x0, ln.y0, x1, ln.y1, m.group(), (ln.block, index, n), (x0 + x1) / 2, cy))
    return out


def _char_edges(pieces: list[Piece]) -> Callable[[int, bool], float]:
    """The left (or right) edge of the character at an offset in the line text, each piece's
    width spread evenly over its characters."""
    starts: list[int] = []
    steps: list[float] = []
    offset = 0
    for piece in pieces:
        starts.append(offset)
        steps.append((piece.x1 - piece.x0) / max(len(piece.text), 1))
        offset += len(piece.text)

    def edge(at: int, right: bool) -> float:
        k = bisect_right(starts, at) - 1
        return pieces[k].x0 + (at - starts[k] + right) * steps[k]

    return edge


def cell_text(words: list[Word]) -> str:
    """The words of one cell in reading order, joined by single spaces."""
    words = sorted(words, key=lambda w: w.key)
    return SPACE.sub(" ", " ".join(w.text for w in words)).strip()


def bold_share(lines: list[Line], box: Box) -> float:
    """Share of the characters inside `box` that are set in bold."""
    x0, y0, x1, y1 = box
    total = bold = 0
    for ln in lines:
        cy = (ln.y0 + ln.y1) / 2
        if not y0 <= cy <= y1:
            continue
        for p in ln.pieces:
            cx = (p.x0 + p.x1) / 2
            if x0 <= cx <= x1:
                n = len(p.text.strip())
                total += n
                bold += n if p.bold else 0
    return bold / total if total else 0.0
