"""The reStructuredText adapter: what each construct becomes, and what it never does.

Expected readings follow docutils' reStructuredText specification and directive reference
(docutils.sourceforge.io, from memory) and, for the documentation generator's directives and
roles, what its built pages show (from memory). Fixture text is our own.
"""

from __future__ import annotations

from pathlib import Path

import docutils.core
import pytest
from docutils.parsers.rst import directives, roles

import segment
from segment.settings import Settings
from segment.tree import Code, DefinitionList, Document, Quote, Table, visible_texts
from tests.conftest import FIXTURES

RST = FIXTURES / "rst"


def _doc(text: str, settings: Settings | None = None, source: str = "page.rst") -> Document:
    return segment.parse_bytes(text.encode("utf-8"), source, settings)


def _text(doc: Document) -> str:
    return "\n".join(c.text for c in segment.chunk(doc, Settings(max_tokens=512)))


def test_docinfo_fields_become_properties() -> None:
    doc = segment.parse(RST / "sections.rst")
    assert doc.title == "Hangar Operations Handbook"
    assert doc.properties == {
        "author": "Mira Okonkwo",
        "version": "3.2",
        "date": "2026-04-18",
        "department": "Ground operations",
    }


def test_levels_come_from_docutils_whatever_the_adornment() -> None:
    doc = segment.parse(RST / "sections.rst")
    levels = [(s.heading.text, s.heading.level) for _p, s in doc.walk() if s.heading]
    assert levels == [
        ("Hangar Operations Handbook", 1),
        ("Opening the hangar", 2),
        ("Checking the pads", 3),
        ("Pad lights", 4),
        ("Battery room", 3),
        ("Closing the hangar", 2),
        ("Closing checklist", 3),
    ]


def test_anchors_are_docutils_ids_and_an_explicit_label_wins() -> None:
    doc = segment.parse(RST / "sections.rst")
    anchors = {s.heading.text: s.heading.anchor for _p, s in doc.walk() if s.heading}
    assert anchors["Opening the hangar"] == "opening-the-hangar"
    assert anchors["Battery room"] == "battery-room"  # `.. _battery-room:` above it
    doc = _doc("Intro\n=====\n\n.. _pads-overview:\n\nPads\n----\n\nText.\n\nLights\n------\n\nMore.\n")
    assert [s.heading.anchor for _p, s in doc.walk() if s.heading] == ["intro", "pads-overview", "lights"]


def test_heading_spans_cover_title_and_adornment() -> None:
    doc = segment.parse(RST / "sections.rst")
    spans = {s.heading.text: s.heading.span.lines for _p, s in doc.walk() if s.heading}
    assert spans["Hangar Operations Handbook"] == (1, 3)  # overline, text, underline
    assert spans["Opening the hangar"] == (16, 17)


def test_tables_expand_spans_and_keep_header_rows() -> None:
    doc = segment.parse(RST / "tables.rst")
    tables = [b for b in doc.sections[0].blocks if isinstance(b, Table)]
    grid, simple, listed, csv, titled = tables
    # Grid table: "Charging" spans two rows, "Closed for repairs" two columns.
    assert [r.cells for r in grid.rows] == [
        ["A1", "Survey", "Charging"],
        ["A2", "Delivery", "Charging"],
        ["B1", "Closed for repairs", "Closed for repairs"],
    ]
    assert [r.cells for r in simple.header] == [["Drone", "Pads", "Pads"], ["Name", "Home", "Spare"]]
    assert listed.caption == "Battery stock" and listed.header[0].cells == ["Type", "Count", "Shelf"]
    assert csv.header[0].cells == ["Part", "Count"] and csv.rows[0].cells == ["Propeller, 10 inch", "24"]
    assert titled.caption == "Radio channels"
    for table in tables:
        for row in [*table.header, *table.rows]:
            assert row.span.lines is not None and table.span.lines is not None
            assert table.span.lines[0] <= row.span.lines[0] <= row.span.lines[1] <= table.span.lines[1]


def test_code_blocks_keep_their_language_and_lines() -> None:
    doc = segment.parse(RST / "blocks.rst")
    codes = [b for b in doc.sections[0].blocks if isinstance(b, Code)]
    assert [(c.language, c.first_line) for c in codes] == [(None, 53), ("python", 58), ("pycon", 61)]
    assert codes[1].lines == ["def battery_ok(level):", "    return level > 0.3"]


def test_admonitions_are_labelled_quotes_and_footnotes_end_their_section() -> None:
    doc = segment.parse(RST / "blocks.rst")
    blocks = doc.sections[0].blocks
    labels = [b.label for b in blocks if isinstance(b, Quote)]
    assert labels == [None, "Note", "Warning", "Tip", "Weather limits"]
    notes = blocks[-1]
    assert isinstance(notes, DefinitionList)
    assert [d.terms for d in notes.items] == [["[1]"], ["[CREW2026]"]]


def test_generator_markup_reads_as_its_pages_do() -> None:
    doc = segment.parse(RST / "generator.rst")
    text = _text(doc)
    labels = [b.label for _p, s in doc.walk() for b in s.blocks if isinstance(b, Quote)]
    assert labels == [
        "Added in version 2.1",
        "Changed in version 2.3",
        "Deprecated since version 3.0",
        "See also",
        "East wing",
    ]
    assert "see the pad guide and usage" in text and "Call `plan` with" in text
    assert "waypoint\n  A point the drone flies over." in text  # glossary: a definition list
    assert "This line shows on the web site." in text  # `only` keeps its content
    assert "```yaml\nroute:" in text and "```console\n$ planner check" in text
    for leak in (
        ":func:",
        ":ref:",
        ":doc:",
        ":term:",
        "toctree",
        "automodule",
        ":maxdepth:",
        "..",
        "<pad-guide>",
    ):
        assert leak not in text, leak
    warned = "\n".join(doc.warnings)
    assert '"toctree" directive dropped' in warned and '"autofunction" directive dropped' in warned


def test_nothing_is_registered_in_docutils_global_tables() -> None:
    segment.parse(RST / "generator.rst")
    assert "toctree" not in directives._directives and "versionadded" not in directives._directives
    assert "func" not in roles._roles and "ref" not in roles._roles
    # A plain docutils run still reports the generator's role as unknown.
    out = docutils.core.publish_doctree(
        "Call :func:`plan`.\n", settings_overrides={"report_level": 5, "_disable_config": True}
    )
    assert "problematic" in out.pformat()


def test_docutils_prints_nothing_and_never_exits(capfd: pytest.CaptureFixture[str]) -> None:
    bad = "Title\n===\n\n.. unknown-thing::\n\n:bogus:`x`\n\n.. include:: nowhere.rst\n\n`unclosed\n\n* item\ntext\n"
    doc = _doc(bad)
    out, err = capfd.readouterr()
    assert out == "" and err == ""
    assert doc.warnings and all(w.startswith("docutils") for w in doc.warnings)


def test_include_reads_nothing_by_default_and_nothing_outside_the_root(tmp_path: Path) -> None:
    (tmp_path / "docs").mkdir()
    (tmp_path / "docs" / "part.rst").write_text("Included pad notes.\n", encoding="utf-8")
    (tmp_path / "secret.txt").write_text("outside-the-root-secret\n", encoding="utf-8")
    page = (
        ".. include:: part.rst\n\n.. include:: ../secret.txt\n\n.. include:: /etc/passwd\n\n"
        ".. literalinclude:: /etc/passwd\n\n.. csv-table:: Remote\n   :url: http://127.0.0.1:9/x.csv\n\n"
        ".. csv-table:: Local\n   :file: ../secret.txt\n\n.. raw:: html\n   :file: ../secret.txt\n\nEnd.\n"
    )
    off = _doc(page, source="page.rst")
    assert "Included pad notes" not in _text(off)
    root = Settings(rst_include_root=str(tmp_path / "docs"))
    on = _doc(page, root, source="page.rst")
    text = _text(on)
    assert "Included pad notes." in text
    assert "outside-the-root-secret" not in text and "root:" not in text
    warned = "\n".join(on.warnings)
    assert "outside the source root" in warned and "from a URL not read" in warned


def test_every_visible_text_of_the_fixtures_has_no_markup() -> None:
    for path in sorted(RST.glob("*.rst")):
        doc = segment.parse(path)
        for text in visible_texts(doc):
            assert "``" not in text and not text.lstrip().startswith(".. "), (path.name, text)


# ----- bad input: chunks or a clear error, never a traceback or a hang ----------------------------


@pytest.mark.timeout(120)
def test_ten_thousand_nested_block_quotes() -> None:
    data = "".join(" " * i + f"level {i} words\n\n" for i in range(10_000)).encode()
    doc = segment.parse_bytes(data, "bomb.rst")
    chunks = list(segment.chunk(doc))
    assert sum(c.text.count("words") for c in chunks) == 10_000
    assert any("indentation nested deeper" in w for w in doc.warnings)


@pytest.mark.timeout(60)
def test_an_unknown_directive_with_a_megabyte_body() -> None:
    body = "".join(f"   line {i} of the unknown body\n" for i in range(35_000))
    data = f"Title\n=====\n\n.. mystery-box:: East wing\n   :opt: 1\n\n{body}\nAfter the box.\n".encode()
    assert len(data) > 1_000_000
    doc = segment.parse_bytes(data, "big.rst")
    text = _text(doc)
    assert "line 34999 of the unknown body" in text and "After the box." in text
    assert any('unknown directive "mystery-box"' in w for w in doc.warnings)


def test_a_line_over_docutils_limit_is_a_clear_error() -> None:
    with pytest.raises(segment.SegmentError) as info:
        segment.parse_bytes(b"Title\n=====\n\n" + b"x" * 20_000 + b"\n", "long.rst")
    assert info.value.status == "resource_limit" and "line-length" in info.value.reason


@pytest.mark.parametrize(
    "data",
    [
        b"- " * 4_000 + b"x\n",
        b"`" * 5_000,
        b".. |a| replace:: |a|\n\n|a|\n",
        b"Title\n=====\n\n" + b"Title\n=====\n\n" * 300,
        b"[#]_ " * 2_000 + b"\n\n" + b".. [#] note\n" * 2_000,
        b"+--+\n|  |\n" * 500,
        b".. list-table::\n   :header-rows: 9\n\n   * - a\n",
        b'.. csv-table::\n   :header-rows: 1\n\n   "unclosed\n',
        b"\xff\xfe\x00\x00garbage",
    ],
)
@pytest.mark.timeout(60)
def test_odd_input_gives_chunks_or_a_clear_error(data: bytes) -> None:
    try:
        doc = segment.parse_bytes(data, "odd.rst")
        list(segment.chunk(doc))
    except segment.SegmentError as exc:
        assert exc.status and exc.source == "odd.rst" and exc.reason.strip()


def test_a_page_header_is_left_out_with_a_warning_that_counts_its_words() -> None:
    # docutils' `header` directive: page chrome, like a PDF's running heads; text conservation
    # needs the warning to account for it.
    doc = segment.parse_bytes(b".. header:: Corvane manual, draft\n\nTitle\n=====\n\nBody text.\n", "h.rst")
    assert "page header/footer left out: 3 words" in doc.warnings
    assert all("draft" not in c.text for c in segment.chunk(doc))


def test_pep_and_rfc_references_read_as_docutils_shows_them() -> None:
    # docutils' own roles (parsers/rst/roles.py, `pep_reference_role` and `rfc_reference_role`)
    # show "PEP " + the number and "RFC " + the number without its `#section`; role names are
    # read case-insensitively (`roles.role` lowercases them), so `:pep:` is the same role.
    text = " ".join(_text(segment.parse(RST / "references.rst")).split())
    assert "as RFC 3550 describes, and log keys follow PEP 8 naming" in text
    assert "(see PEP 257 for docstrings and RFC 3339 for timestamps)" in text
    titled = _text(_doc("See :pep:`the style guide <8>` and :rfc:`2822`.\n"))
    assert "See the style guide and RFC 2822." in titled


NOTES_IN_CELLS = """\
+-----------+----------------------------------------+
| Kind      | Note                                   |
+===========+========================================+
| Footnote  | .. [7] Checked at every battery swap.  |
+-----------+----------------------------------------+
| Citation  | .. [LOG2026] Corvane log book, 2026.   |
+-----------+----------------------------------------+
"""


def test_a_footnote_or_citation_in_a_table_cell_keeps_its_bracketed_label() -> None:
    # docutils' HTML writer shows a note's label in brackets wherever the note stands
    # ("[7]", "[LOG2026]"), as it does for the notes at the end of a section. (Not a fixture
    # file: the HTML adapter drops the writer's note lists, so the cross-format check could not
    # compare these cells; see tests/test_rst_crossformat.py, difference 7.)
    table = next(b for _p, s in _doc(NOTES_IN_CELLS).walk() for b in s.blocks if isinstance(b, Table))
    assert [r.cells for r in table.rows] == [
        ["Footnote", "[7] Checked at every battery swap."],
        ["Citation", "[LOG2026] Corvane log book, 2026."],
    ]


def test_nested_line_blocks_keep_the_order_of_the_source() -> None:
    # docutils' line block: each nested block indents the lines under the line before it
    # (reStructuredText Markup Specification, "Line Blocks").
    text = _text(segment.parse(RST / "references.rst"))
    assert (
        "Kestrel Base\n  Backup: Kestrel Two\n    Night only: Kestrel Owl\nHarrier Field\n  Backup: Harrier Two"
        in text
    )
