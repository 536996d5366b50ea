"""Real pages: the PostgreSQL 15 HTML documentation subset in ../shared/corpus/html.

Source: Debian package postgresql-doc-15 15.20 (262 DocBook XSL pages, PostgreSQL Licence; see
../shared/corpus/html/postgresql-15-docs/SOURCE.md). What SOURCE.md states about these pages is
checked against the tree, and what a reader expects of the chunks is measured at 256 and 512
tokens:

- no table row is cut: every row of every content table appears whole, as one pipe row with its
  table's width, in some chunk, and every table part starts with the header row;
- every paragraph's chunk carries the page's heading path (the breadcrumb of its section, or of a
  parent section when small sibling sections are packed together and the heading is in the text);
- at least 99% of the main content's words reach the chunks, the reference being lxml's text of
  <body> without DocBook's div.navheader/div.navfooter (and script/style), counted with
  multiplicity;
- navigation words do not leak: occurrences, in chunk text, of the words that the navigation
  bars hold and the main content does not ("Prev", "Next", "Home", the neighbouring pages'
  titles...; figure printed; bar: 0). Words shared with the content cannot be told apart by count:
  table captions and header rows are repeated in every part of a split table on purpose.
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field
from pathlib import Path

import lxml.html
import pytest

import segment
from segment.adapters.html import parse
from segment.adapters.html import tables as html_tables
from segment.chunk import Chunk
from segment.render import render_row
from segment.tree import Document, Paragraph, Table
from tests import checker
from tests.conftest import corpus_dir

pytestmark = pytest.mark.corpus

WORD = re.compile(r"\w+")
BUDGETS = (256, 512)


def _pages() -> list[Path]:
    root = corpus_dir("html")
    return sorted(p for p in root.rglob("*.html"))


@dataclass
class Figures:
    """What the corpus run measured (printed with -s, asserted below)."""

    pages: int = 0
    chunks: int = 0
    rows: int = 0
    row_problems: list[str] = field(default_factory=list)
    paragraphs: int = 0
    crumb_problems: list[str] = field(default_factory=list)
    words_main: int = 0
    words_found: int = 0
    nav_words: int = 0
    nav_leaked: int = 0
    missing: Counter[str] = field(default_factory=Counter)


def _norm(text: str) -> str:
    return " ".join(text.split())


def _reference(data: bytes) -> tuple[Counter[str], Counter[str]]:
    """Words of the main content and of the navigation bars, by lxml alone."""
    root = lxml.html.fromstring(data)
    nav: Counter[str] = Counter()
    for el in root.xpath('//div[@class="navheader" or @class="navfooter"]'):
        nav.update(WORD.findall(el.text_content()))
        el.drop_tree()
    for el in root.xpath("//script|//style"):
        el.drop_tree()
    for el in root.iter(*checker.BLOCK_TAGS):  # block boundaries separate words, as rendered
        el.tail = "\n" + (el.tail or "")
    body = root.find("body")
    main = Counter(WORD.findall((body if body is not None else root).text_content()))
    return main, nav


def _check_rows(doc: Document, chunks: list[Chunk], fig: Figures) -> None:
    """Each row is one whole line of some chunk, and each chunk holding it has the header rows."""
    lines = [set(c.text.split("\n")) for c in chunks]
    for _path, section in doc.walk():
        for table in checker.all_blocks(section.blocks):
            if not isinstance(table, Table):
                continue
            header = [render_row(r) for r in table.header]
            for row in table.rows:
                fig.rows += 1
                line = render_row(row)
                holders = [ls for ls in lines if line in ls]
                if not holders:
                    fig.row_problems.append(f"{doc.source}: row {line[:80]!r} is whole in no chunk")
                elif not any(all(h in ls for h in header) for ls in holders):
                    fig.row_problems.append(f"{doc.source}: row {line[:80]!r} is in no chunk with its header")


def _check_crumbs(doc: Document, chunks: list[Chunk], fig: Figures) -> None:
    # Compared without whitespace: sentence splitting may re-space text ("(This" -> "( This").
    texts = [("".join(c.text.split()), c) for c in chunks]
    for path, section in doc.walk():
        want = checker.expected_crumb(doc, path, section)
        for block in checker.all_blocks(section.blocks):
            if not isinstance(block, Paragraph):
                continue
            fig.paragraphs += 1
            probe = "".join(block.text.split())[:50]
            holders = [c for t, c in texts if probe in t]
            heading = section.heading.text if section.heading else None
            ok = any(
                c.breadcrumb == want
                or (c.breadcrumb == want[: len(c.breadcrumb)] and heading is not None and heading in c.text)
                for c in holders
            )
            if not ok:
                got = [c.breadcrumb for c in holders][:2]
                fig.crumb_problems.append(f"{doc.source}: {probe!r} wants {want}, chunks have {got}")


def _measure(max_tokens: int) -> Figures:
    fig = Figures()
    settings = segment.Settings(max_tokens=max_tokens, min_tokens=min(64, max_tokens // 4))
    for path in _pages():
        data = path.read_bytes()
        doc = parse(data, path.name)
        chunks = list(segment.chunk(doc, settings))
        fig.pages += 1
        fig.chunks += len(chunks)
        _check_rows(doc, chunks, fig)
        _check_crumbs(doc, chunks, fig)
        main, nav = _reference(data)
        got = Counter(w for c in chunks for w in WORD.findall(c.text))
        fig.words_main += sum(main.values())
        found = sum(min(n, got[w]) for w, n in main.items())
        fig.words_found += found
        fig.missing.update({w: n - got[w] for w, n in main.items() if got[w] < n})
        nav_only = [w for w in nav if main[w] == 0]
        fig.nav_words += sum(nav[w] for w in nav_only)
        fig.nav_leaked += sum(got[w] for w in nav_only)
    return fig


@pytest.fixture(scope="module", params=BUDGETS, ids=[f"max{b}" for b in BUDGETS])
def figures(request: pytest.FixtureRequest) -> Figures:
    fig = _measure(request.param)
    share = fig.words_found / max(fig.words_main, 1)
    print(
        f"\nHTML corpus at max_tokens={request.param}: {fig.pages} pages, {fig.chunks} chunks, "
        f"{fig.rows} table rows ({len(fig.row_problems)} problems), {fig.paragraphs} paragraphs "
        f"({len(fig.crumb_problems)} without their heading path), main-content words "
        f"{fig.words_found}/{fig.words_main} = {share:.4%}, navigation words leaked "
        f"{fig.nav_leaked}/{fig.nav_words}; most missing: {fig.missing.most_common(8)}"
    )
    return fig


def test_no_table_row_is_cut(figures: Figures) -> None:
    assert figures.rows > 2000
    assert figures.row_problems == []


def test_every_paragraph_chunk_carries_the_heading_path(figures: Figures) -> None:
    assert figures.paragraphs > 5000
    assert figures.crumb_problems == []


def test_main_content_words_reach_the_chunks(figures: Figures) -> None:
    assert figures.words_found / figures.words_main >= 0.99


def test_navigation_words_do_not_leak(figures: Figures) -> None:
    assert figures.nav_words > 1000
    assert figures.nav_leaked == 0


# ----- what SOURCE.md says about the pages, seen in the tree -----------------------------------


def test_source_md_table_counts() -> None:
    # SOURCE.md: 672 <table> elements, 524 of them navigation (div.navheader/div.navfooter).
    kinds: Counter[str] = Counter()
    for path in _pages():
        root = lxml.html.fromstring(path.read_bytes())
        for table in root.iter("table"):
            kinds[html_tables.table_kind(table)] += 1
    assert kinds == Counter({"navigation": 524, "data": 148})


def test_source_md_structures_in_the_tree() -> None:
    pages = _pages()
    titled = sum(1 for p in pages if parse(p.read_bytes(), p.name).title)
    assert titled == len(pages)
    create = parse(
        (corpus_dir("html") / "postgresql-15-docs" / "sql-createtable.html").read_bytes(), "x.html"
    )
    # SOURCE.md: the page title is an h2 in div.refnamediv, then Synopsis / Description / Parameters...
    heads = [s.heading.text for s in create.sections if s.heading]
    assert heads[:4] == ["CREATE TABLE", "Synopsis", "Description", "Parameters"]
    assert create.title == "CREATE TABLE"
    params = create.sections[3]
    assert params.blocks and params.blocks[0].kind == "definitions"


def test_tree_keeps_every_main_content_word() -> None:
    # The adapter's own share of the words figure: every word of the reference main content
    # (lxml's text of <body> without the navigation bars) is a word of the tree.
    from tests.test_html_chunks import pretty_text

    total = 0
    missing: Counter[str] = Counter()
    for path in _pages():
        data = path.read_bytes()
        main, _nav = _reference(data)
        got = Counter(WORD.findall(pretty_text(parse(data, path.name))))
        total += sum(main.values())
        missing.update(main - got)
    assert total > 250_000
    assert not missing, missing.most_common(10)
