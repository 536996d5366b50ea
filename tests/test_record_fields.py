"""The record fields `properties` and `url`, and what switching the settings that shape records
does to an output folder (DESIGN.md section 4; docs/record.md)."""

from __future__ import annotations

import dataclasses
import json
import logging
from pathlib import Path

import pytest
from click.testing import CliRunner

import segment
from segment.cli import cli
from segment.daemon import reconcile
from segment.properties import record_properties, wanted
from segment.settings import Settings, load_settings
from segment.tree import Document, Heading, Paragraph, Section, Span
from tests.conftest import FIXTURES

NOTEBOOK = FIXTURES / "notebook" / "fleet-telemetry.ipynb"


def _doc(properties: dict[str, object]) -> Document:
    doc = Document(source="guides/hangar.md", format="markdown", properties=dict(properties))
    for k in range(3):
        section = Section(heading=Heading(f"Bay {k}", 2, f"bay-{k}", Span(lines=(k * 4 + 1, k * 4 + 1))))
        section.blocks.append(
            Paragraph(f"Bay {k} holds {'six drones. ' * 30}", Span(lines=(k * 4 + 2, k * 4 + 2)))
        )
        doc.root.children.append(section)
    return doc


def test_every_chunk_of_a_file_carries_the_same_declared_properties() -> None:
    chunks = segment.chunk_file(NOTEBOOK, Settings(max_tokens=64, min_tokens=16))
    assert len(chunks) > 3
    expected = {
        "title": "Fleet telemetry walkthrough",
        "authors": ["Mira Okafor", "Tomasz Wren"],
        "kernel_language": "python",
    }
    assert all(c.properties == expected for c in chunks)
    record = json.loads(chunks[0].to_json())
    assert list(record)[-3:] == ["cells", "url", "properties"] and record["properties"] == expected


def test_the_properties_setting_keeps_matching_keys_and_leaves_out_bang_patterns() -> None:
    assert wanted("tags", ("*",)) and not wanted("tags", ())
    assert not wanted("internal_id", ("*", "!internal_*"))
    chunks = segment.chunk_file(NOTEBOOK, Settings(properties=("title", "kernel_*")))
    assert chunks[0].properties == {"title": "Fleet telemetry walkthrough", "kernel_language": "python"}
    assert segment.chunk_file(NOTEBOOK, Settings(properties=()))[0].properties == {}


def test_only_json_scalars_and_lists_of_scalars_reach_records() -> None:
    props = {
        "tags": ["drones", {"nested": 1}, 3, None, True],
        "owner": {"team": "ops"},
        "score": float("nan"),
        "weight": 1.5,
        "draft": False,
        "nothing": None,
    }
    kept = record_properties(props, ("*",), 1000, 4000)
    assert kept == {"tags": ["drones", 3, None, True], "weight": 1.5, "draft": False, "nothing": None}
    json.dumps(kept, allow_nan=False)  # strict JSON (RFC 8259 has no NaN)


def test_values_and_the_whole_are_capped_in_characters_of_json() -> None:
    props = {"description": "é" * 5000, "tags": [f"tag-{k}" for k in range(500)], "title": "Hangar"}
    kept = record_properties(props, ("*",), 100, 10_000)
    assert len(json.dumps(kept["description"], ensure_ascii=False)) <= 100
    assert kept["description"].startswith("ééé")
    assert len(json.dumps(kept["tags"], ensure_ascii=False, separators=(",", ":"))) <= 100
    assert kept["tags"][:2] == ["tag-0", "tag-1"] and kept["title"] == "Hangar"
    total = record_properties(props, ("*",), 1000, 1200)
    assert len(json.dumps(total, ensure_ascii=False, separators=(",", ":"))) <= 1200
    assert "title" in total  # a later, small property still fits after a large one was left out


def test_a_hostile_property_never_bloats_every_chunk() -> None:
    doc = _doc({"description": "x" * 10_000_000, "tags": list(range(1_000_000))})
    chunks = list(segment.chunk(doc, Settings(max_tokens=64)))
    assert len(chunks) >= 3
    for c in chunks:
        assert len(json.dumps(c.properties)) <= Settings().properties_chars


def test_url_and_properties_from_the_settings_file(tmp_path: Path) -> None:
    (tmp_path / "segment.toml").write_text(
        'base_url = "https://docs.example.com/"\nurl_layout = "folder"\nproperties = ["title"]\n'
    )
    settings = load_settings(tmp_path)
    assert settings.base_url == "https://docs.example.com/" and settings.properties == ("title",)
    doc = _doc({"title": "Hangar", "tags": ["a"]})
    chunks = list(segment.chunk(doc, dataclasses.replace(settings, max_tokens=64)))
    assert chunks[0].url == "https://docs.example.com/guides/hangar/#bay-0"
    assert chunks[-1].url == "https://docs.example.com/guides/hangar/#bay-2"
    assert all(c.properties == {"title": "Hangar"} for c in chunks)


def test_settings_that_shape_records_change_the_fingerprint() -> None:
    base = Settings().fingerprint()
    for change in (
        {"base_url": "https://docs.example.com/"},
        {"url_layout": "folder"},
        {"properties": ("title",)},
        {"property_value_chars": 10},
        {"properties_chars": 10},
        {"notebook_outputs": True},
    ):
        assert Settings(**change).fingerprint() != base, change  # type: ignore[arg-type]


def test_an_output_folder_is_rebuilt_once_when_record_settings_change(
    tmp_path: Path, caplog: pytest.LogCaptureFixture
) -> None:
    src = tmp_path / "src"
    src.mkdir()
    (src / "hangar.md").write_text("# Hangar\n\nThe hangar crew logs every battery swap.\n")
    out = tmp_path / "out"
    reconcile(src, out)
    caplog.set_level(logging.INFO, logger="segment.daemon")
    settings = Settings(base_url="https://docs.example.com/")
    assert reconcile(src, out, settings).parsed == 1
    assert "settings that shape the chunks changed" in caplog.text
    record = json.loads((out / "chunks" / "hangar.md.jsonl").read_text().splitlines()[0])
    assert record["url"] == "https://docs.example.com/hangar.html#hangar"
    caplog.clear()
    assert reconcile(src, out, settings).parsed == 0  # once
    assert "settings that shape the chunks changed" not in caplog.text


def test_segment_tree_shows_properties() -> None:
    result = CliRunner().invoke(cli, ["tree", str(NOTEBOOK)])
    assert result.exit_code == 0
    lines = result.stdout.splitlines()
    assert lines[1] == "  property title='Fleet telemetry walkthrough'"
    assert "  property kernel_language='python'" in lines


def test_cli_flags_for_links_and_properties() -> None:
    result = CliRunner().invoke(
        cli,
        ["chunks", str(NOTEBOOK), "--base-url", "https://docs.example.com/", "--properties", "title"],
    )
    assert result.exit_code == 0, result.output
    record = json.loads(result.stdout.splitlines()[0])
    assert record["url"].startswith("https://docs.example.com/") and record["url"].endswith(
        "fleet-telemetry.html#fleet-telemetry-walkthrough"
    )
    assert record["properties"] == {"title": "Fleet telemetry walkthrough"}
    bad = CliRunner().invoke(cli, ["chunks", str(NOTEBOOK), "--url-layout", "pretty"])
    assert bad.exit_code == 2 and "url_layout" in bad.output
