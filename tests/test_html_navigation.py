"""Navigation tables told apart by what they are, not by being small and link-heavy.

A table is navigation when it says so (`role="navigation"`, a label naming navigation) or when
its links are moves between pages: previous / next / up / home / contents links, marked by the
HTML standard's `rel` link types (HTML Living Standard, "Link types": prev, next; `up` and `index`
from the older registered types, from memory), by DocBook XSL's access keys p / u / h / n (as on
every page of the shared corpus's PostgreSQL docs), by arrow marks, or by the words themselves.
A small table of API entries beside one-line descriptions is content. Every table dropped as
navigation is counted in the document's warnings with its word count (text conservation: no
silent drops).
"""

from __future__ import annotations

import re

import lxml.html
import pytest

import segment
from segment.adapters.html import parse
from segment.adapters.html.tables import TableKind, table_kind
from segment.tree import Table
from tests.conftest import FIXTURES
from tests.test_html_chunks import pretty_text

HTML = FIXTURES / "html"
_NAV_WARNING = re.compile(r"^navigation table dropped \(line (\d+)\): (\d+) words$")


def _tables(doc: segment.Document) -> list[Table]:
    out: list[Table] = []
    for _path, section in doc.walk():
        out.extend(b for b in section.blocks if isinstance(b, Table))
    return out


def test_api_summary_tables_are_content() -> None:
    # Our own API reference page: each small table links its entries to their descriptions on the
    # same site, beside a one-line description; every row is kept as a table row.
    doc = segment.parse(HTML / "api-summary-tables.html")
    rows = [row.cells for table in _tables(doc) for row in [*table.header, *table.rows]]
    assert ["Queue", "A first-in, first-out queue."] in rows
    assert ["PriorityQueue", "A queue that serves urgent messages first."] in rows
    assert ["Lease", "A claim on one message for a while."] in rows
    assert ["next()", "Move to the next message."] in rows
    assert ["home", "Move back to the oldest message kept."] in rows
    assert ["Topic", "Subscriber"] in rows
    assert len(_tables(doc)) == 4
    assert not doc.warnings


def _reference_tables(path: str) -> list[tuple[int, int]]:
    """(line, word count) of every table in the page, read by lxml alone (cells apart)."""
    root = lxml.html.fromstring((HTML / path).read_bytes())
    return [(t.sourceline, len(" ".join(t.itertext()).split())) for t in root.iter("table")]


def test_navigation_tables_are_dropped_and_counted() -> None:
    doc = segment.parse(HTML / "navigation-tables.html")
    text = pretty_text(doc)
    for word in ("Prev", "Previous", "Next", "Home", "Contents", "Part II", "Back to the list", "«", "»"):
        assert word not in text, word
    # The content between the bars stays, the small data table among them too.
    assert "A consumer takes a lease on a message before it works on it." in text
    assert [r.cells for r in _tables(doc)[0].rows] == [["Lease length", "Default"], ["short", "30 seconds"]]
    dropped = [tuple(int(n) for n in _NAV_WARNING.match(w).groups()) for w in doc.warnings]  # type: ignore[union-attr]
    data_table_line = 30
    expected = [t for t in _reference_tables("navigation-tables.html") if t[0] != data_table_line]
    assert dropped == expected
    assert len(dropped) == 6


@pytest.mark.parametrize(
    ("markup", "kind"),
    [
        # Moves between pages, however they are marked.
        ('<table><tr><td><a rel="next" href="b.html">Stack</a></td></tr></table>', TableKind.NAVIGATION),
        ('<table><tr><td><a accesskey="u" href="up.html">Up</a></td></tr></table>', TableKind.NAVIGATION),
        (
            '<table><tr><td><a href="a.html">← Queue</a></td><td><a href="c.html">Stack →</a></td></tr></table>',
            TableKind.NAVIGATION,
        ),
        (
            '<table><tr><td><a href="a.html">Previous</a></td><td><a href="c.html">Next</a></td></tr></table>',
            TableKind.NAVIGATION,
        ),
        (
            '<table><tr><td><a href="a.html">Previous page</a></td><td>Queues</td></tr></table>',
            TableKind.NAVIGATION,
        ),
        (
            '<table role="navigation"><tr><td>Anything at all, however long it runs on.</td></tr></table>',
            TableKind.NAVIGATION,
        ),
        (
            '<table summary="Navigation footer"><tr><td><a href="x.html">x</a></td></tr></table>',
            TableKind.NAVIGATION,
        ),
        # Content: entries linked to their descriptions, one move word alone, links in code.
        (
            '<table><tr><td><a href="q.html">Queue</a></td><td>A queue.</td></tr>'
            '<tr><td><a href="s.html">Stack</a></td><td>A stack.</td></tr></table>',
            TableKind.DATA,
        ),
        (
            '<table><tr><td><a href="h.html">home</a></td><td>Go to the start.</td></tr>'
            '<tr><td><a href="e.html">end</a></td><td>Go to the end.</td></tr></table>',
            TableKind.DATA,
        ),
        (
            '<table><tr><td><a href="n.html"><code>next</code></a></td><td>Advance.</td></tr>'
            '<tr><td><a href="p.html"><code>prev</code></a></td><td>Step back.</td></tr></table>',
            TableKind.DATA,
        ),
        (
            '<table><tr><td><a rel="next" href="b.html">Stack</a></td><td><a href="q.html">Queue</a></td></tr></table>',
            TableKind.DATA,
        ),
        # Layout: as before.
        ('<table role="presentation"><tr><td>a</td><td>b</td></tr></table>', TableKind.LAYOUT),
        ("<table><tr><td><h2>Part</h2></td></tr></table>", TableKind.LAYOUT),
    ],
)
def test_table_kind(markup: str, kind: TableKind) -> None:
    table = lxml.html.fromstring(markup)
    assert table_kind(table) == kind


def test_rows_over_three_are_never_a_bar_of_moves() -> None:
    # A long table of links is content (an index of pages), whatever its words.
    rows = "".join(f'<tr><td><a href="{w}.html">{w}</a></td></tr>' for w in ("Next", "Up", "Home", "Index"))
    doc = parse(f"<table>{rows}</table>".encode(), "t.html")
    assert len(_tables(doc)) == 1 and not doc.warnings
