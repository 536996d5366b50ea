"""Golden cases of the Markdown adapter and the segmenter (our own scenarios in fixtures/markdown).

Each `fixtures/markdown/<case>.md` has `<case>.tree.txt` (the tree's pretty form) and
`<case>.chunks.jsonl` (chunks at max_tokens=64, min_tokens=16). DOCSEGMENT_REGEN=1 rewrites them.
"""

from __future__ import annotations

from pathlib import Path

import pytest

import segment
from segment.tree import pretty
from tests.conftest import FIXTURES, check_golden

CASES = sorted((FIXTURES / "markdown").glob("*.md"))
SETTINGS = segment.Settings(max_tokens=64, min_tokens=16)


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    doc = segment.parse(path, source=path.name)
    check_golden(path.with_suffix(".tree.txt"), pretty(doc))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    chunks = segment.chunk_file(path, SETTINGS, source=path.name)
    check_golden(path.with_suffix(".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))
