"""The bodies of `segment build`, `watch` and `status`: the daemon does the work, this layer talks
(progress bar and failures on stderr, signals, exit codes)."""

from __future__ import annotations

import json
import logging
import signal
import sys
import threading
from collections.abc import Callable
from pathlib import Path
from types import FrameType
from typing import Any

import click

from segment.settings import Settings

daemon_log = logging.getLogger("segment.daemon")


def _ensure_logging() -> None:
    """Pass lines reach stderr even when no one configured logging (called without `cli`)."""
    root = logging.getLogger()
    if not root.handlers and not daemon_log.handlers:
        handler = logging.StreamHandler(sys.stderr)
        handler.setFormatter(logging.Formatter("%(message)s"))
        daemon_log.addHandler(handler)
    if daemon_log.level == logging.NOTSET or daemon_log.level > logging.INFO:
        daemon_log.setLevel(logging.INFO)


def run_build(
    src: Path, out: Path, settings: Settings, *, jobs: int = 1, full: bool = False, progress: bool = False
) -> int:
    """`segment build`: one pass; 0 when every file is segmented, 1 when some failed or it stopped."""
    from segment.daemon import DaemonError, read_status, reconcile

    _ensure_logging()
    bar: Any = None

    def on_progress(done: int, total: int) -> None:
        nonlocal bar
        if bar is None:
            bar = click.progressbar(length=total, label="segmenting", file=sys.stderr)
            bar.__enter__()
        bar.update(1)

    try:
        try:
            report = reconcile(
                src, out, settings, jobs=jobs, full=full, progress=on_progress if progress else None
            )
        finally:
            if bar is not None:
                bar.__exit__(None, None, None)
    except DaemonError as exc:
        click.echo(f"Error: {exc}", err=True)
        return 1
    daemon_log.info("%s", report.line("build"))
    if settings.include and report.scanned == 0:
        patterns = ", ".join(settings.include)
        click.echo(f"warning: {src}: no file matches the include patterns ({patterns})", err=True)
    state = read_status(out)
    if state is not None and state.failed:
        for source, status, reason in state.failed:
            click.echo(f"failed: {source}: {status}: {reason}", err=True)
        return 1
    return 0


def run_watch(
    src: Path,
    out: Path,
    settings: Settings,
    *,
    jobs: int = 1,
    quiet_ms: int = 200,
    reload: Callable[[], Settings] | None = None,
) -> int:
    """`segment watch`: follow edits until SIGINT/SIGTERM (0), or a second Ctrl-C (130)."""
    from segment.daemon import DaemonError, watch

    _ensure_logging()
    stop = threading.Event()
    signals = 0

    def on_signal(signum: int, frame: FrameType | None) -> None:
        nonlocal signals
        signals += 1
        if signals == 1:
            stop.set()
            daemon_log.info("stopping after the current batch (press Ctrl-C again to abort)")
            return
        raise KeyboardInterrupt

    previous = {sig: signal.signal(sig, on_signal) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        watch(src, out, settings, jobs=jobs, quiet_ms=quiet_ms, stop=stop.is_set, reload=reload)
    except KeyboardInterrupt:
        daemon_log.info("aborted")
        return 130
    except DaemonError as exc:
        click.echo(f"Error: {exc}", err=True)
        return 1
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
    daemon_log.info("stopped")
    return 0


def run_status(out: Path, *, as_json: bool = False, verbose: bool = False) -> int:
    """`segment status`: the state of OUT on stdout; 1 when OUT holds none."""
    from segment.daemon import read_status

    report = read_status(out)
    if report is None:
        click.echo(f"Error: {out}: no docsegment state here (run `segment build SRC -o {out}`)", err=True)
        return 1
    if as_json:
        click.echo(json.dumps(report.to_dict(), ensure_ascii=False))
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
    click.echo(f"pending:   {len(report.pending)}")
    for source, reason, since in report.pending:
        click.echo(f"  {source}: {reason} (held {since:.0f} s)")
    counts = ", ".join(f"{suffix} {len(paths)}" for suffix, paths in sorted(report.not_read.items()))
    total = sum(len(paths) for paths in report.not_read.values())
    click.echo(f"not read:  {total}" + (f" ({counts})" if counts else ""))
    if verbose:
        for path in sorted(p for paths in report.not_read.values() for p in paths):
            click.echo(f"  {path}")
    return 0
