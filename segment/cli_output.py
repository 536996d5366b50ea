"""The commands that read an output folder: `segment report`, `check` and `export`."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from segment.errors import SettingsError


@click.command("report")
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


@click.command("check")
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


@click.command("export")
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
