"""Text extraction: pymupdf's "dict" output turned into `Line` records with font facts.

Image data is never requested: the flags below leave out `TEXT_PRESERVE_IMAGES`, which would
copy every image's bytes into the result.
"""

from __future__ import annotations

import enum
import re
import unicodedata
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import pymupdf

TEXT_FLAGS: int = (
    pymupdf.TEXT_PRESERVE_WHITESPACE | pymupdf.TEXT_MEDIABOX_CLIP | pymupdf.TEXT_CID_FOR_UNKNOWN_UNICODE
)
"""get_text flags: no images, ligatures expanded by MuPDF, text outside the page dropped."""
VECTOR_FLAGS: int = TEXT_FLAGS | pymupdf.TEXT_COLLECT_VECTORS
"""The same, plus the page's vector paths as blocks of type 3 (table rulings in the same pass)."""

Box = tuple[float, float, float, float]
"""A box on a page: (x0, y0, x1, y1) in points, origin top-left."""

_SPACE_WIDTH = 0.6
"""Widest ordinary space, in font sizes: the advance of a character in most monospaced code fonts
(0.6 em, a value from memory, and wider than a proportional font's space). An inserted space wider
than this stands for a gap and starts a new piece."""

# pymupdf span flag bits (documented in the TextPage "dict" format).
_SUPERSCRIPT = 1
_ITALIC = 2
_MONO = 8
_BOLD = 16

_BOLD_NAME = re.compile(r"bold|black|heavy|semibold|demi|cmbx|cmb\d|-b$|\.b$|bx\d", re.I)
_MONO_NAME = re.compile(r"mono|courier|cmtt|consol|inconsolata|menlo|code|typewriter|(^|[^a-z])tt", re.I)
_ITALIC_NAME = re.compile(r"italic|oblique|cmti|cmsl", re.I)

# Compatibility decompositions that are safe to apply: ligatures, no-break and width variants,
# letter-like font variants. Superscripts, subscripts, fractions and circled forms keep their
# meaning only in their own form, so they are left alone.
_SAFE_TAGS = ("<compat>", "<noBreak>", "<wide>", "<narrow>", "<font>", "<small>")


class SafeFolding(dict[int, str]):
    """str.translate table, filled on first sight of each character: its NFKC form when its
    compatibility decomposition is one of the safe kinds, else itself."""

    LIMIT = 8192
    """Entries kept at most (a file could show every code point); then it starts over."""

    def __missing__(self, code: int) -> str:
        ch = chr(code)
        if unicodedata.decomposition(ch).startswith(_SAFE_TAGS):
            ch = unicodedata.normalize("NFKC", ch)
        if len(self) >= self.LIMIT:
            self.clear()
        self[code] = ch
        return ch


FOLDING = SafeFolding()


def normalise_text(text: str) -> str:
    """NFKC where safe (ligatures, no-break spaces, width forms); other characters unchanged."""
    if text.isascii():
        return text
    return text.translate(FOLDING)


class LineFlag(enum.Flag):
    """Marks that later stages put on a line; a line can carry several at once."""

    RUNNING = enum.auto()
    """A running head, running foot or page number: left out of the body."""
    TABLE = enum.auto()
    """A stand-in that holds a table's or a figure's place in the reading order."""
    BOXED = enum.auto()
    """Inside a stroked rectangle (a boxed note or listing): never a heading."""
    CONTENTS = enum.auto()
    """On a table of contents or back-of-book index page: left out of the body by default."""


NO_FLAGS = LineFlag(0)
"""A line as extracted, with no marks yet."""


@dataclass(slots=True)
class Piece:
    """One styled run of text inside a line (a pymupdf span)."""

    text: str
    x0: float
    x1: float
    size: float
    bold: bool
    italic: bool
    mono: bool
    superscript: bool


@dataclass(slots=True)
class Line:
    """One line of text on a page, in page coordinates (points, origin top-left)."""

    page: int
    """1-based page number."""
    x0: float
    y0: float
    x1: float
    y1: float
    pieces: list[Piece]
    block: int
    """pymupdf's block number on the page (a paragraph hint)."""
    text: str = ""
    size: float = 0.0
    """Dominant font size (by characters, superscripts excluded)."""
    bold: float = 0.0
    """Share of visible characters in bold."""
    mono: float = 0.0
    """Share of visible characters in a monospaced font."""
    flags: LineFlag = NO_FLAGS
    """Marks set by later stages (running line, table stand-in, boxed)."""
    payload: object | None = None
    """A non-text item (a table) standing in the reading order in this line's place."""
    split: int = -1
    """Index of the first piece after a wide gap on the baseline (a key/description pair)."""
    prose_size: float = 0.0
    """Dominant size of the line's non-monospaced text (inline code is often set smaller)."""

    def finish(self) -> None:
        """Compute text and style summaries from the pieces."""
        pieces = self.pieces
        self.text = "".join([p.text for p in pieces])
        # Tallies by the raw size, folded to half points at the end (a line has few sizes).
        sizes: dict[float, int] = {}
        prose: dict[float, int] = {}
        total = bold = mono = 0
        for p in pieces:
            text = p.text
            n = len(text) - text.count(" ")
            if n <= 0:
                continue
            total += n
            if p.bold:
                bold += n
            if p.mono:
                mono += n
            if not p.superscript:
                size = p.size
                sizes[size] = sizes.get(size, 0) + n
                if not p.mono:
                    prose[size] = prose.get(size, 0) + n
        self.size = _dominant(sizes) if sizes else pieces[0].size if pieces else 0.0
        self.bold = bold / total if total else 0.0
        self.mono = mono / total if total else 0.0
        self.prose_size = _dominant(prose) if prose else self.size

    @property
    def height(self) -> float:
        """Line box height."""
        return self.y1 - self.y0

    @property
    def bbox(self) -> tuple[float, float, float, float]:
        """(x0, y0, x1, y1)."""
        return (self.x0, self.y0, self.x1, self.y1)


def _dominant(tally: dict[float, int]) -> float:
    """The size, rounded to half points, with the most characters (the larger one on a tie)."""
    if len(tally) == 1:
        return int(next(iter(tally)) * 2 + 0.5) / 2
    folded: dict[float, int] = {}
    for size, n in tally.items():
        key = int(size * 2 + 0.5) / 2
        folded[key] = folded.get(key, 0) + n
    return max(folded, key=lambda k: (folded[k], k))


@lru_cache(maxsize=1024)
def _style(font: str, flags: int) -> tuple[bool, bool, bool, bool]:
    """(bold, italic, mono, superscript) from the span flags and the font name."""
    return (
        bool(flags & _BOLD) or bool(_BOLD_NAME.search(font)),
        bool(flags & _ITALIC) or bool(_ITALIC_NAME.search(font)),
        bool(flags & _MONO) or bool(_MONO_NAME.search(font)),
        bool(flags & _SUPERSCRIPT),
    )


def _piece(span: dict[str, Any]) -> Piece:
    bold, italic, mono, sup = _style(str(span.get("font", "")), int(span.get("flags", 0)))
    bbox = span["bbox"]
    return Piece(
        normalise_text(span["text"]), bbox[0], bbox[2], span.get("size", 0.0), bold, italic, mono, sup
    )


def page_lines(
    page: pymupdf.Page,
    page_number: int,
    textpage: pymupdf.TextPage | None = None,
    vectors: list[dict[str, Any]] | None = None,
) -> list[Line]:
    """The text lines of one page, in pymupdf's order; empty lines dropped. When `vectors` is a
    list, the page's vector blocks are appended to it (the textpage must collect vectors)."""
    flags = VECTOR_FLAGS if vectors is not None else TEXT_FLAGS
    if textpage is None:
        textpage = page.get_textpage(flags=flags)
    data = textpage.extractDICT()  # what page.get_text("dict") returns, without its page checks
    if vectors is not None:
        vectors.extend(b for b in data.get("blocks", ()) if b.get("type") == 3)
    out: list[Line] = []
    bno = -1
    vector_since = False
    for block in data.get("blocks", ()):
        if block.get("type", 0) != 0:
            vector_since = True
            continue
        bno += 1
        if vector_since and out and _continues(out[-1], block):
            # Collecting vectors makes MuPDF start a new text block after any path (a bullet,
            # an underline); text that simply goes on below keeps its block number.
            bno -= 1
        vector_since = False
        for raw in block.get("lines", ()):
            line_bno = bno
            wdir = raw.get("dir", (1.0, 0.0))
            if abs(wdir[1]) > 0.2:
                # Rotated text (margin stamps, rotated table heads): kept, but as its own block.
                line_bno = -1 - bno
            pieces = span_pieces(raw.get("spans", []))
            if not pieces:
                continue
            x0, y0, x1, y1 = raw["bbox"]
            line = Line(page_number, x0, y0, x1, y1, pieces, line_bno)
            line.finish()
            if line.text.strip():
                out.append(line)
    return out


def span_pieces(spans: list[dict[str, Any]]) -> list[Piece]:
    """A line's spans as pieces. MuPDF starts a new span at every space it inserts (its
    character flags differ), so a line of one style comes as word, space, word...: touching
    spans of one font, size and flags make one piece, as long as the spaces are no wider than a
    character. Monospaced runs are never merged: the inserted spaces are not a character wide,
    and code indentation is measured from the widths of the words."""
    pieces: list[Piece] = []
    last: Piece | None = None  # the piece that may take the next span
    font = ""
    flags = -1
    for span in spans:
        text = span["text"]
        if not text:
            continue
        if not text.isascii():
            text = normalise_text(text)
        box = span["bbox"]
        size = span["size"]
        wide = text.isspace() and box[2] - box[0] > _SPACE_WIDTH * size * len(text) + 0.5
        if (
            last is not None
            and not wide
            and span["flags"] == flags
            and size == last.size
            and span["font"] == font
            and abs(box[0] - last.x1) <= 0.5
        ):
            last.text += text
            last.x1 = box[2]
            continue
        font, flags = span["font"], span["flags"]
        bold, italic, mono, sup = _style(font, flags)
        piece = Piece(text, box[0], box[2], size, bold, italic, mono, sup)
        pieces.append(piece)
        last = None if wide or mono else piece
    return pieces


def _continues(last: Line, block: dict[str, Any]) -> bool:
    """The block goes on from the last line: on its baseline to its right, or right under it
    near its left edge (same paragraph)."""
    x0: float = block["bbox"][0]
    y0: float = block["bbox"][1]
    size = max(last.size, 1.0)
    if abs(y0 - last.y0) <= 0.5 * size and x0 >= last.x1 - 2:
        return True
    return 0 <= y0 - last.y1 + 2 <= 0.5 * size + 2 and abs(x0 - last.x0) <= 12
