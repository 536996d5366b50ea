"""Bytes -> UTF-8 bytes for lxml: content sniffing, charset detection, replacement.

Charset rule (in order): a byte order mark; a charset declared in the first 4 KB (XML
declaration, `<meta charset>` or the `http-equiv="Content-Type"` form, found by beautifulsoup4's
`EncodingDetector`); else UTF-8. Bytes the charset cannot decode become U+FFFD and the document
records a warning. Labels follow the WHATWG Encoding Standard where it differs from Python's
codecs: `iso-8859-1`, `latin1` and `ascii` mean windows-1252, and a `utf-16` label without a BOM
means UTF-8 (the page could not have declared it in ASCII otherwise).
"""

from __future__ import annotations

import codecs
from dataclasses import dataclass

from bs4.dammit import EncodingDetector

from segment.adapters.text import sniff_binary

_BOMS: tuple[tuple[bytes, str], ...] = (
    (codecs.BOM_UTF8, "utf-8"),
    (codecs.BOM_UTF32_LE, "utf-32-le"),
    (codecs.BOM_UTF32_BE, "utf-32-be"),
    (codecs.BOM_UTF16_LE, "utf-16-le"),
    (codecs.BOM_UTF16_BE, "utf-16-be"),
)

_WHATWG_ALIASES: dict[str, str] = {
    "iso-8859-1": "cp1252",
    "iso8859-1": "cp1252",
    "latin1": "cp1252",
    "latin-1": "cp1252",
    "l1": "cp1252",
    "us-ascii": "cp1252",
    "ascii": "cp1252",
    "utf-16": "utf-8",
    "utf-16le": "utf-8",
    "utf-16be": "utf-8",
    "x-user-defined": "cp1252",
}


@dataclass(slots=True)
class Decoded:
    """The page as UTF-8 bytes (what the parser is told), the charset it came in, and warnings."""

    data: bytes
    charset: str
    warnings: list[str]


def decode(data: bytes, source: str) -> Decoded:
    """Sniff and re-encode `data` as UTF-8; raise ParseError for binary content."""
    sniff_binary(data, source, "HTML")
    warnings: list[str] = []
    for bom, codec in _BOMS:
        if data.startswith(bom):
            return _recode(data[len(bom) :], codec, warnings)
    declared = EncodingDetector.find_declared_encoding(data[:4096], is_html=True)
    codec = "utf-8"
    if declared:
        label = declared.strip().lower()
        label = _WHATWG_ALIASES.get(label, label)
        try:
            codec = codecs.lookup(label).name
        except LookupError:
            warnings.append(f"unknown charset {declared!r} declared: read as UTF-8")
    return _recode(data, codec, warnings)


def _recode(data: bytes, codec: str, warnings: list[str]) -> Decoded:
    try:
        text = data.decode(codec)
    except UnicodeDecodeError:
        text = data.decode(codec, errors="replace")
        bad = text.count("\ufffd") - (data.count(b"\xef\xbf\xbd") if codec == "utf-8" else 0)
        warnings.append(f"bytes not valid {codec}: {max(bad, 1)} replaced with U+FFFD")
    else:
        if codec == "utf-8":
            return Decoded(data, codec, warnings)  # already what the parser is told
    return Decoded(text.encode("utf-8"), codec, warnings)
