"""The library's entry points: parse a file into the tree, cut a tree into chunks."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path, PurePath, PurePosixPath

from segment.adapters import adapter_for
from segment.chunk import Chunk
from segment.errors import ParseError, SegmentError, TooLarge
from segment.gcpause import paused_gc
from segment.settings import Settings
from segment.tokens import AnyCounter
from segment.tree import Document, TitleOrigin

INDEX_STEMS = frozenset({"index", "_index", "readme"})
"""File names (without suffix, any case) that stand for their folder: their title is the folder's."""


def read_source(path: str | Path, settings: Settings | None = None) -> bytes:
    """Read a file's bytes under the size cap, with errors that name the file."""
    settings = settings or Settings()
    p = Path(path)
    try:
        size = p.stat().st_size
        if size > settings.max_file_bytes:
            raise TooLarge(str(path), f"file is {size} bytes, over max_file_bytes={settings.max_file_bytes}")
        return p.read_bytes()
    except SegmentError:
        raise
    except IsADirectoryError as exc:
        raise ParseError(str(path), "is a directory", status="unreadable") from exc
    except FileNotFoundError as exc:
        raise ParseError(str(path), "no such file", status="missing") from exc
    except OSError as exc:
        raise ParseError(str(path), f"cannot read: {exc.strerror or exc}", status="unreadable") from exc


def parse_bytes(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse bytes with the adapter chosen by `source`'s suffix; the record's `format` is the
    registry row's (see segment.adapters)."""
    adapter = adapter_for(source)
    fn = adapter.load()
    try:
        with paused_gc():  # adapters build large acyclic trees: see segment.gcpause
            document = fn(data, source, settings)
    except SegmentError:
        raise
    except RecursionError as exc:
        raise ParseError(source, "nesting too deep for the parser", status="resource_limit") from exc
    except MemoryError as exc:
        raise ParseError(source, "out of memory while parsing", status="resource_limit") from exc
    document.format = adapter.format
    if document.title is None and not any(s.heading and s.heading.level == 1 for s in document.sections):
        derived = title_from_name(source)  # a page titled by its site's navigation, not by itself
        if derived:
            document.title, document.title_origin = derived, TitleOrigin.FILE_NAME
    return document


def title_from_name(source: str) -> str | None:
    """A readable title from a file name: `getting-started.md` -> "Getting started";
    `guides/index.md` -> "Guides" (an index page is named after its folder)."""
    path = PurePosixPath(source.replace("\\", "/"))
    stem = path.stem
    if stem.casefold() in INDEX_STEMS and path.parent.name not in ("", ".", ".."):
        stem = path.parent.name
    words = " ".join(stem.replace("_", " ").replace("-", " ").split())
    return words[:1].upper() + words[1:] if words else None


def parse(path: str | Path, settings: Settings | None = None, source: str | None = None) -> Document:
    """Parse one file into the common tree.

    `source` names the file in records and ids (default: the path as given, in POSIX form, as
    `segment chunks` does); pass the path relative to your documentation root for ids that do not
    depend on where the program runs."""
    name = source if source is not None else PurePath(path).as_posix()
    return parse_bytes(read_source(path, settings), name, settings)


def chunk(
    document: Document, settings: Settings | None = None, counter: AnyCounter | None = None
) -> Iterator[Chunk]:
    """Cut a parsed document into chunks under the settings' token budget.

    `counter` counts tokens: an object with `count(text) -> int` (see `segment.tokens`) or any
    `str -> int` function, e.g. an embedding model's own tokenizer; by default, the counter the
    settings name (`tokenizer`, else the built-in estimator)."""
    from segment.segmenter import segment_document

    return iter(segment_document(document, settings or Settings(), counter))


def chunk_file(path: str | Path, settings: Settings | None = None, source: str | None = None) -> list[Chunk]:
    """Parse and cut one file.

    `source` names the file in records and ids (default: the path as given, in POSIX form, so
    `a/index.md` and `b/index.md` get different ids); pass the path relative to your
    documentation root for ids that do not depend on where the program runs."""
    settings = settings or Settings()
    return list(chunk(parse(path, settings, source), settings))
