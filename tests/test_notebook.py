"""The notebook adapter on our own fixtures (fixtures/notebook, written with nbformat's v4 API by
fixtures/notebook/make_notebooks.py; one with the v3 API).

Golden files: `<case>.tree.txt` (the tree's pretty form; for notebooks the `L` spans count cells)
and `<case>.chunks.jsonl` (chunks at max_tokens=64, min_tokens=16). DOCSEGMENT_REGEN=1 rewrites.
"""

from __future__ import annotations

import importlib.util
import json
from pathlib import Path
from types import ModuleType

import nbformat
import pytest

import segment
from segment.adapters.notebook import cell_text
from segment.settings import Settings
from segment.tree import pretty
from tests.conftest import FIXTURES, check_golden

FOLDER = FIXTURES / "notebook"
CASES = sorted(FOLDER.glob("*.ipynb"))
SETTINGS = Settings(max_tokens=64, min_tokens=16)


def _scenarios() -> ModuleType:
    spec = importlib.util.spec_from_file_location("make_notebooks", FOLDER / "make_notebooks.py")
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


MAKE = _scenarios()
OUTPUT_TEXTS = [
    MAKE.STREAM_OUT,
    MAKE.RESULT_OUT,
    MAKE.MARKDOWN_OUT,
    MAKE.TRACEBACK_OUT,
    MAKE.HTML_OUT,
    MAKE.PNG_OUT,
]


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    check_golden(path.with_suffix(".tree.txt"), pretty(segment.parse(path)))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    chunks = segment.chunk_file(path, SETTINGS, source=path.name)
    check_golden(path.with_suffix(".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))


@pytest.mark.parametrize("path", [p for p in CASES if p.stem != "invalid-schema"], ids=lambda p: p.stem)
def test_fixtures_pass_nbformats_validator(path: Path) -> None:
    # nbformat's own validator (the notebook format's JSON schema) accepts every fixture but one.
    nbformat.validate(nbformat.read(path, as_version=4))
    assert not segment.parse(path).warnings


def test_a_notebook_failing_validation_is_read_leniently_with_a_warning() -> None:
    path = FOLDER / "invalid-schema.ipynb"
    with pytest.raises(nbformat.ValidationError):  # nbformat's validator rejects it
        nbformat.validate(json.loads(path.read_text()))
    doc = segment.parse(path)
    assert any("nbformat's validator" in w for w in doc.warnings)
    text = "\n".join(c.text for c in segment.chunk(doc))
    assert "dock.self_test()" in text and "Run these steps before the first sortie." in text


def test_locator_is_cells_and_lines_are_null() -> None:
    chunks = segment.chunk_file(FOLDER / "fleet-telemetry.ipynb", SETTINGS)
    assert all(c.lines is None and c.pages is None for c in chunks)
    assert all(c.cells is not None and 1 <= c.cells[0] <= c.cells[1] <= 10 for c in chunks)
    cleaning = next(c for c in chunks if "convert rotor temperatures" in c.text)
    assert cleaning.cells is not None and cleaning.cells[0] == 4


def test_other_formats_have_no_cells() -> None:
    chunks = segment.chunk_file(FIXTURES / "markdown" / "tables.md")
    assert all(c.cells is None and c.lines is not None for c in chunks)


def test_headings_from_all_cells_build_one_section_tree() -> None:
    chunks = segment.chunk_file(FOLDER / "r-kernel.ipynb", Settings(max_tokens=32, min_tokens=0))
    notes = next(c for c in chunks if "in a cell of their own" in c.text)
    # The cell has no heading of its own: it belongs to the `###` of the cell before it.
    # No top-level heading: the title is derived from the file name and heads every path.
    assert notes.breadcrumb == ["R kernel", "Wind limits by airframe", "Quadcopters"]
    fixed = next(c for c in chunks if "15 m/s" in c.text)
    assert fixed.breadcrumb == ["R kernel", "Fixed wing"]


def test_code_cells_take_the_kernels_language() -> None:
    doc = segment.parse(FOLDER / "r-kernel.ipynb")
    text = "\n".join(c.text for c in segment.chunk(doc))
    assert "```R\ngusts <- read.csv('gusts.csv')" in text
    assert doc.properties == {"kernel_language": "R"}


def test_properties_from_notebook_metadata() -> None:
    doc = segment.parse(FOLDER / "fleet-telemetry.ipynb")
    assert doc.properties == {
        "title": "Fleet telemetry walkthrough",
        "authors": ["Mira Okafor", "Tomasz Wren"],
        "kernel_language": "python",
    }
    assert doc.title == "Fleet telemetry walkthrough"


def test_outputs_are_off_by_default_and_never_reach_the_text() -> None:
    chunks = segment.chunk_file(FOLDER / "fleet-telemetry.ipynb", SETTINGS)
    text = "\n".join(c.text for c in chunks)
    for output in OUTPUT_TEXTS:
        assert output not in text


def test_text_outputs_when_switched_on_but_never_tracebacks_images_or_html() -> None:
    settings = Settings(max_tokens=64, min_tokens=16, notebook_outputs=True)
    text = "\n".join(c.text for c in segment.chunk_file(FOLDER / "fleet-telemetry.ipynb", settings))
    assert MAKE.STREAM_OUT in text
    assert MAKE.RESULT_OUT in text  # text/plain chosen over text/html
    assert "Mean cycle count per pack is 184" in text  # text/markdown read as Markdown
    for never in (MAKE.TRACEBACK_OUT, MAKE.HTML_OUT, MAKE.PNG_OUT, "dataframe", "iVBOR"):
        assert never not in text


def test_every_markdown_word_and_code_line_is_kept() -> None:
    for path in CASES:
        assert_cells_kept(path, segment.chunk_file(path, SETTINGS))


def assert_cells_kept(path: Path, chunks: list[segment.Chunk]) -> None:
    """Every word of every Markdown cell (as the Markdown adapter reads it) and every code line
    reaches some chunk's text or breadcrumb."""
    notebook = nbformat.read(path, as_version=4)
    haystack = "\n".join(c.text for c in chunks) + "\n" + "\n".join(" ".join(c.breadcrumb) for c in chunks)
    words = set(haystack.split())
    lines = {line.strip() for c in chunks for line in c.text.split("\n")}
    for number, cell in enumerate(notebook.cells, start=1):
        source = cell_text(cell.get("source"))
        if cell.cell_type == "markdown":
            cell_doc = segment.parse_bytes(source.encode(), "cell.md")
            for text in segment.tree.visible_texts(cell_doc):
                for word in text.split():
                    assert word in words or word in haystack, f"{path.name} cell {number}: {word!r} lost"
        elif cell.cell_type in ("code", "raw"):
            for line in source.split("\n"):
                if line.strip():
                    assert line.strip() in lines, f"{path.name} cell {number}: code line {line!r} lost"
