"""Bad input named `.ipynb`: chunks or a clear error naming the file, never a traceback or a hang
(reliability scenarios: corrupt and truncated files, huge inputs). Hangs are caught by
pytest-timeout, not by timing asserts. Notebooks are written with nbformat's v4 API."""

from __future__ import annotations

import json
from pathlib import Path

import nbformat
import pytest
from nbformat import v4

import segment
from segment.settings import Settings


def _write(tmp_path: Path, name: str, data: bytes) -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


def _good() -> bytes:
    nb = v4.new_notebook()
    nb.cells = [v4.new_markdown_cell("# Hangar log\n\nThe hangar crew logs every battery swap.")]
    return nbformat.writes(nb).encode()


@pytest.mark.parametrize(
    ("name", "data", "why"),
    [
        ("truncated.ipynb", _good()[:-40], "invalid JSON"),
        ("empty.ipynb", b"", "invalid JSON"),
        ("list.ipynb", b"[1, 2, 3]", "no `nbformat` version"),
        ("config.ipynb", b'{"name": "not a notebook"}', "no `nbformat` version"),
        ("no-cells.ipynb", b'{"nbformat": 4, "nbformat_minor": 5, "metadata": {}}', "no list of cells"),
        ("future-zero.ipynb", b'{"nbformat": 0, "cells": []}', "could not be converted"),
        ("png.ipynb", b"\x89PNG\r\n\x1a\n" + b"\x00" * 64, "a PNG image"),
        ("deep.ipynb", b"[" * 100_000 + b"]" * 100_000, "Jupyter notebook"),
    ],
)
def test_not_a_notebook_is_corrupt_with_a_reason(tmp_path: Path, name: str, data: bytes, why: str) -> None:
    path = _write(tmp_path, name, data)
    with pytest.raises(segment.ParseError) as info:
        segment.chunk_file(path, source=name)
    assert info.value.status == "corrupt"
    assert name in str(info.value) and why in info.value.reason


def test_fifty_megabyte_output(tmp_path: Path) -> None:
    nb = v4.new_notebook()
    nb.cells = [
        v4.new_markdown_cell("# Telemetry dump\n\nThe cell below prints the raw log."),
        v4.new_code_cell(
            "print(raw_log)", outputs=[v4.new_output("stream", name="stdout", text="x" * 50_000_000)]
        ),
    ]
    path = _write(tmp_path, "dump.ipynb", nbformat.writes(nb).encode())
    chunks = segment.chunk_file(path)
    text = "\n".join(c.text for c in chunks)
    assert "print(raw_log)" in text and "xxxxxxxx" not in text
    on = segment.parse(path, Settings(notebook_outputs=True))
    assert any("cut to" in w for w in on.warnings)
    assert sum(len(c.text) for c in segment.chunk(on)) < 200_000


@pytest.mark.timeout(240)
def test_a_hundred_thousand_cells(tmp_path: Path) -> None:
    # Cells as nbformat's v4 API makes them, serialised directly (nbformat.writes would validate
    # 100,000 cells once more, outside what is being tested).
    nb = v4.new_notebook()
    nb.cells = [
        v4.new_markdown_cell(f"## Sortie {i}\n\nBattery swap {i} logged.")
        if i % 2
        else v4.new_code_cell(f"swap({i})")
        for i in range(100_000)
    ]
    path = _write(tmp_path, "many.ipynb", json.dumps(nb).encode())
    chunks = segment.chunk_file(path, Settings(max_tokens=512))
    assert chunks[-1].cells is not None and chunks[-1].cells[1] == 100_000
    text = "\n".join(c.text for c in chunks)
    assert "swap(99998)" in text and "Battery swap 99999 logged." in text


def test_cells_that_are_not_objects_are_skipped_with_a_warning(tmp_path: Path) -> None:
    data = json.loads(_good())
    data["cells"] = [42, *data["cells"], {"cell_type": "mystery", "source": "?"}]
    path = _write(tmp_path, "odd.ipynb", json.dumps(data).encode())
    doc = segment.parse(path)
    assert any("cell 1: not a JSON object" in w for w in doc.warnings)
    assert any("cell 3: unknown cell type" in w for w in doc.warnings)
    assert "battery swap" in "\n".join(c.text for c in segment.chunk(doc))
