"""The bundled demo manual (fixtures/demo/manuals/operations-guide.pdf, made by
fixtures/demo/make_pdf.py from our own HTML): what a user sees when they try the PDF adapter."""

from __future__ import annotations

import pymupdf
import pytest

import segment
from segment.adapters.pdf import parse_pdf
from segment.tree import Code, ListBlock, Table
from tests.conftest import FIXTURES

DEMO = FIXTURES / "demo" / "manuals" / "operations-guide.pdf"


@pytest.fixture(scope="module")
def data() -> bytes:
    return DEMO.read_bytes()


def test_outline_names_and_levels_every_heading(data: bytes) -> None:
    # Reference: the PDF's own outline (ISO 32000-1 12.3.3), read with pymupdf's get_toc().
    with pymupdf.open(stream=data, filetype="pdf") as doc:
        toc = [(lvl, title) for lvl, title, _ in doc.get_toc()]
        assert doc.page_count >= 2
    parsed = parse_pdf(data, DEMO.name)
    got = [(s.heading.level, s.heading.text) for _, s in parsed.walk() if s.heading]
    assert got == toc
    assert parsed.title == "Corvane Fleet Operations Guide"


def test_fonts_alone_find_the_same_headings(data: bytes) -> None:
    with pymupdf.open(stream=data, filetype="pdf") as doc:
        toc = [(lvl, title) for lvl, title, _ in doc.get_toc()]
    parsed = parse_pdf(data, DEMO.name, use_outline=False)
    got = [(s.heading.level, s.heading.text) for _, s in parsed.walk() if s.heading]
    assert [t for _, t in got] == [t for _, t in toc]
    assert [lvl for lvl, _ in got] == [lvl for lvl, _ in toc]


def test_running_head_and_page_numbers_removed(data: bytes) -> None:
    parsed = parse_pdf(data, DEMO.name)
    assert parsed.metadata["removed_running_lines"] == 2 * parsed.metadata["pages"]
    text = "\n".join(c.text for c in segment.chunk(parsed))
    assert "Page 1 of" not in text and "Page 2 of" not in text


def test_table_split_by_the_page_break_is_one_table(data: bytes) -> None:
    parsed = parse_pdf(data, DEMO.name)
    tables = [b for _, s in parsed.walk() for b in s.blocks if isinstance(b, Table)]
    assert len(tables) == 1
    table = tables[0]
    assert table.header[0].cells == ["Check", "Interval", "Who signs", "Typical duration"]
    assert [r.cells[0] for r in table.rows] == [
        "Pre-flight visual",
        "Motor and bearing test",
        "Battery capacity test",
        "Depot overhaul",
    ]


def test_lists_and_code(data: bytes) -> None:
    parsed = parse_pdf(data, DEMO.name)
    blocks = [b for _, s in parsed.walk() for b in s.blocks]
    lists = [b for b in blocks if isinstance(b, ListBlock)]
    assert [len(lst.items) for lst in lists] == [4, 3] and lists[0].ordered and not lists[1].ordered
    code = next(b for b in blocks if isinstance(b, Code))
    assert code.lines[0].startswith("nwctl airframe check ND6-0217")
    assert code.lines[1].startswith("    --reading front-left=0.32")


def test_chunks_carry_pages_and_breadcrumbs(data: bytes, tmp_path: object) -> None:
    chunks = segment.chunk_file(DEMO, segment.Settings(max_tokens=128, min_tokens=16))
    assert chunks and all(c.format == "pdf" and c.pages for c in chunks)
    assert {c.pages[0] for c in chunks} == {1, 2}
    lost = next(c for c in chunks if "eight seconds" in c.text)
    assert lost.breadcrumb[-1] == "3.1 Lost link" and lost.anchor == "page=2"
