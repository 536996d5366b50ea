"""Adapter registry and the contract every adapter keeps.

An adapter is a module with a `parse` function (see `ParseFn`) that turns one file's bytes into
the common tree (`segment.tree`). What every adapter promises, checked for each registered
format by tests/test_adapter_conformance.py:

1. Spans: every heading, block, list item, definition and table row carries a `Span` that says
   where it came from (`lines` for text formats, `pages` for paged ones); `finish_spans` fills
   the sections' spans from their contents.
2. Depth cap: no block sits inside more than `MAX_BLOCK_DEPTH` containers (lists, quotes,
   definition lists); content below the cap is kept as flat text, never dropped silently.
3. Warnings: whatever the adapter drops, guesses or flattens is said in `Document.warnings` (one
   short sentence each), so a file's result is never silently partial.
4. Determinism: the same bytes and settings give the same tree, field for field (no clocks, no
   random numbers, no iteration over unordered sets into output).
5. Errors: an adapter raises only `segment.errors.SegmentError` subclasses, each naming the file
   and the reason with a machine-readable `status`: `ParseError` with `corrupt` (not this format,
   binary or unreadable content), `encrypted`, `empty` or `no_text` where the format has them,
   `resource_limit` (`TooLarge`, or nesting/memory past what the parser can hold). Any other
   exception is a bug. `api.parse_bytes` turns a stray `RecursionError` or `MemoryError` into a
   `resource_limit` error as a last guard.
6. No output of its own: nothing printed to stdout or stderr, no network, no file read beyond
   the bytes given (unless a setting allows reading inside the source root).

The `format` string of a document comes from its registry row: `api.parse_bytes` sets it, so an
adapter need not (and the JSON Schema's `format` enum is tested against `FORMATS`). Adding a
format is one new module plus one row of `ADAPTERS` (and the schema's enum).
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from pathlib import PurePath
from typing import Protocol

from segment.errors import UnsupportedFormat
from segment.settings import Settings
from segment.tree import Document

MAX_BLOCK_DEPTH = 64
"""Most containers (lists, quotes, definition lists) an adapter may nest around a block. The segmenter and renderer recurse per level; real documents stay far below it."""


class ParseFn(Protocol):
    """An adapter: the file's bytes, its display name and the settings in, a Document out."""

    def __call__(self, data: bytes, source: str, settings: Settings | None = None, /) -> Document: ...


@dataclass(frozen=True, slots=True)
class Adapter:
    """One row of the registry: the format name written into records, its suffixes, its module."""

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
    Adapter("notebook", (".ipynb",), "segment.adapters.notebook"),
    Adapter("text", (".txt",), "segment.adapters.plaintext"),
    Adapter("rst", (".rst", ".rest"), "segment.adapters.rst"),
    Adapter("mdx", (".mdx",), "segment.adapters.mdx"),
)

FORMATS: tuple[str, ...] = tuple(a.format for a in ADAPTERS)
"""Every registered format name, in registry order (the schema's `format` enum)."""

SUPPORTED_SUFFIXES: frozenset[str] = frozenset(s for a in ADAPTERS for s in a.suffixes)


EXTENSIONLESS = "text"
"""The format of files without a suffix (README, NOTES, CHANGES...), which are read only when
named: by the user on the command line, or by an include pattern (see `names_files`)."""


def adapter_for(path: str | PurePath) -> Adapter:
    """The adapter for a file name, by suffix (case-insensitive); no suffix means plain text."""
    suffix = lower_suffix(path)
    for adapter in ADAPTERS:
        if suffix in adapter.suffixes:
            return adapter
    if is_extensionless(path):
        return next(a for a in ADAPTERS if a.format == EXTENSIONLESS)
    raise UnsupportedFormat(str(path), f"no adapter for suffix {suffix!r}")


def lower_suffix(path: str | PurePath) -> str:
    """`PurePath(path).suffix.lower()` without building a path object (it runs for every file)."""
    if not isinstance(path, str) or "\\" in path:  # a Windows separator: let pathlib decide
        return PurePath(path).suffix.lower()
    name = path.rstrip("/").rpartition("/")[2]
    dot = name.rfind(".")
    return name[dot:].lower() if 0 < dot < len(name) - 1 else ""


def is_supported(path: str | PurePath) -> bool:
    """True when some adapter handles this file name."""
    return lower_suffix(path) in SUPPORTED_SUFFIXES


def is_extensionless(path: str | PurePath) -> bool:
    """True for a file name without a suffix (`README`, `NOTES`); dot files (`.env`) are not."""
    name = PurePath(path).name
    return bool(name) and not name.startswith(".") and "." not in name


def names_files(pattern: str) -> bool:
    """True when an include pattern names files rather than a whole folder: its last part is
    neither empty nor only wildcards (`README`, `**/NOTES*` do; `docs/`, `docs/**`, `*` do not).
    Only such patterns pull extension-less files into a build."""
    last = pattern.rstrip().rstrip("/") if not pattern.rstrip().endswith("/") else ""
    last = last.rsplit("/", 1)[-1]
    return bool(last.strip("*?")) and not last.startswith("!")


def supported_suffixes() -> frozenset[str]:
    """The file suffixes (lower case, with the dot) that some registered adapter reads."""
    return SUPPORTED_SUFFIXES
