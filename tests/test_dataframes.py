"""Chunks as a Dask DataFrame over fsspec URLs: the same records as `segment chunks`, errors as rows."""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from segment import Settings
from segment.cli import cli
from tests.conftest import FIXTURES

dask = pytest.importorskip("dask", reason="the Dask API needs the cluster extra")
pytest.importorskip("dask.dataframe", reason="the Dask API needs the cluster extra")
fsspec = pytest.importorskip("fsspec", reason="the Dask API needs the cluster extra")

from segment.dataframes import chunk_dataframes, list_sources  # noqa: E402

SETTINGS = Settings(max_tokens=128)
PAGES = {
    "site/guides/getting-started.md": (FIXTURES / "demo" / "guides" / "getting-started.md").read_bytes(),
    "site/reference/limits.md": (FIXTURES / "demo" / "reference" / "limits.md").read_bytes(),
    "site/api/errors.html": (FIXTURES / "demo" / "api" / "errors.html").read_bytes(),
}


@pytest.fixture
def memory_site() -> object:
    fs = fsspec.filesystem("memory")
    for name, data in PAGES.items():
        fs.pipe(f"/{name}", data)
    fs.pipe("/site/broken.pdf", b"%PDF-1.7\nnot really")
    fs.pipe("/site/logo.svg", b"<svg/>")  # no adapter: not listed
    yield fs
    fs.rm("/site", recursive=True)


def cli_records(root: Path, names: list[str]) -> list[dict[str, object]]:
    """`segment chunks` on real files with the same relative names, run from `root`."""
    for name in names:
        (root / name).parent.mkdir(parents=True, exist_ok=True)
        (root / name).write_bytes(PAGES[name])
    cwd = os.getcwd()
    os.chdir(root)
    try:
        result = CliRunner().invoke(cli, ["chunks", "--max-tokens", "128", *names])
    finally:
        os.chdir(cwd)
    assert result.exit_code == 0, result.output
    return [json.loads(line) for line in result.stdout.splitlines()]


def frame_records(frame: object) -> list[dict[str, object]]:
    """Rows of a computed frame as JSON-ready dicts (lists as lists, missing as None)."""
    pdf = frame.compute(scheduler="sync")  # type: ignore[attr-defined]
    rows = []
    for row in pdf.to_dict(orient="records"):
        rows.append(
            {k: (list(v) if hasattr(v, "tolist") or isinstance(v, tuple) else v) for k, v in row.items()}
        )
    return rows


def test_files_named_by_url_give_the_records_segment_chunks_gives(
    memory_site: object, tmp_path: Path
) -> None:
    names = sorted(PAGES)
    frames = chunk_dataframes([f"memory://{n}" for n in names], SETTINGS)
    got = frame_records(frames.chunks)
    want = cli_records(tmp_path, names)
    assert len(got) == len(want)
    for mine, theirs in zip(got, want):
        mine["properties"] = json.loads(str(mine["properties"]))  # an object column holds JSON text
        assert {k: mine[k] for k in theirs} == theirs  # ids, locators, text: every field equal


def test_a_folder_url_stands_for_its_supported_files_named_below_it(memory_site: object) -> None:
    listed = list_sources(["memory://site"])
    assert [s.source for s in listed] == sorted(
        ["api/errors.html", "broken.pdf", "guides/getting-started.md", "reference/limits.md"]
    )


def test_a_file_that_fails_is_a_row_of_errors_and_the_graph_still_computes(memory_site: object) -> None:
    frames = chunk_dataframes(["memory://site"], SETTINGS, files_per_partition=2)
    chunks, errors = dask.compute(frames.chunks, frames.errors, scheduler="sync")
    assert set(chunks["source"]) == {"api/errors.html", "guides/getting-started.md", "reference/limits.md"}
    assert errors.to_dict(orient="records") == [
        {"source": "broken.pdf", "status": "corrupt", "reason": errors["reason"].iloc[0]}
    ]
    assert "broken.pdf" not in set(chunks["source"])


def test_the_chunks_frame_writes_a_parquet_dataset_by_format(memory_site: object, tmp_path: Path) -> None:
    pytest.importorskip("pyarrow")
    from segment.columnar import read_dataset

    frames = chunk_dataframes(["memory://site"], SETTINGS)
    frames.write_parquet(tmp_path / "pq", compute_kwargs={"scheduler": "sync"})
    table = read_dataset(tmp_path / "pq")
    computed = frames.chunks.compute(scheduler="sync")
    assert table.num_rows == len(computed)
    assert sorted(table.column("id").to_pylist()) == sorted(computed["id"])
    assert sorted({p.name for p in (tmp_path / "pq").iterdir()}) == ["format=html", "format=markdown"]
