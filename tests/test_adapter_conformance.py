"""Every registered adapter keeps the contract written in segment/adapters/__init__.py.

Each format has a small sample of its own below (SAMPLES, keyed by format name) and a
deep-nesting bomb; a registered format without a sample fails `test_every_format_has_a_sample`
with a message saying what to add. For each format:
- the same bytes parsed twice give the same tree (field for field);
- every heading, block, list item, definition and table row carries a span;
- hostile bytes (random bytes, the sample cut in half, the bomb) give a Document or a
  `SegmentError` with a known status, never another exception;
- blocks nest no deeper than `MAX_BLOCK_DEPTH`;
- the record's `format` is the registry row's, and the JSON Schema's `format` enum lists exactly
  the registered formats.
"""

from __future__ import annotations

import json
import random
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest

import segment
from segment.adapters import ADAPTERS, FORMATS, MAX_BLOCK_DEPTH, Adapter
from segment.errors import SegmentError
from segment.gcpause import paused_gc
from segment.tree import (
    Block,
    Definition,
    DefinitionList,
    Document,
    ListBlock,
    ListItem,
    Row,
    Span,
    Table,
    block_children,
)

SCHEMA = Path(segment.__file__).parent / "schema" / "chunk.schema.json"

ADAPTER_STATUSES = frozenset({"corrupt", "encrypted", "empty", "no_text", "resource_limit", "unreadable"})
"""The statuses the contract allows an adapter's errors to carry."""


@dataclass(frozen=True)
class Sample:
    """A small well-formed file of one format, and a deep-nesting bomb of it."""

    suffix: str
    make: Callable[[], bytes]
    bomb: Callable[[], bytes]


def _pdf() -> bytes:
    from tests import hostile

    return hostile.good_pdf(3)


def _pdf_deep_outline() -> bytes:
    """A PDF whose outline nests 400 levels deep (each entry one level below the last)."""
    import pymupdf

    doc = pymupdf.open(stream=_pdf(), filetype="pdf")
    doc.set_toc([[level, f"Level {level}", 1] for level in range(1, 401)])
    data: bytes = doc.tobytes()
    doc.close()
    return data


MARKDOWN = b"""# Hangar guide

Batteries are logged *before* each flight.

- Check the charge
  - Twice in winter
- Check the seals

> A quote with `code`.

| Pad | Lights |
|-----|--------|
| A1  | green  |

```sh
drone check --all
```
"""

HTML = b"""<!doctype html><html><head><title>Hangar guide</title></head><body><main>
<h1>Hangar guide</h1>
<p>Batteries are logged before each flight.</p>
<ul><li>Check the charge<ul><li>Twice in winter</li></ul></li><li>Check the seals</li></ul>
<blockquote><p>A quote.</p></blockquote>
<table><tr><th>Pad</th><th>Lights</th></tr><tr><td>A1</td><td>green</td></tr></table>
<dl><dt>Pad</dt><dd>Where a drone lands.</dd></dl>
<pre><code class="language-sh">drone check --all</code></pre>
</main></body></html>
"""

RST = b"""Hangar guide
============

Batteries are logged *before* each flight.

- Check the charge

  - Twice in winter

- Check the seals

  A quote with ``code``.

.. note:: Lights stay green.

=====  ======
Pad    Lights
=====  ======
A1     green
=====  ======

Pad
   Where a drone lands.

.. code-block:: sh

   drone check --all
"""

TEXT = b"""Hangar guide
============

Batteries are logged before each flight.

- Check the charge
- Check the seals

    drone check --all
"""


def _notebook(markdown: str) -> bytes:
    import nbformat

    nb = nbformat.v4.new_notebook()
    nb.cells = [nbformat.v4.new_markdown_cell(markdown), nbformat.v4.new_code_cell("print('pad A1 green')")]
    return nbformat.writes(nb).encode()


SAMPLES: dict[str, Sample] = {
    "markdown": Sample(".md", lambda: MARKDOWN, lambda: ("> " * 10_000 + "deep\n").encode()),
    "html": Sample(
        ".html", lambda: HTML, lambda: b"<blockquote>" * 5_000 + b"deep" + b"</blockquote>" * 5_000
    ),
    "pdf": Sample(".pdf", _pdf, _pdf_deep_outline),
    "rst": Sample(".rst", lambda: RST, lambda: b"".join(b"   " * i + b"deep\n\n" for i in range(1_000))),
    "notebook": Sample(
        ".ipynb", lambda: _notebook(MARKDOWN.decode()), lambda: _notebook("> " * 10_000 + "deep")
    ),
    "mdx": Sample(
        ".mdx",
        lambda: (
            b'import Tabs from "@theme/Tabs";\n\n'
            + MARKDOWN
            + b'\n<Tabs><TabItem label="Linux">\n\nRun it.\n\n</TabItem></Tabs>\n'
        ),
        lambda: ("> " * 10_000 + "deep\n").encode(),
    ),
    "text": Sample(".txt", lambda: TEXT, lambda: b"".join(b"  " * i + b"- deep\n" for i in range(5_000))),
}


def _adapter(fmt: str) -> Adapter:
    return next(a for a in ADAPTERS if a.format == fmt)


def _sample(fmt: str) -> Sample:
    if fmt not in SAMPLES:
        pytest.fail(
            f"format {fmt!r} is registered in segment/adapters but has no sample in "
            f"tests/test_adapter_conformance.py: add SAMPLES[{fmt!r}] (a small file and a nesting bomb)"
        )
    return SAMPLES[fmt]


def _parse(fmt: str, data: bytes) -> Document:
    """The adapter itself (not api.parse_bytes, whose guards would hide a contract breach)."""
    sample = _sample(fmt)
    with paused_gc():
        return _adapter(fmt).load()(data, f"sample{sample.suffix}", None)


def _nodes(doc: Document) -> Iterator[tuple[str, Span, int]]:
    """Every node with a span, its kind and its block depth: how many lists, quotes and definition
    lists enclose it (0 for a section's own blocks)."""
    for _path, section in doc.walk():
        if section.heading is not None:
            yield "heading", section.heading.span, 0
        stack: list[tuple[Block | ListItem | Definition | Row, int]] = [(b, 0) for b in section.blocks]
        while stack:
            node, depth = stack.pop()
            yield type(node).__name__, node.span, depth
            if isinstance(node, (ListItem, Definition)):
                stack.extend((b, depth) for b in node.blocks)
                continue
            if isinstance(node, Row):
                continue
            if isinstance(node, Table):
                stack.extend((row, depth) for row in [*node.header, *node.rows])
            elif isinstance(node, (ListBlock, DefinitionList)):
                stack.extend((item, depth + 1) for item in node.items)
            else:
                stack.extend((b, depth + 1) for b in block_children(node))


def _depth(doc: Document) -> int:
    return max((depth for _kind, _span, depth in _nodes(doc)), default=0)


def _hostile_result(fmt: str, data: bytes) -> Document | None:
    try:
        return _parse(fmt, data)
    except SegmentError as exc:
        assert exc.status in ADAPTER_STATUSES, f"{fmt}: unknown status {exc.status!r}: {exc.reason}"
        assert exc.source.startswith("sample") and exc.reason.strip()
        return None


def test_every_format_has_a_sample() -> None:
    missing = [fmt for fmt in FORMATS if fmt not in SAMPLES]
    assert not missing, f"registered formats without a conformance sample: {missing} (add them to SAMPLES)"


def test_the_schema_format_enum_is_the_registry() -> None:
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    assert sorted(schema["properties"]["format"]["enum"]) == sorted(FORMATS)
    assert len(set(FORMATS)) == len(FORMATS)


def test_suffixes_belong_to_one_format_each() -> None:
    suffixes = [s for a in ADAPTERS for s in a.suffixes]
    assert len(suffixes) == len(set(suffixes)) and all(s == s.lower() and s.startswith(".") for s in suffixes)


@pytest.mark.parametrize("fmt", FORMATS)
def test_same_bytes_give_the_same_tree(fmt: str) -> None:
    data = _sample(fmt).make()
    first, second = _parse(fmt, data), _parse(fmt, data)
    assert first == second
    assert segment.tree.pretty(first) == segment.tree.pretty(second)


@pytest.mark.parametrize("fmt", FORMATS)
def test_the_sample_has_every_kind_it_can_and_spans_on_every_node(fmt: str) -> None:
    doc = _parse(fmt, _sample(fmt).make())
    nodes = list(_nodes(doc))
    assert len(nodes) >= 3, f"{fmt}: the sample parsed to almost nothing: {segment.tree.pretty(doc)}"
    unspanned = [kind for kind, span, _ in nodes if span.lines is None and span.pages is None]
    assert not unspanned, f"{fmt}: nodes without a span: {unspanned}"


@pytest.mark.parametrize("fmt", FORMATS)
def test_the_record_format_comes_from_the_registry(fmt: str) -> None:
    doc = segment.parse_bytes(_sample(fmt).make(), f"sample{_sample(fmt).suffix}")
    assert doc.format == fmt
    assert all(c.format == fmt for c in segment.chunk(doc))


@pytest.mark.timeout(120)
@pytest.mark.parametrize("fmt", FORMATS)
def test_hostile_bytes_give_a_tree_or_a_clear_error(fmt: str) -> None:
    sample = _sample(fmt)
    good = sample.make()
    cases = {
        "random bytes": random.Random(12).randbytes(20_000),
        "cut in half": good[: len(good) // 2],
        "nesting bomb": sample.bomb(),
    }
    for name, data in cases.items():
        doc = _hostile_result(fmt, data)
        if doc is not None:
            assert _depth(doc) <= MAX_BLOCK_DEPTH, f"{fmt} {name}: blocks nest {_depth(doc)} deep"


@pytest.mark.timeout(120)
@pytest.mark.parametrize("fmt", FORMATS)
def test_the_nesting_bomb_is_capped_and_said(fmt: str) -> None:
    doc = _hostile_result(fmt, _sample(fmt).bomb())
    if doc is None:
        return  # refused with a clear status: allowed
    assert _depth(doc) <= MAX_BLOCK_DEPTH
    list(segment.chunk(doc))  # the segmenter copes with what the adapter kept


@pytest.mark.parametrize(
    "name",
    [
        "guide.md",
        "a/b/Guide.MDX",
        "a.tar.gz",
        ".md",
        "notes.",
        "README",
        "..",
        "a/.hidden.rst",
        "dir.d/file",
        "trailing/slash.md/",
        "x/y.ipynb",
        "spaces in name.HTML",
        "w\\in.md",
    ],
)
def test_the_suffix_is_read_as_pathlib_reads_it(name: str) -> None:
    # Reference: pathlib (PurePath.suffix), which the registry's fast path mirrors.
    from pathlib import PurePath

    from segment.adapters import lower_suffix

    assert lower_suffix(name) == PurePath(name).suffix.lower()
