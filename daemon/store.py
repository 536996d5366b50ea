"""SQLite state of an output folder: one row per source file, plus a few counters.

The store is a cache that reconcile can always rebuild from the source tree and the chunk files
(reliability principle "the state can always be rebuilt"), so a corrupt database is moved aside and started afresh. One process
writes it (the lock in `daemon.lock` guarantees that); readers open it read-only.
"""

from __future__ import annotations

import json
import logging
import os
import sqlite3
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from segment.daemon.vocabulary import FileStatus

log = logging.getLogger(__name__)

STATE_NAME = "state.sqlite3"
SCHEMA_VERSION = "2"
"""Version 2 added `files.digests`, the `pending` table, and renamed the counter
`overflow_recrawls` to `overflow_rescans`; a version 1 store is migrated in place."""

RACY_WINDOW_NS = 2_000_000_000
"""A file whose mtime is not older than its record by this much is hashed instead of trusted.

Two seconds covers the coarsest common timestamp granularity (FAT keeps 2 s); finer file systems
only pay one extra hash for a file edited within 2 s of being recorded (git's "racy clean" rule).
"""

_SCHEMA = """
CREATE TABLE IF NOT EXISTS files (
    path        BLOB PRIMARY KEY,   -- os.fsencode(relative POSIX path): odd names round-trip
    source      TEXT NOT NULL,      -- the path as written in chunk records and the feed
    size        INTEGER NOT NULL,
    mtime_ns    INTEGER NOT NULL,
    ctime_ns    INTEGER NOT NULL,
    ino         INTEGER NOT NULL,
    dev         INTEGER NOT NULL,
    hash        TEXT NOT NULL,      -- content hash of the bytes last read
    fingerprint TEXT NOT NULL,      -- Settings.fingerprint() the chunks were built with
    ids         TEXT NOT NULL,      -- JSON list of the chunk ids in OUT/chunks (last good result)
    status      TEXT NOT NULL,      -- 'ok' or the failure status of the last attempt
    error       TEXT,               -- reason of the last failure
    failures    INTEGER NOT NULL DEFAULT 0,  -- consecutive failures with this hash
    recorded_ns INTEGER NOT NULL,   -- wall clock when the stat above was taken
    digests     TEXT NOT NULL DEFAULT '[]'  -- JSON list: digest of each chunk record, as ids
);
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS pending (
    path     BLOB PRIMARY KEY,      -- a file held back as still changing, retried soon
    source   TEXT NOT NULL,
    reason   TEXT NOT NULL,
    since_ns INTEGER NOT NULL       -- wall clock when it was first held back
);
"""

_MIGRATE_FROM_1 = """
ALTER TABLE files ADD COLUMN digests TEXT NOT NULL DEFAULT '[]';
UPDATE meta SET key = 'overflow_rescans' WHERE key = 'overflow_recrawls';
UPDATE meta SET value = '2' WHERE key = 'schema';
"""


@dataclass(frozen=True, slots=True)
class StatSig:
    """The parts of a stat result that say whether a file may have changed."""

    size: int
    mtime_ns: int
    ctime_ns: int
    ino: int
    dev: int

    @classmethod
    def of(cls, st: os.stat_result) -> StatSig:
        """Signature of a stat result."""
        return cls(st.st_size, st.st_mtime_ns, st.st_ctime_ns, st.st_ino, st.st_dev)


@dataclass(slots=True)
class FileState:
    """One row of the store: what we last knew about one source file."""

    path: str
    """Relative POSIX path (str with surrogate escapes for undecodable bytes)."""
    source: str
    """The name used in records (valid Unicode)."""
    sig: StatSig
    hash: str
    fingerprint: str
    ids: list[str] = field(default_factory=list)
    status: str = FileStatus.OK
    error: str | None = None
    failures: int = 0
    recorded_ns: int = 0
    digests: list[str] = field(default_factory=list)
    """A digest of each chunk record, in the order of `ids` (a changed locator changes it)."""

    def trusts(self, sig: StatSig, fingerprint: str) -> bool:
        """True when `sig` proves the file is unchanged without reading it.

        The stat must match in full and the mtime must be older than the record by more than
        the racy window: a same-size rewrite within the timestamp granularity keeps the mtime.
        """
        return (
            sig == self.sig
            and fingerprint == self.fingerprint
            and sig.mtime_ns < self.recorded_ns - RACY_WINDOW_NS
        )


class StoreCorrupt(Exception):
    """The state database failed its integrity check."""


class Store:
    """The writer's handle on OUT/state.sqlite3 (WAL, synchronous=FULL)."""

    def __init__(self, path: Path, conn: sqlite3.Connection, rebuilt: bool = False) -> None:
        self.path = path
        self.conn = conn
        self.rebuilt = rebuilt
        """True when a corrupt database was moved aside at open: everything is re-derived."""

    # -- opening ---------------------------------------------------------------------------

    @classmethod
    def open(cls, out: Path) -> Store:
        """Open (or create) the store in `out`; move a corrupt one aside and start afresh."""
        path = out / STATE_NAME
        rebuilt = False
        try:
            conn = _connect(path)
        except (sqlite3.DatabaseError, StoreCorrupt) as exc:
            aside = path.with_name(f"{STATE_NAME}.corrupt-{time.strftime('%Y%m%dT%H%M%S')}")
            log.warning(
                "%s: state database is corrupt (%s); moved to %s, rebuilding by reconcile",
                path,
                exc,
                aside.name,
            )
            for suffix in ("", "-wal", "-shm"):
                side = Path(str(path) + suffix)
                if side.exists():
                    os.replace(side, Path(str(aside) + suffix))
            conn = _connect(path)
            rebuilt = True
        store = cls(path, conn, rebuilt)
        if rebuilt:
            with store.transaction():
                store.bump("rebuilt_state")
        log.debug("state %s (sqlite %s)", path, sqlite3.sqlite_version)
        return store

    def close(self) -> None:
        """Close the connection (any open transaction rolls back)."""
        self.conn.close()

    # -- transactions ----------------------------------------------------------------------

    @contextmanager
    def transaction(self) -> Iterator[None]:
        """One transaction: commit on success, roll back on any exception."""
        self.conn.execute("BEGIN IMMEDIATE")
        try:
            yield
        except BaseException:
            self.conn.rollback()
            raise
        self.conn.commit()

    # -- rows ------------------------------------------------------------------------------

    def get(self, path: str) -> FileState | None:
        """The row for one relative path, or None."""
        row = self.conn.execute("SELECT * FROM files WHERE path = ?", (_key(path),)).fetchone()
        return _row(row) if row else None

    def all(self) -> dict[str, FileState]:
        """Every row, keyed by relative path."""
        rows = self.conn.execute("SELECT * FROM files").fetchall()
        return {state.path: state for state in map(_row, rows)}

    def under(self, prefix: str) -> dict[str, FileState]:
        """Rows whose path is `prefix` itself or lies below the folder `prefix`."""
        if not prefix:
            return self.all()
        lo = _key(prefix + "/")
        hi = _key(prefix + "0")  # '0' is the byte after '/': the end of the prefix range
        rows = self.conn.execute(
            "SELECT * FROM files WHERE path = ? OR (path >= ? AND path < ?)", (_key(prefix), lo, hi)
        ).fetchall()
        return {state.path: state for state in map(_row, rows)}

    def put(self, state: FileState) -> None:
        """Insert or replace a row (inside a transaction)."""
        s = state.sig
        self.conn.execute(
            "INSERT OR REPLACE INTO files VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
            (
                _key(state.path),
                state.source,
                s.size,
                s.mtime_ns,
                s.ctime_ns,
                s.ino,
                s.dev,
                state.hash,
                state.fingerprint,
                json.dumps(state.ids),
                state.status,
                state.error,
                state.failures,
                state.recorded_ns,
                json.dumps(state.digests),
            ),
        )

    def delete(self, path: str) -> None:
        """Forget a file (inside a transaction)."""
        self.conn.execute("DELETE FROM files WHERE path = ?", (_key(path),))

    # -- files held back as still changing -------------------------------------------------

    def hold(self, path: str, source: str, reason: str) -> None:
        """Record a file as pending (inside a transaction); keeps the time it was first held."""
        self.conn.execute(
            "INSERT INTO pending VALUES (?, ?, ?, ?) ON CONFLICT(path) DO UPDATE SET reason = excluded.reason",
            (_key(path), source, reason, time.time_ns()),
        )

    def release(self, path: str) -> None:
        """Forget a pending file (inside a transaction)."""
        self.conn.execute("DELETE FROM pending WHERE path = ?", (_key(path),))

    def held(self) -> dict[str, str]:
        """Pending files: relative path -> reason."""
        rows = self.conn.execute("SELECT path, reason FROM pending").fetchall()
        return {os.fsdecode(bytes(path)): str(reason) for path, reason in rows}

    # -- meta ------------------------------------------------------------------------------

    def meta(self, key: str, default: str = "") -> str:
        """A value of the meta table."""
        row = self.conn.execute("SELECT value FROM meta WHERE key = ?", (key,)).fetchone()
        return str(row[0]) if row else default

    def set_meta(self, key: str, value: object) -> None:
        """Set a meta value (inside a transaction)."""
        self.conn.execute("INSERT OR REPLACE INTO meta VALUES (?, ?)", (key, str(value)))

    def bump(self, key: str) -> int:
        """Increment a counter in the meta table (inside a transaction); return its new value."""
        value = int(self.meta(key, "0") or 0) + 1
        self.set_meta(key, value)
        return value

    @property
    def last_seq(self) -> int:
        """The feed sequence number of the last committed entry."""
        return int(self.meta("last_seq", "0") or 0)


def _connect(path: Path) -> sqlite3.Connection:
    conn = sqlite3.connect(path, isolation_level=None, timeout=10.0, check_same_thread=False)
    try:
        conn.execute("PRAGMA journal_mode=WAL")
        conn.execute("PRAGMA synchronous=FULL")
        result = conn.execute("PRAGMA quick_check").fetchone()
        if not result or result[0] != "ok":
            raise StoreCorrupt(str(result[0] if result else "no answer"))
        conn.executescript(_SCHEMA)
        version = conn.execute("SELECT value FROM meta WHERE key='schema'").fetchone()
        if version is not None and version[0] == "1":
            conn.executescript("BEGIN IMMEDIATE;" + _MIGRATE_FROM_1 + "COMMIT;")
            version = ("2",)
        if version is None:
            conn.execute("INSERT INTO meta VALUES ('schema', ?)", (SCHEMA_VERSION,))
        elif version[0] != SCHEMA_VERSION:
            raise StoreCorrupt(f"schema version {version[0]}, expected {SCHEMA_VERSION}")
    except BaseException:
        conn.close()
        raise
    return conn


def _key(path: str) -> bytes:
    return os.fsencode(path)


def _row(row: tuple[Any, ...]) -> FileState:
    """A row of `files` (columns in schema order) as a FileState."""
    (path, source, size, mtime, ctime, ino, dev, digest, fp, ids, status, error, failures, recorded) = row[
        :14
    ]
    digests = row[14]
    return FileState(
        path=os.fsdecode(bytes(path)),
        source=str(source),
        sig=StatSig(int(size), int(mtime), int(ctime), int(ino), int(dev)),
        hash=str(digest),
        fingerprint=str(fp),
        ids=list(json.loads(str(ids))),
        status=str(status),
        error=None if error is None else str(error),
        failures=int(failures),
        recorded_ns=int(recorded),
        digests=list(json.loads(str(digests))),
    )


@dataclass(frozen=True, slots=True)
class StatusReport:
    """What `segment status` shows, read from a store without taking the writer lock."""

    files: int
    chunks: int
    failed: list[tuple[str, str, str]]
    """(source, status, reason) of every file whose last attempt failed."""
    last_seq: int
    degraded: str
    """Empty when healthy, else why the watcher cannot be trusted (e.g. `watch_limit`)."""
    counters: dict[str, int]
    noted: list[tuple[str, str]] = field(default_factory=list)
    """(source, warnings) of files chunked with a note (repaired PDF, replaced bytes...)."""
    pending: list[tuple[str, str, float]] = field(default_factory=list)
    """(source, reason, seconds since first held) of files held back as still changing."""
    not_read: dict[str, list[str]] = field(default_factory=dict)
    """Files under SRC that no adapter reads, by suffix (as of the last full pass)."""

    def to_dict(self) -> dict[str, Any]:
        """The JSON form `segment status --json` prints."""
        return {
            "files": self.files,
            "chunks": self.chunks,
            "failed": [{"source": s, "status": st, "reason": r} for s, st, r in self.failed],
            "warnings": [{"source": s, "warnings": w} for s, w in self.noted],
            "last_seq": self.last_seq,
            "degraded": self.degraded or None,
            "counters": self.counters,
            "pending": [{"source": s, "reason": r, "since": round(t, 1)} for s, r, t in self.pending],
            "not_read": self.not_read,
        }


def read_status(out: Path) -> StatusReport | None:
    """Read the store read-only; None when OUT holds no state."""
    path = out / STATE_NAME
    if not path.is_file():
        return None
    conn = sqlite3.connect(f"{path.resolve().as_uri()}?mode=ro", uri=True, timeout=10.0)
    try:
        conn.execute("PRAGMA busy_timeout=10000")
        files, chunks = conn.execute(
            "SELECT count(*), coalesce(sum(json_array_length(ids)), 0) FROM files"
        ).fetchone()
        failed = [
            (str(src), str(st), str(err or ""))
            for src, st, err in conn.execute(
                "SELECT source, status, error FROM files WHERE status != 'ok' ORDER BY path"
            )
        ]
        noted = [
            (str(src), str(err))
            for src, err in conn.execute(
                "SELECT source, error FROM files WHERE status = 'ok' AND error IS NOT NULL ORDER BY path"
            )
        ]
        meta = dict(conn.execute("SELECT key, value FROM meta").fetchall())
        now = time.time_ns()
        pending = [
            (str(src), str(reason), max(0, now - int(since)) / 1e9)
            for src, reason, since in conn.execute(
                "SELECT source, reason, since_ns FROM pending ORDER BY path"
            )
        ]
    except sqlite3.DatabaseError:
        return None
    finally:
        conn.close()
    counters = {
        k: int(v)
        for k, v in meta.items()
        if k in ("overflow_rescans", "observer_restarts", "rebuilt_state", "full_reconciles")
    }
    return StatusReport(
        files=int(files),
        chunks=int(chunks),
        failed=failed,
        last_seq=int(meta.get("last_seq", 0)),
        degraded=str(meta.get("degraded", "")),
        counters=counters,
        noted=noted,
        pending=pending,
        not_read=_not_read(meta.get("not_read", "")),
    )


def _not_read(value: str) -> dict[str, list[str]]:
    try:
        data = json.loads(value) if value else {}
    except ValueError:
        return {}
    if not isinstance(data, dict):
        return {}
    return {str(k): sorted(_display(p) for p in v) for k, v in data.items() if isinstance(v, list)}


def _display(rel: object) -> str:
    """A stored path as valid Unicode (undecodable bytes as U+FFFD)."""
    return str(rel).encode("utf-8", "surrogateescape").decode("utf-8", "replace")
