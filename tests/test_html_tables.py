"""The HTML table model: colspan/rowspan expanded into a full grid, row groups in order.

Source: HTML Living Standard, section 4.9 "Tabular data", in particular 4.9.12.1 "Forming a
table" (row groups: thead/tbody/bare tr in order, tfoot groups last; colspan parsed as a
non-negative integer, 0 or unparsable -> 1, capped at 1000; rowspan 0 grows the cell to the end
of its row group, capped at 65534). One deliberate difference: a rowspan past its group's last row
is clipped there, as browsers lay tables out, where the model would add empty rows.
and the steel-castings example of section 4.9.11 "Examples" (written out from memory in
fixtures/html/table-html-standard-steel.html). Every slot a cell covers carries the cell's text.
"""

from __future__ import annotations

import pytest

from segment.adapters.html import parse
from segment.tree import Table


def _tables(html: str) -> list[Table]:
    doc = parse(html.encode(), "t.html")
    out: list[Table] = []
    for _path, section in doc.walk():
        out.extend(b for b in section.blocks if isinstance(b, Table))
    return out


def _grid(table: Table) -> tuple[list[list[str]], list[list[str]]]:
    return [r.cells for r in table.header], [r.cells for r in table.rows]


def test_steel_castings_example_thead_spans() -> None:
    # HTML standard 4.9.11: the two header rows share "Grade." etc. (rowspan=2), and
    # "Ultimate tensile strength" covers two columns (colspan=2).
    html = """<table><thead>
      <tr><th rowspan=2>Grade.<th rowspan=2>Yield Point.<th colspan=2>Ultimate tensile strength
          <th rowspan=2>Per cent elong. 50.8mm or 2 in.<th rowspan=2>Per cent reduct. area.
      <tr><th>kg/mm<sup>2</sup><th>lb/in<sup>2</sup>
      <tbody><tr><td>Hard<td>0.45 ultimate<td>56.2<td>80,000<td>15<td>20</table>"""
    (table,) = _tables(html)
    header, rows = _grid(table)
    assert header == [
        [
            "Grade.",
            "Yield Point.",
            "Ultimate tensile strength",
            "Ultimate tensile strength",
            "Per cent elong. 50.8mm or 2 in.",
            "Per cent reduct. area.",
        ],
        [
            "Grade.",
            "Yield Point.",
            "kg/mm2",
            "lb/in2",
            "Per cent elong. 50.8mm or 2 in.",
            "Per cent reduct. area.",
        ],
    ]
    assert rows == [["Hard", "0.45 ultimate", "56.2", "80,000", "15", "20"]]


@pytest.mark.parametrize(
    ("html", "expected_rows"),
    [
        pytest.param(
            # 4.9.12.1: tfoot elements are collected and processed after all other row groups.
            "<table><tfoot><tr><td>T<td>3</tfoot><tbody><tr><td>a<td>1<tr><td>b<td>2</table>",
            [["a", "1"], ["b", "2"], ["T", "3"]],
            id="tfoot-last",
        ),
        pytest.param(
            # 4.9.12.1: rowspan=0 -> "cell grows downward" to the end of the row group only.
            "<table><tbody><tr><td rowspan=0>A<td>1<tr><td>2<tr><td>3</tbody><tbody><tr><td>B<td>4</table>",
            [["A", "1"], ["A", "2"], ["A", "3"], ["B", "4"]],
            id="rowspan-zero",
        ),
        pytest.param(
            # Our deliberate difference from 4.9.12.1 "ending a row group" (which would add two
            # empty rows): the rowspan is clipped at the group's end, as browsers render it.
            "<table><tr><td rowspan=3>tall<td>one</table>",
            [["tall", "one"]],
            id="rowspan-past-end",
        ),
        pytest.param(
            # A clipped rowspan never builds rows the page does not have.
            "<table><tr><td rowspan=65534>x<td>1<tr><td>2</table>",
            [["x", "1"], ["x", "2"]],
            id="rowspan-huge",
        ),
        pytest.param(
            # 4.9.12.1: colspan 0 or unparsable -> 1.
            "<table><tr><td colspan=0>z<td colspan=x>j<td>c<tr><td>1<td>2<td>3</table>",
            [["z", "j", "c"], ["1", "2", "3"]],
            id="colspan-zero-or-junk",
        ),
        pytest.param(
            # Slots covered by an earlier rowspan are skipped when placing the next cells.
            "<table><tr><td>a<td rowspan=2>B<td>c<tr><td>d<td>e</table>",
            [["a", "B", "c"], ["d", "B", "e"]],
            id="rowspan-skips-slot",
        ),
        pytest.param(
            # Both spans at once: a 2x2 block.
            "<table><tr><td colspan=2 rowspan=2>X<td>1<tr><td>2<tr><td>a<td>b<td>3</table>",
            [["X", "X", "1"], ["X", "X", "2"], ["a", "b", "3"]],
            id="block-span",
        ),
        pytest.param(
            # Rows shorter than the table are padded with empty cells (table model error, kept).
            "<table><tr><td>a<td>b<td>c<tr><td>d</table>",
            [["a", "b", "c"], ["d", "", ""]],
            id="short-row",
        ),
    ],
)
def test_table_model_grid(html: str, expected_rows: list[list[str]]) -> None:
    (table,) = _tables(html)
    assert _grid(table) == ([], expected_rows)


def test_colspan_cap() -> None:
    # 4.9.12.1: "If colspan is greater than 1000, let it be 1000 instead."
    (table,) = _tables("<table><tr><td colspan=5000>wide<tr><td>next</table>")
    assert len(table.rows[0].cells) == 1000


def test_header_rows_without_thead_are_leading_th_rows() -> None:
    # Our rule (common practice of Markdown renderers and wikis): leading all-<th> rows are the
    # header when there is no thead; a <th> row header in the body stays a body cell.
    (table,) = _tables("<table><tr><th>k<th>v<tr><th>Mood<td>Sad</table>")
    assert _grid(table) == ([["k", "v"]], [["Mood", "Sad"]])


def test_caption_and_nested_table() -> None:
    (table,) = _tables(
        "<table><caption>Batteries</caption><tr><th>Drone<th>Packs"
        "<tr><td>ND-6<td><table><tr><td>left<td>98 Wh<tr><td>right<td>98 Wh</table></table>"
    )
    assert table.caption == "Batteries"
    assert table.rows[0].cells == ["ND-6", "left 98 Wh right 98 Wh"]


def test_cells_are_one_line_and_keep_br_as_space() -> None:
    (table,) = _tables("<table><tr><td><p>one</p><p>two</p><td>a<br>b</table>")
    assert table.rows[0].cells == ["one two", "a b"]


@pytest.mark.parametrize(
    "html",
    [
        # DocBook XSL navigation bars (as in ../shared/corpus/html): summary names navigation.
        '<table summary="Navigation header"><tr><th>Page</th></tr></table>',
        # A bar of links without a summary: our link-bar rule.
        '<table><tr><td><a href="a.html">Prev</a></td><td><a href="b.html">Next</a></td></tr></table>',
    ],
)
def test_navigation_tables_are_dropped(html: str) -> None:
    assert _tables(html) == []


def test_layout_table_cells_are_content() -> None:
    doc = parse(b'<table role="presentation"><tr><td><p>left</p><td><p>right</p></table>', "t.html")
    assert [b.text for b in doc.root.blocks] == ["left", "right"]  # type: ignore[union-attr]


def test_a_table_without_cells_keeps_its_caption_as_text() -> None:
    # HTML standard, 4.9.2 "The caption element": the caption is the table's title, shown to the
    # reader even when the table has no rows (found by tests/test_html_properties.py).
    import segment
    from segment.tree import Paragraph

    doc = segment.parse_bytes(b"<html><body><table><caption>dock </caption> </table></body></html>", "x.html")
    assert [b.text for b in doc.root.blocks if isinstance(b, Paragraph)] == ["dock"]
