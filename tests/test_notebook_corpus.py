"""The notebook adapter on the shared corpus (../shared/corpus/ipynb, IPython's example notebooks,
licence in its SOURCE.md): with outputs off, every Markdown cell's words and every code line are
present, heading paths are right across cells, and no output text reaches the chunks."""

from __future__ import annotations

from pathlib import Path

import nbformat
import pytest

import segment
from segment.adapters.markdown import parse as parse_markdown
from segment.adapters.notebook import cell_text
from segment.settings import Settings
from tests.conftest import corpus_files
from tests.test_notebook import assert_cells_kept

pytestmark = pytest.mark.corpus
FILES = corpus_files("ipynb", ".ipynb")
SETTINGS = Settings(max_tokens=256, min_tokens=32)


def _ids(p: Path) -> str:
    return p.stem


@pytest.fixture(params=FILES or [None], ids=_ids if FILES else ["absent"])
def notebook(request: pytest.FixtureRequest) -> Path:
    if request.param is None:
        pytest.skip("shared corpus not present: shared/corpus/ipynb")
    path: Path = request.param
    return path


def test_every_markdown_word_and_code_line_present(notebook: Path) -> None:
    assert_cells_kept(notebook, segment.chunk_file(notebook, SETTINGS))


def test_heading_paths_follow_the_headings_of_earlier_cells(notebook: Path) -> None:
    nb = nbformat.read(notebook, as_version=4)
    doc = segment.parse(notebook)
    # The heading paths a reader passes through in each cell, from the cells' own Markdown.
    reached: dict[int, list[list[str]]] = {}
    path: list[tuple[int, str]] = []
    for number, cell in enumerate(nb.cells, start=1):
        seen = [[t for _, t in path]]
        if cell.cell_type == "markdown":
            cell_doc = parse_markdown(cell_text(cell.source).encode(), "cell.md")
            for _ancestors, section in cell_doc.walk():
                if section.heading is None:
                    continue
                level = section.heading.level
                path = [(lv, t) for lv, t in path if lv < level] + [(level, section.heading.text)]
                seen.append([t for _, t in path])
        reached[number] = seen
    for chunk in segment.chunk(doc, SETTINGS):
        assert chunk.cells is not None and chunk.lines is None
        crumb = list(chunk.breadcrumb)
        if doc.title and crumb[:1] == [doc.title]:
            crumb = crumb[1:]
        candidates = reached[chunk.cells[0]]
        stripped = [p[1:] if doc.title and p[:1] == [doc.title] else p for p in candidates]
        assert any(p[: len(crumb)] == crumb for p in candidates + stripped), (
            f"{notebook.name} chunk {chunk.seq} (cell {chunk.cells[0]}): {chunk.breadcrumb}"
        )


def test_no_output_text_in_chunks(notebook: Path) -> None:
    nb = nbformat.read(notebook, as_version=4)
    sources = "\n".join(cell_text(c.source) for c in nb.cells)
    outputs: list[str] = []
    for cell in nb.cells:
        for output in cell.get("outputs", []):
            texts = [cell_text(output.get("text"))]
            texts += [cell_text(v) for v in output.get("data", {}).values() if isinstance(v, (str, list))]
            texts += [cell_text(output.get("traceback"))]
            for text in texts:
                # Distinctive output lines: long enough, and not also written in some cell.
                outputs += [
                    ln.strip()
                    for ln in text.split("\n")
                    if len(ln.strip()) >= 24 and ln.strip() not in sources
                ]
    chunk_text = "\n".join(c.text for c in segment.chunk_file(notebook, SETTINGS))
    leaked = [o for o in outputs if o in chunk_text]
    assert not leaked, f"{notebook.name}: output text in chunks: {leaked[:3]}"
