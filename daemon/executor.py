"""Where the per-file work runs: an executor takes tasks and gives back one outcome per task.

The pass (`segment.daemon.reconcile`) only talks to this interface, so another executor (a
cluster's, say) plugs in without touching it. An executor must:
- run `segment.daemon.tasks.run_task` (or its equal) for each task, under `Settings.timeout_s`
  and `Settings.memory_mb`, and report a task whose run died or overran with a failure status;
- yield outcomes as they finish, in any order, each task at most once;
- once `stop()` is true, start no new task (tasks not started are simply not reported);
- when the caller closes the generator early, leave no task of that call running into the next.
"""

from __future__ import annotations

from collections.abc import Callable, Generator, Iterable
from typing import Protocol

from segment.daemon.tasks import Outcome, Task
from segment.settings import Settings


class Executor(Protocol):
    """Runs per-file tasks and yields their outcomes (see the module docstring)."""

    def outcomes(
        self, tasks: Iterable[Task], stop: Callable[[], bool] | None = None
    ) -> Generator[Outcome, None, None]:
        """Run `tasks`; yield one outcome per task as each finishes."""
        ...

    def close(self) -> None:
        """Release the executor's processes or connections."""
        ...


def local_executor(settings: Settings, jobs: int) -> Executor:
    """The default executor: `jobs` supervised worker processes on this machine, or the Dask
    cluster named by the `cluster` setting (segment.daemon.cluster)."""
    if settings.cluster:
        from segment.daemon.cluster import ClusterPool

        return ClusterPool(settings, settings.cluster, workers_read_files=settings.cluster_reads_files)
    from segment.daemon.workers import WorkerPool

    return WorkerPool(settings, jobs)


ExecutorFactory = Callable[[Settings, int], Executor]
"""Makes an executor for the given settings and job count (called again when settings change)."""
