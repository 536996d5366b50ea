"""Shared helpers of the report tests: build an output folder once, read chunk files directly."""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import Any

import pytest

from segment.daemon import reconcile
from segment.settings import Settings
from tests.conftest import FIXTURES, corpus_dir

DEMO = FIXTURES / "demo"


def build(src: Path, out: Path, settings: Settings | None = None) -> Path:
    """Build SRC into OUT (the daemon's one reconcile pass) and return OUT."""
    reconcile(src, out, settings or Settings())
    return out


def demo_copy(tmp: Path) -> Path:
    """A copy of the demo docs without the script that makes its PDF."""
    src = tmp / "demo"
    shutil.copytree(DEMO, src, ignore=shutil.ignore_patterns("*.py", "questions.jsonl"))
    return src


def chunk_records(out: Path) -> list[dict[str, Any]]:
    """Every record of every chunk file, read without the report package."""
    records: list[dict[str, Any]] = []
    for path in sorted((out / "chunks").rglob("*.jsonl")):
        records += [json.loads(line) for line in path.read_text(encoding="utf-8").splitlines() if line]
    return records


@pytest.fixture(scope="session")
def markdown_corpus_256(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The shared Markdown corpus built once at 256 tokens (skips when the corpus is absent)."""
    # the shared corpus (../shared/corpus/markdown, licences in its SOURCE.md files)
    src = corpus_dir("markdown")
    if "markdown-256" not in _BUILT:  # one build per session, whichever test module asks first
        _BUILT["markdown-256"] = build(
            src, tmp_path_factory.mktemp("markdown-256") / "out", Settings(max_tokens=256)
        )
    return _BUILT["markdown-256"]


_BUILT: dict[str, Path] = {}
