"""The `segment` command: thin wrappers over the library and the daemon.

stdout carries only data (JSON Lines, tree text, status); logs and progress go to stderr.
Exit codes: 0 all done, 1 some files failed (the rest still written), 2 usage or settings errors,
130 interrupted twice.
"""

from __future__ import annotations

import logging
import sys
from pathlib import Path
from typing import Any

import click

from segment.api import chunk, parse
from segment.cli_daemon import run_build, run_status, run_watch
from segment.cli_options import (
    SETTING_NAMES,
    _load,
    _settings,
    cluster_options,
    config_option,
    report,
    settings_options,
)
from segment.cli_output import check_command, export_command, report_command
from segment.errors import SegmentError
from segment.settings import Settings, find_config
from segment.tree import Document, pretty

__all__ = ["SETTING_NAMES", "cli", "main", "run_build", "run_status", "run_watch"]

log = logging.getLogger("segment")


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
    per_config: dict[Path | None, Settings] = {}  # loaded and checked once per settings file
    per_file: dict[Path, Settings] = {}
    for path in files:
        config = kwargs.get("config") or find_config(path.parent)
        if config not in per_config:
            per_config[config] = _settings(None, {**kwargs, "config": config})
        per_file[path] = per_config[config]
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


cli.add_command(report_command)
cli.add_command(check_command)
cli.add_command(export_command)


def main(argv: list[str] | None = None) -> int:
    """Entry point of the `segment` console script."""
    try:
        cli.main(args=argv, prog_name="segment", standalone_mode=True)
    except SystemExit as exc:  # click's main always ends the program this way
        return int(exc.code or 0) if not isinstance(exc.code, str) else 1


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
