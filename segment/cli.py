"""The `segment` command: thin wrappers over the library and the daemon.

stdout carries only data (JSON Lines, tree text, status); logs and progress go to stderr.
Exit codes: 0 all done, 1 some files failed (the rest still written), 2 usage or settings errors,
130 interrupted twice.
"""

from __future__ import annotations

import logging
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any, TypeVar

import click

from segment.api import chunk, parse
from segment.errors import SegmentError, SettingsError
from segment.settings import Settings, load_settings
from segment.tree import pretty

F = TypeVar("F", bound=Callable[..., Any])
log = logging.getLogger("segment")


def settings_options(fn: F) -> F:
    """The settings flags shared by every command that cuts chunks."""
    options = [
        click.option("--max-tokens", type=int, help="Token budget of one chunk [512]."),
        click.option("--min-tokens", type=int, help="Pack sibling sections smaller than this [64]."),
        click.option("--overlap-tokens", type=int, help="Trailing sentences repeated in the next chunk [0]."),
        click.option("--tokenizer", type=click.Path(dir_okay=False), help="tokenizer.json for exact counts."),
        click.option("--language", help="spaCy language code for sentence splitting [en]."),
        click.option("--include", multiple=True, help="Only files matching this gitignore-style pattern."),
        click.option("--exclude", multiple=True, help="Skip files matching this gitignore-style pattern."),
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


def _settings(src: Path | None, kwargs: dict[str, Any]) -> Settings:
    keys = (
        "max_tokens",
        "min_tokens",
        "overlap_tokens",
        "tokenizer",
        "language",
        "include",
        "exclude",
        "cluster",
        "cluster_reads_files",
    )
    overrides = {k: kwargs.get(k) for k in keys}
    try:
        return load_settings(src, overrides)
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
    """Print the chunks of FILES as JSON Lines on stdout."""
    settings = _settings(None, kwargs)
    failed = 0
    for path in files:
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
def tree_command(file: Path) -> None:
    """Print the common tree of FILE (headings, blocks, source spans)."""
    try:
        click.echo(pretty(parse(file, source=file.as_posix())), nl=False)
    except SegmentError as exc:
        report(exc)
        raise SystemExit(1) from exc


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
    from segment.daemon.commands import run_build

    settings = _settings(src, kwargs)
    progress = sys.stderr.isatty()
    raise SystemExit(run_build(src, out, settings, jobs=jobs, full=full, progress=progress))


@cli.command("watch")
@click.argument("src", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option("-o", "--out", required=True, type=click.Path(file_okay=False, path_type=Path))
@click.option("--jobs", "-j", type=click.IntRange(min=1), default=1, show_default=True)
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
    from segment.daemon.commands import run_watch

    settings = _settings(src, kwargs)
    raise SystemExit(run_watch(src, out, settings, jobs=jobs, quiet_ms=quiet_ms))


@cli.command("status")
@click.argument("out", type=click.Path(file_okay=False, path_type=Path))
@click.option("--json", "as_json", is_flag=True, help="Machine-readable output.")
def status_command(out: Path, as_json: bool) -> None:
    """Files, chunks, failed files and the last feed sequence number of OUT."""
    from segment.daemon.commands import run_status

    raise SystemExit(run_status(out, as_json=as_json))


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
    except SystemExit as exc:
        return int(exc.code or 0) if not isinstance(exc.code, str) else 1
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
