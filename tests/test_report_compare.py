"""`segment report --compare`: our chunks beside plain fixed-size and sliding windows."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from click.testing import CliRunner

from segment.api import parse_bytes
from segment.cli import cli
from segment.report.baselines import flatten, windows
from segment.report.compare import ChunkingFigures, window_figures
from segment.settings import Settings
from segment.tokens import EstimateCounter
from tests.report_helpers import build, demo_copy, markdown_corpus_256
from tests.test_report_summary import SCHEMA

__all__ = ["markdown_corpus_256"]  # the session fixture, built once for both corpus tests

PAGE = b"""# Charging

Docks charge one pack at a time. A full charge takes forty minutes.

| Pack | Cycles | Health |
|---|---|---|
| P-101 | 120 | 96 |
| P-102 | 340 | 81 |
| P-103 | 610 | 64 |
| P-104 | 75 | 99 |

```sh
nwfleet battery list
nwfleet battery retire P-103
```
"""


def compare_rows(out: Path) -> dict[str, dict[str, Any]]:
    result = CliRunner().invoke(cli, ["report", str(out), "--compare", "--json"], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    jsonschema.validate(data, SCHEMA)
    return {row["name"].split(" (")[0]: row for row in data["compare"]["rows"]}


def test_windows_cover_the_text_in_order_within_the_budget() -> None:
    flat = flatten(parse_bytes(PAGE, "charging.md"))
    counter = EstimateCounter()
    fixed = windows(flat, 24, 0, counter)
    assert len(fixed) > 3
    assert all(w.tokens <= 24 for w in fixed)
    assert all(a.end <= b.start for a, b in zip(fixed, fixed[1:]))  # no overlap
    assert " ".join(w.text for w in fixed).split() == flat.text.split()  # nothing lost
    sliding = windows(flat, 24, 8, counter)
    assert all(b.start < a.end for a, b in zip(sliding, sliding[1:]))  # each repeats the last's tail
    assert len(sliding) > len(fixed)


def test_rows_and_code_cut_by_windows_are_counted_from_their_offsets() -> None:
    flat = flatten(parse_bytes(PAGE, "charging.md"))
    assert len(flat.rows) == 5 and len(flat.codes) == 1  # header + 4 rows; one code block
    row = flat.rows[2]  # | P-102 | 340 | 81 |
    code = flat.codes[0]
    text = flat.text
    mid_row, mid_code = row[0] + 4, code[0] + 10
    cut = [
        _window(flat.source, 0, 0, mid_row, text),
        _window(flat.source, 1, mid_row, mid_code, text),
        _window(flat.source, 2, mid_code, len(text), text),
    ]
    figures = ChunkingFigures("hand-made")
    window_figures(figures, flat, cut)
    assert (figures.rows_split, figures.code_split, figures.heading_known) == (1, 1, 1)


def _window(source: str, seq: int, start: int, end: int, text: str) -> Any:
    from segment.report.baselines import Window

    return Window(source, seq, start, end, text[start:end], 0)


def test_demo_ours_keep_rows_and_headings_where_windows_do_not(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out", Settings(max_tokens=96))
    rows = compare_rows(out)
    assert set(rows) == {"ours", "fixed windows", "sliding windows"}
    assert rows["ours"]["rows_split"] == 0
    assert rows["fixed windows"]["rows_split"] > 0
    assert rows["ours"]["heading_known"] == rows["ours"]["chunks"]
    assert rows["ours"]["mid_sentence"] < rows["fixed windows"]["mid_sentence"]
    for row in rows.values():
        assert row["tokens"]["max"] <= 96 or row["name"] == "ours"


@pytest.mark.corpus
def test_shared_markdown_corpus_at_256_tokens(markdown_corpus_256: Path) -> None:
    # the shared corpus (../shared/corpus/markdown): fixed windows cut hundreds of table rows, ours none
    rows = compare_rows(markdown_corpus_256)
    assert rows["ours"]["rows_split"] == 0
    assert rows["fixed windows"]["rows_split"] > 100
    assert rows["ours"]["mid_sentence"] * 3 < rows["fixed windows"]["mid_sentence"]
