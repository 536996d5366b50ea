"""Shared test fixtures: where the shared corpus lives, and golden-file regeneration."""

from __future__ import annotations

import importlib.util
import os
import sys
from pathlib import Path
from types import ModuleType

import pytest

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
SHARED = ROOT.parent / "shared"
CORPUS = SHARED / "corpus"

REGEN = os.environ.get("DOCSEGMENT_REGEN") == "1"
"""Set DOCSEGMENT_REGEN=1 to rewrite golden files instead of comparing (then review the diff)."""


def corpus_dir(*parts: str) -> Path:
    """A folder of the shared corpus, or skip the test when it is absent (a clean clone)."""
    path = CORPUS.joinpath(*parts)
    if not path.is_dir():
        pytest.skip(f"shared corpus not present: {path.relative_to(ROOT.parent)}")
    return path


def corpus_files(folder: str, suffix: str) -> list[Path]:
    """Corpus documents under `folder` (provenance files skipped), sorted."""
    base = CORPUS / folder
    if not base.is_dir():
        return []
    return sorted(p for p in base.rglob(f"*{suffix}") if p.name not in ("SOURCE.md", "README.md"))


def check_golden(path: Path, actual: str) -> None:
    """Compare `actual` with the golden file, or rewrite it when DOCSEGMENT_REGEN=1."""
    if REGEN or not path.exists():
        path.write_text(actual, encoding="utf-8")
        if not REGEN:
            pytest.fail(f"golden file {path.name} was missing and has been written: review and commit it")
        return
    assert actual == path.read_text(encoding="utf-8"), (
        f"differs from golden {path.name} (DOCSEGMENT_REGEN=1 rewrites)"
    )


def pdf_renderer() -> ModuleType:
    """fixtures/pdf/render.py (PDFs made with pymupdf's Story API), loaded once."""
    if "pdf_render" not in sys.modules:
        spec = importlib.util.spec_from_file_location("pdf_render", FIXTURES / "pdf" / "render.py")
        assert spec and spec.loader
        module = importlib.util.module_from_spec(spec)
        sys.modules["pdf_render"] = module
        spec.loader.exec_module(module)
    return sys.modules["pdf_render"]
