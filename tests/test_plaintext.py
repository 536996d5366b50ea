"""The plain-text adapter (format `text`) on our own fixtures (fixtures/text), and which files
without a suffix a build takes.

Golden files: `<case>.tree.txt` and `<case>.chunks.jsonl` beside each case (max_tokens=64,
min_tokens=16); DOCSEGMENT_REGEN=1 rewrites them. The layout habits read are common practice of
plain-text documentation (setext-style underlines as in CommonMark 0.31.2 "Setext headings", but
of the title's length; four-space indented code as in CommonMark "Indented code blocks").
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import segment
from segment.adapters import adapter_for, is_supported
from segment.daemon.scope import Scope
from segment.settings import Settings
from segment.tree import pretty
from tests.conftest import FIXTURES, check_golden

FOLDER = FIXTURES / "text"
CASES = sorted(p for p in FOLDER.iterdir() if p.is_file() and not p.name.endswith((".tree.txt", ".jsonl")))
SETTINGS = Settings(max_tokens=64, min_tokens=16)


def _golden(path: Path, kind: str) -> Path:
    return path.with_name(path.name.removesuffix(".txt") + kind)


@pytest.mark.parametrize("path", CASES, ids=[p.name for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    check_golden(_golden(path, ".tree.txt"), pretty(segment.parse(path)))


@pytest.mark.parametrize("path", CASES, ids=[p.name for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    chunks = segment.chunk_file(path, SETTINGS, source=path.name)
    check_golden(_golden(path, ".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))


@pytest.mark.parametrize("path", CASES, ids=[p.name for p in CASES])
def test_every_word_is_kept(path: Path) -> None:
    chunks = segment.chunk_file(path, SETTINGS)
    words = set(" ".join(c.text + " " + " ".join(c.breadcrumb) for c in chunks).split())
    text = segment.api.read_source(path).decode("utf-8", errors="replace")
    for line in text.splitlines():
        if re.fullmatch(r"\s*([=\-~*_])\1*\s*", line):
            continue  # underlines and separators are layout, not words
        for word in line.split():
            if word in ("-", "*", "+", "•") or re.fullmatch(r"\d+[.)]", word):
                continue  # list markers
            assert word in words or "\ufffd" in word, f"{path.name}: {word!r} lost"


def test_layout_habits() -> None:
    doc = segment.parse(FOLDER / "field-notes.txt")
    assert doc.format == "text" and doc.title == "Skylark Aerial field notes"
    headings = [(s.heading.level, s.heading.text) for _p, s in doc.walk() if s.heading]
    assert headings == [
        (1, "Skylark Aerial field notes"),
        (2, "Battery swaps"),
        (2, "Night sorties"),
        (2, "Rotor checks"),
    ]
    kinds = [b.kind.value for _p, s in doc.walk() for b in s.blocks]
    assert kinds.count("list") == 2 and kinds.count("code") == 1
    chunks = segment.chunk_file(FOLDER / "field-notes.txt", Settings(max_tokens=512))
    text = "\n".join(c.text for c in chunks)
    assert "```\nskylark-log --since yesterday --pad 7\nskylark-log --export csv > night.csv\n```" in text
    assert "- the charge level, which must be above 80 percent before a long sortie" in text
    assert "~~~" not in text and "=====" not in text
    assert all(c.anchor is None and c.lines is not None for c in chunks)


def test_underline_of_another_length_is_not_a_heading(tmp_path: Path) -> None:
    path = tmp_path / "odd.txt"
    path.write_text("Pad lights\n---\n\nThe pad lights are checked nightly.\n")
    doc = segment.parse(path)
    assert (
        not doc.sections and doc.title_origin is segment.tree.TitleOrigin.FILE_NAME
    )  # no heading of its own


def test_binary_content_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "photo.txt"
    path.write_bytes(b"\x89PNG\r\n\x1a\n" + bytes(200))
    with pytest.raises(segment.ParseError) as info:
        segment.parse(path)
    assert info.value.status == "corrupt" and "photo.txt" in str(info.value)


def test_files_without_a_suffix_are_plain_text_when_named() -> None:
    assert adapter_for("README").format == "text" and adapter_for("notes/NOTES").format == "text"
    assert not is_supported("README")  # a scan does not take them on its own
    chunks = segment.chunk_file(FOLDER / "README")
    assert chunks and chunks[0].format == "text"


def test_a_build_takes_files_without_a_suffix_only_when_an_include_pattern_names_them(tmp_path: Path) -> None:
    src = tmp_path / "src"
    (src / "docs").mkdir(parents=True)
    for name in ("README", "docs/NOTES", "docs/Makefile", "docs/guide.md", "docs/log.txt", ".envrc"):
        (src / name).write_text("Text\n")
    out = tmp_path / "out"

    def taken(include: tuple[str, ...]) -> set[str]:
        return set(Scope(src, out, Settings(include=include)).scan())

    assert taken(()) == {"docs/guide.md", "docs/log.txt"}
    # A folder pattern does not pull in every file without a suffix (Makefile, LICENSE...).
    assert taken(("docs/**",)) == {"docs/guide.md", "docs/log.txt"}
    assert taken(("docs/**", "README", "**/NOTES")) == {
        "docs/guide.md",
        "docs/log.txt",
        "README",
        "docs/NOTES",
    }
