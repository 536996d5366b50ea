"""Parser isolation (reliability scenario "parser crash", "parser hang", "memory growth", "parsing off the daemon's threads"): misbehaving parses cost one file, never the run.

Test hooks (DOCSEGMENT_TEST_HOOKS=1, read by the worker pool): *.crash.md calls os.abort(),
*.segv.md reads address 0, *.hang.md spins forever, *.oom.md allocates without end.
"""

from __future__ import annotations

import os
import time
from pathlib import Path

import pytest

from segment.daemon import read_status, reconcile
from segment.daemon.tasks import HOOKS_ENV, Task, run_task
from segment.daemon.workers import WorkerPool
from segment.settings import Settings
from tests.daemon_helpers import assert_feed_matches, chunk_files, feed, page, write


@pytest.fixture(autouse=True)
def hooks(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv(HOOKS_ENV, "1")


def test_crashing_hanging_and_greedy_parses_get_a_status_and_good_files_are_unaffected(
    tmp_path: Path,
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    good = [f"good{i}.md" for i in range(5)]
    for name in good:
        write(src / name, page(f"Battery care {name}"))
    for name in ("bad.crash.md", "bad.segv.md", "bad.hang.md", "bad.oom.md"):
        write(src / name, page("Never parsed"))
    settings = Settings(timeout_s=2.0, memory_mb=1024)
    started = time.monotonic()
    report = reconcile(src, out, settings, jobs=2)
    elapsed = time.monotonic() - started
    statuses = {source: (status, reason) for source, status, reason in report.failed}
    assert statuses["bad.crash.md"] == ("crashed", "worker crashed with SIGABRT")
    assert statuses["bad.segv.md"] == ("crashed", "worker crashed with SIGSEGV")
    assert statuses["bad.hang.md"][0] == "timeout"
    assert statuses["bad.oom.md"] == ("resource_limit", "out of memory")
    assert sorted(chunk_files(out)) == sorted(f"{n}.jsonl" for n in good)
    assert {e["source"] for e in feed(out) if e["op"] == "error"} == set(statuses)
    assert_feed_matches(out)
    assert elapsed < 2.0 + 8.0  # the hang costs its budget, not more (generous for slow CI)
    status = read_status(out)
    assert status is not None and {f[0] for f in status.failed} == set(statuses)


def test_a_file_that_keeps_failing_unchanged_is_quarantined(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "bad.crash.md", page("Never parsed"))
    write(src / "good.md", page("Geofences"))
    tries = [reconcile(src, out).failed for _ in range(4)]
    assert [len(t) for t in tries] == [1, 1, 1, 0]  # retried until 3 failures, then left alone
    assert "quarantined" in tries[2][0][2]
    write(src / "bad.crash.md", page("Changed"))  # a change lifts the quarantine
    assert len(reconcile(src, out).failed) == 1


def test_a_worker_outlives_many_files_and_is_replaced_after_a_crash(tmp_path: Path) -> None:
    for i in range(4):
        write(tmp_path / f"p{i}.md", page(f"Spare parts {i}"))
    write(tmp_path / "x.crash.md", page("Crash"))
    tasks = [Task(p.name, str(p), p.name) for p in sorted(tmp_path.glob("*.md"))]
    with WorkerPool(Settings(), jobs=1) as pool:
        outcomes = {o.path: o for o in pool.outcomes(tasks)}
        assert pool.replaced == 1
        again = list(pool.outcomes(tasks[:1]))
    pids = {o.pid for o in outcomes.values() if o.status == "ok"}
    assert outcomes["x.crash.md"].status == "crashed"
    assert len(pids) <= 2 and os.getpid() not in pids
    assert again[0].status == "ok"


def test_a_file_changed_during_its_parse_is_reported_as_changed(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # reliability scenario "file still being written": re-stat after the parse; a result for bytes that moved is discarded.
    path = write(tmp_path / "live.md", page("Flight logs"))
    import segment

    real = segment.parse_bytes

    def edit_meanwhile(*args: object, **kwargs: object) -> object:
        result = real(*args, **kwargs)  # type: ignore[arg-type]
        write(path, page("Flight logs", "A longer body arrived while we parsed."))
        return result

    monkeypatch.setattr(segment, "parse_bytes", edit_meanwhile)
    outcome = run_task(Task("live.md", str(path), "live.md"), Settings())
    assert outcome.status == "changed" and outcome.data == b""
