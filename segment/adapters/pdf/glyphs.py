"""Glyphs that are not words: the marks scattered over a vector drawing (notes on a staff, labels
of a diagram) and runs of a symbol font. A table needs cells that hold words in aligned columns,
and a heading needs words; what is mostly single glyphs is a drawing's text, kept as a figure's
text when it holds words, dropped with a warning when it is no more than glyph noise.
"""

from __future__ import annotations

import re
import unicodedata

from segment.adapters.pdf.table_words import FoundTable

_LETTER_RUN = re.compile(r"[^\W\d_]{2,}")
_WORD = re.compile(r"[^\W\d_]{3,}")

WORD_SHARE = 0.3
"""A table whose non-empty cells hold words less often than this is a candidate drawing."""
WORD_COLUMN = 0.6
"""A column whose cells hold words in at least this share of the rows is a column of data."""
NOISE_WORDS = 2
"""A drawing's text with fewer words of three letters or more than this is glyph noise."""


def is_word_cell(text: str) -> bool:
    """A cell holds a word: a run of two letters or more, or a number."""
    return bool(_LETTER_RUN.search(text)) or any(ch.isdigit() for ch in text)


def is_drawing(table: FoundTable) -> bool:
    """Most cells hold single glyphs, and no column holds words: a drawing read as a grid."""
    rows = table.header + table.rows
    filled = [cell for row in rows for cell in row if cell.strip()]
    if not filled:
        return True
    words = sum(1 for cell in filled if is_word_cell(cell))
    if words >= WORD_SHARE * len(filled):
        return False
    columns = max(len(row) for row in rows)
    for c in range(columns):
        in_column = sum(1 for row in rows if c < len(row) and is_word_cell(row[c]))
        if in_column >= 2 and in_column >= WORD_COLUMN * len(rows):
            return False
    return True


def is_glyph_noise(text: str) -> bool:
    """Too few real words to be worth keeping (single letters, marks, control characters)."""
    return len(_WORD.findall(text)) < NOISE_WORDS


def has_words(text: str) -> bool:
    """Text made of words: at least one run of two letters, no more lone glyphs (tokens with
    neither two letters nor a digit) than words, and no control or private-use characters to
    speak of. Numbers ("2.3", "4.6.0") are neither."""
    odd = sum(1 for ch in text if unicodedata.category(ch) in ("Cc", "Co", "Cn") and ch not in "\t\n")
    if odd > 0.1 * max(len(text), 1):
        return False
    words = glyphs = 0
    for token in text.split():
        if _LETTER_RUN.search(token):
            words += 1
        elif not any(ch.isdigit() for ch in token):
            glyphs += 1
    return words >= 1 and glyphs <= words
