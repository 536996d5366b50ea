"""How the cluster executor groups files into Dask tasks, and what a failed batch costs.

Each Dask task costs the driver, the scheduler and a worker a few milliseconds whatever it
carries, so files travel in batches; a batch that fails must not take innocent files with it.
The failures are staged on an in-process `distributed.LocalCluster` (worker threads in this
process), where the task function can be replaced for the test.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from segment import Settings
from segment.daemon import read_status, reconcile
from tests.conftest import FIXTURES
from tests.daemon_helpers import chunk_files

distributed = pytest.importorskip("distributed", reason="the cluster executor needs the cluster extra")
cluster_module = pytest.importorskip("segment.daemon.cluster")

pytestmark = pytest.mark.slow


def test_batches_shrink_as_the_pass_nears_its_end() -> None:
    size = cluster_module.batch_size
    assert size(0, 2) == 1 and size(1, 2) == 1
    assert size(10_000, 2) == cluster_module.MAX_BATCH_FILES
    sizes = []
    left = 300
    while left:
        sizes.append(size(left, 2))
        left -= sizes[-1]
    assert sizes == sorted(sizes, reverse=True) and sizes[-1] == 1
    assert sum(sizes) == 300


def test_more_threads_get_smaller_batches() -> None:
    assert cluster_module.batch_size(400, 8) < cluster_module.batch_size(400, 2)


@pytest.fixture(scope="module")
def in_process_cluster() -> Iterator[str]:
    with distributed.LocalCluster(
        n_workers=1,
        threads_per_worker=2,
        processes=False,
        dashboard_address=None,
        worker_dashboard_address=None,
    ) as local:
        yield local.scheduler_address


COPIES = 5
"""Copies of the demo docs: 40 files, so the first batches on two threads hold several files."""


@pytest.fixture
def docs(tmp_path: Path) -> Path:
    src = tmp_path / "docs"
    for copy in range(COPIES):
        shutil.copytree(FIXTURES / "demo", src / f"copy{copy}")
    return src


Batch = list[tuple[bytes | str, str]]


def stage_failures(monkeypatch: pytest.MonkeyPatch, log: Path, fails: Callable[[Batch], bool]) -> None:
    """Workers' tasks raise for every batch `fails` picks; the size of each such batch is written
    to `log` (the task function travels as a copy: it reports through a file)."""
    real = cluster_module.parse_batch_on_worker

    def staged(items: Batch, settings: Settings) -> object:
        if fails(items):
            with open(log, "a") as fh:
                fh.write(f"{len(items)}\n")
            raise RuntimeError("staged failure")
        return real(items, settings)

    monkeypatch.setattr(cluster_module, "parse_batch_on_worker", staged)


def failed_batch_sizes(log: Path) -> list[int]:
    return [int(line) for line in log.read_text().split()] if log.exists() else []


def test_a_failed_batch_is_sent_again_one_file_a_task(
    in_process_cluster: str, docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    log = tmp_path / "failed-batches.txt"
    stage_failures(monkeypatch, log, lambda items: len(items) > 1)  # only single files get through
    local, remote = tmp_path / "local", tmp_path / "remote"
    reconcile(docs, local)
    reconcile(docs, remote, Settings(cluster=in_process_cluster))
    assert (
        max(failed_batch_sizes(log), default=0) > 1
    )  # batches were formed, failed, and their files went again alone
    assert chunk_files(remote) == chunk_files(local) != {}
    status = read_status(remote)
    assert status is not None and not status.failed


def test_only_the_file_whose_task_keeps_failing_is_reported(
    in_process_cluster: str, docs: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    log = tmp_path / "failed-batches.txt"
    # Every task holding the getting-started page fails.
    stage_failures(monkeypatch, log, lambda items: any(s.endswith("getting-started.md") for _, s in items))
    remote = tmp_path / "remote"
    reconcile(docs, remote, Settings(cluster=in_process_cluster))
    batches_with_it = failed_batch_sizes(log)
    assert (
        max(batches_with_it, default=0) > 1 and min(batches_with_it, default=0) == 1
    )  # in batches first, then alone
    status = read_status(remote)
    assert status is not None
    expected = sorted((f"copy{copy}/guides/getting-started.md", "crashed") for copy in range(COPIES))
    assert sorted((source, kind) for source, kind, _ in status.failed) == expected
    assert all("staged failure" in reason for _, _, reason in status.failed)
    local = tmp_path / "local"
    reconcile(docs, local)
    others = {
        name: data
        for name, data in chunk_files(local).items()
        if not name.endswith("getting-started.md.jsonl")
    }
    assert chunk_files(remote) == others  # every other file written, as a local build writes it
    assert len(others) > 3
