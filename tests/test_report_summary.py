"""`segment report OUT`: the summary of an output folder, checked against the chunk files.

Every figure checked here is recomputed in the test from the chunk files alone (json + numpy),
never through the report package, so the two computations stand apart.
"""

from __future__ import annotations

import json
from collections import Counter
from pathlib import Path
from typing import Any

import jsonschema
import numpy
import pytest
from click.testing import CliRunner

from segment.cli import cli
from segment.settings import Settings
from tests.conftest import ROOT
from tests.report_helpers import build, chunk_records, demo_copy, markdown_corpus_256

__all__ = ["markdown_corpus_256"]  # a session fixture shared with the comparison tests

SCHEMA = json.loads((ROOT / "segment" / "report" / "summary.schema.json").read_text(encoding="utf-8"))


def report_json(out: Path, *extra: str) -> dict[str, Any]:
    result = CliRunner().invoke(cli, ["report", str(out), "--json", *extra], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    data: dict[str, Any] = json.loads(result.stdout)
    jsonschema.validate(data, SCHEMA)
    return data


def check_against_chunk_files(data: dict[str, Any], out: Path, budget: int) -> None:
    """Chunk counts, token quartiles, oversize, breadcrumb depth and heading-only chunks."""
    records = chunk_records(out)
    figures = data["figures"]
    assert figures["chunks"] == len(records)
    assert figures["chunks_by_format"] == dict(sorted(Counter(r["format"] for r in records).items()))
    for fmt in {r["format"] for r in records}:
        tokens = numpy.array([r["tokens"] for r in records if r["format"] == fmt])
        stats = figures["tokens"][fmt]
        assert stats["min"] == tokens.min() and stats["max"] == tokens.max()
        # numpy's default percentile (linear interpolation) is the rule the report documents
        for key, q in (("q1", 25), ("median", 50), ("q3", 75)):
            assert stats[key] == pytest.approx(numpy.percentile(tokens, q))
        assert stats["budget_share"] == pytest.approx(tokens.mean() / budget, abs=1e-4)
    assert len(figures["oversize"]) == sum(1 for r in records if r["oversize"])
    assert len(figures["over_budget_unflagged"]) == sum(
        1 for r in records if r["tokens"] > budget and not r["oversize"]
    )
    depth = Counter(len(r["breadcrumb"]) for r in records)
    assert figures["breadcrumb_depth"] == {str(k): v for k, v in sorted(depth.items())}
    assert len(figures["heading_only"]) == sum(1 for r in records if r["blocks"] == ["heading"])


def test_demo_summary_matches_the_chunk_files(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out", Settings(max_tokens=128))
    data = report_json(out)
    assert data["budget"] == 128 and data["budget_known"]
    check_against_chunk_files(data, out, 128)
    assert data["files"] == 8
    assert data["files_by_format"] == {"html": {"ok": 2}, "markdown": {"ok": 5}, "pdf": {"ok": 1}}
    # At 128 tokens the Commands table of reference/cli.md (25 rows) must be cut into parts.
    tables = [b for b in data["figures"]["split_blocks"] if b["kind"] == "table"]
    assert any(b["source"] == "reference/cli.md" and b["parts"] >= 3 for b in tables)
    assert data["failed"] == [] and data["no_chunks"] == []


def test_text_report_names_each_section(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out")
    result = CliRunner().invoke(cli, ["report", str(out)], catch_exceptions=False)
    assert result.exit_code == 0
    for label in (
        "files:",
        "chunks:",
        "tokens:",
        "ends mid-sentence:",
        "tables cut into parts:",
        "breadcrumb depth:",
        "repeated in other sources:",
        "failed files:",
    ):
        assert label in result.stdout
    assert result.stderr == ""


def test_failed_empty_skipped_and_repeated_files_are_reported(tmp_path: Path) -> None:
    src = tmp_path / "src"
    (src / "v1").mkdir(parents=True)
    (src / "v2").mkdir()
    page = "# Setup\n\nInstall the agent on every dock. Then restart it once.\n"
    (src / "v1" / "setup.md").write_text(page, encoding="utf-8")
    (src / "v2" / "setup.md").write_text(page, encoding="utf-8")  # a versioned copy
    (src / "blank.md").write_text("", encoding="utf-8")  # no chunks, not an error
    (src / "broken.pdf").write_bytes(b"this is not a PDF at all")
    (src / "notes.docx").write_bytes(b"PK\x03\x04")
    out = build(src, tmp_path / "out")
    data = report_json(out)
    assert [(f["source"], f["status"]) for f in data["failed"]] == [("broken.pdf", "corrupt")]
    assert data["no_chunks"] == ["blank.md"]
    assert data["skipped"]["by_reason"] == {"unsupported type": 1}
    groups = data["figures"]["duplicates"]
    assert [g["sources"] for g in groups] == [["v1/setup.md", "v2/setup.md"]]
    top = {p["source"]: p for p in data["top_files"]}
    assert top["broken.pdf"]["failed"] == 1 and top["blank.md"]["no_chunks"] == 1


def test_a_folder_without_output_is_a_clear_error(tmp_path: Path) -> None:
    result = CliRunner().invoke(cli, ["report", str(tmp_path)])
    assert result.exit_code == 1
    assert "no docsegment output" in result.stderr


@pytest.mark.corpus
def test_shared_markdown_corpus_summary_matches_the_chunk_files(markdown_corpus_256: Path) -> None:
    # the shared corpus (../shared/corpus/markdown, licences in its SOURCE.md files)
    out = markdown_corpus_256
    data = report_json(out)
    check_against_chunk_files(data, out, 256)
    assert data["figures"]["chunks"] > 1000


def test_hand_edited_lines_of_the_wrong_shape_are_counted_not_fatal(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out")
    path = out / "chunks" / "reference" / "limits.md.jsonl"
    records = [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]
    records[0]["tokens"] = "many"
    path.write_text("".join(json.dumps(r) + "\n" for r in records) + "{}\n[1, 2]\n", encoding="utf-8")
    data = report_json(out)
    assert data["bad_lines"] == 3
    assert data["figures"]["chunks"] == len(chunk_records(out)) - 3
