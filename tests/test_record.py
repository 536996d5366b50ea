"""The chunk record contract (DESIGN.md section 4) and its JSON Schema."""

from __future__ import annotations

import json
from importlib import resources

import jsonschema
import pytest

import segment
from segment.chunk import Chunk, chunk_id, id_of_normalised
from tests.conftest import FIXTURES

SCHEMA = json.loads(resources.files("segment").joinpath("schema/chunk.schema.json").read_text())
FIELDS = [
    "id",
    "source",
    "format",
    "seq",
    "breadcrumb",
    "text",
    "tokens",
    "blocks",
    "lines",
    "pages",
    "anchor",
    "oversize",
    "cells",
    "url",
    "properties",
]


@pytest.mark.parametrize(
    "path",
    sorted((FIXTURES / "markdown").glob("*.md"))
    + sorted((FIXTURES / "notebook").glob("*.ipynb"))
    + [FIXTURES / "text" / "field-notes.txt", FIXTURES / "text" / "README"],
    ids=lambda p: p.name,
)
def test_every_record_validates_and_keeps_field_order(path: object) -> None:
    for c in segment.chunk_file(path, segment.Settings(max_tokens=32)):  # type: ignore[arg-type]
        data = json.loads(c.to_json())
        jsonschema.validate(data, SCHEMA)
        assert list(data)[: len(FIELDS)] == FIELDS


def test_record_round_trips_through_its_dict_form() -> None:
    c = segment.chunk_file(FIXTURES / "markdown" / "tables.md")[0]
    assert Chunk.from_dict(json.loads(c.to_json())) == c


def test_id_ignores_whitespace_but_not_words_or_place() -> None:
    base = chunk_id("a.md", ["T", "S"], "one two")
    assert chunk_id("a.md", ["T", "S"], " one\n two ") == base
    assert chunk_id("a.md", ["T", "S"], "one three") != base
    assert chunk_id("b.md", ["T", "S"], "one two") != base
    assert chunk_id("a.md", ["T"], "one two") != base
    assert chunk_id("a.md", ["T", "S"], "one two", occurrence=1) != base
    # The segmenter normalises a chunk's text once and hashes that form: the same id.
    assert id_of_normalised("a.md", ["T", "S"], "one two") == base
