"""Bad PDFs get a Document with warnings or a ParseError naming the file and the reason, fast.

Fixtures are built at test time with pymupdf itself (fixtures/pdf/render.py), following the
reliability scenario "bad PDF bytes" (empty, garbage, truncated, broken cross-reference table,
AES-256 user password, owner-only password, image-only scan, oversized page count).
"""

from __future__ import annotations

import logging
import time

import pytest

import segment
from segment.adapters.pdf import parse, parse_pdf
from segment.errors import ParseError, SegmentError, TooLarge
from tests.conftest import FIXTURES, pdf_renderer

render = pdf_renderer()


@pytest.fixture(scope="module")
def good() -> bytes:
    html = (FIXTURES / "pdf" / "maintenance.html").read_text(encoding="utf-8")
    return render.render_html(html, 1).data


@pytest.fixture(scope="module")
def many() -> bytes:
    return render.text_pages(50)


@pytest.fixture(scope="module")
def huge() -> bytes:
    return render.text_pages(2000)


def fails(data: bytes, name: str, **kwargs: object) -> SegmentError:
    start = time.perf_counter()
    with pytest.raises(SegmentError) as info:
        parse_pdf(data, name, **kwargs)  # type: ignore[arg-type]
    assert time.perf_counter() - start < 5
    error = info.value
    assert error.source == name and name in str(error)
    return error


def test_zero_bytes_is_empty() -> None:
    error = fails(b"", "blank.pdf")
    assert isinstance(error, ParseError) and error.status == "empty"


def test_text_file_named_pdf() -> None:
    # A PDF starts with "%PDF-" (ISO 32000-1 7.5.2); readers tolerate junk before it.
    error = fails(b"# Release notes\n\nNothing to see here.\n", "notes.pdf")
    assert error.status == "corrupt" and "not a PDF" in error.reason


def test_html_named_pdf_is_refused() -> None:
    # MuPDF would sniff the content and open HTML as a one-page document (the "bad PDF bytes" scenario: a wrong extension).
    error = fails(b"<html><body><h1>Hello</h1></body></html>", "page.pdf")
    assert error.status == "corrupt"


def test_garbage_after_header_is_corrupt() -> None:
    error = fails(b"%PDF-1.7\n" + bytes(range(256)) * 40, "noise.pdf")
    assert error.status in ("corrupt", "no_text")


@pytest.mark.parametrize("share", [0.1, 0.3, 0.6, 0.9])
def test_truncated_pdf_errors_or_warns(many: bytes, share: float) -> None:
    # Scenarios "file still being written" and "bad PDF bytes": a cut PDF either fails to open or opens repaired with partial text.
    data = many[: int(len(many) * share)]
    try:
        doc = parse_pdf(data, "cut.pdf")
    except ParseError as error:
        assert error.status == "corrupt" and "cut.pdf" in str(error)
    else:
        assert "repaired: text may be partial" in doc.warnings


def test_truncated_story_pdf(good: bytes) -> None:
    data = good[: len(good) // 3]
    try:
        doc = parse_pdf(data, "cut.pdf")
    except ParseError as error:
        assert error.status == "corrupt"
    else:
        assert "repaired: text may be partial" in doc.warnings


def test_broken_xref_is_repaired_with_warning(good: bytes) -> None:
    doc = parse_pdf(render.broken_xref(good), "xref.pdf")
    assert "repaired: text may be partial" in doc.warnings
    assert any(s.heading and s.heading.text == "Airframe maintenance" for _, s in doc.walk())


def test_user_password_is_encrypted_error(good: bytes) -> None:
    # AES-256 (ISO 32000-2 / PDF 2.0 standard security handler, revision 6) with a user password.
    error = fails(render.encrypted(good), "locked.pdf")
    assert error.status == "encrypted"


def test_owner_password_only_opens(good: bytes) -> None:
    # The empty user password is tried first; an owner-only file reads normally.
    doc = parse_pdf(render.owner_only(good), "owner.pdf")
    assert doc.sections and doc.sections[0].heading is not None


def test_image_only_scan_is_no_text() -> None:
    error = fails(render.image_only(3), "scan.pdf")
    assert error.status == "no_text" and "OCR not performed" in error.reason


def test_scanned_page_among_text_pages_is_reported(good: bytes) -> None:
    import pymupdf

    doc = pymupdf.open(stream=good, filetype="pdf")
    scan = pymupdf.open(stream=render.image_only(1), filetype="pdf")
    doc.insert_pdf(scan)
    data = doc.tobytes()
    pages = doc.page_count
    parsed = parse_pdf(data, "mixed.pdf")
    assert f"page {pages}: no text layer (OCR not performed)" in parsed.warnings


def test_two_thousand_pages_processed_within_seconds(huge: bytes) -> None:
    data = huge
    start = time.perf_counter()
    doc = parse_pdf(data, "log.pdf")
    elapsed = time.perf_counter() - start
    assert doc.metadata["pages"] == 2000
    assert elapsed < 20, f"{elapsed:.1f}s"
    # Every page has a running head and a page number: 4,000 running lines removed.
    assert doc.metadata["removed_running_lines"] == 4000
    chunks = list(segment.chunk(doc, segment.Settings(max_tokens=512)))
    text = "\n".join(c.text for c in chunks)
    assert "Sortie 2000: pack B39" in text and "battery log" not in text
    assert chunks[-1].pages is not None and chunks[-1].pages[1] == 2000


def test_page_cap_refuses_quickly(huge: bytes) -> None:
    data = huge
    start = time.perf_counter()
    with pytest.raises(TooLarge) as info:
        parse_pdf(data, "log.pdf", max_pages=1000)
    assert time.perf_counter() - start < 2
    assert info.value.status == "resource_limit" and "2000 pages" in info.value.reason


def test_registry_entry_point_and_api(good: bytes, tmp_path: object) -> None:
    doc = parse(good, "maintenance.pdf")
    assert doc.format == "pdf" and doc.title == "Airframe maintenance"
    path = tmp_path / "maintenance.pdf"  # type: ignore[operator]
    path.write_bytes(good)
    chunks = segment.chunk_file(path)
    assert chunks and all(c.format == "pdf" and c.pages for c in chunks)


def test_mupdf_warnings_go_to_the_log_not_stdout(
    good: bytes, capsys: pytest.CaptureFixture[str], caplog: pytest.LogCaptureFixture
) -> None:
    with caplog.at_level(logging.DEBUG, logger="segment.adapters.pdf"):
        parse_pdf(render.broken_xref(good), "xref.pdf")
        parse_pdf(good, "good.pdf", table_engine="pymupdf")  # find_tables would advertise on stdout
    out = capsys.readouterr()
    assert out.out == ""
    assert any("mupdf" in r.getMessage() for r in caplog.records)


@pytest.mark.parametrize("seed", range(6))
def test_damaged_bytes_give_a_tree_or_a_clear_error(good: bytes, many: bytes, seed: int) -> None:
    # Random damage (the "bad PDF bytes" scenario, garbage): bytes overwritten at random places, seeded.
    import random

    rng = random.Random(seed)
    for source in (good, many):
        data = bytearray(source)
        for _ in range(20 * (seed + 1)):
            data[rng.randrange(len(data))] = rng.randrange(256)
        start = time.perf_counter()
        try:
            doc = parse_pdf(bytes(data), "damaged.pdf")
        except SegmentError as error:
            assert "damaged.pdf" in str(error)
        else:
            assert doc.format == "pdf"
        assert time.perf_counter() - start < 10
