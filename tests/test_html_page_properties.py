"""Page properties of HTML pages: what the page itself declares, into `Document.properties`.

Source of the names and their rules: the HTML standard (HTML Living Standard, "The title
element"; "Standard metadata names": `description`, `keywords` -- split at commas --, `author`,
one element per author; "The lang and xml:lang attributes"). Nothing of ours goes in; values are
capped at 2,000 characters with a warning.
"""

from __future__ import annotations

import json

import pytest

import segment
from segment.adapters.html import parse
from segment.adapters.html.properties import MAX_VALUE_CHARS
from tests.conftest import FIXTURES, corpus_files


def test_declared_properties_appear_exactly() -> None:
    doc = segment.parse(FIXTURES / "html" / "page-properties.html")
    assert doc.properties == {
        "title": "Leases and renewals - Quillmark Relay",
        "description": "How a consumer holds a message while it works on it.",
        "keywords": ["leases", "renewal", "message relay", "queues"],
        "author": ["Ines Varga", "Tomas Reyes"],
        "lang": "en-GB",
    }
    assert not doc.warnings
    json.dumps(doc.properties)  # JSON scalars and lists of strings only


def test_one_author_is_a_string_and_missing_properties_are_left_out() -> None:
    doc = parse(b'<html><head><meta name="author" content="Ines Varga"></head><p>x</p></html>', "a.html")
    assert doc.properties == {"author": "Ines Varga"}
    assert parse(b"<p>no head at all</p>", "b.html").properties == {}
    empty = b'<html lang=" "><head><title> </title><meta name="keywords" content=" , ,"></head></html>'
    assert parse(empty, "c.html").properties == {}


def test_xhtml_language_and_titles_outside_the_head() -> None:
    page = (
        b'<html xmlns="http://www.w3.org/1999/xhtml" xml:lang="de"><body>'
        b"<svg><title>drawing</title></svg><p>Text</p></body></html>"
    )
    assert parse(page, "x.html").properties == {"lang": "de"}


def test_hostile_values_are_capped_quickly() -> None:
    # A 10 MB description and 200,000 keywords: capped and said in the warnings (pytest-timeout
    # guards against a slow path; speed itself is measured in bench/).
    huge = "word " * 2_000_000
    keys = ",".join(f"k{i}" for i in range(200_000))
    page = f'<html><head><meta name="description" content="{huge}"><meta name="keywords" content="{keys}">'
    doc = parse(page.encode() + b"</head><p>x</p></html>", "h.html")
    assert len(doc.properties["description"]) == MAX_VALUE_CHARS
    assert sum(len(k) for k in doc.properties["keywords"]) <= MAX_VALUE_CHARS
    assert any("'description' cut" in w for w in doc.warnings)
    assert any("'keywords' cut" in w for w in doc.warnings)


def test_corpus_pages_declare_their_title() -> None:
    # The shared corpus (PostgreSQL's DocBook pages) declares a title and nothing else.
    pages = corpus_files("html", ".html")
    if not pages:
        pytest.skip("shared corpus not present")
    for path in pages[:40]:
        doc = parse(path.read_bytes(), path.name)
        assert set(doc.properties) == {"title"}, path.name
