"""Front matter -> `Document.properties` (segment/adapters/markdown_properties.py).

Declared properties appear exactly as JSON scalars or lists of scalars; hostile front matter (a
10 MB string, deeply nested YAML, a YAML bomb of aliases) is capped or refused with a warning,
never slow or crashing. YAML is read with PyYAML's safe loader (YAML 1.1 as PyYAML implements it:
dates as `datetime.date`, `yes`/`no` as booleans).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import segment
from segment.adapters import markdown_properties as props
from tests.conftest import FIXTURES

SITE_PAGE = FIXTURES / "markdown" / "site" / "install.md"


def _doc(tmp_path: Path, front_matter: str, body: str = "Body text.\n") -> segment.Document:
    page = tmp_path / "page.md"
    page.write_text(f"---\n{front_matter}\n---\n\n{body}", encoding="utf-8")
    return segment.parse(page)


def test_declared_properties_appear_exactly() -> None:
    doc = segment.parse(SITE_PAGE)
    assert doc.properties == {
        "title": "Installing Larkspur Relay",
        "description": "Set up the Larkspur Relay daemon on a greenhouse controller.",
        "tags": ["install", "relay", "greenhouse"],
        "authors": ["Mira Okonkwo", "Tomas Brandt"],
        "date": "2026-03-14",
        "weight": 20,
        "draft": False,
        "params.product": "Larkspur",
        "params.since": 2.4,
    }
    json.dumps(doc.properties, allow_nan=False)  # plain JSON
    assert doc.title == "Installing Larkspur Relay"


def test_dates_and_times_become_iso_strings(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "published: 2026-03-14 09:30:00\nday: 2026-03-14\nodd: .nan")
    assert doc.properties == {"published": "2026-03-14T09:30:00", "day": "2026-03-14", "odd": "nan"}


def test_nested_mappings_are_flattened_and_non_scalar_list_items_dropped(tmp_path: Path) -> None:
    doc = _doc(
        tmp_path,
        "params:\n  release:\n    channel: stable\n    number: 7\n"
        "authors:\n  - Mira\n  - {name: Tomas, url: x}\n  - [a, b]\n",
    )
    assert doc.properties == {
        "params.release.channel": "stable",
        "params.release.number": 7,
        "authors": ["Mira"],
    }
    assert any("'authors': items that are not scalars dropped" in w for w in doc.warnings)


def test_no_front_matter_no_properties(tmp_path: Path) -> None:
    page = tmp_path / "plain.md"
    page.write_text("# Title\n\nText.\n", encoding="utf-8")
    assert segment.parse(page).properties == {}


def test_front_matter_that_is_not_a_mapping_is_ignored_with_a_warning(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "- just\n- a list")
    assert doc.properties == {}
    assert any("not a mapping" in w for w in doc.warnings)


def test_invalid_yaml_is_a_warning(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "title: [unclosed")
    assert doc.properties == {}
    assert any("not valid YAML" in w for w in doc.warnings)


def test_a_long_string_is_cut_with_a_warning(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "description: " + "word " * 2000)
    assert len(doc.properties["description"]) == props.MAX_VALUE_CHARS
    assert any("cut to" in w for w in doc.warnings)


def test_a_10_mb_front_matter_string_is_refused(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "description: " + "x" * 10_000_000)
    assert doc.properties == {}
    assert any("not read" in w for w in doc.warnings)
    assert segment.chunk(doc)  # the page itself still builds


def test_a_long_list_is_cut_with_a_warning(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "tags: [" + ", ".join(f"t{i}" for i in range(500)) + "]")
    assert doc.properties["tags"] == [f"t{i}" for i in range(props.MAX_LIST_ITEMS)]
    assert any("list cut" in w for w in doc.warnings)


def test_the_total_size_is_capped(tmp_path: Path) -> None:
    lines = [f"key{i}: {'v' * 1500}" for i in range(30)]
    doc = _doc(tmp_path, "\n".join(lines))
    size = len(json.dumps(doc.properties, ensure_ascii=False, separators=(",", ":")))
    assert size <= props.MAX_TOTAL_CHARS
    assert "key0" in doc.properties and "key29" not in doc.properties
    assert any("later keys dropped" in w for w in doc.warnings)


@pytest.mark.parametrize("depth", [40, 900, 5000])
def test_deeply_nested_yaml_is_refused(tmp_path: Path, depth: int) -> None:
    doc = _doc(tmp_path, "a: " + "[" * depth + "]" * depth)
    assert doc.properties == {} and doc.metadata == {}
    # Our own depth cap; libyaml refuses the deepest (its own flow-level limit) as invalid YAML.
    assert any("nested deeper" in w or "not valid YAML" in w for w in doc.warnings), doc.warnings
    levels = min(depth, 600)  # block style indents quadratically: 600 levels is 360 kB already
    block = "\n".join("  " * k + f"k{k}:" for k in range(levels)) + " leaf"
    doc = _doc(tmp_path, block)
    assert doc.properties == {} and any("nested deeper" in w or "YAML" in w for w in doc.warnings)


def test_a_yaml_alias_bomb_is_refused(tmp_path: Path) -> None:
    # The "billion laughs" shape: each level lists the previous one nine times.
    lines = ['l0: &l0 ["lol","lol","lol","lol","lol","lol","lol","lol","lol"]']
    for k in range(1, 10):
        lines.append(f"l{k}: &l{k} [" + ",".join([f"*l{k - 1}"] * 9) + "]")
    doc = _doc(tmp_path, "\n".join(lines))
    assert doc.properties == {} and doc.metadata == {}
    assert any("aliases" in w for w in doc.warnings)


def test_a_few_aliases_are_fine(tmp_path: Path) -> None:
    doc = _doc(tmp_path, "base: &who Mira\nauthor: *who\nreviewers: [*who, Tomas]")
    assert doc.properties == {"base": "Mira", "author": "Mira", "reviewers": ["Mira", "Tomas"]}


@pytest.mark.parametrize("tag", ["!!python/object:os.system", "!!python/name:os.system"])
def test_python_tags_are_not_constructed(tmp_path: Path, tag: str) -> None:
    doc = _doc(tmp_path, f"x: {tag} ls")
    assert doc.properties == {}
    assert any("not valid YAML" in w for w in doc.warnings)


def test_the_common_case_gives_the_key_by_key_answer() -> None:
    # Flat front matter of plain values is kept as it is without the walk; on generated front
    # matter (values inside and outside the caps, nested, of other types) both answers and
    # warnings equal the key-by-key walk's.
    import datetime
    import random

    values: list[object] = [
        *(None, True, False, 0, 7, -2, 10**30, 1.5, float("inf"), ""),
        *("x", "é" * 50, "a" * props.MAX_VALUE_CHARS, "a" * (props.MAX_VALUE_CHARS + 1)),
        *([], [1, "a", None], ["b"] * props.MAX_LIST_ITEMS, ["b"] * (props.MAX_LIST_ITEMS + 1)),
        *([{"a": 1}], {"n": 1, "m": {"k": [2]}}, (1, 2), datetime.date(2026, 1, 2), b"raw"),
        *(["\x00" * 1900] * 3, "\u2028" * 1999),
    ]
    keys: list[object] = ["title", "tags", "a.b", "é", 1, None]
    rng = random.Random(11)
    for _ in range(3000):
        data = {rng.choice(keys): rng.choice(values) for _ in range(rng.randint(0, 12))}
        fast_warnings: list[str] = []
        walk_warnings: list[str] = []
        fast = props.properties_of(data, fast_warnings)
        assert fast == props.walked_properties(data, walk_warnings), data
        assert fast_warnings == walk_warnings
