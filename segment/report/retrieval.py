"""`segment report --queries FILE`: how well each chunking answers the user's own questions.

Each chunking (ours and the two baselines) is indexed in an in-memory SQLite FTS5 table and
every question is run against it, ranked by FTS5's BM25; a question is answered at rank k when a
chunk among the first k comes from the source that answers it (and covers the given line, page
or anchor, when the question names one).
"""

from __future__ import annotations

import json
import re
import sqlite3
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from segment.report.baselines import FlatDocument, Window

RANKS = (1, 5, 10)
WORDS = re.compile(r"\w+", re.UNICODE)


class QuestionsError(ValueError):
    """The questions file cannot be read; the message names the file and line."""


@dataclass(frozen=True, slots=True)
class Question:
    """One line of the questions file."""

    question: str
    source: str
    """The source file that answers it (POSIX path relative to the source root)."""
    anchor: str | None = None
    line: int | None = None
    page: int | None = None


@dataclass(slots=True)
class Passage:
    """One chunk as the evaluation sees it: its text and where in which source it lies."""

    source: str
    text: str
    anchors: set[str] = field(default_factory=set)
    lines: list[tuple[int, int]] = field(default_factory=list)
    pages: list[tuple[int, int]] = field(default_factory=list)

    def answers(self, q: Question) -> bool:
        """True when this passage covers what the question points at."""
        if self.source != q.source:
            return False
        if q.line is not None:
            return any(lo <= q.line <= hi for lo, hi in self.lines)
        if q.page is not None:
            return any(lo <= q.page <= hi for lo, hi in self.pages)
        if q.anchor is not None:
            return q.anchor in self.anchors
        return True


@dataclass(slots=True)
class RetrievalFigures:
    """Recall at 1, 5 and 10 and the mean reciprocal rank (within the first 10) of one chunking."""

    name: str
    questions: int
    recall: dict[int, float]
    mrr: float


def read_questions(path: Path) -> list[Question]:
    """The questions of a JSON Lines file: `question`, `source`, optional `anchor`, `line`, `page`."""
    try:
        lines = path.read_text(encoding="utf-8").splitlines()
    except (OSError, UnicodeDecodeError) as exc:
        raise QuestionsError(f"{path}: cannot read the questions: {exc}") from exc
    out: list[Question] = []
    for number, line in enumerate(lines, start=1):
        if not line.strip():
            continue
        try:
            data = json.loads(line)
            if not isinstance(data, dict):
                raise TypeError("not an object")
            question = Question(
                question=str(data["question"]),
                source=str(data["source"]),
                anchor=None if data.get("anchor") is None else str(data["anchor"]),
                line=None if data.get("line") is None else int(data["line"]),
                page=None if data.get("page") is None else int(data["page"]),
            )
        except (ValueError, KeyError, TypeError) as exc:
            raise QuestionsError(
                f'{path}:{number}: a question needs "question" and "source" ({exc})'
            ) from exc
        out.append(question)
    return out


def passages_of_records(records: Iterable[dict[str, Any]]) -> list[Passage]:
    """Our chunks as passages."""
    out: list[Passage] = []
    for r in records:
        p = Passage(str(r["source"]), str(r["text"]))
        if r.get("anchor"):
            p.anchors.add(str(r["anchor"]))
        if r.get("lines"):
            p.lines.append((int(r["lines"][0]), int(r["lines"][1])))
        if r.get("pages"):
            p.pages.append((int(r["pages"][0]), int(r["pages"][1])))
        out.append(p)
    return out


def passages_of_windows(flat: FlatDocument, cut: list[Window]) -> list[Passage]:
    """Baseline windows as passages: each covers the anchors, lines and pages of what it overlaps."""
    out: list[Passage] = []
    for w in cut:
        p = Passage(flat.source, w.text)
        for piece in flat.pieces:
            if piece.end <= w.start or piece.start >= w.end:
                continue
            if piece.anchor:
                p.anchors.add(piece.anchor)
            if piece.lines:
                p.lines.append(piece.lines)
            if piece.pages:
                p.pages.append(piece.pages)
        out.append(p)
    return out


def match_expression(question: str) -> str:
    """An FTS5 query that matches any word of the question: `"w1" OR "w2" ...` (quoted: no syntax)."""
    words = dict.fromkeys(w.lower() for w in WORDS.findall(question))
    return " OR ".join(f'"{w}"' for w in words)


class SearchIndex:
    """An in-memory FTS5 table of passages, ranked by BM25 (FTS5's built-in, k1=1.2, b=0.75)."""

    def __init__(self, texts: Iterable[str]) -> None:
        self.conn = sqlite3.connect(":memory:")
        self.conn.execute("CREATE VIRTUAL TABLE passage USING fts5(text, tokenize='porter unicode61')")
        self.conn.executemany("INSERT INTO passage(rowid, text) VALUES (?, ?)", enumerate(texts))

    def search(self, question: str, limit: int = max(RANKS)) -> list[tuple[int, float]]:
        """(passage number, bm25 score) of the best passages; lower scores rank higher."""
        expression = match_expression(question)
        if not expression:
            return []
        rows = self.conn.execute(
            "SELECT rowid, bm25(passage) FROM passage WHERE passage MATCH ? ORDER BY bm25(passage), rowid LIMIT ?",
            (expression, limit),
        ).fetchall()
        return [(int(rowid), float(score)) for rowid, score in rows]

    def close(self) -> None:
        """Drop the index."""
        self.conn.close()


def evaluate(name: str, passages: list[Passage], questions: list[Question]) -> RetrievalFigures:
    """Recall@1/5/10 and MRR of one chunking on the questions."""
    index = SearchIndex(p.text for p in passages)
    hits = dict.fromkeys(RANKS, 0)
    reciprocal = 0.0
    try:
        for q in questions:
            ranked = [i for i, _ in index.search(q.question)]
            first = next((rank for rank, i in enumerate(ranked, start=1) if passages[i].answers(q)), None)
            if first is None:
                continue
            reciprocal += 1 / first
            for k in RANKS:
                hits[k] += first <= k
    finally:
        index.close()
    n = len(questions) or 1
    return RetrievalFigures(
        name, len(questions), {k: round(v / n, 4) for k, v in hits.items()}, round(reciprocal / n, 4)
    )


def retrieval_text(rows: list[RetrievalFigures]) -> list[str]:
    """The evaluation as a table for people."""
    n = rows[0].questions if rows else 0
    out = [
        f"{n} questions, FTS5 BM25 over each chunking",
        f"{'':<34}{'recall@1':>10}{'recall@5':>10}{'recall@10':>11}{'MRR':>8}",
    ]
    for row in rows:
        out.append(
            f"{row.name:<34}{row.recall[1]:>10.2f}{row.recall[5]:>10.2f}{row.recall[10]:>11.2f}{row.mrr:>8.3f}"
        )
    return out
