"""The Markdown of documentation sites: admonitions, content tabs, definition lists, footnotes,
task lists, `:::` containers, abbreviations and attribute lists (segment/adapters/markdown_site.py).

The fixtures in fixtures/markdown/site/ are our own (the docs of an invented greenhouse relay),
each with `<case>.tree.txt` and `<case>.chunks.jsonl` golden files (max_tokens=64, min_tokens=16;
DOCSEGMENT_REGEN=1 rewrites them). For every chunk: no dialect syntax left in the text, every word
a reader sees present, each tab and each definition whole in one chunk.
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path

import lxml.html
import pytest

import segment
from segment.adapters.markdown_site import SiteSyntax, admonition_label, container_label, parser_for
from segment.settings import Settings
from segment.tree import Code, DefinitionList, Paragraph, Quote, pretty
from tests.conftest import FIXTURES, check_golden

CASES = sorted((FIXTURES / "markdown" / "site").glob("*.md"))
SETTINGS = Settings(max_tokens=64, min_tokens=16)
DIALECT_SYNTAX = re.compile(
    r"^\s*(?:!!!|\?\?\?|===|:::)"  # admonition, collapsible, tab and container markers
    r"|\{:[^}]*\}"  # attribute lists
    r"|\[\^[^\]]+\]"  # footnote markers and definitions
    r"|^\s*\*\[[^\]]+\]:",  # abbreviation definitions
    re.MULTILINE,
)
WORD = re.compile(r"\w+")


def _chunks(path: Path, settings: Settings = SETTINGS) -> list[segment.Chunk]:
    return segment.chunk_file(path, settings, source=path.name)


def _words(text: str) -> Counter[str]:
    return Counter(w.casefold() for w in WORD.findall(text.replace("`", "")))


def visible_words(markdown: str) -> Counter[str]:
    """Reference: the page rendered to HTML by markdown-it-py with mdit-py-plugins' own renderers
    (admon, deflist, footnote, container, front_matter), then lxml's text. Footnote
    reference marks (`[1]` superscripts) and back-links are numbering a reader does not read as
    words; the note text itself is kept. (The content-tab rule is ours: its label renders as a
    paragraph. `{: ...}` attribute lists, which no plugin reads, are removed first: the site
    generators that write them apply them as HTML attributes, from memory of Python-Markdown's
    attr_list and kramdown.)"""
    html = parser_for(SiteSyntax()).render(re.sub(r"[ \t]*\{:[^{}\n]*\}", "", markdown))
    root = lxml.html.fromstring(f"<div>{html}</div>")
    for el in root.iter("p", "li", "dt", "dd", "div", "td", "th", "pre", "h1", "h2", "h3"):
        el.tail = "\n" + (el.tail or "")
    for el in list(root.find_class("footnote-ref")) + list(root.find_class("footnote-backref")):
        el.drop_tree()
    return _words(str(root.text_content()))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    check_golden(path.with_suffix(".tree.txt"), pretty(segment.parse(path)))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    chunks = _chunks(path)
    check_golden(path.with_suffix(".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_no_dialect_syntax_in_chunks(path: Path) -> None:
    for c in _chunks(path):
        fenced = False
        for line in c.text.split("\n"):
            if line.lstrip().startswith("```"):
                fenced = not fenced
            elif not fenced:
                assert not DIALECT_SYNTAX.search(line), f"chunk {c.seq}: {line!r}"
        for crumb in c.breadcrumb:
            assert not DIALECT_SYNTAX.search(crumb), crumb


@pytest.mark.parametrize("budget", [48, 64, 128])
@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_every_visible_word_reaches_the_chunks(path: Path, budget: int) -> None:
    want = visible_words(path.read_text(encoding="utf-8"))
    got: Counter[str] = Counter()
    for c in _chunks(path, Settings(max_tokens=budget, min_tokens=16)):
        got.update(_words(c.text))
        for crumb in c.breadcrumb:
            got.update(_words(crumb))
    missing = {w: n - got[w] for w, n in want.items() if got[w] < n}
    assert not missing


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tabs_and_definitions_stay_whole(path: Path) -> None:
    doc = segment.parse(path)
    chunks = _chunks(path)
    texts = [c.text for c in chunks]
    units: list[list[str]] = []
    for _crumbs, section in doc.walk():
        blocks = section.blocks
        for k, block in enumerate(blocks):
            if isinstance(block, Paragraph) and block.text.endswith(":") and k + 1 < len(blocks):
                units.append([block.text, _first_line(blocks[k + 1])])  # a tab label and its body
            if isinstance(block, DefinitionList):
                for entry in block.items:
                    units.append(["; ".join(entry.terms), *(_first_line(b) for b in entry.blocks)])
    assert units
    for unit in units:
        assert any(all(part in text for part in unit) for text in texts), unit


def _first_line(block: object) -> str:
    from segment.kinds import render_block

    return render_block(block).split("\n")[0]  # type: ignore[arg-type]


def test_labels_of_admonitions_and_containers() -> None:
    # The label rule: the kind capitalised, then ": Title" when a title is given.
    assert admonition_label('warning "Power the board down first"') == "Warning: Power the board down first"
    assert admonition_label("note") == "Note"
    assert admonition_label('tip ""') == "Tip"
    assert admonition_label('note inline end "Side note"') == "Note: Side note"
    assert container_label("danger Never bridge the bus") == "Danger: Never bridge the bus"
    assert container_label("info[Where logs go]") == "Info: Where logs go"
    assert container_label("{note}") == "Note"
    assert container_label("tip") == "Tip"


def test_attribute_list_id_sets_the_anchor() -> None:
    doc = segment.parse(CASES[0])
    anchors = {s.heading.text: s.heading.anchor for _p, s in doc.walk() if s.heading}
    assert anchors["Download the package"] == "download"


def test_footnote_text_goes_to_the_end_of_the_citing_section(tmp_path: Path) -> None:
    page = tmp_path / "notes.md"
    page.write_text(
        "# Intro\n\nThe relay runs on the board[^b].\n\n## Later\n\nMore text[^c].\n\nPlain.\n\n"
        "[^b]: Revision C boards only.\n[^c]: Since 2.4.\n[^u]: Never cited.\n",
        encoding="utf-8",
    )
    doc = segment.parse(page)
    intro, later = doc.sections[0], doc.sections[0].children[0]
    assert [b.text for b in intro.blocks if isinstance(b, Paragraph)] == [
        "The relay runs on the board.",
        "Revision C boards only.",
    ]
    assert [b.text for b in later.blocks if isinstance(b, Paragraph)] == [
        "More text.",
        "Plain.",
        "Since 2.4.",
    ]  # a note nobody cites is not shown by the site (markdown-it's footnote rule drops it)
    chunks = segment.chunk_file(page, Settings(max_tokens=32, min_tokens=0))
    lines = [c.lines for c in chunks if c.lines]
    assert lines == sorted(lines)  # the moved notes carry no lines, so chunks keep source order


SWITCHES = {
    "markdown_admonitions": ('!!! note "Mind"\n    Body text.\n', "!!! note"),
    "markdown_tabs": ('=== "Linux"\n\n    Body text.\n', '=== "Linux"'),
    "markdown_definitions": ("Term\n:   Body text.\n", ": Body text."),
    "markdown_footnotes": ("Body text[^1].\n\n[^1]: The note.\n", "[^1]"),
    "markdown_containers": (":::tip Mind\nBody text.\n:::\n", ":::tip"),
    "markdown_abbreviations": ("Body text.\n\n*[HVAC]: Heating\n", "*[HVAC]"),
    "markdown_attributes": ("Body text.\n{: .note }\n", "{: .note }"),
}


@pytest.mark.parametrize("name", sorted(SWITCHES))
def test_each_extension_has_a_switch(tmp_path: Path, name: str) -> None:
    markdown, literal = SWITCHES[name]
    page = tmp_path / "page.md"
    page.write_text(markdown, encoding="utf-8")
    on = " ".join(c.text for c in segment.chunk_file(page, Settings()))
    off = " ".join(c.text for c in segment.chunk_file(page, Settings(**{name: False})))
    assert literal not in on and "Body text" in on
    assert literal.replace("\n", " ").split()[0] in off, off


def test_task_items_keep_their_state(tmp_path: Path) -> None:
    page = tmp_path / "tasks.md"
    page.write_text("- [x] Done thing\n- [ ] Open thing\n- [X] Also done\n", encoding="utf-8")
    (chunk,) = segment.chunk_file(page, Settings())
    assert chunk.text == "- [x] Done thing\n- [ ] Open thing\n- [x] Also done"


def test_admonition_and_container_bodies_are_markdown(tmp_path: Path) -> None:
    page = tmp_path / "boxes.md"
    page.write_text(
        '!!! example "Two steps"\n    1. One\n    2. Two\n\n:::tip[Code]\n```sh\nrelay --check\n```\n:::\n',
        encoding="utf-8",
    )
    doc = segment.parse(page)
    first, second = doc.root.blocks
    assert isinstance(first, Quote) and first.label == "Example: Two steps"
    assert [b.kind.value for b in first.blocks] == ["list"]
    assert isinstance(second, Quote) and second.label == "Tip: Code"
    assert [b.kind.value for b in second.blocks] == ["code"]


def test_headings_inside_tabs_stay_in_the_tab(tmp_path: Path) -> None:
    page = tmp_path / "tabs.md"
    page.write_text(
        '# Page\n\n=== "One"\n\n    ## Inside\n\n    Text.\n\n## After\n\nMore.\n', encoding="utf-8"
    )
    doc = segment.parse(page)
    assert [s.heading.text for _p, s in doc.walk() if s.heading] == ["Page", "After"]


HOSTILE = {
    "abbreviations": "*[A]: b\n",
    "tasks": "- [ ] a\n",
    "containers": ":::note a\n",
    "definitions": "T\n: d\n",
    "footnote-marks": "a[^1] ",
    "tabs": '=== "x"\n',
    "admonitions": "!!! note\n",
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_long_runs_of_site_syntax_build(tmp_path: Path, name: str) -> None:
    # 5,000 repeats: a rule that looks ahead to the end of the run from each line (quadratic)
    # takes minutes and trips pytest-timeout; linear rules take about a second.
    page = tmp_path / "run.md"
    page.write_text(HOSTILE[name] * 5000 + "\n\n[^1]: note\n", encoding="utf-8")
    chunks = segment.chunk_file(page, Settings())
    assert all(c.format == "markdown" for c in chunks)
    assert chunks or name == "abbreviations"  # definition lines alone: nothing a reader sees


@pytest.mark.parametrize(
    "text",
    [
        "",
        "Term\n: its definition\n",
        "> Term\n> : quoted definition\n",
        ": at the very start\n",
        "a : not a marker\n",
        "x\n~ tilde form\n",
        "x\n:no space\n",
        "x\n  :   indented\n",
        "x\n:\n",
    ],
)
def test_a_page_uses_the_definition_rule_exactly_when_a_line_starts_with_its_marker(text: str) -> None:
    # Reference: the line-anchored reading of the marker (Python's re with MULTILINE), which the
    # narrowing's faster search must agree with; a page without it parses without the rule.
    import re

    from segment.adapters.markdown_site import SiteSyntax, used_in

    expected = re.search(r"^[ \t>]*[:~][ \t]+\S", text, re.MULTILINE) is not None
    assert used_in(SiteSyntax(), text).definitions == expected


def test_a_code_fence_title_is_a_paragraph_before_its_code(tmp_path: Path) -> None:
    # Site generators show a fence's `title="..."` above the code block (MkDocs Material's
    # "Adding a title", Docusaurus' "Code title"; from memory); the language stays the fence's.
    path = tmp_path / "t.md"
    path.write_text('Intro.\n\n```yaml title="relay.yaml"\nport: 8080\n```\n\n```sh\nrelay start\n```\n')
    doc = segment.parse(path)
    blocks = doc.root.blocks  # no heading: the blocks are the root's
    assert [type(b).__name__ for b in blocks] == ["Paragraph", "Paragraph", "Code", "Code"]
    assert isinstance(blocks[1], Paragraph) and blocks[1].text == "relay.yaml:"
    assert blocks[1].span.lines == (3, 3)  # the opening fence's line
    assert [b.language for b in blocks if isinstance(b, Code)] == ["yaml", "sh"]
