"""Shared helpers of the report tests: build an output folder once, read chunk files directly."""

from __future__ import annotations

import json
import shutil
from pathlib import Path
from typing import Any

from segment.daemon import reconcile
from segment.settings import Settings
from tests.conftest import FIXTURES

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
