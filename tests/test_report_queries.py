"""`segment report --queries FILE`: recall and MRR of each chunking on the user's own questions."""

from __future__ import annotations

import json
import math
from pathlib import Path

import jsonschema
import pytest
from click.testing import CliRunner

from segment.cli import cli
from segment.report.retrieval import Passage, Question, SearchIndex, match_expression, read_questions
from tests.report_helpers import DEMO, build, demo_copy
from tests.test_report_summary import SCHEMA

QUESTIONS = DEMO / "questions.jsonl"


def test_fts5_ranks_three_chunks_as_bm25_computed_by_hand() -> None:
    # SQLite's FTS5 documentation ("The bm25() function", sqlite.org/fts5.html) gives
    #   score(D, Q) = -sum over terms q of IDF(q) * f(q,D) * (k1 + 1) / (f(q,D) + k1 * (1 - b + b * |D| / avgdl))
    #   IDF(q) = ln((N - n(q) + 0.5) / (n(q) + 0.5)),  k1 = 1.2, b = 0.75
    # (lower is better). Here N = 3 chunks of 4, 3 and 4 words, so avgdl = 11/3, and each query
    # word occurs in exactly one chunk: n(q) = 1, IDF = ln(2.5 / 1.5) = 0.5108.
    #   chunk 0 "dock charge charge pack": f=2, |D|=4 -> 2*2.2 / (2 + 1.2*(0.25 + 0.75*4/(11/3))) = 1.3407
    #   chunk 1 "wind gust limit":         f=1, |D|=3 -> 2.2 / (1 + 1.2*(0.25 + 0.75*3/(11/3)))     = 1.0804
    #   chunk 2 "tether drop point check": f=1, |D|=4 -> 2.2 / (1 + 1.2*(0.25 + 0.75*4/(11/3)))     = 0.9641
    # so the ranking is 0, 1, 2: the repeated word wins, then the shorter chunk.
    texts = ["dock charge charge pack", "wind gust limit", "tether drop point check"]
    idf = math.log(2.5 / 1.5)
    avgdl = 11 / 3

    def term(f: int, length: int) -> float:
        return f * 2.2 / (f + 1.2 * (0.25 + 0.75 * length / avgdl))

    expected = [-idf * term(2, 4), -idf * term(1, 3), -idf * term(1, 4)]
    index = SearchIndex(texts)
    try:
        ranked = index.search("charge, wind or tether?")
    finally:
        index.close()
    assert [i for i, _ in ranked] == [0, 1, 2]
    for (_, score), want in zip(ranked, expected):
        assert score == pytest.approx(want, rel=1e-9)
    assert [round(-s, 4) for s in expected] == [0.6849, 0.5519, 0.4925]


def test_match_expression_quotes_words_so_no_query_syntax_leaks() -> None:
    assert (
        match_expression('What does "NEAR" or AND mean?')
        == '"what" OR "does" OR "near" OR "or" OR "and" OR "mean"'
    )
    assert match_expression("?!") == ""


def test_a_passage_answers_by_line_then_page_then_anchor_then_source() -> None:
    p = Passage("guide.md", "text", anchors={"battery"}, lines=[(10, 20)])
    assert p.answers(Question("q", "guide.md", line=15))
    assert not p.answers(Question("q", "guide.md", line=21))
    assert p.answers(Question("q", "guide.md", anchor="battery"))
    assert not p.answers(Question("q", "other.md"))
    assert p.answers(Question("q", "guide.md"))


def test_the_demo_questions_point_at_real_places() -> None:
    questions = read_questions(QUESTIONS)
    assert 20 <= len(questions) <= 30
    for q in questions:
        path = DEMO / q.source
        assert path.is_file(), q.source
        if q.line is not None:
            assert q.line <= len(path.read_text(encoding="utf-8").splitlines())


def test_demo_questions_give_recall_and_mrr_for_each_chunking(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out")
    args = ["report", str(out), "--queries", str(QUESTIONS), "--json"]
    result = CliRunner().invoke(cli, args, catch_exceptions=False)
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    jsonschema.validate(data, SCHEMA)
    rows = {row["name"].split(" (")[0]: row for row in data["queries"]}
    assert set(rows) == {"ours", "fixed windows", "sliding windows"}
    for row in rows.values():
        assert row["questions"] == len(read_questions(QUESTIONS))
        assert row["recall"]["1"] <= row["recall"]["5"] <= row["recall"]["10"]
        assert row["recall"]["1"] <= row["mrr"] <= row["recall"]["10"]
    assert rows["ours"]["recall"]["5"] >= rows["fixed windows"]["recall"]["5"]
    assert rows["ours"]["mrr"] >= rows["fixed windows"]["mrr"]


def test_a_bad_questions_file_is_named_with_its_line(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out")
    bad = tmp_path / "q.jsonl"
    bad.write_text('{"question": "ok?", "source": "a.md"}\n{"source": "b.md"}\n', encoding="utf-8")
    result = CliRunner().invoke(cli, ["report", str(out), "--queries", str(bad)])
    assert result.exit_code == 1
    assert "q.jsonl:2" in result.stderr and "question" in result.stderr
