"""Chunks of HTML pages: the segmenter on trees from the HTML adapter.

Checks, not golden chunk files (the tree goldens pin the adapter; chunk text belongs to the
segmenter and changes with it): every word of every fixture page's tree reaches its chunks, and
on the bundled demo's API pages (fixtures/demo/api/, our own invented product docs) what a
reader expects holds: the segmentation rules (rows never cut, header repeated; a term stays with
its definitions) and the chunk record (breadcrumb, anchor, lines); boilerplate words never reach a
chunk.
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path

import pytest

import segment
from segment.render import render_row
from segment.tree import Definition, DefinitionList, Table, visible_texts
from tests.conftest import FIXTURES

SETTINGS = segment.Settings(max_tokens=64, min_tokens=16)
CASES = sorted((FIXTURES / "html").glob("*.html"))
DEMO = sorted((FIXTURES / "demo" / "api").glob("*.html"))
WORD = re.compile(r"\w+")


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_every_tree_word_reaches_the_chunks(path: Path) -> None:
    doc = segment.parse(path)
    chunks = list(segment.chunk(doc, SETTINGS))
    have = Counter(WORD.findall("\n".join(c.text + "\n" + " ".join(c.breadcrumb) for c in chunks)))
    want = Counter(WORD.findall(pretty_text(doc)))
    assert not want - have, (want - have).most_common(5)


def pretty_text(doc: segment.Document) -> str:
    """The texts of a tree: headings, paragraphs, code lines, cells, captions, terms, labels."""
    return "\n".join(visible_texts(doc))


def _tree_items(doc: segment.Document, kind: type) -> list:  # type: ignore[type-arg]
    out = []
    for _p, s in doc.walk():
        for b in s.blocks:
            if isinstance(b, kind):
                out.append(b)
            if isinstance(b, DefinitionList) and kind is Definition:
                out.extend(b.items)
    return out


@pytest.mark.parametrize("path", DEMO, ids=[p.name for p in DEMO])
@pytest.mark.parametrize("budget", [64, 256])
def test_demo_page_chunks(path: Path, budget: int) -> None:
    settings = segment.Settings(max_tokens=budget, min_tokens=16)
    doc = segment.parse(path, source=f"api/{path.name}")
    chunks = list(segment.chunk(doc, settings))
    assert chunks and all(c.format == "html" and c.source == f"api/{path.name}" for c in chunks)
    title = doc.title
    assert title is not None and all(c.breadcrumb[0] == title for c in chunks)
    lines = [set(c.text.split("\n")) for c in chunks]
    # Segmentation rule: a table row is never cut, and every part repeats the header row.
    for table in _tree_items(doc, Table):
        header = [render_row(r) for r in table.header]
        for row in table.rows:
            holders = [ls for ls in lines if render_row(row) in ls]
            assert holders, row.cells
            assert all(all(h in ls for h in header) for ls in holders)
    # A term is never separated from its definitions (they fit the budget here).
    for item in _tree_items(doc, Definition):
        term_line = "; ".join(item.terms)
        body = [b.text for b in item.blocks]  # type: ignore[union-attr]
        assert any(term_line in c.text and all(t in c.text for t in body) for c in chunks), term_line
    # The chunk record: anchors come from the page's ids; lines stay inside the main content.
    anchors = {c.anchor for c in chunks}
    assert None not in anchors
    main_lines = doc.root.span.lines
    assert main_lines is not None
    assert all(c.lines and main_lines[0] <= c.lines[0] <= c.lines[1] <= main_lines[1] for c in chunks)
    text = "\n".join(c.text for c in chunks)
    for word in (
        "Skip to the content",
        "Was this page helpful",
        "cookie",
        "Privacy",
        "Service status",
        "API reference",
        "Corvane Fleet docs",
        "Home",
        "Up\n",
        "‹ Errors",
    ):
        assert word not in text, word


def test_errors_page_structure() -> None:
    doc = segment.parse(FIXTURES / "demo" / "api" / "errors.html")
    heads = [(s.heading.level, s.heading.text, s.heading.anchor) for _p, s in doc.walk() if s.heading]
    assert heads == [
        (1, "Errors", "errors"),
        (2, "Error body", "error-body"),
        (2, "Status codes", "status-codes"),
        (2, "Retrying safely", "retrying"),
    ]
    (table,) = _tree_items(doc, Table)
    assert table.caption == "Error codes by HTTP status"
    # rowspan=2 on "400" and colspan=2 on the 429 text, expanded (HTML standard 4.9.12.1).
    assert [r.cells[0] for r in table.rows[:2]] == ["400", "400"]
    assert table.rows[6].cells[2] == table.rows[6].cells[3]
