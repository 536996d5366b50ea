"""Settings as a new user meets them: checked once before any file, every flag explained, the same
settings file for a preview (`segment chunks`) as for a build, messages that say what happened."""

from __future__ import annotations

import json
from pathlib import Path

import click
import pytest
from click.testing import CliRunner

from segment import Settings, SettingsError
from segment.cli import cli
from segment.settings import check_settings
from tests.conftest import FIXTURES

PAGE = "# Harbour crane\n\nThe crane lifts forty tonnes. It is oiled monthly.\n\n## Service\n\nOil the slew ring.\n"


def run(*args: str) -> object:
    return CliRunner().invoke(cli, list(args))


@pytest.fixture
def docs(tmp_path: Path) -> Path:
    src = tmp_path / "docs"
    (src / "guides").mkdir(parents=True)
    (src / "guides" / "crane.md").write_text(PAGE)
    return src


def test_a_missing_tokenizer_is_one_settings_error_and_nothing_is_written(docs: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    result = run("build", str(docs), "-o", str(out), "--tokenizer", str(tmp_path / "missing.json"))
    assert result.exit_code == 2  # type: ignore[attr-defined]
    assert "missing.json" in result.output and "Traceback" not in result.output  # type: ignore[attr-defined]
    assert not out.exists()  # no file marked failed, no feed entry, no store
    chunks = run("chunks", str(docs / "guides" / "crane.md"), "--tokenizer", "missing.json")
    assert chunks.exit_code == 2 and "Traceback" not in chunks.output  # type: ignore[attr-defined]


@pytest.mark.parametrize(
    ("flags", "named"),
    [
        (["--min-tokens", "600", "--max-tokens", "512"], "min_tokens"),
        (["--overlap-tokens", "300", "--max-tokens", "512"], "overlap_tokens"),
        (["--language", "xx-nowhere"], "language"),
        (["--max-tokens", "0"], "max_tokens"),
        (["--timeout-s", "0"], "timeout_s"),
        (["--max-pages", "-1"], "max_pages"),
        (["--max-file-bytes", "0"], "max_file_bytes"),
        (["--memory-mb", "-5"], "memory_mb"),
    ],
)
def test_bad_values_exit_2_naming_the_setting(docs: Path, flags: list[str], named: str) -> None:
    result = run("chunks", str(docs / "guides" / "crane.md"), *flags)
    assert result.exit_code == 2, result.output  # type: ignore[attr-defined]
    assert named in result.output  # type: ignore[attr-defined]


def test_the_language_and_tokenizer_are_checked_by_the_library_too() -> None:
    with pytest.raises(SettingsError, match="language"):
        check_settings(Settings(language="xx-nowhere"))
    check_settings(Settings(language="de"))  # a blank pipeline spaCy ships: fine


def test_limits_have_flags_like_the_other_settings(docs: Path, tmp_path: Path) -> None:
    big = docs / "guides" / "big.md"
    big.write_text(PAGE * 50)
    result = run("build", str(docs), "-o", str(tmp_path / "out"), "--max-file-bytes", "2000")
    assert result.exit_code == 1  # type: ignore[attr-defined]
    assert "big.md: resource_limit" in result.output  # type: ignore[attr-defined]


def test_a_budget_in_characters_holds_every_chunk_to_that_many_characters(docs: Path) -> None:
    result = run(
        "chunks", str(docs / "guides" / "crane.md"), "--budget-unit", "characters", "--max-tokens", "40"
    )
    assert result.exit_code == 0, result.output  # type: ignore[attr-defined]
    records = [json.loads(line) for line in result.stdout.splitlines()]  # type: ignore[attr-defined]
    assert len(records) > 1
    assert all(r["tokens"] == len(r["text"]) <= 40 or r["oversize"] for r in records)


def test_segment_chunks_reads_the_segment_toml_a_build_would_read(docs: Path, tmp_path: Path) -> None:
    (docs / "segment.toml").write_text("max_tokens = 16\nmin_tokens = 0\n")
    page = docs / "guides" / "crane.md"
    preview = [json.loads(line) for line in run("chunks", str(page)).stdout.splitlines()]  # type: ignore[attr-defined]
    out = tmp_path / "out"
    assert run("build", str(docs), "-o", str(out)).exit_code == 0  # type: ignore[attr-defined]
    built = [
        json.loads(line) for line in (out / "chunks" / "guides" / "crane.md.jsonl").read_text().splitlines()
    ]
    assert [r["text"] for r in preview] == [r["text"] for r in built]
    assert len(preview) > 1  # the file's budget of 16 applied, not the default 512


def test_config_names_the_settings_file_for_every_command(docs: Path, tmp_path: Path) -> None:
    elsewhere = tmp_path / "shared.toml"
    elsewhere.write_text("max_tokens = 16\nmin_tokens = 0\n")
    page = str(docs / "guides" / "crane.md")
    small = run("chunks", page, "--config", str(elsewhere)).stdout.splitlines()  # type: ignore[attr-defined]
    large = run("chunks", page).stdout.splitlines()  # type: ignore[attr-defined]
    assert len(small) > len(large) == 1
    assert run("tree", page, "--config", str(elsewhere)).exit_code == 0  # type: ignore[attr-defined]
    missing = run("chunks", page, "--config", str(tmp_path / "nope.toml"))
    assert missing.exit_code == 2 and "no such settings file" in missing.output  # type: ignore[attr-defined]


def test_messages_say_what_happened(docs: Path, tmp_path: Path) -> None:
    never = run("chunks", str(tmp_path / "never-existed.md"))
    assert never.exit_code == 1 and "no such file" in never.output  # type: ignore[attr-defined]
    folder = run("chunks", str(docs))
    assert folder.exit_code == 1 and "segment build" in folder.output  # type: ignore[attr-defined]
    nothing = run("build", str(docs), "-o", str(tmp_path / "out"), "--include", "*.pdf")
    assert "no file matches the include patterns" in nothing.output  # type: ignore[attr-defined]
    tree = run("tree", str(FIXTURES / "markdown" / "code-and-quotes.md"))
    assert "#None" not in tree.output  # type: ignore[attr-defined]


def _commands(group: click.Group) -> list[click.Command]:
    return [group.commands[name] for name in sorted(group.commands)]


def test_every_option_of_every_command_has_a_help_line_and_repeatable_ones_say_so() -> None:
    assert isinstance(cli, click.Group)
    for command in _commands(cli):
        for param in command.params:
            if not isinstance(param, click.Option):
                continue
            assert param.help, f"segment {command.name} {param.opts[0]} has no help line"
            if param.multiple:
                assert "repeatable" in param.help, f"segment {command.name} {param.opts[0]}: say it repeats"
