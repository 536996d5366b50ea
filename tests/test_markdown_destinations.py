"""Link destinations are checked without being normalised, with markdown-it's own verdicts.

Reference: markdown-it-py's `normalizeLink` then `validateLink` (markdown_it.common.normalize_url),
the path a stock `MarkdownIt` takes for every link, image and reference definition."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from markdown_it import MarkdownIt
from markdown_it.common.normalize_url import normalizeLink, validateLink

from segment.adapters.markdown_destinations import TextParser, allowed_destination
from segment.adapters.markdown_site import SiteSyntax, parser_for

SHARED = Path(__file__).resolve().parents[2] / "shared" / "corpus"


def reference_verdict(url: str) -> bool:
    return validateLink(normalizeLink(url))


HAND_PICKED = [
    "https://example.com/a b",
    "../guide/setup.md#install",
    "#anchor",
    "",
    "javascript:alert(1)",
    "JavaScript:alert(1)",
    "vbscript:msgbox",
    "file:///etc/passwd",
    "data:text/html;base64,AAAA",
    "data:image/png;base64,AAAA",
    "DATA:IMAGE/PNG;base64,AAAA",
    " javascript:alert(1)",  # a leading space: possible inside <...>
    "\u00a0javascript:alert(1)",  # no-break space: str.strip() removes it, encoding does not
    "java\u0130script:x",  # a non-ASCII letter in the scheme
    "\u212aava:x",  # KELVIN SIGN lowercases to "k"
    "mailto:someone@example.com",
    "http://[::1]:8080/x",
    "http://b\u00fccher.example/",
    "//cdn.example.com/lib.js",
    "a:b",
    "+:x",
    "%6Aavascript:x",
    "javascript%3Aalert(1)",
    "javascript :x",
]


@pytest.mark.parametrize("url", HAND_PICKED)
def test_hand_picked_destinations_get_markdown_its_verdict(url: str) -> None:
    assert allowed_destination(url) == reference_verdict(url)


SCHEMES = [
    "",
    "javascript:",
    "JAVASCRIPT:",
    "vbscript:",
    "file:",
    "data:",
    "data:image/png;",
    "http:",
    "https:",
    "mailto:",
    "x+y.z-1:",
]
_TAIL = st.text(
    alphabet=st.sampled_from(
        list("aAzZ09:/?#@%.+-_ []()<>\\\t\u00a0\u0130\u212a\u00fc\u200b") + ["\u3000", "\U0001f600"]
    ),
    max_size=24,
)


# Property: every destination, from schemes that matter plus arbitrary tails, gets the same verdict.
@settings(max_examples=3000, deadline=None)
@given(st.sampled_from(SCHEMES), st.sampled_from(["", " ", "//", "\u00a0"]), _TAIL)
def test_any_destination_gets_markdown_its_verdict(scheme: str, gap: str, tail: str) -> None:
    for url in (scheme + gap + tail, gap + scheme + tail, tail):
        assert allowed_destination(url) == reference_verdict(url), url


@settings(max_examples=1000, deadline=None)
@given(st.text(max_size=40))
def test_any_text_as_destination_gets_markdown_its_verdict(url: str) -> None:
    assert allowed_destination(url) == reference_verdict(url)


def test_a_rejected_destination_leaves_the_link_as_literal_text_as_in_markdown_it() -> None:
    page = "[safe](https://example.com) [unsafe](javascript:alert(1)) ![img](data:image/png;base64,AA)\n"
    stock = MarkdownIt("commonmark").parse(page)[1].children
    ours = TextParser("commonmark").parse(page)[1].children
    assert stock is not None and ours is not None
    assert [(t.type, t.content) for t in ours] == [(t.type, t.content) for t in stock]
    assert ("text", " [unsafe](javascript:alert(1)) ") in [(t.type, t.content) for t in ours]


def test_the_adapters_parser_keeps_destinations_as_written() -> None:
    md = parser_for(SiteSyntax())
    assert isinstance(md, TextParser)
    link = md.parseInline("[x](<https://b\u00fccher.example/a b>)")[0].children
    assert link is not None and link[0].attrGet("href") == "https://b\u00fccher.example/a b"


@pytest.mark.skipif(not SHARED.is_dir(), reason="needs ../shared/corpus")
def test_every_destination_in_the_shared_markdown_corpora_gets_markdown_its_verdict() -> None:
    # Real documentation (../shared/corpus, licences in each SOURCE.md): every link, image and
    # reference destination a stock parser sees.
    seen: list[str] = []

    class Recording(MarkdownIt):
        def normalizeLink(self, url: str) -> str:
            seen.append(url)
            return super().normalizeLink(url)

    md = Recording("commonmark", {"html": True})
    for suffix in ("md", "mdx"):
        for path in sorted(SHARED.rglob(f"*.{suffix}")):
            md.parse(path.read_text(encoding="utf-8", errors="replace"))
    assert len(seen) > 1000
    assert [allowed_destination(u) for u in seen] == [reference_verdict(u) for u in seen]
