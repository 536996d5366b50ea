"""`segment build --cluster`: the per-file work runs on a Dask cluster, the output does not change.

A `distributed.LocalCluster` with two worker processes stands in for a real cluster (the same
scheduler protocol over TCP on 127.0.0.1).
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from segment import Settings
from segment.daemon import read_status, reconcile
from tests.conftest import CORPUS, FIXTURES
from tests.daemon_helpers import chunk_files
from tests.hostile import CASES, write_cases

distributed = pytest.importorskip("distributed", reason="the cluster executor needs the cluster extra")

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def cluster() -> Iterator[str]:
    with distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        processes=True,
        host="127.0.0.1",
        dashboard_address=None,
        worker_dashboard_address=None,
    ) as local:
        yield local.scheduler_address


def feed_entries(out: Path) -> list[tuple[str, ...]]:
    """The feed without sequence numbers, in a fixed order (completion order may differ)."""
    entries = [json.loads(line) for line in (out / "changes.jsonl").read_text().splitlines()]
    return sorted(tuple(str(e.get(k)) for k in ("op", "source", "id", "error")) for e in entries)


def test_a_cluster_build_of_the_fixtures_equals_a_local_build_byte_for_byte(
    cluster: str, tmp_path: Path
) -> None:
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(FIXTURES / "demo", local)
    reconcile(FIXTURES / "demo", remote, Settings(cluster=cluster))
    assert chunk_files(remote) == chunk_files(local) != {}
    assert feed_entries(remote) == feed_entries(local)


def test_workers_that_read_the_files_themselves_give_the_same_output(cluster: str, tmp_path: Path) -> None:
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(FIXTURES / "demo", local)
    reconcile(FIXTURES / "demo", remote, Settings(cluster=cluster, cluster_reads_files=True))
    assert chunk_files(remote) == chunk_files(local)


def test_the_shared_markdown_corpus_builds_identically_on_the_cluster(cluster: str, tmp_path: Path) -> None:
    corpus = CORPUS / "markdown"
    if not corpus.is_dir():
        pytest.skip("shared corpus not present")
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(corpus, local, jobs=2)
    reconcile(corpus, remote, Settings(cluster=cluster))
    assert chunk_files(remote) == chunk_files(local)
    assert feed_entries(remote) == feed_entries(local)


def test_a_worker_killed_mid_run_loses_and_doubles_nothing(cluster: str, tmp_path: Path) -> None:
    src = tmp_path / "docs"
    for copy in range(6):  # enough files that the kill lands while tasks are in flight
        shutil.copytree(FIXTURES / "demo", src / f"copy{copy}")
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(src, local)
    client = distributed.Client(cluster, set_as_default=False)
    try:
        pids = sorted(client.run(os.getpid).values())
        done = threading.Event()
        errors: list[BaseException] = []

        def build() -> None:
            try:
                reconcile(src, remote, Settings(cluster=cluster))
            except BaseException as exc:  # reported below
                errors.append(exc)
            finally:
                done.set()

        runner = threading.Thread(target=build)
        runner.start()
        deadline = time.monotonic() + 120
        while not (remote / "chunks").is_dir() or len(list((remote / "chunks").rglob("*.jsonl"))) < 3:
            assert time.monotonic() < deadline and not done.is_set(), "the build ended before the kill"
            time.sleep(0.05)
        os.kill(pids[0], signal.SIGKILL)  # a worker process dies mid-run; its nanny starts another
        runner.join(300)
        assert not errors, errors
    finally:
        client.close()
    assert chunk_files(remote) == chunk_files(local)
    assert feed_entries(remote) == feed_entries(local)
    status = read_status(remote)
    assert status is not None and not status.failed


def test_a_hostile_file_gets_its_status_while_the_others_are_written(cluster: str, tmp_path: Path) -> None:
    src = tmp_path / "docs"
    shutil.copytree(FIXTURES / "demo", src)
    cases = write_cases(src / "hostile", tuple(c for c in CASES if c.expect == "failed")[:4])
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(src, local)
    reconcile(src, remote, Settings(cluster=cluster))
    assert chunk_files(remote) == chunk_files(local)
    status = read_status(remote)
    assert status is not None
    failed = {source: status for source, status, _ in status.failed}
    assert len(failed) == len(cases)
    for name, case in cases.items():
        source = "hostile/" + os.fsdecode(name)
        assert failed.get(source) in case.statuses, (source, failed)


def test_a_file_over_the_time_limit_is_stopped_on_the_worker_and_reported(
    cluster: str, tmp_path: Path
) -> None:
    from segment.daemon.isolated import IsolatedParser

    parser = IsolatedParser(Settings(timeout_s=0.000001))
    try:
        result = parser.parse(b"# Title\n\n" + b"word " * 200_000, "big.md")
        assert result.status == "timeout" and "timeout_s" in (result.reason or "")
        again = IsolatedParser(Settings()).parse(b"# Fine\n\nText.\n", "fine.md")
        assert again.status == "ok" and again.ids
    finally:
        parser.close()


def test_a_file_that_overruns_in_a_batch_costs_only_itself() -> None:
    from segment.daemon.isolated import IsolatedParser

    parser = IsolatedParser(Settings(timeout_s=1.0))
    try:
        results = parser.parse_many(
            [
                (b"# Before\n\nText.\n", "before.md"),
                (b"# Title\n\n" + b"word " * 2_000_000, "huge.md"),  # far more than a second
                (b"# After\n\nText.\n", "after.md"),
            ]
        )
        assert [r.status for r in results] == ["ok", "timeout", "ok"]
        assert parser.replaced == 1 and results[0].pid != results[2].pid  # a new child took the rest
    finally:
        parser.close()


def test_results_the_child_sends_together_are_all_read_at_once(monkeypatch: pytest.MonkeyPatch) -> None:
    # Results that wait together in the pipe (the worker was busy elsewhere) must all be read:
    # none may sit in a read-ahead buffer that the time limit's select() cannot see, or that
    # file is reported as a timeout.
    import select as select_module

    from segment.daemon import isolated

    real_select = select_module.select
    calls = {"n": 0}

    def late_select(*args: Any) -> Any:
        calls["n"] += 1
        if calls["n"] == 1:
            time.sleep(2)  # the child answers every file before the first result is read
        return real_select(*args)

    monkeypatch.setattr(isolated.select, "select", late_select)
    parser = isolated.IsolatedParser(Settings(timeout_s=5.0))
    try:
        results = parser.parse_many([(f"# Page {n}\n\nText {n}.\n".encode(), f"p{n}.md") for n in range(5)])
        assert [r.status for r in results] == ["ok"] * 5
    finally:
        parser.close()
