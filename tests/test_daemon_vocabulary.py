"""The watcher's vocabularies: docs/vocabulary.md states every member with its meaning, exactly."""

from __future__ import annotations

import ast
import inspect
import re
from enum import StrEnum
from pathlib import Path

import pytest

from segment.daemon import vocabulary
from segment.daemon.vocabulary import ChangeKind, FeedOp, FileStatus, WatcherState

VOCABULARIES: list[type[StrEnum]] = [FileStatus, ChangeKind, FeedOp, WatcherState]
DOC = Path(__file__).resolve().parent.parent / "docs" / "vocabulary.md"


def member_docs(enum: type[StrEnum]) -> dict[str, str]:
    """The string under each member's assignment in the class body, by member name."""
    tree = ast.parse(inspect.getsource(vocabulary))
    body = next(n for n in tree.body if isinstance(n, ast.ClassDef) and n.name == enum.__name__).body
    docs: dict[str, str] = {}
    for stmt, after in zip(body, body[1:], strict=False):
        named = isinstance(stmt, ast.Assign) and isinstance(stmt.targets[0], ast.Name)
        if named and isinstance(after, ast.Expr) and isinstance(after.value, ast.Constant):
            docs[stmt.targets[0].id] = str(after.value.value)  # type: ignore[attr-defined]
    return docs


def doc_tables() -> dict[str, list[tuple[str, str, str]]]:
    """(value, name, meaning) rows of each `## Name` table in docs/vocabulary.md."""
    tables: dict[str, list[tuple[str, str, str]]] = {}
    current = ""
    for line in DOC.read_text(encoding="utf-8").splitlines():
        if line.startswith("## "):
            current = line[3:].strip().strip("`")
            tables[current] = []
        row = re.fullmatch(r"\| `([^`]*)` \| `([A-Z_]+)` \| (.+) \|", line)
        if row and current:
            tables[current].append((row[1], row[2], row[3]))
    return tables


@pytest.mark.parametrize("enum", VOCABULARIES, ids=lambda e: e.__name__)
def test_every_member_has_a_one_line_meaning(enum: type[StrEnum]) -> None:
    docs = member_docs(enum)
    assert set(docs) == {m.name for m in enum}
    assert all(d and "\n" not in d for d in docs.values())


@pytest.mark.parametrize("enum", VOCABULARIES, ids=lambda e: e.__name__)
def test_the_document_table_equals_the_enum(enum: type[StrEnum]) -> None:
    docs = member_docs(enum)
    expected = [(m.value, m.name, docs[m.name]) for m in enum]
    assert doc_tables().get(enum.__name__) == expected


def test_the_document_has_no_other_tables() -> None:
    assert set(doc_tables()) == {e.__name__ for e in VOCABULARIES}


def test_members_compare_and_serialise_as_their_strings() -> None:
    assert FeedOp.UPSERT == "upsert" and f"{FileStatus.NO_TEXT}" == "no_text"
    assert not WatcherState.HEALTHY and WatcherState.ROOT_MISSING
