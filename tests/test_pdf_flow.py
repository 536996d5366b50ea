"""Paragraphs that run across column and page breaks, words hyphenated across them, and option
lists set as a term in the margin with its text beside it.

Fixtures: pages of our own (an invented drone maker's hangar manual) laid out with pymupdf's Story
API, one Story per column (fixtures/pdf/render.py `render_pages`), so each test decides where a
column or a page ends. Joining a paragraph cut by a break when it ends without sentence punctuation
and goes on in lower case, and joining a word hyphenated at a line end, are common practice in
text extraction; a hanging list of terms is what HTML's <dl> and manual-page option lists show.
"""

from __future__ import annotations

import segment
from segment.adapters.pdf import parse_pdf
from segment.tree import DefinitionList, Document, Paragraph
from tests.conftest import pdf_renderer

S = "The hangar crew checks every rotor before the first flight of the day and writes the result in the log. "
OPTIONS = [
    (
        "--verbose",
        "Print each step as it runs, and the time that each step took to finish, so that a slow step of the check stands out in the log of the drone.",
    ),
    (
        "--dry-run",
        "Show what would change without changing anything on the drone, its firmware or the settings stored in its flight controller.",
    ),
    ("--fleet NAME", "Check every drone of the named fleet in turn, one after the other."),
]


def manual() -> bytes:
    left = (
        "<h1>Rotor inspection</h1>"
        f"<p>{S * 6}</p><p>{S * 5}When the light is poor the crew uses a lamp to judge the blade's ap-</p>"
    )
    right = (
        "<p>pearance, and a blade with a nick is set aside for the workshop.</p>"
        f"<p>{S * 4}Cracked hubs go back to the maker with a note that says when the crack was</p>"
    )
    cell = '<td style="border:none">{}</td>'
    rows = "".join(f"<tr>{cell.format(k)}{cell.format(v)}</tr>" for k, v in OPTIONS)
    page2 = (
        f"<p>first seen and which pilot flew the drone last. {S * 3}</p>"
        f"<h2>Options</h2><table>{rows}</table><p>{S * 2}</p>"
    )
    return pdf_renderer().render_pages([[left, right], [page2]])


def paragraphs(doc: Document) -> list[str]:
    return [b.text for _, s in doc.walk() for b in s.blocks if isinstance(b, Paragraph)]


def test_a_word_hyphenated_across_the_column_break_is_joined() -> None:
    texts = paragraphs(parse_pdf(manual(), "hangar.pdf"))
    joined = next(t for t in texts if "judge the blade" in t)
    assert "judge the blade's appearance, and a blade with a nick" in joined
    assert not any(t.startswith("pearance") for t in texts)


def test_a_paragraph_cut_by_the_page_break_is_one_paragraph() -> None:
    texts = paragraphs(parse_pdf(manual(), "hangar.pdf"))
    assert any("says when the crack was first seen and which pilot" in t for t in texts)
    assert not any(t.startswith("first seen") for t in texts)


def test_an_option_list_in_the_margin_becomes_definitions() -> None:
    doc = parse_pdf(manual(), "hangar.pdf")
    lists = [b for _, s in doc.walk() for b in s.blocks if isinstance(b, DefinitionList)]
    assert len(lists) == 1
    got = [(item.terms[0], item.blocks[0].text) for item in lists[0].items]  # type: ignore[attr-defined]
    assert got == OPTIONS
    text = "\n".join(c.text for c in segment.chunk(doc, segment.Settings()))
    assert "--fleet NAME" in text  # the wrapped term stays whole, not after its text
