"""What a chunk's text says about where it was cut: pure functions on one or two chunk texts.

They work on any chunking whose text follows our rendering (pipe tables, fenced code, `- ` and
`1. ` list markers), so the baselines are measured by the same rules as our chunks.
"""

from __future__ import annotations

import re

TERMINAL = frozenset(".!?:;…。！？")
"""Characters that end a sentence (or a lead-in: a colon before a list or a table)."""
CLOSERS = "\"')]}»”’*_`"
"""Closing quotes, brackets and emphasis marks that may follow the terminal mark."""
LIST_MARKER = re.compile(r"^\s*(?:[-*+•]|\d{1,9}[.)])\s")


def last_line(text: str) -> str:
    """The last line with text on it ('' when there is none)."""
    for line in reversed(text.splitlines()):
        if line.strip():
            return line
    return ""


def first_line(text: str) -> str:
    """The first line with text on it ('' when there is none)."""
    for line in text.splitlines():
        if line.strip():
            return line
    return ""


def is_table_row(line: str) -> bool:
    """A whole pipe-table row: starts and ends with a pipe."""
    s = line.strip()
    return len(s) >= 2 and s.startswith("|") and s.endswith("|")


def is_fence(line: str) -> bool:
    """A code fence line (opening or closing)."""
    return line.strip().startswith("```")


def open_fence(text: str) -> bool:
    """True when the text ends inside a fenced code block (an odd number of fence lines)."""
    if "```" not in text:
        return False
    return sum(1 for line in text.splitlines() if is_fence(line)) % 2 == 1


def ends_mid_sentence(text: str, blocks: list[str] | None = None) -> bool:
    """True when the text's last line is prose that stops without a sentence-ending mark.

    Table rows, code and heading-only chunks are not prose; a chunk ending inside a code block is
    a cut code block (counted there), not a mid-sentence end. A list item counts as prose: an
    item cut off before its full stop is a sentence cut in two.
    """
    if blocks == ["heading"]:
        return False
    line = last_line(text)
    if not line or is_table_row(line) or is_fence(line) or open_fence(text):
        return False
    stripped = line.rstrip().rstrip(CLOSERS)
    return bool(stripped) and stripped[-1] not in TERMINAL


def ends_in_row_part(text: str) -> bool:
    """True when the last line is the first part of a table row (starts with a pipe, unclosed)."""
    line = last_line(text).strip()
    return line.startswith("|") and not line.endswith("|")
