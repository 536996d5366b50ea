"""Vector drawings with scattered glyphs are not tables, and glyph runs are not headings.

Fixture: a page of our own (an invented drone maker's "rotor chime" notes) rendered with pymupdf's
Story API, with two music staves drawn over the blank space it leaves (five ruled lines each,
single-letter glyphs scattered between them, the way a notation program sets notes) and a run of
a symbol font set large. The rules we hold to are common practice in table extraction: a table
holds words in aligned columns; a heading is made of words.
"""

from __future__ import annotations

import random

import pymupdf

import segment
from segment.adapters.pdf import parse_pdf
from segment.adapters.pdf.glyphs import has_words, is_drawing
from segment.adapters.pdf.table_words import FoundTable
from segment.tree import Document, Paragraph, Table
from tests.conftest import pdf_renderer

PARA = (
    "After the tune the pilot waits for the green light before taking off. A drone that plays a"
    " different tune must be grounded and checked by the crew lead."
)


def chime_page(labels: tuple[str, ...] = ()) -> bytes:
    html = (
        "<h1>Tuning the rotor chime</h1><p>The Kestrel Aerial drones play a short tune when the"
        " rotors are armed. The notes are printed below.</p>"
        f'<p style="margin-top:190pt">{PARA}</p><p>{PARA}</p>'
        "<h2>Chime variants</h2><p>Older airframes play a shorter chime with the same meaning.</p>"
        f"<p>{PARA}</p><p>{PARA}</p>"
        f'<p style="margin-top:60pt">{PARA}</p><p>{PARA}</p><p>{PARA}</p>'
    )
    doc = pymupdf.open(stream=pdf_renderer().render_html(html).data, filetype="pdf")
    page = doc[0]
    for top in (140, 220):
        for k in range(5):
            page.draw_line((72, top + 8 * k), (520, top + 8 * k), width=0.6)
        rnd = random.Random(top)
        for i in range(14):
            y = top + rnd.choice([4, 12, 20, 28]) + 3
            page.insert_text((90 + i * 30, y), rnd.choice("SbSqS"), fontsize=9, fontname="helv")
        page.insert_text((76, top + 20), "bb", fontsize=9, fontname="helv")
    for n, label in enumerate(labels):
        page.insert_text((300 + 90 * n, 232), label, fontsize=9, fontname="helv")
    page.insert_text((72, 535), "h h h h h", fontsize=16, fontname="symb")
    data = doc.tobytes()
    doc.close()
    return data


def blocks(doc: Document) -> list[object]:
    return [b for _, s in doc.walk() for b in s.blocks]


def headings(doc: Document) -> list[str]:
    return [s.heading.text for _, s in doc.walk() if s.heading is not None]


def test_staves_are_not_tables_and_their_glyphs_are_dropped_with_a_warning() -> None:
    doc = parse_pdf(chime_page(), "chime.pdf", use_outline=False)
    assert not any(isinstance(b, Table) for b in blocks(doc))
    assert sum("scattered glyphs of a drawing" in w for w in doc.warnings) == 2
    text = "\n".join(c.text for c in segment.chunk(doc, segment.Settings()))
    assert "| S |" not in text and "bb" not in text.split()
    assert text.count(PARA) == 7  # every paragraph around the drawings is kept


def test_a_drawing_with_words_keeps_them_as_figure_text() -> None:
    doc = parse_pdf(chime_page(labels=("Allegro", "softly", "repeat")), "chime.pdf", use_outline=False)
    assert not any(isinstance(b, Table) for b in blocks(doc))
    figure = [b for b in blocks(doc) if isinstance(b, Paragraph) and "Allegro" in b.text]
    assert figure and "softly" in figure[0].text and "repeat" in figure[0].text


def test_a_symbol_font_run_is_not_a_heading() -> None:
    doc = parse_pdf(chime_page(), "chime.pdf", use_outline=False)
    assert headings(doc) == ["Tuning the rotor chime", "Chime variants"]
    assert any(isinstance(b, Paragraph) and b.text == "h h h h h" for b in blocks(doc))


def test_tables_of_words_and_numbers_stay_tables() -> None:
    def table(rows: list[list[str]]) -> FoundTable:
        return FoundTable(1, (0, 0, 100, 100), [], rows, [], "grid")

    assert not is_drawing(table([["Pack", "Charge"], ["B1", "80"], ["B2", "75"]]))
    # A feature matrix: marks in most cells, but a column of words.
    assert not is_drawing(table([["GPS", "x", ""], ["Camera", "", "x"], ["Lidar", "x", "x"]]))
    assert is_drawing(table([["S", "", "b", "S"], ["", "q", "", ""], ["bb", "", "S", ""]]))


def test_headings_need_words() -> None:
    assert has_words("2.3 Battery care") and has_words("Appendix A") and has_words("C++ API")
    assert has_words("22.5 Version 4.6.0") and has_words("A.1 Part One")
    assert not has_words("h h h h") and not has_words("\x01\x02 \x03") and not has_words("• • •")
