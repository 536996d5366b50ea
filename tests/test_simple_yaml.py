"""The flat front matter reader gives PyYAML's answer, or hands the text to PyYAML.

The reference is PyYAML's safe loader itself (`yaml.safe_load`, YAML 1.1 resolution): on every
front matter of the shared corpus and the fixtures, on tricky values written here, and on
generated documents, `read_simple` is either None or equal to it.
"""

from __future__ import annotations

import re

import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from segment.adapters.simple_yaml import read_simple
from tests.conftest import CORPUS, FIXTURES

_FENCED = re.compile(r"\A---[ \t]*\n(.*?\n)(?:---|\.\.\.)[ \t]*(?:\n|\Z)", re.DOTALL)


def agrees_with_pyyaml(content: str) -> bool:
    simple = read_simple(content)
    return simple is None or simple == yaml.safe_load(content)


def test_typical_front_matter_is_read_without_pyyaml() -> None:
    content = "title: Rotor maintenance\nsidebar_label: 'Rotors, blades'\ntags: [drones, upkeep]\n"
    assert read_simple(content) == {
        "title": "Rotor maintenance",
        "sidebar_label": "Rotors, blades",
        "tags": ["drones", "upkeep"],
    }


@pytest.mark.parametrize(
    "content",
    [
        "draft: yEs\n",  # a spelling PyYAML's resolver leaves a string: not guessed here
        "on: push\n",  # a boolean key
        "weight: 03\n",  # octal in YAML 1.1
        "weight: 1_000\n",
        "weight: +3\n",
        "version: 1.10\n",
        "date: 2026-03-01\n",
        "time: 12:30\n",  # sexagesimal integer in YAML 1.1
        "ratio: .5\n",
        "size: -1\n",
        "title: Charging: the basics\n",  # a colon inside: not flat
        "title: Charging:\n",
        "links: [https://example.com]\n",  # a colon in a flow list
        "title: Battery # spare\n",  # a comment
        "nested:\n  key: value\n",
        "list:\n  - a\n  - b\n",
        "anchor: &a Corvane\ncopy: *a\n",
        "tagged: !!str 12\n",
        "folded: >\n  text\n",
        'escaped: "line\\nbreak"\n',
        "tabbed:\tvalue\n",
        "title: Rotor\r\n",
        "flags: [y, n]\n",
        "numbers: [1.5, 2]\n",
        "trailing: [a, b,]\n",
        "quoted: ['a, b']\n",
        "# only a comment\n",
        "",
        "key:value\n",
        "key : value\n",
        "  indented: value\n",
        "title: two  spaces\n",
        "title: Line\u2028break\n",  # a YAML line break inside a line
    ],
)
def test_what_yaml_would_read_otherwise_goes_to_pyyaml(content: str) -> None:
    # Each of these is typed, nested or spelt in a way a flat reading could get wrong.
    assert read_simple(content) is None


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ("title: Corvane field guide\n", {"title": "Corvane field guide"}),
        ("description:\n", {"description": None}),
        ('title: "Pre-flight: the checklist"\n', {"title": "Pre-flight: the checklist"}),
        ("title: 'It''s charged'\n", {"title": "It's charged"}),
        ("tags: []\n", {"tags": []}),
        ("slug: spare-parts/rotors\n", {"slug": "spare-parts/rotors"}),
        ("aliases: [/docs/rotors]\n", {"aliases": ["/docs/rotors"]}),
        ("manual: https://example.com/corvane\n", {"manual": "https://example.com/corvane"}),
        ("title: Étalonnage du capteur\n", {"title": "Étalonnage du capteur"}),
        ("# a comment\ntitle: Hangar\n\n", {"title": "Hangar"}),
        ("yesterday: Monday\n", {"yesterday": "Monday"}),
        ("weight: 30\ndraft: true\npublished: Off\n", {"weight": 30, "draft": True, "published": False}),
        ("owner: null\nreviewer: ~\n", {"owner": None, "reviewer": None}),
        ("levels: [1, 20, yes]\n", {"levels": [1, 20, True]}),
    ],
)
def test_flat_values_read_as_pyyaml_reads_them(content: str, expected: dict[str, object]) -> None:
    assert read_simple(content) == expected == yaml.safe_load(content)


def front_matters() -> list[tuple[str, str]]:
    found = []
    for root in (CORPUS / "markdown", CORPUS / "mdx", FIXTURES):
        if not root.is_dir():
            continue
        for path in sorted(root.rglob("*")):
            if path.suffix in (".md", ".mdx", ".ipynb") and path.is_file():
                m = _FENCED.match(path.read_text(encoding="utf-8", errors="replace"))
                if m:
                    found.append((path.name, m.group(1)))
    return found


def test_every_front_matter_of_the_corpus_and_fixtures_reads_as_pyyaml_reads_it() -> None:
    # Source: the shared corpus (../shared/corpus/markdown and mdx) and our fixtures.
    cases = front_matters()
    if not any(name for name, _ in cases):
        pytest.skip("no front matter found")
    disagreements = [name for name, content in cases if not agrees_with_pyyaml(content)]
    assert disagreements == []
    read_flat = sum(read_simple(content) is not None for _, content in cases)
    assert read_flat > 0


_WORDS = st.sampled_from(
    [
        "Corvane",
        "rotor",
        "yes",
        "No",
        "ON",
        "null",
        "Null",
        "true",
        "3",
        "1.5",
        "2026-01-02",
        "a:b",
        "x #y",
        "it's",
        "'q'",
        '"d"',
        "[a, b]",
        "[]",
        "~",
        "-",
        "é",
        " ",
        "  ",
        "&a",
        "*a",
        "!t",
        "|",
        ">",
        "%",
        "@",
        "`",
        ",",
        "{}",
        "\\",
        ".inf",
        "0o17",
        "12:30",
        "y",
        "n",
        "_",
        "=",
        "<<",
    ]
)


@settings(max_examples=400, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.sampled_from(["title", "tags", "on", "Yes", "y", "n_2", "a-b"]), st.lists(_WORDS, max_size=3)
        ),
        max_size=4,
    )
)
def test_generated_front_matter_reads_as_pyyaml_reads_it(lines: list[tuple[str, list[str]]]) -> None:
    content = "".join(f"{key}: {''.join(words)}\n" for key, words in lines)
    try:
        expected = yaml.safe_load(content)
    except yaml.YAMLError:
        assert read_simple(content) is None
        return
    simple = read_simple(content)
    assert simple is None or simple == expected, content


def test_the_reader_is_used_for_pages(monkeypatch: pytest.MonkeyPatch) -> None:
    import segment
    from segment.adapters import markdown_properties

    def no_pyyaml(*args: object, **kwargs: object) -> None:
        raise AssertionError("flat front matter went to PyYAML")

    monkeypatch.setattr(markdown_properties.yaml, "load", no_pyyaml)
    monkeypatch.setattr(markdown_properties.yaml, "parse", no_pyyaml)
    doc = segment.parse_bytes(b"---\ntitle: Hangar doors\ntags: [safety]\n---\n\nText.\n", "hangar.md")
    assert doc.title == "Hangar doors" and doc.properties["tags"] == ["safety"]
