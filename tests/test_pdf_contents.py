"""Contents and index pages of a PDF are left out of the chunks by default, and counted.

Fixtures: a small manual of our own (an invented drone maintenance company), rendered with
pymupdf's Story API: a contents page with dot leaders, body chapters, a back-of-book index with
page-number lists. The layouts follow common practice in printed manuals (dot leaders and
right-aligned page numbers in contents; alphabetical index entries with page lists).
"""

from __future__ import annotations

import re

import segment
from segment.adapters.pdf import parse_pdf
from segment.adapters.pdf.contents import page_kind
from segment.adapters.pdf.extract import Line, Piece
from tests.conftest import pdf_renderer

CHAPTERS = [
    ("Pre-flight checks", "Every sortie starts with a walk around the airframe and a look at each rotor."),
    ("Battery care", "Packs are stored at half charge and never left in a hot vehicle overnight."),
    ("Firmware updates", "Updates are staged on one drone first and rolled out to the fleet a day later."),
    ("Field repairs", "A cracked arm is replaced, never glued; the spare kit holds two of each."),
    ("Logbooks", "Each flight is logged with its pilot, its pack and the minutes flown."),
    ("Storage", "Drones rest in padded cases with the propellers removed."),
]
INDEX = [
    "airframe, 3, 7",
    "arm, cracked, 6",
    "battery, 4, 5",
    "cases, padded, 8",
    "charge, half, 4",
    "firmware, 5",
    "fleet rollout, 5",
    "logbook, 7",
    "pilot, 7",
    "propellers, 8",
    "rotor, 3",
    "spare kit, 6",
    "storage, 8",
]


def manual() -> bytes:
    render = pdf_renderer()
    leaders = " ." * 30
    toc = "<h1>Contents</h1>" + "".join(
        f"<p>{n} {title}{leaders} {n + 2}</p>" for n, (title, _) in enumerate(CHAPTERS, 1)
    )
    body = "".join(
        f"<h1>{n} {title}</h1>" + f"<p>{text} " * 1 + "The crew lead signs the sheet when it is done.</p>"
        for n, (title, text) in enumerate(CHAPTERS, 1)
    )
    index = "<h1>Index</h1>" + "".join(f"<p>{entry}</p>" for entry in INDEX)
    return render.joined([render.render_html(part).data for part in (toc, body, index)])


def chunk_texts(doc: segment.Document) -> str:
    return "\n".join(c.text for c in segment.chunk(doc, segment.Settings()))


def test_contents_and_index_pages_are_left_out_and_counted() -> None:
    doc = parse_pdf(manual(), "kestrel-manual.pdf")
    text = chunk_texts(doc)
    assert not re.search(r"(\. ){3,}", text), "dot leaders of the contents page reached a chunk"
    assert "airframe, 3, 7" not in text and "spare kit, 6" not in text
    assert "walk around the airframe" in text  # the body is kept
    assert doc.metadata["contents_pages"] == {"1": "contents", "3": "index"}
    warning = next(w for w in doc.warnings if w.startswith("left out"))
    assert "2 contents and index pages" in warning and "words" in warning


def test_the_setting_keeps_them() -> None:
    settings = segment.Settings(pdf_keep_contents=True)
    doc = segment.parse_bytes(manual(), "kestrel-manual.pdf", settings)
    text = chunk_texts(doc)
    assert "airframe, 3, 7" in text and re.search(r"(\. ){3,}", text)
    assert not any(w.startswith("left out") for w in doc.warnings)


def test_body_pages_with_numbers_are_not_contents() -> None:
    # A page of prose that mentions numbers, and a table of figures, stay in the body.
    lines = [_line(f"Pack B{n} returned with {20 + n} percent charge after flight {n}", n) for n in range(10)]
    assert page_kind(lines) is None


def _line(text: str, row: int) -> Line:
    y = 100 + 14 * row
    line = Line(
        1,
        72,
        y,
        72 + 5 * len(text),
        y + 10,
        [Piece(text, 72, 72 + 5 * len(text), 10, False, False, False, False)],
        0,
    )
    line.finish()
    return line
