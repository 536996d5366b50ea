"""The `segment` command: thin wrappers over the library and the daemon.

stdout carries only data (JSON Lines, tree text, status); logs and progress go to stderr.
Exit codes: 0 all done, 1 some files failed (the rest still written), 2 usage or settings errors,
130 interrupted twice.
"""

from __future__ import annotations

import json
import logging
import signal
import sys
import threading
from collections.abc import Callable
from dataclasses import fields
from pathlib import Path
from types import FrameType
from typing import Any, TypeVar

import click

from segment.api import chunk, parse
from segment.errors import SegmentError, SettingsError
from segment.settings import Settings, check_settings, find_config, load_settings
from segment.tree import Document, pretty

F = TypeVar("F", bound=Callable[..., Any])
log = logging.getLogger("segment")


def config_option() -> Callable[[F], F]:
    """`--config PATH`: a settings file instead of the `segment.toml` found for the sources."""
    return click.option(
        "--config",
        type=click.Path(dir_okay=False, path_type=Path),
        help="Settings file to use instead of the segment.toml found beside the sources.",
    )


def settings_options(fn: F) -> F:
    """The settings flags shared by every command that cuts chunks."""
    options = [
        click.option("--max-tokens", type=int, help="Token budget of one chunk [512]."),
        click.option("--min-tokens", type=int, help="Pack sibling sections smaller than this [64]."),
        click.option("--overlap-tokens", type=int, help="Trailing sentences repeated in the next chunk [0]."),
        click.option("--tokenizer", type=click.Path(dir_okay=False), help="tokenizer.json for exact counts."),
        click.option("--language", help="spaCy language code for sentence splitting [en]."),
        click.option(
            "--budget-unit",
            type=click.Choice(["tokens", "characters"]),
            help="What the budget counts: tokens, or characters (about four a token) [tokens].",
        ),
        click.option(
            "--include", multiple=True, help="Only files matching this gitignore-style pattern (repeatable)."
        ),
        click.option(
            "--exclude", multiple=True, help="Skip files matching this gitignore-style pattern (repeatable)."
        ),
        click.option("--max-file-bytes", type=int, help="Refuse larger files (resource_limit) [64 MiB]."),
        click.option("--max-pages", type=int, help="Refuse PDFs with more pages (resource_limit) [5000]."),
        click.option("--timeout-s", type=float, help="Wall-clock seconds for one file in a worker [120]."),
        click.option("--memory-mb", type=int, help="Address-space limit of a worker, MiB; 0: none [2048]."),
        click.option(
            "--heading-line",
            type=click.Choice(["off", "path", "title"]),
            help="First line of every chunk: its heading path (after the title) [off].",
        ),
        click.option(
            "--markdown-headings/--no-markdown-headings",
            default=None,
            help="Write heading lines in chunk text as `## Title` [off].",
        ),
        click.option(
            "--pdf-keep-contents/--no-pdf-keep-contents",
            default=None,
            help="Keep PDF contents and index pages as chunks [left out].",
        ),
        click.option(
            "--notebook-outputs/--no-notebook-outputs",
            default=None,
            help="Keep the text outputs of notebook code cells [off].",
        ),
        click.option("--base-url", help="Where the site is published; chunks then get a `url`."),
        click.option("--url-layout", help="html, folder, or a template with {path} {stem} {dir} [html]."),
        click.option(
            "--properties", multiple=True, help="Keep only these property keys (patterns; repeatable) [*]."
        ),
        config_option(),
    ]
    for option in reversed(options):
        fn = option(fn)
    return fn


def cluster_options(fn: F) -> F:
    """Where the per-file work runs: local worker processes, or a Dask cluster."""
    fn = click.option(
        "--cluster-reads-files",
        is_flag=True,
        default=None,
        help="With --cluster: workers read files from the same path (shared file system).",
    )(fn)
    return click.option(
        "--cluster",
        metavar="ADDRESS",
        help="Dask scheduler address (tcp://host:8786): parse files on its workers (cluster extra).",
    )(fn)


SETTING_NAMES = frozenset(f.name for f in fields(Settings))


def _load(src: Path | None, kwargs: dict[str, Any], *, near: Path | None = None) -> Settings:
    """Settings from the flags given, over the settings file: `--config`, else `segment.toml` in
    SRC, else (with `near`) the first `segment.toml` from that folder upward; checked whole."""
    overrides = {k: v for k, v in kwargs.items() if k in SETTING_NAMES}
    config: Path | None = kwargs.get("config")
    if config is None and src is None and near is not None:
        config = find_config(near)
    settings = load_settings(src, overrides, config=config)
    check_settings(settings)
    return settings


def _settings(src: Path | None, kwargs: dict[str, Any], *, near: Path | None = None) -> Settings:
    """`_load`, once, before any file is read: a bad value exits 2 naming the setting, and
    nothing is written and no file is marked failed."""
    try:
        return _load(src, kwargs, near=near)
    except SettingsError as exc:
        raise click.UsageError(str(exc)) from exc


def report(exc: SegmentError) -> None:
    """One line on stderr naming the file, the reason and the status."""
    click.echo(f"error: {exc.source}: {exc.reason} [{exc.status}]", err=True)


@click.group()
@click.version_option(package_name="docsegment")
@click.option("-v", "--verbose", count=True, help="More log lines on stderr (-vv for debug).")
def cli(verbose: int) -> None:
    """Structure-aware chunks from Markdown, HTML and PDF documentation."""
    level = logging.WARNING if verbose == 0 else logging.INFO if verbose == 1 else logging.DEBUG
    logging.basicConfig(stream=sys.stderr, level=level, format="%(levelname)s %(name)s: %(message)s")
    logging.getLogger("segment").setLevel(min(level, logging.INFO))
    logging.getLogger("segment.daemon").setLevel(min(level, logging.INFO))


@cli.command("chunks")
@click.argument("files", nargs=-1, required=True, type=click.Path(path_type=Path))
@settings_options
def chunks_command(files: tuple[Path, ...], **kwargs: Any) -> None:
    """Print the chunks of FILES as JSON Lines on stdout.

    Each file is cut with the settings `segment build` would use for it: the first segment.toml
    from its folder upward (or --config), then the flags. All settings are checked before the
    first file is read."""
    per_file: dict[Path, Settings] = {}
    for path in files:
        per_file[path] = _settings(None, kwargs, near=path.parent)
    failed = 0
    for path in files:
        if path.is_dir():
            failed += 1
            click.echo(f"error: {path}: is a folder; use `segment build {path} -o OUT` for a tree", err=True)
            continue
        settings = per_file[path]
        try:
            lines = [c.to_json() for c in chunk(parse(path, settings, source=path.as_posix()), settings)]
        except SegmentError as exc:
            failed += 1
            report(exc)
            continue
        for line in lines:
            click.echo(line)
    if failed:
        raise SystemExit(1)


@cli.command("tree")
@click.argument("file", type=click.Path(path_type=Path))
@config_option()
def tree_command(file: Path, config: Path | None) -> None:
    """Print the common tree of FILE (headings, blocks, source spans) and its properties."""
    settings = _settings(None, {"config": config}, near=file.parent)
    if file.is_dir():
        click.echo(f"error: {file}: is a folder; `segment tree` shows one file", err=True)
        raise SystemExit(1)
    try:
        click.echo(with_properties(parse(file, settings, source=file.as_posix())), nl=False)
    except SegmentError as exc:
        report(exc)
        raise SystemExit(1) from exc


def with_properties(document: Document) -> str:
    """The tree's pretty form with the document's declared properties after its first line."""
    first, _, rest = pretty(document).partition("\n")
    lines = [f"  property {key}={value!r}" for key, value in document.properties.items()]
    return "\n".join([first, *lines, rest]) if lines else f"{first}\n{rest}"


@cli.command("build")
@click.argument("src", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "-o",
    "--out",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Output folder (chunks/, changes.jsonl, state.sqlite3).",
)
@click.option(
    "--jobs", "-j", type=click.IntRange(min=1), default=1, show_default=True, help="Worker processes."
)
@click.option("--full", is_flag=True, help="Re-segment every file, not only what changed.")
@cluster_options
@settings_options
def build_command(src: Path, out: Path, jobs: int, full: bool, **kwargs: Any) -> None:
    """Segment every supported file under SRC into OUT (incremental)."""
    settings = _settings(src, kwargs)
    progress = sys.stderr.isatty()
    raise SystemExit(run_build(src, out, settings, jobs=jobs, full=full, progress=progress))


@cli.command("watch")
@click.argument("src", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "-o",
    "--out",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Output folder (chunks/, changes.jsonl, state.sqlite3).",
)
@click.option(
    "--jobs", "-j", type=click.IntRange(min=1), default=1, show_default=True, help="Worker processes."
)
@click.option(
    "--quiet-ms",
    type=click.IntRange(min=0),
    default=200,
    show_default=True,
    help="Quiet period before a batch of edits is processed.",
)
@cluster_options
@settings_options
def watch_command(src: Path, out: Path, jobs: int, quiet_ms: int, **kwargs: Any) -> None:
    """Build, then keep OUT in sync with SRC until stopped (Ctrl-C)."""
    settings = _settings(src, kwargs)
    raise SystemExit(
        run_watch(src, out, settings, jobs=jobs, quiet_ms=quiet_ms, reload=lambda: _load(src, kwargs))
    )


@cli.command("status")
@click.argument("out", type=click.Path(file_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Machine-readable output.")
@click.option("-v", "--verbose", is_flag=True, help="List the files no adapter reads.")
def status_command(out: Path, as_json: bool, verbose: bool) -> None:
    """Files, chunks, failed, pending and unread files, and the last feed sequence number of OUT."""
    raise SystemExit(run_status(out, as_json=as_json, verbose=verbose))


# -- the bodies of build, watch and status: the library does the work, this layer talks --------

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


@cli.command("report")
@click.argument("out", type=click.Path(file_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Machine-readable summary (summary.schema.json).")
@click.option(
    "--src",
    type=click.Path(exists=True, file_okay=False, path_type=Path),
    help="Source root, when it moved since the build (default: the one the build recorded).",
)
@click.option("--max-tokens", type=int, help="Budget the chunks were cut to [from the build's settings].")
@click.option("--overlap-tokens", type=int, help="Overlap of the sliding windows in --compare.")
@click.option(
    "--html",
    "html_dir",
    type=click.Path(file_okay=False, path_type=Path),
    help="Also write a self-contained report site (overview and one page per file) into this folder.",
)
@click.option(
    "--compare",
    "with_compare",
    is_flag=True,
    help="Cut the same files with fixed-size and sliding windows and set their figures beside ours.",
)
@click.option(
    "--queries",
    type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="JSON Lines of questions with the source that answers each: recall@1/5/10 and MRR per chunking.",
)
def report_command(
    out: Path,
    as_json: bool,
    src: Path | None,
    html_dir: Path | None,
    with_compare: bool,
    queries: Path | None,
    **kwargs: Any,
) -> None:
    """Summary of OUT: files, token counts, cuts, repeats and problems."""
    from segment.report.commands import run_report

    overrides = {k: v for k, v in kwargs.items() if v is not None}
    code = run_report(
        out,
        overrides,
        as_json=as_json,
        src=src,
        html_dir=html_dir,
        with_compare=with_compare,
        queries=queries,
    )
    raise SystemExit(code)


@cli.command("check")
@click.argument("out", type=click.Path(file_okay=False, path_type=Path))
@click.option(
    "--src",
    type=click.Path(exists=True, file_okay=False, path_type=Path),
    help="Source root (for its segment.toml [check] table), when it moved since the build.",
)
@click.option("--max-tokens", type=int, help="Budget the chunks were cut to [from the build's settings].")
@click.option("--max-failed-files", type=click.IntRange(min=0), help="Failed files allowed [0].")
@click.option(
    "--max-files-without-chunks", type=click.IntRange(min=0), help="Files with no chunk allowed [0]."
)
@click.option(
    "--max-over-budget-unflagged", type=click.IntRange(min=0), help="Unflagged chunks over budget [0]."
)
@click.option("--max-oversize-share", type=click.FloatRange(0, 1), help="Share of oversize chunks allowed.")
@click.option(
    "--max-mid-sentence-share", type=click.FloatRange(0, 1), help="Share ending mid-sentence allowed."
)
@click.option("--max-heading-only", type=click.IntRange(min=0), help="Heading-only chunks allowed.")
@click.option(
    "--max-duplicate-groups", type=click.IntRange(min=0), help="Groups repeated across sources allowed."
)
def check_command(out: Path, src: Path | None, max_tokens: int | None, **limits: Any) -> None:
    """Exit 1 when OUT breaks a threshold (flags, or [check] in segment.toml), printing each breach."""
    from segment.report.commands import run_check

    overrides = {"max_tokens": max_tokens} if max_tokens is not None else {}
    given = {k: v for k, v in limits.items() if v is not None}
    raise SystemExit(run_check(out, overrides, given, src=src))


@cli.command("export")
@click.argument("out", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option(
    "--parquet",
    "parquet_dir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for a Parquet dataset of every chunk, partitioned by format (format=<name>/).",
)
def export_command(out: Path, parquet_dir: Path) -> None:
    """Write the chunks of the output folder OUT as a Parquet dataset (needs the `cluster` extra)."""
    from segment.columnar import output_table, write_dataset

    try:
        table = output_table(out)
        files = write_dataset(table, parquet_dir)
    except SettingsError as exc:
        raise click.UsageError(str(exc)) from exc
    click.echo(f"{table.num_rows} chunks -> {parquet_dir} ({len(files)} files)", err=True)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the `segment` console script."""
    try:
        cli.main(args=argv, prog_name="segment", standalone_mode=True)
    except SystemExit as exc:  # click's main always ends the program this way
        return int(exc.code or 0) if not isinstance(exc.code, str) else 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
