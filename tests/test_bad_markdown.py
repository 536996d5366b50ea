"""Bad input named `.md`: each file gets chunks or a clear error naming it, never a traceback or a hang.

The reliability scenarios: Markdown nesting (markdown-it's nesting limit silently drops deeper
content, so deep nesting must keep its text), huge paragraphs (spaCy refuses text over 1,000,000
characters and text without punctuation is one "sentence": a hard fallback must cut it), encodings
(a CP-1252 byte in a "UTF-8" file must not kill the run). Hangs are caught by pytest-timeout (marks below), not by
timing asserts. Content sniffing of binary data: the magic numbers are those of the file formats'
own specifications (PNG: RFC 2083 section 3.1; ELF: the System V ABI), written from memory.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from click.testing import CliRunner

import segment
from segment.cli import cli
from segment.settings import Settings

BUDGET = 512


def _outcome(path: Path) -> list[segment.Chunk] | segment.SegmentError:
    """Chunks, or the SegmentError the library raised; anything else propagates (and fails)."""
    try:
        return segment.chunk_file(path, Settings(max_tokens=BUDGET), source=path.name)
    except segment.SegmentError as exc:
        return exc


def _assert_clear_error(result: object, path: Path) -> None:
    assert isinstance(result, segment.SegmentError), f"expected an error for {path.name}, got chunks"
    assert result.source == path.name and path.name in str(result), str(result)
    assert result.reason.strip(), "the error must say why"


def _assert_budget(chunks: list[segment.Chunk]) -> None:
    for c in chunks:
        assert c.tokens <= BUDGET or c.oversize, f"chunk {c.seq}: {c.tokens} tokens"


def _chunks_or_clear_error(path: Path) -> list[segment.Chunk] | None:
    """The file's chunks, each under the budget; None when the library refused it clearly."""
    result = _outcome(path)
    if isinstance(result, segment.SegmentError):
        _assert_clear_error(result, path)
        return None
    _assert_budget(result)
    return result


def _write(tmp_path: Path, name: str, data: bytes) -> Path:
    path = tmp_path / name
    path.write_bytes(data)
    return path


# ----- content that is not Markdown text ------------------------------------------------------

BINARY: dict[str, Callable[[], bytes]] = {
    "png-image.md": lambda: b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 40,
    "elf-program.md": lambda: b"\x7fELF\x02\x01\x01" + bytes(4096),
    "random-bytes.md": lambda: bytes((i * 131 + 7) % 256 for i in range(20_000)),
}


@pytest.mark.timeout(60)
@pytest.mark.parametrize("name", sorted(BINARY))
def test_binary_file_named_md_is_refused_with_the_file_named(tmp_path: Path, name: str) -> None:
    path = _write(tmp_path, name, BINARY[name]())
    _assert_clear_error(_outcome(path), path)


@pytest.mark.timeout(60)
def test_binary_file_through_the_cli_is_one_stderr_line_and_exit_1(tmp_path: Path) -> None:
    bad = _write(tmp_path, "image.md", BINARY["png-image.md"]())
    good = _write(tmp_path, "good.md", b"# Fine\n\nThis page is fine.\n")
    result = CliRunner().invoke(cli, ["chunks", str(bad), str(good)], catch_exceptions=False)
    assert result.exit_code == 1
    assert "image.md" in result.stderr and "Traceback" not in result.stderr
    assert "This page is fine." in result.stdout  # the other file is still done


# ----- text that is not valid UTF-8 ---------------------------------------------------------


@pytest.mark.timeout(60)
def test_windows_1252_bytes_give_chunks_with_the_text_readable(tmp_path: Path) -> None:
    # 0xE9 is é and 0x92 is a right single quote in Windows-1252 (the WHATWG Encoding Standard's
    # index-windows-1252); neither is valid UTF-8 here.
    path = _write(tmp_path, "cafe.md", b"# Caf\xe9 menu\n\nThe chef\x92s choice changes daily.\n")
    result = _outcome(path)
    assert isinstance(result, list) and result
    text = " ".join(c.text for c in result)
    assert "Café" in text and "chef\u2019s choice" in text
    assert segment.parse(path).warnings, "a fallback decoding must be recorded, not silent"


@pytest.mark.timeout(60)
def test_undecodable_bytes_give_chunks_and_keep_the_rest(tmp_path: Path) -> None:
    # 0x81 and 0x8D are undefined in Windows-1252 and invalid as UTF-8 start bytes.
    path = _write(tmp_path, "broken.md", b"# Title\n\nBefore \x81\x8d after, the text goes on.\n")
    result = _outcome(path)
    if isinstance(result, segment.SegmentError):
        _assert_clear_error(result, path)
        return
    text = " ".join(c.text for c in result)
    assert "Before" in text and "after, the text goes on." in text


@pytest.mark.timeout(60)
def test_empty_file_gives_no_chunks(tmp_path: Path) -> None:
    for name, data in (
        ("empty.md", b""),
        ("blank.md", b"\n \n\t\n"),
        ("front-only.md", b"---\ntitle: T\n---\n"),
    ):
        path = _write(tmp_path, name, data)
        result = _outcome(path)
        if isinstance(result, segment.SegmentError):
            _assert_clear_error(result, path)
        else:
            assert all(c.text.strip() for c in result), f"{name}: an empty chunk"


# ----- Markdown nesting: 10,000 levels ---------------------------------------------------------

DEEPEST = "deepest words here"
DEEP: dict[str, tuple[bytes, str]] = {
    # name: (file content, text that must reach the chunks)
    "list-10000.md": (("- " * 10_000 + DEEPEST + "\n").encode(), DEEPEST),
    "ordered-10000.md": (("1. " * 10_000 + DEEPEST + "\n").encode(), DEEPEST),
    "quote-10000.md": (("> " * 10_000 + DEEPEST + "\n").encode(), DEEPEST),
    "mixed-10000.md": (("> - " * 5_000 + DEEPEST + "\n").encode(), DEEPEST),
    # One level per line, indented: 1,000 levels keep the file at 1 MB.
    "indented-list-1000.md": (
        "".join("  " * i + f"- level {i}\n" for i in range(1_000)).encode(),
        "level 999",
    ),
    # Quote markers without spaces, one more level every line up to 10,000.
    "quote-lines-10000.md": (
        "".join(">" * i + f" level {i}\n" for i in range(1, 10_001, 50)).encode(),
        "level 9951",
    ),
}


@pytest.mark.timeout(30)
@pytest.mark.parametrize("name", sorted(DEEP))
def test_deep_nesting_keeps_its_text_or_fails_clearly(tmp_path: Path, name: str) -> None:
    data, deepest = DEEP[name]
    result = _chunks_or_clear_error(_write(tmp_path, name, data))
    if result is None:
        return
    text = "\n".join(c.text for c in result)
    assert deepest in text, "content past the nesting limit was dropped"


# ----- huge paragraphs: one 20 MB line -------------------------------------------------------

SIZE = 20_000_000
LONG_LINES: dict[str, Callable[[], bytes]] = {
    "words-no-punctuation.md": lambda: (b"lorem ipsum dolor " * (SIZE // 18 + 1))[:SIZE],
    "sentences.md": lambda: (b"The drone returns to its dock. " * (SIZE // 31 + 1))[:SIZE],
    "no-spaces.md": lambda: b"x" * SIZE,
}


@pytest.mark.slow
@pytest.mark.timeout(240)
@pytest.mark.parametrize("name", sorted(LONG_LINES))
def test_single_20_mb_line_is_cut_under_budget_without_loss(tmp_path: Path, name: str) -> None:
    data = LONG_LINES[name]()
    result = _chunks_or_clear_error(_write(tmp_path, name, data))
    if result is None:
        return
    got = "".join("".join(c.text.split()) for c in result)
    assert got == "".join(data.decode().split()), "text was lost or changed while cutting the line"
