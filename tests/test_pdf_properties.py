"""A PDF's document information becomes the document's properties, as the author declared it.

Reference: ISO 32000-1 section 14.3.3 (the document information dictionary: Title, Author,
Subject, Keywords are text strings); the fixtures are written with pymupdf's `set_metadata`,
which fills that dictionary.
"""

from __future__ import annotations

import json

import pymupdf

from segment.adapters.pdf import parse_pdf
from segment.adapters.pdf.properties import document_properties
from tests.conftest import pdf_renderer

BODY = (
    "<h1>Hangar checks</h1><p>Every drone of the Kestrel Aerial fleet is checked before its first sortie.</p>"
)


def with_info(info: dict[str, str]) -> bytes:
    """A one-page PDF of our own whose document information is `info`."""
    data = pdf_renderer().render_html(BODY).data
    doc = pymupdf.open(stream=data, filetype="pdf")
    doc.set_metadata(info)
    out = doc.tobytes()
    doc.close()
    return out


def test_title_author_subject_and_keywords_are_kept() -> None:
    data = with_info(
        {
            "title": "Hangar checks",
            "author": "Kestrel Aerial  maintenance team",
            "subject": "Pre-flight inspection",
            "keywords": "drones, inspection; batteries ,,",
            "creator": "a word processor",
            "producer": "a PDF library",
        }
    )
    doc = parse_pdf(data, "hangar.pdf")
    assert doc.properties == {
        "title": "Hangar checks",
        "author": "Kestrel Aerial maintenance team",
        "subject": "Pre-flight inspection",
        "keywords": ["drones", "inspection", "batteries"],
    }
    json.dumps(doc.properties)  # JSON scalars and lists of strings only


def test_empty_entries_are_left_out() -> None:
    doc = parse_pdf(with_info({"title": "  ", "author": "", "keywords": " ; "}), "blank.pdf")
    assert doc.properties == {}


def test_nothing_of_ours_goes_into_properties() -> None:
    # No file name, page count or locator: those are ours and live in the metadata.
    doc = parse_pdf(with_info({"subject": "Pre-flight inspection"}), "hangar.pdf")
    assert doc.properties == {"subject": "Pre-flight inspection"}
    assert "pages" in doc.metadata


def test_keywords_without_separators_are_one_entry() -> None:
    assert document_properties({"keywords": "drone maintenance"}) == {"keywords": ["drone maintenance"]}


def test_control_characters_and_odd_values_are_cleaned() -> None:
    got = document_properties({"title": "Hangar\x00 checks\n", "author": None, "format": "PDF 1.7"})
    assert got == {"title": "Hangar checks"}
