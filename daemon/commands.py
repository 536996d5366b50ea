"""Bodies of `segment build`, `segment watch` and `segment status` (the CLI only parses flags).

Human text goes to stderr, except `run_status`, whose report is the command's output (stdout).
Each returns the process exit code.
"""

from __future__ import annotations

import json
import logging
import signal
import sqlite3
import sys
import threading
from pathlib import Path
from types import FrameType
from typing import Any

import click

from segment.daemon.lock import OutputBusy
from segment.daemon.store import read_status
from segment.daemon.sync import SourceMissing, Syncer
from segment.daemon.watch import WatchLoop
from segment.daemon.workers import WorkerStartError
from segment.settings import Settings

log = logging.getLogger("segment.daemon")


def _ensure_logging() -> None:
    """Batch lines reach stderr even when no one configured logging (Python API use)."""
    root = logging.getLogger()
    if not root.handlers and not log.handlers:
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("%(message)s"))
        log.addHandler(handler)
    if log.level == logging.NOTSET or log.level > logging.INFO:
        log.setLevel(logging.INFO)


def run_build(
    src: Path, out: Path, settings: Settings, *, jobs: int = 1, full: bool = False, progress: bool = False
) -> int:
    """One reconcile pass. Exit code 0 when every file is segmented, 1 when some failed."""
    _ensure_logging()
    bar: Any = None

    def on_progress(done: int, total: int) -> None:
        nonlocal bar
        if bar is None:
            bar = click.progressbar(length=total, label="segmenting", file=sys.stderr)
            bar.__enter__()
        bar.update(1)

    show = progress and sys.stderr.isatty()
    try:
        with Syncer(src, out, settings, jobs=jobs) as syncer:
            try:
                report = syncer.reconcile(full=full, progress=on_progress if show else None)
            finally:
                if bar is not None:
                    bar.__exit__(None, None, None)
            log.info("%s", report.line("build"))
            failed = read_status(syncer.out)
    except (OutputBusy, SourceMissing, WorkerStartError) as exc:
        click.echo(f"Error: {exc}", err=True)
        return 1
    except (OSError, sqlite3.Error) as exc:  # disk full, I/O error: nothing past it was committed
        click.echo(
            f"Error: cannot write the output: {exc}; nothing after the last commit was "
            "recorded, so running the build again redoes it",
            err=True,
        )
        return 1
    if failed is not None and failed.failed:
        for source, status, reason in failed.failed:
            click.echo(f"failed: {source}: {status}: {reason}", err=True)
        return 1
    return 0


def run_watch(src: Path, out: Path, settings: Settings, *, jobs: int = 1, quiet_ms: int = 200) -> int:
    """Reconcile, then follow edits until SIGINT/SIGTERM (0), or a second Ctrl-C (130)."""
    _ensure_logging()
    stop = threading.Event()
    signals = 0

    def on_signal(signum: int, frame: FrameType | None) -> None:
        nonlocal signals
        signals += 1
        if signals == 1:
            stop.set()
            log.info("stopping after the current batch (press Ctrl-C again to abort)")
            return
        raise KeyboardInterrupt

    previous = {sig: signal.signal(sig, on_signal) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        with Syncer(src, out, settings, jobs=jobs, patient=True) as syncer:
            syncer.stop_requested = stop.is_set  # a long initial reconcile stops between files
            loop = WatchLoop(syncer, quiet_s=quiet_ms / 1000)
            try:
                loop.start()
                log.info("watching %s -> %s (quiet period %d ms; Ctrl-C stops)", src, out, quiet_ms)
                loop.run(stop.is_set)
            finally:
                loop.close()
    except KeyboardInterrupt:
        log.info("aborted")
        return 130
    except (OutputBusy, SourceMissing, WorkerStartError) as exc:
        click.echo(f"Error: {exc}", err=True)
        return 1
    except (OSError, sqlite3.Error) as exc:
        click.echo(f"Error: cannot write the output: {exc}", err=True)
        return 1
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
    log.info("stopped")
    return 0


def run_status(out: Path, *, as_json: bool = False) -> int:
    """Print files, chunks, failed files, last seq and degraded state of OUT; 1 if it has none."""
    report = read_status(out)
    if report is None:
        click.echo(f"Error: {out}: no docsegment state here (run `segment build SRC -o {out}`)", err=True)
        return 1
    if as_json:
        data = {
            "files": report.files,
            "chunks": report.chunks,
            "failed": [{"source": s, "status": st, "reason": r} for s, st, r in report.failed],
            "warnings": [{"source": s, "warnings": w} for s, w in report.noted],
            "last_seq": report.last_seq,
            "degraded": report.degraded or None,
            "counters": report.counters,
        }
        click.echo(json.dumps(data, ensure_ascii=False))
        return 0
    click.echo(f"files:     {report.files}")
    click.echo(f"chunks:    {report.chunks}")
    click.echo(f"last seq:  {report.last_seq}")
    click.echo(f"degraded:  {report.degraded or 'no'}")
    for key, value in sorted(report.counters.items()):
        click.echo(f"{key}: {value}")
    click.echo(f"failed:    {len(report.failed)}")
    for source, status, reason in report.failed:
        click.echo(f"  {source}: {status}: {reason}")
    click.echo(f"warnings:  {len(report.noted)}")
    for source, warnings in report.noted:
        click.echo(f"  {source}: {warnings}")
    return 0
