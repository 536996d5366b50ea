"""One writer per output folder: an exclusive `flock` on OUT/.lock (reliability scenario "two writers")."""

from __future__ import annotations

import fcntl
import os
from pathlib import Path

from segment.daemon.errors import OutputBusy

LOCK_NAME = ".lock"

__all__ = ["LOCK_NAME", "OutputBusy", "OutputLock"]


class OutputLock:
    """Held for the life of a build or watch; released by `release()` or process exit."""

    def __init__(self, out: Path) -> None:
        out.mkdir(parents=True, exist_ok=True)
        self.path = out / LOCK_NAME
        self._fd: int | None = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(self._fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = os.pread(self._fd, 32, 0).decode("ascii", "replace").strip() or "unknown"
            os.close(self._fd)
            self._fd = None
            raise OutputBusy(
                f"{out}: another docsegment build or watch (pid {holder}) is writing this output "
                "folder; stop it first or choose another -o folder"
            ) from None
        os.ftruncate(self._fd, 0)
        os.pwrite(self._fd, f"{os.getpid()}\n".encode(), 0)

    def release(self) -> None:
        """Give the folder up."""
        if self._fd is not None:
            fcntl.flock(self._fd, fcntl.LOCK_UN)
            os.close(self._fd)
            self._fd = None
