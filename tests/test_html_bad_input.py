"""Bad input to the HTML adapter: each case gets chunks or a clear ParseError naming the file.

Sources: the reliability scenarios "deeply nested HTML" (libxml2 stops at depth 256, or 2048 with
huge_tree, measured here; our walkers must be iterative) and "text encodings"; file signatures are the
published magic numbers of PDF (ISO 32000-1 section 7.5.2, "%PDF-") and PNG (ISO/IEC 15948,
the 8-byte signature).
"""

from __future__ import annotations

from pathlib import Path

import pytest

import segment
from segment.adapters.html import parse
from segment.errors import ParseError
from segment.tree import Paragraph, pretty

SMALL = segment.Settings(max_tokens=64, min_tokens=0)


def _chunk_text(data: bytes, name: str = "page.html", settings: segment.Settings = SMALL) -> str:
    doc = parse(data, name)
    return "\n".join(c.text for c in segment.chunk(doc, settings))


def test_unclosed_tags_keep_every_word() -> None:
    data = (
        b"<h2>Unclosed<p>first para<p>second <b>bold<ul><li>one<li>two</ul><table><tr><td>c1<td>c2<div>tail"
    )
    text = _chunk_text(data)
    for word in ("first para", "second", "bold", "one", "two", "c1", "c2", "tail"):
        assert word in text


@pytest.mark.parametrize("depth", [3_000, 100_000])
def test_deep_nesting_is_walked_without_recursion(depth: int) -> None:
    # Deeply nested HTML: '<div>' * N + text + '</div>' * N; libxml2 refuses depth > 2048, so the
    # adapter re-parses with a flattening parser target and says so in the warnings.
    data = b"<p>before</p>" + b"<div>" * depth + b"deep text" + b"</div>" * depth + b"<p>after</p>"
    doc = parse(data, "deep.html")
    text = pretty(doc)
    assert "deep text" in text and "before" in text and "after" in text
    assert any("flattened" in w for w in doc.warnings)
    assert "deep text" in _chunk_text(data)


def test_deep_nesting_below_the_libxml2_limit_keeps_structure() -> None:
    data = b"<div>" * 2000 + b"<h2>Deep heading</h2><p>deep para</p>" + b"</div>" * 2000
    doc = parse(data, "deep.html")
    assert not doc.warnings
    assert doc.sections[0].heading is not None and doc.sections[0].heading.text == "Deep heading"


def test_deep_inline_nesting() -> None:
    data = b"<p>" + b"<span>" * 50_000 + b"inline deep" + b"</span>" * 50_000 + b"</p>"
    assert "inline deep" in _chunk_text(data)


def test_fifty_megabyte_page() -> None:
    # Generated here (not stored): 12,000 sections of two long paragraphs, about 50 MB.
    sentence = "The dock reports its lid state and battery temperature every minute. "
    unit = "<h2>Section {i}</h2>\n<p>" + sentence * 30 + "</p>\n<p>" + sentence * 30 + "</p>\n"
    body = "".join(unit.format(i=i) for i in range(12_000)).encode()
    data = b"<!DOCTYPE html><html><body><main><h1>Big page</h1>\n" + body + b"</main></body></html>"
    assert len(data) > 50_000_000
    doc = parse(data, "big.html")
    assert len(doc.sections[0].children) == 12_000
    chunks = list(segment.chunk(doc, segment.Settings(max_tokens=2048, min_tokens=0)))
    assert len(chunks) >= 12_000
    assert chunks[-1].breadcrumb == ["Big page", "Section 11999"]


def test_invalid_bytes_are_replaced_and_reported() -> None:
    # Text encodings: decode with replacement, record it, never raise.
    doc = parse(b"<p>ok \xff\xfe\x80 still ok</p>", "bad.html")
    assert doc.warnings == ["bytes not valid utf-8: 3 replaced with U+FFFD"]
    first = doc.root.blocks[0]
    assert isinstance(first, Paragraph) and first.text == "ok \ufffd\ufffd\ufffd still ok"


def test_declared_windows_1252() -> None:
    # Text encodings: a .html file with <meta charset=windows-1252> and byte 0x92.
    doc = parse(b'<meta charset="windows-1252"><p>it\x92s fine</p>', "cp.html")
    assert not doc.warnings
    assert doc.root.blocks[0].text == "it\u2019s fine"  # type: ignore[union-attr]


@pytest.mark.parametrize(
    ("data", "reason"),
    [
        (b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n1 0 obj\n<<>>\nendobj\n", "a PDF"),
        (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x01", "a PNG image"),
        (b"\xff\xd8\xff\xe0\x00\x10JFIF\x00", "a JPEG image"),
        (b"GIF89a\x01\x00\x01\x00", "a GIF image"),
        (b"\x00\x01\x02\x03binary\x00\x00", "binary content"),
    ],
)
def test_binary_content_named_html_is_refused(data: bytes, reason: str) -> None:
    with pytest.raises(ParseError) as info:
        parse(data, "docs/manual.html")
    assert info.value.source == "docs/manual.html"
    assert reason in info.value.reason
    assert str(info.value).startswith("docs/manual.html: ")


def test_binary_through_the_public_api(tmp_path) -> None:  # type: ignore[no-untyped-def]
    path = tmp_path / "logo.html"
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(64))
    with pytest.raises(ParseError, match=r"logo\.html: content is a PNG image"):
        segment.parse(path)


@pytest.mark.parametrize(
    "data", [b"", b"   \n\t", b"<html></html>", b"<!-- only a comment -->", b"<script>x()</script>"]
)
def test_empty_pages_give_an_empty_document(data: bytes) -> None:
    doc = parse(data, "empty.html")
    assert doc.root.blocks == [] and doc.sections == []
    assert list(segment.chunk(doc, SMALL)) == []


def test_soup_fallback_tree_matches_lxml() -> None:
    # The beautifulsoup4 path (html.parser, rebuilt as lxml elements) that reads what lxml gives
    # up on: same tree for well-formed markup, bs4's source lines kept, deep nesting flattened.
    from bs4 import BeautifulSoup

    from segment.adapters.html import build
    from segment.adapters.html.dom import MAX_DEPTH, soup_to_etree
    from segment.tree import Document

    path = Path(__file__).resolve().parents[1] / "fixtures" / "html" / "blocks.html"
    data = path.read_bytes()
    via_soup = build(
        Document(source="b.html", format="html"), soup_to_etree(BeautifulSoup(data, "html.parser"))
    )
    assert pretty(via_soup) == pretty(parse(data, "b.html"))
    deep = b"<div>" * (MAX_DEPTH + 50) + b"<p>deep words</p>" + b"</div>" * (MAX_DEPTH + 50)
    tree = soup_to_etree(BeautifulSoup(deep, "html.parser"))
    assert tree is not None and "deep words" in "".join(tree.itertext())
    assert max(len(list(el.iterancestors())) for el in tree.iter()) <= MAX_DEPTH + 1


def test_markup_free_pages_are_empty_without_warnings() -> None:
    for data in (b"<!-- only a comment -->", b"<!DOCTYPE html>", b'<?xml version="1.0"?>'):
        doc = parse(data, "empty.html")
        assert doc.warnings == [] and doc.root.blocks == []


@pytest.mark.parametrize(
    ("opening", "closing"),
    [
        (b"<ul><li>x", b"</li></ul>"),
        (b"<blockquote>q", b"</blockquote>"),
        (b"<dl><dt>t</dt><dd>", b"</dd></dl>"),
    ],
    ids=["lists", "quotes", "definitions"],
)
def test_deeply_nested_containers_are_chunked(opening: bytes, closing: bytes) -> None:
    # Deeply nested HTML and nesting limits: nesting must neither crash nor lose text. Lists, quotes and definition
    # lists deeper than MAX_BLOCK_DEPTH blocks are read as paragraphs, and the document says so.
    from segment.adapters.html.walk import MAX_BLOCK_DEPTH

    data = opening * 1000 + b"deep words" + closing * 1000
    doc = parse(data, "nested.html")
    assert any(str(MAX_BLOCK_DEPTH) in w for w in doc.warnings)
    assert "deep words" in _chunk_text(data, settings=segment.Settings(max_tokens=256))
