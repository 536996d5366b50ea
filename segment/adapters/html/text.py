"""Inline text: whitespace collapsed as HTML renders it, `<br>` kept as a line break."""

from __future__ import annotations

import re
from collections.abc import Iterable

from lxml import etree

from segment.adapters.html.clean import BREAK

_WS = re.compile(r"[ \t\n\r\f]+")
"""ASCII whitespace, the set HTML collapses (a no-break space is kept)."""


def collapse(raw: str, breaks: bool = True) -> str:
    """Collapse whitespace; `<br>` markers become `\\n` (or a space when `breaks` is False)."""
    text = _WS.sub(" ", raw)
    if BREAK in text:
        if not breaks:
            return _WS.sub(" ", text.replace(BREAK, " ")).strip(" ")
        lines = [line.strip(" ") for line in text.split(BREAK)]
        text = "\n".join(lines).strip("\n")
    return text.strip(" ")


def flat_text(el: etree._Element, breaks: bool = False) -> str:
    """All text under `el` (not its tail) on one line, or with `<br>` breaks when asked."""
    return collapse("".join(el.itertext()), breaks)


def text_of(pieces: Iterable[str | None]) -> str:
    """Join raw text pieces (None skipped)."""
    return "".join(p for p in pieces if p)


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
