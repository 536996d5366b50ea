"""The segmentation rules of DESIGN.md section 6, one test per rule, on trees built in code.

The counter here is one token per whitespace-separated word, so budgets are easy to reason about.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from segment import chunk
from segment import parse as segment_parse
from segment.chunk import Chunk
from segment.settings import Settings
from segment.tokens import CallableCounter
from segment.tree import (
    Code,
    Document,
    Heading,
    ListBlock,
    ListItem,
    Paragraph,
    Row,
    Section,
    Span,
    Table,
)

WORDS = CallableCounter(lambda text: len(text.split()), name="words")


def words(n: int, stem: str = "w") -> str:
    return " ".join(f"{stem}{i}" for i in range(n))


def section(text: str, level: int, *blocks: object, children: list[Section] | None = None) -> Section:
    return Section(
        heading=Heading(text, level, text.lower().replace(" ", "-")),
        blocks=list(blocks),  # type: ignore[arg-type]
        children=children or [],
    )


def doc(*sections: Section, title: str | None = "Guide", blocks: list[object] | None = None) -> Document:
    return Document(
        source="guide.md",
        format="markdown",
        title=title,
        root=Section(blocks=list(blocks or []), children=list(sections)),  # type: ignore[arg-type]
    )


def run(document: Document, **settings: object) -> list[Chunk]:
    values = {"max_tokens": 50, "min_tokens": 0} | settings
    return list(chunk(document, Settings(**values), counter=WORDS))  # type: ignore[arg-type]


def test_a_section_that_fits_is_one_chunk_with_its_subsections() -> None:
    tree = doc(
        section("Setup", 1, Paragraph(words(5)), children=[section("Step one", 2, Paragraph(words(5)))])
    )
    chunks = run(tree)
    assert len(chunks) == 1
    assert chunks[0].breadcrumb == ["Guide", "Setup"]
    assert "Step one" in chunks[0].text
    assert chunks[0].anchor == "setup"


def test_small_siblings_are_packed_under_their_common_parent() -> None:
    parent = section(
        "Limits",
        1,
        Paragraph(words(46)),
        children=[
            section("Wind", 2, Paragraph(words(3))),
            section("Rain", 2, Paragraph(words(3))),
            section("Snow", 2, Paragraph(words(3))),
        ],
    )
    chunks = run(doc(parent), min_tokens=10)
    packed = [c for c in chunks if "Wind" in c.text]
    assert len(packed) == 1 and "Rain" in packed[0].text and "Snow" in packed[0].text
    assert packed[0].breadcrumb == ["Guide", "Limits"]
    assert packed[0].anchor == "wind"


def test_a_small_intro_is_packed_with_the_first_subsections() -> None:
    parent = section(
        "Limits",
        1,
        Paragraph(words(3)),
        children=[
            section("Wind", 2, Paragraph(words(30))),
            section("Rain", 2, Paragraph(words(30))),
        ],
    )
    chunks = run(doc(parent), min_tokens=10)
    assert chunks[0].text.startswith("Limits") and "Wind" in chunks[0].text
    assert chunks[0].breadcrumb == ["Guide", "Limits"]


def test_siblings_over_min_tokens_stay_apart() -> None:
    parent = section(
        "Limits",
        1,
        Paragraph(words(40)),
        children=[
            section("Wind", 2, Paragraph(words(20))),
            section("Rain", 2, Paragraph(words(20))),
        ],
    )
    chunks = run(doc(parent), min_tokens=10)
    assert [c.breadcrumb[-1] for c in chunks if c.breadcrumb[-1] in ("Wind", "Rain")] == ["Wind", "Rain"]


def test_packing_never_crosses_a_higher_level_heading() -> None:
    first = section("Part A", 1, Paragraph(words(45)), children=[section("A last", 2, Paragraph(words(2)))])
    second = section("Part B", 1, Paragraph(words(45)), children=[section("B first", 2, Paragraph(words(2)))])
    chunks = run(doc(first, second), min_tokens=10)
    for c in chunks:
        assert not ("A last" in c.text and "B first" in c.text)


def test_blocks_split_between_blocks_before_inside_one() -> None:
    tree = doc(section("S", 1, Paragraph(words(30, "a")), Paragraph(words(30, "b"))))
    chunks = run(tree)
    assert [c.text.split("\n\n")[-1].split()[0] for c in chunks] == ["a0", "b0"]


def test_table_splits_between_rows_and_repeats_its_header() -> None:
    header = [Row(["Model", "Range"])]
    rows = [Row([f"ND-{i}", f"{i} km"], Span(lines=(i + 3, i + 3))) for i in range(30)]
    tree = doc(section("Models", 1, Table(header=header, rows=rows, caption="Fleet models")))
    chunks = run(tree, max_tokens=40)
    assert len(chunks) > 1
    seen = []
    for c in chunks:
        assert c.tokens <= 40
        lines = c.text.split("\n")
        assert "Fleet models" in lines and "| Model | Range |" in lines
        seen += [line for line in lines if line.startswith("| ND-")]
    # Every row exactly once, whole: cut rows would change this list.
    assert seen == [f"| ND-{i} | {i} km |" for i in range(30)]


def test_a_row_over_budget_is_its_own_oversize_chunk() -> None:
    rows = [Row(["small", "row"]), Row(["huge", words(80)]), Row(["after", "row"])]
    chunks = run(doc(section("T", 1, Table(header=[Row(["k", "v"])], rows=rows))), max_tokens=30)
    flagged = [c for c in chunks if c.oversize]
    assert len(flagged) == 1 and "huge" in flagged[0].text and flagged[0].tokens > 30
    assert all(c.tokens <= 30 for c in chunks if not c.oversize)


def test_list_splits_between_items_and_keeps_its_lead_in() -> None:
    items = [ListItem([Paragraph(words(8, f"i{k}x"))]) for k in range(10)]
    tree = doc(
        section(
            "Checks",
            1,
            Paragraph(words(30, "intro")),
            Paragraph("Before take-off confirm:"),
            ListBlock(items=items),
        )
    )
    chunks = run(tree)
    with_lead = next(c for c in chunks if "Before take-off confirm:" in c.text)
    assert "- i0x0" in with_lead.text  # the lead-in sentence stays with the first items
    for c in chunks:
        for line in c.text.split("\n"):
            if line.startswith("- "):
                assert len(line.split()) == 9  # marker + 8 words: no item cut


def test_code_splits_between_lines() -> None:
    lines = [f"step_{i}(a, b)" for i in range(60)]
    chunks = run(doc(section("Code", 1, Code(lines, "python"))), max_tokens=30)
    got = []
    for c in chunks:
        body = c.text.split("```python\n")[-1].rsplit("\n```", 1)[0]
        got += body.split("\n")
    assert got == lines


def test_paragraph_splits_between_sentences() -> None:
    sentences = [f"Sentence {i} has exactly seven words here." for i in range(20)]
    chunks = run(doc(section("P", 1, Paragraph(" ".join(sentences)))), max_tokens=30)
    for c in chunks:
        body = c.text.removeprefix("P\n\n")
        assert body.endswith("here."), body
    assert " ".join(c.text.removeprefix("P\n\n") for c in chunks) == " ".join(sentences)


def test_sentence_over_budget_splits_between_words_last() -> None:
    long_sentence = words(200)
    chunks = run(doc(section("W", 1, Paragraph(long_sentence))), max_tokens=30)
    assert all(c.tokens <= 30 and not c.oversize for c in chunks)
    assert " ".join(c.text.removeprefix("W\n\n") for c in chunks).split() == long_sentence.split()


def test_overlap_repeats_whole_sentences_within_one_section_only() -> None:
    sentences = " ".join(f"Fact {i} about batteries." for i in range(30))
    tree = doc(
        section("One", 1, Paragraph(sentences)),
        section("Two", 1, Paragraph(words(45))),
    )
    chunks = run(tree, max_tokens=40, overlap_tokens=8)
    ones = [c for c in chunks if c.breadcrumb[-1] == "One"]
    assert len(ones) > 1
    for prev, nxt in zip(ones, ones[1:]):
        first = nxt.text.split("\n\n")[0]
        assert first.startswith("Fact") and prev.text.endswith(first)
    two = next(c for c in chunks if c.breadcrumb[-1] == "Two")
    assert not two.text.startswith("Fact")
    assert all(c.tokens <= 40 for c in chunks)


def test_ids_depend_on_content_not_position() -> None:
    a = section("Alpha", 1, Paragraph(words(45, "a")))
    b = section("Beta", 1, Paragraph(words(45, "b")))
    before = {c.breadcrumb[-1]: c.id for c in run(doc(a, b))}
    inserted = section("New", 1, Paragraph(words(45, "n")))
    after = {c.breadcrumb[-1]: c.id for c in run(doc(inserted, a, b))}
    assert before["Alpha"] == after["Alpha"] and before["Beta"] == after["Beta"]


def test_an_edit_changes_only_the_ids_of_its_chunks() -> None:
    def build(text: str) -> list[Chunk]:
        return run(
            doc(*[section(f"S{i}", 1, Paragraph(text if i == 3 else words(45, f"s{i}"))) for i in range(8)])
        )

    old, new = build(words(45, "old")), build(words(45, "new"))
    changed = [(o.breadcrumb, n.breadcrumb) for o, n in zip(old, new) if o.id != n.id]
    assert changed == [(["Guide", "S3"], ["Guide", "S3"])]


def test_exact_repeats_get_distinct_ids() -> None:
    tree = doc(section("Same", 1, Paragraph(words(45))), section("Same", 1, Paragraph(words(45))))
    ids = [c.id for c in run(tree)]
    assert len(ids) == 2 and len(set(ids)) == 2


def test_output_is_deterministic() -> None:
    tree = doc(section("S", 1, Paragraph(" ".join(f"Line {i} of text." for i in range(50)))))
    first = [c.to_json() for c in run(tree)]
    assert first == [c.to_json() for c in run(tree)]


@pytest.mark.parametrize("budget", [16, 50, 200])
def test_no_chunk_is_over_budget_unless_flagged(budget: int) -> None:
    items = [ListItem([Paragraph(words(k + 1))]) for k in range(40)]
    tree = doc(
        section("Mixed", 1, Paragraph(words(300)), ListBlock(items=items), Code([words(5)] * 50)),
        blocks=[Paragraph("Preamble " + words(20))],
    )
    for c in run(tree, max_tokens=budget):
        assert c.tokens <= budget or c.oversize


def test_breadcrumb_does_not_repeat_a_title_equal_to_the_first_heading() -> None:
    tree = doc(section("Guide", 1, Paragraph(words(60)), children=[section("Part", 2, Paragraph(words(5)))]))
    assert {tuple(c.breadcrumb) for c in run(tree)} == {("Guide",), ("Guide", "Part")}


def test_a_hand_built_tree_nested_too_deeply_is_a_clear_error() -> None:
    from segment.errors import SegmentError

    block: object = Paragraph("deepest")
    for _ in range(2000):
        block = ListBlock(items=[ListItem([block])])  # type: ignore[list-item]
    with pytest.raises(SegmentError, match="nested too deeply"):
        list(chunk(doc(section("Deep", 1, block)), Settings()))


def test_every_block_kind_has_one_row_of_rules() -> None:
    """Adding a kind is one row in segment.kinds.RULES: each row names the node class whose
    blocks carry that kind, and every kind of block (headings aside) has a row."""
    from dataclasses import fields

    from segment.kinds import RULES
    from segment.tree import BlockKind

    assert set(RULES) == set(BlockKind) - {BlockKind.HEADING}
    for kind, rules in RULES.items():
        default = next(f.default for f in fields(rules.node) if f.name == "kind")
        assert default == kind, (kind, rules.node)


def test_any_counter_goes_to_the_public_api() -> None:
    """`segment.chunk` takes a counter object or a plain `str -> int` function alike."""
    tree = doc(section("Setup", 1, Paragraph(words(80))))
    settings = Settings(max_tokens=50, min_tokens=0)
    by_object = list(chunk(tree, settings, counter=WORDS))
    by_function = list(chunk(tree, settings, counter=lambda text: len(text.split())))
    assert [c.to_json() for c in by_function] == [c.to_json() for c in by_object]
    assert len(by_object) == 2 and all(c.tokens <= 50 for c in by_object)
    with pytest.raises(TypeError, match="not a token counter"):
        list(chunk(tree, settings, counter=42))  # type: ignore[arg-type]


def test_a_heading_travels_with_the_start_of_its_content() -> None:
    """A heading (and a lead-in ending in a colon) never makes a chunk of its own when its section
    has more: the first rows, items or code lines join it."""
    intro = Paragraph("The table below lists every command:")
    rows = [Row([words(4, f"r{i}x")]) for i in range(20)]
    table = Table(header=[Row(["Command"])], rows=rows)
    tree = doc(section("Commands", 2, intro, table))
    chunks = run(tree, max_tokens=40)
    assert chunks[0].blocks == ["paragraph", "table"], [c.text for c in chunks]
    assert chunks[0].text.startswith("Commands\n\nThe table below lists every command:\n\n| Command |")
    assert all(c.blocks != ["heading"] for c in chunks)


def test_a_lone_heading_over_children_that_do_not_join_it_is_left_to_the_breadcrumbs() -> None:
    """A section with no text of its own, whose children are packed apart: the heading reaches the
    reader through every child's breadcrumb, not as a chunk holding only the heading."""
    children = [section(f"Part {i}", 3, Paragraph(words(30, f"p{i}x"))) for i in range(3)]
    tree = doc(section("Parts", 2, children=children))
    chunks = run(tree, max_tokens=40)
    assert all(c.blocks != ["heading"] for c in chunks), [c.text for c in chunks]
    assert all(c.breadcrumb[:2] == ["Guide", "Parts"] for c in chunks)


# CommonMark 0.31.2, section 4.5 "Fenced code blocks": content may hold shorter fences of the same
# character, or any fences of the other; the chunk's own fence must be longer than any of them.
@pytest.mark.parametrize("max_tokens", [24, 48, 64, 512])
def test_code_in_chunks_reparses_to_the_same_code(max_tokens: int) -> None:
    from markdown_it import MarkdownIt

    from tests.conftest import FIXTURES

    path = FIXTURES / "markdown" / "nested-fences.md"
    document = segment_parse(path)
    want = [block.lines for _path, s in document.walk() for block in s.blocks if isinstance(block, Code)]
    md = MarkdownIt("commonmark")
    got: list[list[str]] = []
    for c in chunk(document, Settings(max_tokens=max_tokens, min_tokens=0)):
        fences = [t for t in md.parse(c.text) if t.type == "fence"]
        assert ("code" in c.blocks) == bool(fences), c.text
        got += [t.content.removesuffix("\n").split("\n") for t in fences]
    # Parts of a split code block join back to the block, in order.
    joined = [line for lines in got for line in lines]
    assert joined == [line for lines in want for line in lines], (got, want)
    if max_tokens == 512:
        assert got == want


# ----- documents without a title of their own -------------------------------------------------


def test_an_untitled_page_takes_its_title_from_the_file_name() -> None:
    from segment.tree import TitleOrigin
    from tests.conftest import FIXTURES

    path = FIXTURES / "markdown" / "getting-started.md"
    document = segment_parse(path, source="guides/getting-started.md")
    assert (document.title, document.title_origin) == ("Getting started", TitleOrigin.FILE_NAME)
    chunks = list(chunk(document, Settings(max_tokens=40, min_tokens=0)))
    assert chunks and all(c.breadcrumb[0] == "Getting started" for c in chunks)
    assert [c.breadcrumb for c in chunks][-1] == ["Getting started", "Pair it"]


@pytest.mark.parametrize(
    ("name", "text", "title"),
    [
        ("fleet-ops/index.md", "Some text.\n\n## Part\n\nMore text.\n", "Fleet ops"),
        ("guides/README.md", "Some text.\n", "Guides"),
        (
            "pairing_guide.html",
            "<html><body><p>Some text.</p><h2>Part</h2><p>More.</p></body></html>",
            "Pairing guide",
        ),
    ],
)
def test_index_pages_and_every_format_get_a_readable_derived_title(
    tmp_path: Path, name: str, text: str, title: str
) -> None:
    from segment.tree import TitleOrigin

    path = tmp_path / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text, encoding="utf-8")
    document = segment_parse(path, source=name)
    assert (document.title, document.title_origin) == (title, TitleOrigin.FILE_NAME)


def test_a_declared_title_is_the_authors() -> None:
    from segment.tree import TitleOrigin
    from tests.conftest import FIXTURES

    document = segment_parse(FIXTURES / "markdown" / "nested-fences.md")
    assert document.title == "Writing help pages for the Kestrel console"
    assert document.title_origin == TitleOrigin.SOURCE


def test_the_default_source_is_the_path_as_given(tmp_path: Path) -> None:
    """Two index pages with the same text in different folders get different sources and ids."""
    import segment

    for folder in ("a", "b"):
        (tmp_path / folder).mkdir()
        (tmp_path / folder / "index.md").write_text("# Home\n\nWelcome.\n", encoding="utf-8")
    first = segment.chunk_file(tmp_path / "a" / "index.md")
    second = segment.chunk_file(tmp_path / "b" / "index.md")
    assert first[0].source == (tmp_path / "a" / "index.md").as_posix()
    assert first[0].id != second[0].id
    named = segment.chunk_file(tmp_path / "a" / "index.md", source="a/index.md")
    assert named[0].source == "a/index.md"


# ----- text for the embedder ----------------------------------------------------------------------


def _sensors() -> Document:
    calibration = section("Calibration", 2, Paragraph(words(70, "c")))
    return doc(section("Sensors", 1, Paragraph(words(5, "s")), children=[calibration]), title="Field guide")


def test_heading_line_puts_the_heading_path_first_in_every_chunk_within_budget() -> None:
    plain = run(_sensors())
    chunks = run(_sensors(), heading_line="path")
    continuation = [c for c in chunks if c.breadcrumb[-1] == "Calibration"]
    assert len(continuation) >= 2
    assert all(c.text.startswith("Sensors > Calibration\n\n") for c in continuation), [c.text for c in chunks]
    assert all(c.tokens <= 50 for c in chunks)
    assert [c.id for c in chunks] != [c.id for c in plain]  # the text changed, so did the ids
    titled = run(_sensors(), heading_line="title")
    assert all(c.text.startswith("Field guide > Sensors") for c in titled), [c.text for c in titled]


def test_markdown_headings_write_heading_lines_with_their_level() -> None:
    chunks = run(_sensors(), markdown_headings=True)
    text = "\n\n".join(c.text for c in chunks)
    assert text.startswith("# Sensors\n\n") and "\n\n## Calibration\n\n" in text


def test_text_settings_are_off_by_default_and_fingerprinted() -> None:
    from segment.errors import SettingsError

    assert Settings().heading_line == "off" and Settings().markdown_headings is False
    base = Settings().fingerprint()
    assert Settings(heading_line="path").fingerprint() != base
    assert Settings(markdown_headings=True).fingerprint() != base
    with pytest.raises(SettingsError, match="heading_line"):
        Settings(heading_line="sideways")


def test_heading_line_with_overlap_keeps_the_budget() -> None:
    text = " ".join(f"Sentence {i} has five words." for i in range(30))
    tree = doc(
        section("Sensors", 1, children=[section("Calibration", 2, Paragraph(text))]), title="Field guide"
    )
    chunks = run(tree, heading_line="title", overlap_tokens=10, max_tokens=40)
    assert len(chunks) >= 3 and all(c.tokens <= 40 for c in chunks), [(c.tokens, c.text) for c in chunks]
    second = chunks[1].text.split("\n\n")
    assert second[0] == "Field guide > Sensors > Calibration" and second[1].startswith("Sentence"), second
