"""A real inotify queue overflow (reliability scenario "inotify queue overflow"; dashboard figure 2).

watchman's own trick (`suspendWatchman()` in its recrawl tests): stop the watcher process with
SIGSTOP, create 10,000 files (about 30,000 events, past the kernel's default
`max_queued_events` of 16,384), resume it. watchdog 7.1 only logs the overflow; the daemon must
notice, count it, and converge by a full reconcile. The convergence time is printed (the pass bar
of figure 2 is 15 s; timing is reported, not asserted: the deadline below only bounds a hang).
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import pytest

from segment.daemon import reconcile
from tests.daemon_helpers import assert_feed_matches, chunk_files

FILES = 10_000


def status(out: Path) -> dict[str, Any]:
    done = subprocess.run(
        [sys.executable, "-m", "segment", "status", str(out), "--json"],
        capture_output=True,
        text=True,
        timeout=30,
    )
    return json.loads(done.stdout) if done.returncode == 0 else {}


def queue_limit() -> int:
    try:
        return int(Path("/proc/sys/fs/inotify/max_queued_events").read_text())
    except (OSError, ValueError):
        return 0


@pytest.mark.slow
@pytest.mark.timeout(240)
def test_an_inotify_queue_overflow_is_detected_and_the_output_converges(tmp_path: Path) -> None:
    limit = queue_limit()
    if not 0 < limit < 2 * FILES:
        pytest.skip(f"max_queued_events={limit}: 10,000 creates would not overflow the queue")
    src, out = tmp_path / "docs", tmp_path / "out"
    src.mkdir()
    (src / "start.md").write_text("# Start\n\nThe fleet log begins.\n")
    environ = {k: v for k, v in os.environ.items() if not k.startswith("DOCSEGMENT_")}
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "segment",
            "watch",
            str(src),
            "-o",
            str(out),
            "--quiet-ms",
            "50",
            "--jobs",
            "2",
        ],
        env=environ,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        assert proc.stderr is not None
        for line in proc.stderr:
            if "watching" in line:
                break
        os.kill(proc.pid, signal.SIGSTOP)
        for i in range(FILES):
            with open(src / f"note{i}.md", "w", encoding="utf-8") as fh:
                fh.write(f"Note {i}\n")
        os.kill(proc.pid, signal.SIGCONT)
        resumed = time.monotonic()
        deadline = resumed + 120
        seen: dict[str, Any] = {}
        while time.monotonic() < deadline:
            seen = status(out)
            if seen.get("files") == FILES + 1 and seen.get("counters", {}).get("overflow_rescans", 0) >= 1:
                break
            time.sleep(0.1)  # polling a condition with a deadline, not waiting a fixed time
        converged = time.monotonic() - resumed
        assert seen.get("counters", {}).get("overflow_rescans", 0) >= 1, seen
        assert seen.get("files") == FILES + 1, seen
        print(f"overflow detected; {FILES} files converged {converged:.1f} s after SIGCONT")
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=60)
        assert proc.returncode == 0
    finally:
        if proc.poll() is None:
            os.kill(proc.pid, signal.SIGCONT)
            proc.kill()
    oracle = tmp_path / "oracle"
    reconcile(src, oracle, jobs=2)
    assert chunk_files(out) == chunk_files(oracle)
    assert_feed_matches(out)
