"""The library's entry points: parse a file into the tree, cut a tree into chunks."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path, PurePath

from segment.adapters import adapter_for
from segment.chunk import Chunk
from segment.errors import ParseError, SegmentError, TooLarge
from segment.gcpause import paused_gc
from segment.settings import Settings
from segment.tree import Document


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
        raise ParseError(str(path), "file vanished before it could be read", status="missing") from exc
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
    return document


def parse(path: str | Path, settings: Settings | None = None, source: str | None = None) -> Document:
    """Parse one file into the common tree. `source` names it in records (default: the file name)."""
    name = source if source is not None else PurePath(path).name
    return parse_bytes(read_source(path, settings), name, settings)


def chunk(document: Document, settings: Settings | None = None) -> Iterator[Chunk]:
    """Cut a parsed document into chunks under the settings' token budget."""
    from segment.segmenter import segment_document

    return iter(segment_document(document, settings or Settings()))


def chunk_file(path: str | Path, settings: Settings | None = None, source: str | None = None) -> list[Chunk]:
    """Parse and cut one file; `source` names it in records (default: the file name)."""
    settings = settings or Settings()
    return list(chunk(parse(path, settings, source), settings))
