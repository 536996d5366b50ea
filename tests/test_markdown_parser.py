"""The adapter's markdown-it parser gives a stock parser's tokens, less the work chunks never show.

References: markdown-it-py itself. Link destinations: its `normalizeLink` then `validateLink`
(markdown_it.common.normalize_url), the path a stock `MarkdownIt` takes for every link, image and
reference definition. Plain inline runs: a stock parser with the same rules and plugins, token for
token (only `href`/`src` differ: ours keep the destination as written)."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from markdown_it import MarkdownIt
from markdown_it.common.normalize_url import normalizeLink, validateLink
from markdown_it.token import Token

from segment.adapters.markdown_parser import TextParser, allowed_destination, plain_text_inline
from segment.adapters.markdown_site import MAX_NESTING, SiteSyntax, configure, parser_for
from segment.adapters.mdx import strip_mdx

ROOT = Path(__file__).resolve().parents[1]
SHARED = ROOT.parent / "shared" / "corpus"


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


# ----- plain inline runs -------------------------------------------------------------------------


def stock_parser(syntax: SiteSyntax) -> MarkdownIt:
    return configure(MarkdownIt("commonmark", {"maxNesting": MAX_NESTING, "html": True}), syntax)


def comparable(tokens: list[Token]) -> list[tuple[object, ...]]:
    """Every field of every token, children included; link and image destinations left out."""
    return [
        (
            *(t.type, t.tag, t.nesting, t.map, t.level, t.content, t.markup, t.info, t.block, t.hidden),
            {k: v for k, v in t.attrs.items() if k not in ("href", "src")},
            repr(t.meta),
            None if t.children is None else comparable(t.children),
        )
        for t in tokens
    ]


def assert_same_tokens(text: str, syntax: SiteSyntax) -> None:
    assert comparable(parser_for(syntax).parse(text, {})) == comparable(stock_parser(syntax).parse(text, {}))


def test_a_plain_run_becomes_one_text_token() -> None:
    tokens = parser_for(SiteSyntax()).parse("# Getting started\n\nInstall the agent first\n")
    assert [(c.type, c.content, c.level) for c in tokens[1].children or []] == [
        ("text", "Getting started", 0)
    ]
    assert [(c.type, c.content) for c in tokens[4].children or []] == [("text", "Install the agent first")]
    assert_same_tokens("# Getting started\n\nInstall the agent first\n\n#\n", SiteSyntax())


def test_the_shortcut_is_installed_only_where_it_is_exact() -> None:
    if not hasattr(MarkdownIt().inline, "terminator_re"):
        pytest.skip("markdown-it-py before 4.3 has no terminator_re: the shortcut is never installed")
    assert plain_text_inline(stock_parser(SiteSyntax()))
    before_text = stock_parser(SiteSyntax())
    before_text.inline.ruler.before("text", "shout", lambda state, silent: False)
    assert not plain_text_inline(before_text)
    other_post_rule = stock_parser(SiteSyntax())
    other_post_rule.inline.ruler2.push("rewrite", lambda state: None)
    assert not plain_text_inline(other_post_rule)


_MARKDOWN_ISH = st.text(
    alphabet=st.sampled_from(
        list("ab Z9.,;'\"\t\n") + list("*_`[]()<>&\\!#-:|~^=+$%@{}") + ["\u00e9", "\u3000"]
    ),
    max_size=80,
)


# Property: any text, plain or not, parses to the same tokens as with the stock inline rule.
@settings(max_examples=1500, deadline=None)
@given(_MARKDOWN_ISH)
def test_any_text_parses_to_the_stock_tokens(text: str) -> None:
    assert_same_tokens(text, SiteSyntax())


def _sources() -> list[tuple[Path, SiteSyntax]]:
    roots = [ROOT / "fixtures", SHARED]
    found: list[tuple[Path, SiteSyntax]] = []
    for root in roots:
        found += [(p, SiteSyntax()) for p in sorted(root.rglob("*.md"))]
        found += [(p, SiteSyntax().without_indented_code()) for p in sorted(root.rglob("*.mdx"))]
    return found


def test_every_markdown_and_mdx_page_parses_to_the_stock_tokens() -> None:
    # Fixtures, and real documentation when ../shared is present (licences in each SOURCE.md).
    sources = _sources()
    assert len(sources) > (400 if SHARED.is_dir() else 15)
    for path, syntax in sources:
        text = path.read_text(encoding="utf-8", errors="replace")
        if path.suffix == ".mdx":
            text = strip_mdx(text)
        assert_same_tokens(text, syntax)
