"""Crash safety (reliability scenario "killed mid-update"): a build killed anywhere converges on the next run.

A build subprocess exits at named crash points (DOCSEGMENT_CRASH_AT=<label>) or is SIGKILLed at
random moments; the next build must leave OUT byte-identical to a fresh full build of the same
tree, with no temp files, a store that passes PRAGMA quick_check, and a feed whose replay gives
exactly the current chunk ids.
"""

from __future__ import annotations

import os
import random
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from segment.daemon import reconcile
from tests.daemon_helpers import (
    assert_feed_matches,
    chunk_files,
    page,
    quick_check,
    temp_files,
    tree_of,
    write,
)

CRASH_POINTS = [
    "after_tmp_write",
    "after_replace",
    "mid_batch",
    "before_feed",
    "mid_feed_write",
    "before_commit",
    "after_commit",
]


def build(src: Path, out: Path, **env: str) -> subprocess.Popen[bytes]:
    environ = {k: v for k, v in os.environ.items() if not k.startswith("DOCSEGMENT_")}
    # Groups of 3: every churn below spans several commits, so each crash point is reached twice.
    environ.update({"DOCSEGMENT_GROUP_FILES": "3", **env})
    return subprocess.Popen(
        [sys.executable, "-m", "segment", "build", str(src), "-o", str(out)],
        env=environ,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.PIPE,
    )


def finish(proc: subprocess.Popen[bytes]) -> tuple[int, str]:
    _, err = proc.communicate(timeout=120)
    return proc.returncode, err.decode()


def churn(src: Path, rng: random.Random, step: int, size: int = 3) -> None:
    """Edit, add and delete some pages."""
    pages = sorted(src.rglob("*.md"))
    for path in rng.sample(pages, min(size, len(pages))):
        write(path, page(f"Edited {step} {path.stem}", f"Revision {step} of {path.stem}."))
    for path in rng.sample(pages, min(size // 2 + 1, len(pages))):
        path.unlink(missing_ok=True)
    for i in range(size):
        write(src / f"area{i % 3}" / f"new{step}-{i}.md", page(f"Geofences {step}.{i}"))


def assert_converged(src: Path, out: Path, tmp_path: Path) -> None:
    oracle = tmp_path / f"oracle-{time.monotonic_ns()}"
    reconcile(src, oracle, full=True)
    assert chunk_files(out) == chunk_files(oracle)
    assert temp_files(out) == []
    assert quick_check(out) == "ok"
    assert_feed_matches(out)


@pytest.mark.parametrize("label", CRASH_POINTS)
def test_a_build_that_dies_at_a_named_point_converges_on_restart(label: str, tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(20, src)
    assert finish(build(src, out))[0] == 0
    churn(src, random.Random(label), 1)
    code, _ = finish(build(src, out, DOCSEGMENT_CRASH_AT=f"{label}:2"))
    assert code == 137, f"crash point {label} was not reached"
    code, err = finish(build(src, out))
    assert code == 0, err
    assert_converged(src, out, tmp_path)


def test_a_dozen_random_sigkills_during_builds_always_converge(tmp_path: Path) -> None:
    rng = random.Random(20261202)
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(60, src)
    killed = mid_work = 0
    for step in range(12):
        churn(src, rng, step, size=20)
        feed_file = out / "changes.jsonl"
        before = feed_file.stat().st_size if feed_file.exists() else 0
        proc = build(src, out)
        extra = rng.uniform(0.0, 0.4)  # a random moment of the build (the point of the test)
        if step % 2:  # odd steps: first wait until the build has committed part of its work
            deadline = time.monotonic() + 30
            while (
                proc.poll() is None
                and time.monotonic() < deadline
                and not (feed_file.exists() and feed_file.stat().st_size > before)
            ):
                time.sleep(0.002)
            extra /= 20
        time.sleep(extra)
        if proc.poll() is None:
            proc.send_signal(signal.SIGKILL)
            killed += 1
            mid_work += feed_file.exists() and feed_file.stat().st_size > before
        proc.wait(60)
        if step % 4 == 3:
            code, err = finish(build(src, out))
            assert code == 0, err
            assert_converged(src, out, tmp_path)
    assert killed >= 6 and mid_work >= 3, (killed, mid_work)


def test_a_dozen_crashes_at_random_points_of_the_write_path_converge(tmp_path: Path) -> None:
    rng = random.Random(7)
    src, out = tmp_path / "docs", tmp_path / "out"
    tree_of(30, src)
    for step in range(12):
        churn(src, rng, step, size=8)
        where = f"{rng.choice(CRASH_POINTS)}:{rng.randint(1, 6)}"
        code, _ = finish(build(src, out, DOCSEGMENT_CRASH_AT=where))
        assert code in (0, 137), where
    code, err = finish(build(src, out))
    assert code == 0, err
    assert_converged(src, out, tmp_path)
