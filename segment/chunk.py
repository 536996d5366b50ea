"""The chunk record (one JSON object per line) and its stable id."""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field, fields
from typing import Any

_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))
"""One encoder for every record (json.dumps with options builds a new one per call)."""

ID_VERSION = "1"
"""Bumped when the id recipe changes, so every id changes with it."""

OUTPUT_VERSION = "2026.12.3"
"""Bumped when parsing or segmentation changes what chunks a file gets: part of the settings
fingerprint, so an upgraded daemon re-segments files built by an older version."""

CELL_FORMATS = frozenset({"notebook"})
"""Formats whose tree spans count cells, not lines: their records fill `cells`, not `lines`."""


@dataclass(slots=True)
class Chunk:
    """One chunk of a source file; field order is the JSON key order."""

    id: str
    """Stable id: hash of source, breadcrumb and normalised text (+ occurrence for exact repeats)."""
    source: str
    """POSIX path relative to the source root, or the file name for a single file."""
    format: str
    """`markdown`, `html` or `pdf`."""
    seq: int
    """0-based order within its source."""
    breadcrumb: list[str]
    """Heading texts from the document title down to the chunk's section."""
    text: str
    """The chunk's text; tables as pipe-table rows with the header repeated in every part."""
    tokens: int
    """Token count of `text` under the counter in use."""
    blocks: list[str]
    """Kinds of blocks inside, in order."""
    lines: tuple[int, int] | None = None
    """1-based inclusive source lines (Markdown, HTML)."""
    pages: tuple[int, int] | None = None
    """1-based inclusive pages (PDF)."""
    anchor: str | None = None
    """Fragment of the nearest heading, for a deep link."""
    oversize: bool = False
    """True only when one unbreakable unit (a table row) exceeds the budget."""
    cells: tuple[int, int] | None = None
    """1-based inclusive notebook cells (notebooks only; their `lines` is null)."""
    url: str | None = None
    """The page URL plus `#anchor` (PDFs `#page=N`), when a base URL is set."""
    properties: dict[str, Any] = field(default_factory=dict)
    """The source's own declared properties, the same on every chunk of a file."""
    extra: dict[str, Any] = field(default_factory=dict)
    """Further fields, written after the fixed ones."""

    def to_dict(self) -> dict[str, Any]:
        """The JSON form: fixed fields in order, then extras sorted by name."""
        out: dict[str, Any] = {
            "id": self.id,
            "source": self.source,
            "format": self.format,
            "seq": self.seq,
            "breadcrumb": list(self.breadcrumb),
            "text": self.text,
            "tokens": self.tokens,
            "blocks": list(self.blocks),
            "lines": list(self.lines) if self.lines else None,
            "pages": list(self.pages) if self.pages else None,
            "anchor": self.anchor,
            "oversize": self.oversize,
            "cells": list(self.cells) if self.cells else None,
            "url": self.url,
            "properties": dict(self.properties),
        }
        for key in sorted(self.extra):
            out.setdefault(key, self.extra[key])
        return out

    def to_json(self) -> str:
        """One line of JSON Lines (UTF-8, no ASCII escaping, deterministic)."""
        return _ENCODER.encode(self.to_dict())

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Chunk:
        """Inverse of `to_dict`; unknown keys go to `extra`."""
        fixed = {f.name for f in fields(cls)} - {"extra"}
        return cls(
            id=data["id"],
            source=data["source"],
            format=data["format"],
            seq=data["seq"],
            breadcrumb=list(data["breadcrumb"]),
            text=data["text"],
            tokens=data["tokens"],
            blocks=list(data["blocks"]),
            lines=tuple(data["lines"]) if data.get("lines") else None,
            pages=tuple(data["pages"]) if data.get("pages") else None,
            anchor=data.get("anchor"),
            oversize=bool(data.get("oversize", False)),
            cells=(data["cells"][0], data["cells"][1]) if data.get("cells") else None,
            url=data.get("url"),
            properties=dict(data.get("properties") or {}),
            extra={k: v for k, v in data.items() if k not in fixed},
        )


def normalise_text(text: str) -> str:
    """Whitespace folded to single spaces: what the id sees of a chunk's text."""
    return " ".join(text.split())


def chunk_id(source: str, breadcrumb: list[str], text: str, occurrence: int = 0) -> str:
    """Stable id from content, never from position: 32 hex characters."""
    return id_of_normalised(source, breadcrumb, normalise_text(text), occurrence)


def id_of_normalised(source: str, breadcrumb: list[str], normalised: str, occurrence: int = 0) -> str:
    """`chunk_id` of a text already through `normalise_text`."""
    h = hashlib.blake2b(digest_size=16)
    for part in (ID_VERSION, source, "\x1f".join(breadcrumb), normalised, str(occurrence)):
        h.update(part.encode("utf-8", "surrogatepass"))
        h.update(b"\x00")
    return h.hexdigest()
