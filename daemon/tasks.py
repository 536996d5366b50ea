"""One file's work: parse and cut it into chunk records. Runs wherever an executor puts it.

`run_task` never raises for problems with the file: every end is an `Outcome` with a status
(see `FileStatus`). It is a plain function of picklable values, so any executor (local worker
processes today, a cluster later) can run it.
"""

from __future__ import annotations

import hashlib
import os
import time
from dataclasses import dataclass, field

from segment.daemon.store import StatSig
from segment.daemon.vocabulary import FileStatus
from segment.errors import SegmentError
from segment.settings import Settings
from segment.tree import Document

HOOKS_ENV = "DOCSEGMENT_TEST_HOOKS"
"""Set to 1 to make workers misbehave on purpose for files named *.crash.md, *.segv.md,
*.hang.md and *.oom.md (tests only; read once when a pool starts)."""


@dataclass(frozen=True, slots=True)
class Task:
    """One file to parse."""

    path: str
    """Relative path (store key)."""
    abspath: str
    source: str
    """Name written into the chunk records."""
    patient: bool = False
    """Watch mode: a later event will bring the file back, so a young repaired PDF can wait."""


@dataclass(slots=True)
class Outcome:
    """What a worker (or the pool, for a worker that died) says about one task."""

    path: str
    status: str
    """`ok`; `changed` (file moved under the parse) or `missing` (gone); else a failure status."""
    reason: str | None = None
    data: bytes = b""
    """The chunk file's bytes (JSON Lines) when `ok`."""
    ids: list[str] = field(default_factory=list)
    digests: list[str] = field(default_factory=list)
    """`record_digest` of each chunk record, in the order of `ids`, when `ok`."""
    hash: str = ""
    sig: StatSig | None = None
    """Stat of the file before it was read (the state the chunks belong to)."""
    recorded_ns: int = 0
    pid: int = 0
    """The process that parsed the file."""
    ms: float = 0.0
    warnings: list[str] = field(default_factory=list)
    """What the adapter could not keep or had to guess (Document.warnings), when `ok`."""

    @property
    def failed(self) -> bool:
        """True for a failure status (not ok/changed/missing)."""
        return FileStatus(self.status).failed


def run_task(task: Task, settings: Settings, hooks: bool = False) -> Outcome:
    """Parse and cut one file; never raises for problems with the file."""
    import segment

    started = time.monotonic()
    recorded = time.time_ns()
    try:
        st0 = os.stat(task.abspath)
    except FileNotFoundError:
        return Outcome(
            task.path, FileStatus.MISSING, "file vanished before it could be read", pid=os.getpid()
        )
    except OSError as exc:
        return Outcome(
            task.path, FileStatus.UNREADABLE, f"cannot stat: {exc.strerror or exc}", pid=os.getpid()
        )
    sig = StatSig.of(st0)
    out = Outcome(task.path, FileStatus.OK, sig=sig, recorded_ns=recorded, pid=os.getpid())
    try:
        if st0.st_size > settings.max_file_bytes:
            raise segment.TooLarge(
                task.source, f"file is {st0.st_size} bytes, over max_file_bytes={settings.max_file_bytes}"
            )
        with open(task.abspath, "rb") as fh:
            data = fh.read()  # read once: the hash and the parse see the same bytes
        out.hash = content_hash(data)
        if hooks:
            _misbehave(task.path, settings.memory_mb)
        document = segment.parse_bytes(data, task.source, settings)
        out.warnings = list(document.warnings)
        if task.patient and _maybe_incomplete(document, st0.st_mtime_ns):
            # reliability scenario "file still being written / bad or truncated PDF": MuPDF "repairs" a PDF cut mid-copy into partial text. While
            # the file is young, wait for the writer to finish rather than publish a part.
            reason = "PDF needed repair and was modified moments ago (a copy in progress?)"
            return Outcome(task.path, FileStatus.STILL_WRITING, reason, pid=os.getpid())
        chunks = list(segment.chunk(document, settings))
        lines = [(c.to_json() + "\n").encode("utf-8", "replace") for c in chunks]
        out.data = b"".join(lines)
        out.ids = [c.id for c in chunks]
        out.digests = [record_digest(line) for line in lines]
    except FileNotFoundError:
        out.status, out.reason = FileStatus.MISSING, "file vanished while it was read"
    except SegmentError as exc:
        out.status, out.reason = exc.status, exc.reason
        if exc.status == FileStatus.MISSING:
            out.reason = "file vanished while it was read"
    except (MemoryError, RecursionError) as exc:
        out.status = FileStatus.RESOURCE_LIMIT
        out.reason = "out of memory" if isinstance(exc, MemoryError) else "nesting too deep"
        out.data, out.ids = b"", []
    except OSError as exc:
        out.status, out.reason = FileStatus.UNREADABLE, f"cannot read: {exc.strerror or exc}"
    except Exception as exc:
        out.status, out.reason = FileStatus.ERROR, f"{type(exc).__name__}: {exc}"
    if out.status == FileStatus.OK:
        try:
            after = StatSig.of(os.stat(task.abspath))
        except OSError:
            after = None
        if after != sig:
            out = Outcome(task.path, FileStatus.CHANGED, "file changed while it was parsed", pid=os.getpid())
    out.ms = (time.monotonic() - started) * 1000
    return out


YOUNG_NS = 5_000_000_000
"""A repaired PDF modified less than this long ago is treated as still being written."""


def _maybe_incomplete(document: Document, mtime_ns: int) -> bool:
    return document.repaired and time.time_ns() - mtime_ns < YOUNG_NS


def record_digest(line: bytes) -> str:
    """Digest of one chunk record's JSON line (any changed field changes it)."""
    return hashlib.blake2b(line, digest_size=8).hexdigest()


def content_hash(data: bytes) -> str:
    """The content hash the store keeps (BLAKE2b, 128 bits)."""
    return hashlib.blake2b(data, digest_size=16).hexdigest()


def _misbehave(path: str, memory_mb: int) -> None:
    """Test hooks: crash, hang or exhaust memory on purpose, by file name."""
    if path.endswith(".crash.md"):
        os.abort()
    if path.endswith(".segv.md"):
        import ctypes

        ctypes.string_at(0)
    if path.endswith(".hang.md"):
        while True:
            pass
    if path.endswith(".oom.md"):
        # Twice the address-space limit in one block: refused at once under RLIMIT_AS.
        hoard = bytearray(max(memory_mb, 1 << 20) * 2 * 1024 * 1024)
        del hoard


# -- the parent side --------------------------------------------------------------------------
