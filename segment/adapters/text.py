"""Byte-level helpers shared by the text adapters: content sniffing and decoding."""

from __future__ import annotations

import codecs

from segment.errors import ParseError

_MAGIC: tuple[tuple[bytes, str], ...] = (
    (b"%PDF-", "a PDF"),
    (b"\x89PNG\r\n\x1a\n", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"GIF87a", "a GIF image"),
    (b"GIF89a", "a GIF image"),
    (b"PK\x03\x04", "a ZIP archive (docx, epub, jar...)"),
    (b"\x1f\x8b", "a gzip archive"),
    (b"\x7fELF", "an ELF executable"),
)


def sniff_binary(data: bytes, source: str, expected: str) -> None:
    """Raise ParseError when bytes that should be `expected` text are binary content."""
    head = data[:1024]
    stripped = head.lstrip()
    for magic, what in _MAGIC:
        if head.startswith(magic) or stripped.startswith(magic):
            raise ParseError(source, f"content is {what}, not {expected}", status="corrupt")
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return
    if b"\x00" in data[:8192]:
        raise ParseError(source, f"binary content (NUL bytes), not {expected}", status="corrupt")


def decode_text(data: bytes, warnings: list[str], declared: str | None = None) -> str:
    """Text from bytes: BOM first, then the declared charset, UTF-8, Windows-1252, else UTF-8
    with replacement characters. Every fallback is recorded in `warnings`."""
    for bom, codec in (
        (codecs.BOM_UTF8, "utf-8"),
        (codecs.BOM_UTF32_LE, "utf-32-le"),
        (codecs.BOM_UTF32_BE, "utf-32-be"),
        (codecs.BOM_UTF16_LE, "utf-16-le"),
        (codecs.BOM_UTF16_BE, "utf-16-be"),
    ):
        if data.startswith(bom):
            return data[len(bom) :].decode(codec, errors="replace")
    candidates = [c for c in (declared, "utf-8") if c]
    for codec in candidates:
        try:
            return data.decode(codec)
        except (UnicodeDecodeError, LookupError):
            continue
    try:
        text = data.decode("cp1252")
        warnings.append("not valid UTF-8: decoded as Windows-1252")
        return text
    except UnicodeDecodeError:
        warnings.append("not valid UTF-8: undecodable bytes replaced with U+FFFD")
        return data.decode("utf-8", errors="replace")
