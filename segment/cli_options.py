"""The settings flags of the `segment` commands and the settings they load.

A bad value exits 2 naming the setting (click's usage error) before any file is read.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import fields
from pathlib import Path
from typing import Any, TypeVar

import click

from segment.errors import SegmentError, SettingsError
from segment.settings import Settings, check_settings, find_config, load_settings

F = TypeVar("F", bound=Callable[..., Any])


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
