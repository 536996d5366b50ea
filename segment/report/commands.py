"""Bodies of `segment report` and `segment check` (the CLI only parses flags).

The report is the command's output, so it goes to stdout; notes and errors go to stderr.
Each returns the process exit code.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import click

from segment.report.output import NoOutput, Output, read_output
from segment.report.summary import summarise
from segment.report.text import summary_text


def _read(out: Path, overrides: dict[str, Any], src: Path | None = None) -> Output | None:
    try:
        return read_output(out, overrides, src=src)
    except NoOutput as exc:
        click.echo(f"Error: {exc}", err=True)
        return None


def run_report(
    out: Path,
    overrides: dict[str, Any],
    *,
    as_json: bool = False,
    src: Path | None = None,
    list_source: bool = True,
    html_dir: Path | None = None,
    with_compare: bool = False,
    queries: Path | None = None,
) -> int:
    """Print the summary of OUT (text, or JSON with `as_json`); 1 when OUT holds no output."""
    output = _read(out, overrides, src)
    if output is None:
        return 1
    summary = summarise(output, list_source=list_source)
    data: dict[str, Any] = summary.to_dict()
    lines = summary_text(summary)
    extra: list[tuple[str, list[str]]] = []
    if with_compare or queries is not None:
        from segment.report.compare import (
            compare,
            comparison_dict,
            comparison_text,
            evaluate_queries,
            flat_documents,
        )
        from segment.report.figures import as_plain
        from segment.report.retrieval import QuestionsError, read_questions, retrieval_text

        try:
            questions = read_questions(queries) if queries is not None else []
            flats = list(flat_documents(output))
        except (QuestionsError, FileNotFoundError) as exc:
            click.echo(f"Error: {exc}", err=True)
            return 1
        if with_compare:
            comparison = compare(output, flats)
            data["compare"] = comparison_dict(comparison)
            extra.append(
                ("Compared with plain windows (same files, same budget)", comparison_text(comparison))
            )
        if queries is not None:
            rows = evaluate_queries(output, questions, flats)
            data["queries"] = as_plain(rows)
            extra.append((f"Retrieval on {queries.name}", retrieval_text(rows)))
    for title, section in extra:
        lines += ["", f"{title}:", *section]
    if html_dir is not None:
        from segment.report.html import write_site
        from segment.report.html.plots import MissingPlotting

        try:
            index = write_site(output, summary, html_dir, extra)
        except MissingPlotting as exc:
            click.echo(f"Error: {exc}", err=True)
            return 2
        click.echo(f"report site: {index}", err=True)
    if as_json:
        click.echo(json.dumps(data, ensure_ascii=False))
    else:
        click.echo("\n".join(lines))
    return 0


def run_check(
    out: Path, overrides: dict[str, Any], limits: dict[str, Any], *, src: Path | None = None
) -> int:
    """Exit 1 when OUT breaks a threshold (each breach printed), 0 when none, 2 on bad thresholds."""
    from segment.errors import SettingsError
    from segment.report.check import breach_lines, breaches, coerce_limits
    from segment.settings import read_table

    output = _read(out, overrides, src)
    if output is None:
        return 1
    try:
        given = coerce_limits(read_table(output.src, "check"), "segment.toml [check]")
        given.update(coerce_limits(limits, "command line"))
    except SettingsError as exc:
        click.echo(f"Error: {exc}", err=True)
        return 2
    summary = summarise(output, list_source=False)
    found = breaches(summary, given)
    if found:
        click.echo("\n".join(breach_lines(found)))
        return 1
    click.echo(f"ok: {summary.figures.chunks} chunks in {summary.files} files, no threshold broken")
    return 0
