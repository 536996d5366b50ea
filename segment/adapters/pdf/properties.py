"""The PDF's own document information (title, author, subject, keywords) as page properties.

The document information dictionary (ISO 32000-1 section 14.3.3) holds free text; keywords are
one string that authors separate with commas or semicolons (common practice), so they become a
list. Empty entries are left out; producer, creator and dates describe the tools, not the
document, and are not kept.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

KEYS = ("title", "author", "subject", "keywords")
"""The document information entries kept, under pymupdf's names for them."""

_SEPARATORS = re.compile(r"[,;]")


def document_properties(info: Mapping[str, object] | None) -> dict[str, str | list[str]]:
    """Title, author and subject as single-spaced strings; keywords as a list of strings."""
    out: dict[str, str | list[str]] = {}
    for key in KEYS:
        raw = (info or {}).get(key)
        if not isinstance(raw, str):
            continue
        if key == "keywords":
            words = [_clean(part) for part in _SEPARATORS.split(raw)]
            kept = [w for w in words if w]
            if kept:
                out[key] = kept
            continue
        text = _clean(raw)
        if text:
            out[key] = text
    return out


def _clean(text: str) -> str:
    """White space (and control characters, which some writers leave in) folded to one space."""
    return " ".join("".join(ch if ch.isprintable() else " " for ch in text).split())
