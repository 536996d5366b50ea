"""reStructuredText fixtures against their golden trees and chunks (fixtures/rst/*.rst).

Each `<case>.rst` has `<case>.tree.txt` (the `pretty()` form) and `<case>.chunks.jsonl` at
max_tokens=128; DOCSEGMENT_REGEN=1 rewrites them (read the diff before committing).
The expected readings come from docutils' documentation of each construct (docutils.sourceforge.io
reStructuredText Markup Specification and Directives pages, from memory) and, for the generator's
directives and roles, from what its built pages show (from memory).
"""

from __future__ import annotations

from pathlib import Path

import pytest

import segment
from segment.settings import Settings
from segment.tree import pretty
from tests.conftest import FIXTURES, check_golden

CASES = sorted(FIXTURES.glob("rst/*.rst"))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    doc = segment.parse(path)
    check_golden(path.with_suffix(".tree.txt"), pretty(doc))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    settings = Settings(max_tokens=128)
    chunks = segment.chunk_file(path, settings, source=f"rst/{path.name}")
    check_golden(path.with_suffix(".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))
