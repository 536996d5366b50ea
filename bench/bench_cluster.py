"""Cluster benchmark: local worker processes against a Dask LocalCluster, and the driver's own cost.

Run by hand:  .venv/bin/python bench/bench_cluster.py [--copies 2] [--repeat 3] [FOLDER]

Input: the shared Markdown corpus (../shared/corpus/markdown) copied N times, unless a folder is
given (`../shared/corpus` for the whole shared corpus, every format: docs/benchmarks.md records
both). Every row builds the same tree into a fresh output folder (wall-clock seconds, best of
`--repeat`):

- local `--jobs 1` and `--jobs 2` (supervised worker processes on this machine);
- `--cluster` on a LocalCluster with 1 and then 2 worker processes (one thread each), started
  here on 127.0.0.1 (so the driver and the workers share the machine's cores);
- the driver alone: the same build with a stand-in executor that hands back outcomes recorded
  from an earlier build at once. What is left is the driver's cost per file (scan, hashing, chunk
  files written and fsynced, the feed, the store), which bounds any cluster's speed-up.
"""

from __future__ import annotations

import argparse
import shutil
import tempfile
import time
from collections.abc import Callable, Generator, Iterable
from pathlib import Path

from segment.daemon import reconcile
from segment.daemon.executor import Executor, local_executor
from segment.daemon.reconcile import Reconciler
from segment.daemon.tasks import Outcome, Task
from segment.settings import Settings

CORPUS = Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "markdown"


class Replay:
    """An executor that answers each task with an outcome recorded from an earlier build."""

    def __init__(self, recorded: dict[str, Outcome]) -> None:
        self.recorded = recorded
        self.replaced = 0

    def outcomes(
        self, tasks: Iterable[Task], stop: Callable[[], bool] | None = None
    ) -> Generator[Outcome, None, None]:
        for task in tasks:
            yield self.recorded[task.path]

    def close(self) -> None:
        pass


class Recorder:
    """Wraps a real executor and keeps every outcome it yields."""

    def __init__(self, inner: Executor) -> None:
        self.inner = inner
        self.seen: dict[str, Outcome] = {}
        self.replaced = 0

    def outcomes(
        self, tasks: Iterable[Task], stop: Callable[[], bool] | None = None
    ) -> Generator[Outcome, None, None]:
        for outcome in self.inner.outcomes(tasks, stop):
            self.seen[outcome.path] = outcome
            yield outcome

    def close(self) -> None:
        self.inner.close()


def timed(src: Path, out: Path, settings: Settings, jobs: int = 1, repeat: int = 1) -> float:
    """Best wall-clock seconds of `repeat` first builds of `src` into a fresh `out`."""
    best = float("inf")
    for _ in range(repeat):
        shutil.rmtree(out, ignore_errors=True)
        started = time.perf_counter()
        reconcile(src, out, settings, jobs=jobs)
        best = min(best, time.perf_counter() - started)
    return best


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("folder", nargs="?", type=Path)
    ap.add_argument("--copies", type=int, default=2)
    ap.add_argument("--repeat", type=int, default=3, help="best of N builds per row (default 3)")
    args = ap.parse_args()
    from distributed import LocalCluster

    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        src = work / "src"
        if args.folder:
            shutil.copytree(args.folder, src)
        else:
            for i in range(args.copies):
                shutil.copytree(CORPUS, src / f"copy{i}")
        files = sum(1 for p in src.rglob("*") if p.is_file())
        out = work / "out"
        rows: list[tuple[str, float]] = []
        rows.append(("local --jobs 1", timed(src, out, Settings(), 1, args.repeat)))
        rows.append(("local --jobs 2", timed(src, out, Settings(), 2, args.repeat)))
        for workers in (1, 2):
            with LocalCluster(
                n_workers=workers,
                threads_per_worker=1,
                processes=True,
                host="127.0.0.1",
                dashboard_address=None,
            ) as cluster:
                settings = Settings(cluster=cluster.scheduler_address)
                timed(src, work / "warm", settings)  # workers load the parsers once
                rows.append(
                    (
                        f"cluster, {workers} worker{'s' * (workers > 1)}",
                        timed(src, out, settings, repeat=args.repeat),
                    )
                )

        # The driver alone: record real outcomes, then replay them into a fresh output folder.
        recorders: list[Recorder] = []

        def recording(settings: Settings, jobs: int) -> Executor:
            recorders.append(Recorder(local_executor(settings, jobs)))
            return recorders[-1]

        with Reconciler(src, work / "record", Settings(), jobs=2, executor=recording) as reconciler:
            reconciler.reconcile()
        recorded = recorders[-1].seen
        driver = driver_cpu = float("inf")
        for _ in range(args.repeat):
            shutil.rmtree(out, ignore_errors=True)
            started, cpu = time.perf_counter(), time.process_time()
            with Reconciler(src, out, Settings(), executor=lambda s, j: Replay(recorded)) as reconciler:
                reconciler.reconcile()
            driver = min(driver, time.perf_counter() - started)
            driver_cpu = min(driver_cpu, time.process_time() - cpu)

    print(
        f"{files} files ({args.copies} copies of the shared Markdown corpus)"
        if not args.folder
        else f"{files} files"
    )
    print(f"{'build':28} {'seconds':>8} {'files/s':>8} {'x jobs 1':>9}")
    base = rows[0][1]
    for name, seconds in rows:
        print(f"{name:28} {seconds:8.2f} {files / seconds:8.1f} {base / seconds:9.2f}")
    one, two = rows[2][1], rows[3][1]
    print(f"cluster speed-up, 1 -> 2 workers: {one / two:.2f}x")
    print(
        f"driver alone (replayed outcomes): {driver:.2f} s, {driver / files * 1000:.2f} ms a file;"
        f" CPU {driver_cpu / files * 1000:.2f} ms a file (all its threads)"
    )


if __name__ == "__main__":
    main()
