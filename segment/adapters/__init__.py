"""Adapter registry: which module turns which files into the common tree.

Each adapter module exposes `parse(data: bytes, source: str, settings: Settings | None = None)
-> Document` and raises `segment.errors.ParseError` (or a subclass) with a reason when it cannot.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import PurePath

from segment.errors import UnsupportedFormat
from segment.settings import Settings
from segment.tree import Document

ParseFn = Callable[[bytes, str, Settings | None], Document]
"""An adapter: the file's bytes, its display name and the settings in, a Document out."""


@dataclass(frozen=True, slots=True)
class Adapter:
    """One row of the registry."""

    format: str
    suffixes: tuple[str, ...]
    module: str

    def load(self) -> ParseFn:
        """Import the adapter module on first use (PDF and HTML stacks are heavy)."""
        parse: ParseFn = importlib.import_module(self.module).parse
        return parse


ADAPTERS: tuple[Adapter, ...] = (
    Adapter("markdown", (".md", ".markdown", ".mdown", ".mkd"), "segment.adapters.markdown"),
    Adapter("html", (".html", ".htm", ".xhtml"), "segment.adapters.html"),
    Adapter("pdf", (".pdf",), "segment.adapters.pdf"),
    Adapter("mdx", (".mdx",), "segment.adapters.mdx"),
)

SUPPORTED_SUFFIXES: frozenset[str] = frozenset(s for a in ADAPTERS for s in a.suffixes)


def adapter_for(path: str | PurePath) -> Adapter:
    """The adapter for a file name, by suffix (case-insensitive)."""
    suffix = PurePath(path).suffix.lower()
    for adapter in ADAPTERS:
        if suffix in adapter.suffixes:
            return adapter
    raise UnsupportedFormat(str(path), f"no adapter for suffix {suffix!r}")


def is_supported(path: str | PurePath) -> bool:
    """True when some adapter handles this file name."""
    return PurePath(path).suffix.lower() in SUPPORTED_SUFFIXES
