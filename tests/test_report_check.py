"""`segment check OUT`: exit 0 on a good output, 1 with every breach printed on a broken one."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner, Result

from segment.cli import cli
from segment.settings import Settings, load_settings
from tests.report_helpers import build, demo_copy


def check(out: Path, *args: str) -> Result:
    return CliRunner().invoke(cli, ["check", str(out), *args], catch_exceptions=False)


def test_a_good_output_passes_with_no_thresholds(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out")
    result = check(out)
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith("ok: ")


def test_a_broken_output_fails_on_each_default_threshold(tmp_path: Path) -> None:
    src = demo_copy(tmp_path)
    (src / "broken.pdf").write_bytes(b"%PDF-1.7 cut short")
    (src / "blank.md").write_text("", encoding="utf-8")
    out = build(src, tmp_path / "out")
    # a chunk file edited by hand: one chunk now claims far more tokens than the budget
    path = out / "chunks" / "guides" / "incidents.md.jsonl"
    records = [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines()]
    records[1]["tokens"] = 5000
    path.write_text("".join(json.dumps(r) + "\n" for r in records) + "not json\n", encoding="utf-8")
    result = check(out)
    assert result.exit_code == 1
    lines = [line for line in result.stdout.splitlines() if line.startswith("FAIL")]
    assert len(lines) == 4, result.stdout
    assert "max_failed_files" in result.stdout and "broken.pdf" in result.stdout
    assert "max_files_without_chunks" in result.stdout and "blank.md" in result.stdout
    assert "max_over_budget_unflagged" in result.stdout and "guides/incidents.md #1" in result.stdout
    assert "1 chunk-file lines are not chunk records" in result.stdout
    # a flag raises one limit; the other breaches still fail the check
    relaxed = check(out, "--max-failed-files", "1", "--max-files-without-chunks", "1")
    assert relaxed.exit_code == 1 and "max_failed_files" not in relaxed.stdout


def test_thresholds_from_segment_toml_and_flags_that_override_them(tmp_path: Path) -> None:
    src = demo_copy(tmp_path)
    # a flat segment.toml: settings at the top level, thresholds in [check]
    (src / "segment.toml").write_text(
        "max_tokens = 64\n\n[check]\nmax_oversize_share = 0.0\nmax-heading-only = 100\n", encoding="utf-8"
    )
    assert load_settings(src).max_tokens == 64  # the [check] table is not a setting of the chunks
    out = build(src, tmp_path / "out", load_settings(src))
    strict = check(out)
    assert strict.exit_code == 1
    assert "share of oversize chunks" in strict.stdout  # 64 tokens leaves wide table rows oversize
    assert check(out, "--max-oversize-share", "1").exit_code == 0


def test_unknown_thresholds_are_usage_errors(tmp_path: Path) -> None:
    src = demo_copy(tmp_path)
    out = build(src, tmp_path / "out", Settings())
    (src / "segment.toml").write_text("[check]\nmax_typos = 3\n", encoding="utf-8")
    result = CliRunner().invoke(cli, ["check", str(out)])
    assert result.exit_code == 2 and "max_typos" in result.stderr
