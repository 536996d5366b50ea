"""Files parsed one after another in a child process under time and memory limits, where forking
is not allowed.

Local builds supervise `multiprocessing` workers (segment.daemon.workers). A Dask worker is itself
a daemonic process, which `multiprocessing` refuses to give children, yet a parser may hang, crash
or eat memory there as well. So a Dask task hands the bytes to a long-lived child started with
`subprocess` (`segment.daemon.isolated.child_main`): it sets its own address-space limit
(`memory_mb`), loads the parsers once, takes a batch of files at a time over its pipes
(length-prefixed pickles) and sends one result back as each file is done. The parent kills it when
a file overruns `timeout_s`, and starts a new one for the rest of the batch; a child that dies is
classified like a local worker.
"""

from __future__ import annotations

import os
import pickle
import select
import struct
import subprocess
import sys
import time
from dataclasses import dataclass, field
from typing import IO, Any

from segment.errors import SegmentError
from segment.settings import Settings

_HEADER = struct.Struct("!Q")


@dataclass(slots=True)
class ParseResult:
    """What one isolated parse gives back: chunk file bytes or a status with its reason."""

    status: str
    reason: str | None = None
    data: bytes = b""
    """The chunk file's bytes (JSON Lines) when `ok`."""
    ids: list[str] = field(default_factory=list)
    digests: list[str] = field(default_factory=list)
    """`record_digest` of each chunk record, in the order of `ids`."""
    warnings: list[str] = field(default_factory=list)
    repaired: bool = False
    """The PDF adapter repaired a damaged file (its text may be partial)."""
    pid: int = 0
    ms: float = 0.0


def parse_to_result(data: bytes, source: str, settings: Settings) -> ParseResult:
    """Parse and cut one file's bytes; never raises for problems with the file."""
    import segment
    from segment.daemon.tasks import record_digest

    started = time.monotonic()
    result = ParseResult("ok", pid=os.getpid())
    try:
        if len(data) > settings.max_file_bytes:
            raise segment.TooLarge(
                source, f"file is {len(data)} bytes, over max_file_bytes={settings.max_file_bytes}"
            )
        document = segment.parse_bytes(data, source, settings)
        result.warnings = list(document.warnings)
        result.repaired = document.repaired
        chunks = list(segment.chunk(document, settings))
        lines = [(c.to_json() + "\n").encode("utf-8", "replace") for c in chunks]
        result.data = b"".join(lines)
        result.ids = [c.id for c in chunks]
        result.digests = [record_digest(line) for line in lines]
    except SegmentError as exc:
        result = ParseResult(exc.status, exc.reason, pid=os.getpid())
    except (MemoryError, RecursionError) as exc:
        reason = "out of memory" if isinstance(exc, MemoryError) else "nesting too deep"
        result = ParseResult("resource_limit", reason, pid=os.getpid())
    except Exception as exc:
        result = ParseResult("error", f"{type(exc).__name__}: {exc}", pid=os.getpid())
    result.ms = (time.monotonic() - started) * 1000
    return result


def _send(stream: IO[bytes], obj: object) -> None:
    blob = pickle.dumps(obj, protocol=pickle.HIGHEST_PROTOCOL)
    view = memoryview(_HEADER.pack(len(blob)) + blob)
    while view:  # an unbuffered pipe may take part of a large write
        view = view[stream.write(view) or 0 :]
    stream.flush()


def _read_exact(stream: IO[bytes], size: int) -> bytes:
    parts: list[bytes] = []
    while size:
        part = stream.read(size)
        if not part:
            raise EOFError("pipe closed")
        parts.append(part)
        size -= len(part)
    return b"".join(parts)


def _receive(stream: IO[bytes]) -> Any:
    (size,) = _HEADER.unpack(_read_exact(stream, _HEADER.size))
    return pickle.loads(_read_exact(stream, size))


class IsolatedParser:
    """A supervised child process that parses one file at a time; see the module docstring."""

    def __init__(self, settings: Settings) -> None:
        self.settings = settings
        self._proc: subprocess.Popen[bytes] | None = None
        self.replaced = 0
        """Children killed after a timeout or found dead."""

    def _start(self) -> subprocess.Popen[bytes]:
        proc = subprocess.Popen(
            [sys.executable, "-c", "from segment.daemon.isolated import child_main; child_main()"],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            stderr=subprocess.DEVNULL,
            close_fds=True,
            bufsize=0,  # unbuffered: select() on the pipe must see every result not yet read
        )
        assert proc.stdin is not None and proc.stdout is not None
        _send(proc.stdin, self.settings)
        self._proc = proc
        return proc

    def _stop(self, kill: bool) -> int | None:
        proc, self._proc = self._proc, None
        if proc is None:
            return None
        if kill and proc.poll() is None:
            proc.kill()
        try:
            return proc.wait(5)
        finally:
            for stream in (proc.stdin, proc.stdout):
                if stream is not None:
                    stream.close()

    def parse(self, data: bytes, source: str) -> ParseResult:
        """Parse one file's bytes in the child, under `timeout_s` (start-up not counted)."""
        return self.parse_many([(data, source)])[0]

    def parse_many(self, items: list[tuple[bytes, str]]) -> list[ParseResult]:
        """Parse several files in the child, one result per item, in order.

        The whole list goes to the child at once and the results stream back, so the child
        never waits for this process between files. Each file has `timeout_s` from the moment
        the one before it was answered; a file that overruns or kills the child gets its status,
        and a new child takes the rest."""
        from segment.daemon.workers import classify_exit

        results: list[ParseResult] = []
        while len(results) < len(items):
            try:
                proc = self._ready_child()
                assert proc.stdin is not None and proc.stdout is not None
                _send(proc.stdin, items[len(results) :])
                while len(results) < len(items):
                    ready, _, _ = select.select([proc.stdout], [], [], self.settings.timeout_s)
                    if not ready:
                        self._stop(kill=True)
                        self.replaced += 1
                        reason = (
                            f"parse took longer than timeout_s={self.settings.timeout_s:g}; worker killed"
                        )
                        results.append(ParseResult("timeout", reason))
                        break
                    results.append(_receive(proc.stdout))
            except (EOFError, OSError, pickle.UnpicklingError):
                code = self._stop(kill=True)
                self.replaced += 1
                status, reason = classify_exit(code)
                results.append(ParseResult(status, reason))
        return results

    def _ready_child(self) -> subprocess.Popen[bytes]:
        """The running child, or a new one once it says it has loaded the parsers."""
        if self._proc is not None and self._proc.poll() is None:
            return self._proc
        proc = self._start()
        assert proc.stdout is not None
        if _receive(proc.stdout) != "ready":
            raise EOFError("child did not start")
        return proc

    def close(self) -> None:
        """Stop the child."""
        self._stop(kill=True)


def child_main() -> None:
    """The child's loop: settings first, then lists of (data, source) until the pipe closes;
    one result is sent as each file is done."""
    stdin, stdout = sys.stdin.buffer, sys.stdout.buffer
    sys.stdout = sys.stderr  # nothing but frames on the pipe, whatever a library prints
    settings: Settings = _receive(stdin)
    if settings.memory_mb > 0:
        import resource

        limit = settings.memory_mb * 1024 * 1024
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    from segment.daemon.workers import _warm_up  # the same warm-up as local workers

    _warm_up(settings)
    _send(stdout, "ready")
    while True:
        try:
            items: list[tuple[bytes, str]] = _receive(stdin)
        except EOFError:
            return
        for data, source in items:
            _send(stdout, parse_to_result(data, source, settings))
