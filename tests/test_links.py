"""Deep links: page URLs from source paths, checked against RFC 3986's rules (each check names
the section it follows) and the layouts of static site generators (common practice)."""

from __future__ import annotations

import re
from urllib.parse import unquote, urlsplit

import pytest

import segment
from segment.errors import SettingsError
from segment.links import chunk_url, encode_fragment, encode_path, page_path, page_url
from segment.settings import Settings
from tests.conftest import FIXTURES

BASE = "https://docs.example.com/v2/"
# RFC 3986 section 3.3: pchar = unreserved / pct-encoded / sub-delims / ":" / "@".
PCHAR = re.compile(r"(?:[A-Za-z0-9\-._~!$&'()*+,;=:@]|%[0-9A-F]{2})*")
# RFC 3986 section 3.5: fragment = *( pchar / "/" / "?" ).
FRAGMENT = re.compile(r"(?:[A-Za-z0-9\-._~!$&'()*+,;=:@/?]|%[0-9A-F]{2})*")

AWKWARD = [
    "guides/setup.md",
    "guides/a b.md",
    "guides/100%.md",
    "guides/q?.md",
    "guides/hash#1.md",
    "guides/Ünïcødé/straße.md",
    "guides/日本語.md",
    "guides/semi;colon=1&x.md",
    "guides/[brackets].md",
    "guides/back\\slash.md",
]


@pytest.mark.parametrize("source", AWKWARD)
def test_every_path_segment_is_made_of_pchars(source: str) -> None:
    url = page_url(BASE, source, "markdown", "html")
    assert url is not None
    path = urlsplit(url).path
    for segment_ in path.split("/"):
        assert PCHAR.fullmatch(segment_), (source, segment_)  # RFC 3986 section 3.3
    assert unquote(path).endswith(page_path(source, "markdown", "html"))  # RFC 3986 section 2.1: lossless


def test_percent_and_non_ascii_are_encoded_as_utf8_octets() -> None:
    assert encode_path("100%") == "100%25"  # RFC 3986 section 2.4: "%" itself is always encoded
    assert encode_path("straße") == "stra%C3%9Fe"  # RFC 3986 section 2.5: UTF-8 octets
    assert encode_path("a b") == "a%20b"  # RFC 3986 section 2.1: uppercase hex digits
    # RFC 3986 section 2.3: unreserved characters are never encoded.
    assert encode_path("AZaz09-._~") == "AZaz09-._~"
    # RFC 3986 section 3.3: "?" and "#" end a path, so inside a segment they are encoded.
    assert encode_path("q?#") == "q%3F%23"


@pytest.mark.parametrize("anchor", ["setup", "a b", "ünï", "x/y?z", "100%", "#hash", "[v2]"])
def test_fragments_are_encoded_as_rfc3986_fragments(anchor: str) -> None:
    encoded = encode_fragment(anchor)
    assert FRAGMENT.fullmatch(encoded), encoded  # RFC 3986 section 3.5
    assert unquote(encoded) == anchor
    url = chunk_url(BASE + "page.html", anchor)
    assert url is not None and urlsplit(url).fragment == encoded  # one "#", the fragment after it


def test_built_in_layouts() -> None:
    # Common practice of static site generators: plain .html pages, or folder ("pretty") URLs.
    assert page_path("guides/setup.md", "markdown", "html") == "guides/setup.html"
    assert page_path("guides/setup.md", "markdown", "folder") == "guides/setup/"
    assert page_path("guides/index.md", "markdown", "folder") == "guides/"
    assert page_path("index.md", "markdown", "folder") == ""
    assert page_url(BASE, "index.md", "markdown", "folder") == BASE  # `./` of the base
    assert page_path("tour.ipynb", "notebook", "html") == "tour.html"


def test_sources_served_as_they_are_keep_their_path() -> None:
    for layout in ("html", "folder", "{dir}{stem}.htm"):
        assert page_path("api/errors.html", "html", layout) == "api/errors.html"
        assert page_path("manuals/ops.pdf", "pdf", layout) == "manuals/ops.pdf"
        assert page_path("notes/README", "text", layout) == "notes/README"


def test_templates() -> None:
    assert page_path("guides/setup.md", "markdown", "{path}.html") == "guides/setup.html"
    assert page_path("guides/setup.md", "markdown", "{dir}{stem}/") == "guides/setup/"
    assert page_path("guides/setup.md", "markdown", "docs/{dir}#{stem}") == "docs/guides/#setup"
    # the "#" came from the template, inside the path: encoded like any other character.
    assert page_url(BASE, "guides/setup.md", "markdown", "docs/{dir}#{stem}") == BASE + "docs/guides/%23setup"


def test_base_url_without_trailing_slash_still_joins_below_it() -> None:
    assert page_url("https://docs.example.com/v2", "a.md", "markdown", "html") == BASE + "a.html"
    assert page_url("/docs/", "a.md", "markdown", "html") == "/docs/a.html"


def test_pdf_chunks_link_to_their_page() -> None:
    # The `page=N` fragment of application/pdf (RFC 8118 section 3, from memory).
    assert chunk_url(BASE + "ops.pdf", "intro", (4, 6)) == BASE + "ops.pdf#page=4"


@pytest.mark.parametrize(
    ("base", "layout"),
    [
        ("docs.example.com", "html"),
        ("https://docs.example.com/?v=2", "html"),
        ("https://docs.example.com/#top", "html"),
        ("", "html"),
        (None, "pretty"),
        (None, "{path}{name}"),
        (None, "{path"),
    ],
)
def test_bad_url_settings_are_refused_with_their_name(base: str | None, layout: str) -> None:
    with pytest.raises(SettingsError, match=r"base_url|url_layout"):
        Settings(base_url=base, url_layout=layout)


def test_every_chunk_gets_a_url_only_with_a_base_url() -> None:
    path = FIXTURES / "markdown" / "headings.md"
    assert all(c.url is None for c in segment.chunk_file(path))
    chunks = segment.chunk_file(
        path, Settings(base_url=BASE, url_layout="folder"), source="guides/headings.md"
    )
    for c in chunks:
        expected = BASE + "guides/headings/" + (f"#{encode_fragment(c.anchor)}" if c.anchor else "")
        assert c.url == expected
