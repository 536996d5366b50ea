"""Resource soak: the daemon's memory does not keep growing.

A `segment watch` process follows rounds of 3,000 writes (300 pages rewritten 10 times each,
about 9,000 file events a round). Its resident set size is read from /proc after each round has
converged. A dead dispatcher whose queue keeps filling ("watcher thread died") or a leak per batch would show as
growth from round to round; the pass bar is no more than 10 % growth between rounds, after a
first warm-up round (imports, caches).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROUNDS = 4
PAGES = 300
REWRITES = 10


def rss_kib(pid: int) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1])
    raise AssertionError("no VmRSS line")


def page_path(root: Path, i: int) -> Path:
    return root / f"area{i % 10}" / f"page{i}.md"


def converged(out: Path, round_no: int) -> bool:
    marker = f"Round {round_no} rewrite {REWRITES - 1} "
    for i in range(PAGES):
        target = out / "chunks" / f"area{i % 10}" / f"page{i}.md.jsonl"
        try:
            if marker not in target.read_text(encoding="utf-8"):
                return False
        except OSError:
            return False
    return True


@pytest.mark.slow
@pytest.mark.timeout(240)
def test_daemon_memory_does_not_grow_from_round_to_round(tmp_path: Path) -> None:
    if not Path("/proc/self/status").exists():
        pytest.skip("needs /proc")
    src, out = tmp_path / "docs", tmp_path / "out"
    for i in range(10):
        (src / f"area{i}").mkdir(parents=True)
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
    sizes: list[int] = []
    try:
        assert proc.stderr is not None
        for line in proc.stderr:
            if "watching" in line:
                break
        for round_no in range(ROUNDS):
            for k in range(REWRITES):
                for i in range(PAGES):
                    page_path(src, i).write_text(
                        f"# Page {i}\n\nRound {round_no} rewrite {k} of page {i}: the crew logs the swap.\n",
                        encoding="utf-8",
                    )
            deadline = time.monotonic() + 60
            while not converged(out, round_no):
                assert time.monotonic() < deadline, f"round {round_no} did not converge"
                assert proc.poll() is None, "the daemon died"
                time.sleep(0.05)  # polling a condition with a deadline, not waiting a fixed time
            sizes.append(rss_kib(proc.pid))
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=60)
        assert proc.returncode == 0
    finally:
        if proc.poll() is None:
            proc.kill()
    print("daemon RSS after each round (KiB):", sizes)
    for before, after in zip(sizes[1:], sizes[2:]):
        assert after <= before * 1.10, f"RSS grew more than 10 % in one round: {sizes}"
