"""The README cannot drift: its Python examples run, and every command and setting is documented."""

from __future__ import annotations

import dataclasses
import re
from pathlib import Path

import pytest

from segment.cli import cli
from segment.settings import Settings
from tests.conftest import ROOT

README = (ROOT / "README.md").read_text(encoding="utf-8")
PYTHON_BLOCKS = re.findall(r"```python\n(.*?)```", README, re.DOTALL)


@pytest.mark.parametrize("index", range(len(PYTHON_BLOCKS)))
def test_readme_python_examples_run(index: int, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    code = PYTHON_BLOCKS[index].replace("OUT_DIR", str(tmp_path))
    exec(compile(code, f"README.md python block {index}", "exec"), {"__name__": "readme_example"})


def test_every_command_is_documented() -> None:
    for name in cli.commands:  # type: ignore[attr-defined]
        assert f"`segment {name}" in README, f"README does not document `segment {name}`"


def test_every_setting_is_documented() -> None:
    # The README, or a topic page under docs/ that the README points to.
    docs = README + "".join(p.read_text(encoding="utf-8") for p in sorted((ROOT / "docs").glob("*.md")))
    for field in dataclasses.fields(Settings):
        assert f"`{field.name}`" in docs, f"neither README nor docs/ document the setting {field.name}"


def test_readme_starts_with_the_two_fresh_machine_commands() -> None:
    blocks = re.findall(r"```sh\n(.*?)```", README, re.DOTALL)
    assert "pip install ." in blocks[0] and "segment build fixtures/demo" in blocks[0]
    assert "pip install '.[test]'" in blocks[1] and "pytest" in blocks[1]
    ci = (ROOT / ".ci" / "run").read_text()
    assert blocks[1].strip() in ci, ".ci/run must run exactly the README's test command"


def test_the_readme_status_table_lists_every_failure_status() -> None:
    from segment.daemon.vocabulary import FileStatus

    table = README[README.index("| status | meaning |") :].split("\n\n", 1)[0]
    listed = set(re.findall(r"^\| `([a-z_]+)` \|", table, re.MULTILINE))
    assert listed == {status.value for status in FileStatus if status.failed}
