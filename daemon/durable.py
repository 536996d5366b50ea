"""Crash-safe file writes and the named crash points tests use to prove them.

Every output file is replaced atomically: temp file in the same folder, write, flush, fsync,
`os.replace`, then fsync of the folder (reliability scenario "killed mid-update / power loss"). A failed fsync is never retried:
the temp file is removed and the error goes up, so the store is not committed ("failed fsync").
"""

from __future__ import annotations

import os
import secrets
from collections.abc import Iterator
from pathlib import Path

TMP_SUFFIX = ".tmp"
CRASH_ENV = "DOCSEGMENT_CRASH_AT"
"""Test hook: `label` or `label:N` makes the N-th (default first) pass through that point exit."""

_crash_counts: dict[str, int] = {}


def crashpoint(label: str) -> None:
    """Exit at once with status 137 when the crash hook names this point (tests only)."""
    want = os.environ.get(CRASH_ENV)
    if not want:
        return
    name, _, nth = want.partition(":")
    if name != label:
        return
    _crash_counts[label] = _crash_counts.get(label, 0) + 1
    if _crash_counts[label] >= int(nth or 1):
        os._exit(137)


def temp_name(dst: Path) -> Path:
    """A unique temp path beside `dst`, recognisable by its suffix for cleanup (short, so a
    long `dst` name cannot push it past the file system's name limit)."""
    return dst.with_name(f".docsegment-{secrets.token_hex(6)}{TMP_SUFFIX}")


def write_atomic(dst: Path, data: bytes, *, sync_dir: bool = True) -> None:
    """Replace `dst` with `data` so that a crash leaves either the old or the new file.

    With `sync_dir=False` the caller promises to call `fsync_dir(dst.parent)` before it relies
    on the rename being durable (batches sync each folder once).
    """
    dst.parent.mkdir(parents=True, exist_ok=True)
    tmp = temp_name(dst)
    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
    try:
        try:
            view = memoryview(data)
            while view:
                written = os.write(fd, view)
                view = view[written:]
            crashpoint("after_tmp_write")
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, dst)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
    crashpoint("after_replace")
    if sync_dir:
        fsync_dir(dst.parent)


def write_if_changed(dst: Path, data: bytes) -> None:
    """`write_atomic` without the folder fsync, skipped when `dst` already holds `data`."""
    try:
        if dst.stat().st_size == len(data) and dst.read_bytes() == data:
            return
    except OSError:
        pass
    write_atomic(dst, data, sync_dir=False)


def fsync_dir(folder: Path) -> None:
    """Make renames and unlinks inside `folder` durable."""
    fd = os.open(folder, os.O_RDONLY | os.O_DIRECTORY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)


def walk_files(root: Path) -> Iterator[os.DirEntry[str]]:
    """Every non-folder entry under `root`, depth first, without following links (iterative)."""
    stack = [root]
    while stack:
        folder = stack.pop()
        try:
            entries = list(os.scandir(folder))
        except OSError:
            continue
        for entry in entries:
            if entry.is_dir(follow_symlinks=False):
                stack.append(Path(entry.path))
            else:
                yield entry


def remove_temps(root: Path) -> int:
    """Delete temp files a crash left under `root`; return how many."""
    count = 0
    for entry in walk_files(root):
        if entry.name.startswith(".") and entry.name.endswith(TMP_SUFFIX):
            try:
                os.unlink(entry.path)
                count += 1
            except OSError:
                pass
    return count
