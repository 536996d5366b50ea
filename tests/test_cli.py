"""The `segment` command as a user meets it: output streams, exit codes, error messages."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from segment.cli import cli
from tests.conftest import FIXTURES

CASE = FIXTURES / "markdown" / "tables.md"


def invoke(*args: str) -> object:
    return CliRunner().invoke(cli, list(args), catch_exceptions=False)


def test_chunks_prints_json_lines_only_on_stdout() -> None:
    result = CliRunner().invoke(cli, ["chunks", str(CASE), "--max-tokens", "32"])
    assert result.exit_code == 0, result.output
    records = [json.loads(line) for line in result.stdout.splitlines()]
    assert records and all(r["source"] == CASE.as_posix() for r in records)
    assert [r["seq"] for r in records] == list(range(len(records)))


def test_chunks_reports_a_missing_file_and_goes_on(tmp_path: Path) -> None:
    missing = tmp_path / "gone.md"
    result = CliRunner().invoke(cli, ["chunks", str(missing), str(CASE)])
    assert result.exit_code == 1
    assert "gone.md" in result.stderr and "no such file" in result.stderr
    assert len(result.stdout.splitlines()) >= 1  # the good file still printed


def test_chunks_rejects_an_unsupported_file(tmp_path: Path) -> None:
    odd = tmp_path / "notes.docx"
    odd.write_bytes(b"PK\x03\x04")
    result = CliRunner().invoke(cli, ["chunks", str(odd)])
    assert result.exit_code == 1 and "no adapter" in result.stderr


def test_bad_setting_is_a_usage_error() -> None:
    result = CliRunner().invoke(cli, ["chunks", str(CASE), "--max-tokens", "3"])
    assert result.exit_code == 2 and "max_tokens" in result.output


def test_tree_prints_the_common_tree() -> None:
    result = CliRunner().invoke(cli, ["tree", str(CASE)])
    assert result.exit_code == 0
    assert result.stdout.startswith("document format=markdown title='Payload classes'")
    assert "row [L5-5] ['P1', '0.5 kg', 'Letters and small parcels']" in result.stdout


def test_segment_toml_in_the_source_root_is_read(tmp_path: Path) -> None:
    from segment.settings import load_settings

    (tmp_path / "segment.toml").write_text('max_tokens = 128\nexclude = ["drafts/"]\n')
    settings = load_settings(tmp_path, {"min_tokens": 8, "max_tokens": None})
    assert settings.max_tokens == 128 and settings.min_tokens == 8
    # Exclusions add to the defaults: files that usually hold secrets stay out.
    assert settings.exclude[-1] == "drafts/" and ".env" in settings.exclude


def test_unknown_setting_names_the_file(tmp_path: Path) -> None:
    from segment.settings import SettingsError, load_settings

    (tmp_path / "segment.toml").write_text("max_token = 128\n")
    try:
        load_settings(tmp_path)
    except SettingsError as exc:
        assert "segment.toml" in str(exc) and "max_token" in str(exc)
    else:
        raise AssertionError("an unknown setting must be refused")


def test_settings_reach_the_adapters() -> None:
    import segment

    # The PDF page cap is a setting: a 2-page manual is refused under max_pages=1.
    manual = FIXTURES / "demo" / "manuals" / "operations-guide.pdf"
    try:
        segment.parse(manual, segment.Settings(max_pages=1))
    except segment.SegmentError as exc:
        assert exc.status == "resource_limit" and "max_pages" in exc.reason
    else:
        raise AssertionError("max_pages=1 must refuse a 2-page PDF")
