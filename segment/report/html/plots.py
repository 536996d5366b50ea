"""The overview's plots, drawn with matplotlib into inline SVG (text kept as text, no fonts fetched).

matplotlib is an optional extra (`docsegment[report]`); `MissingPlotting` names it when absent.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from typing import Any

from segment.report.figures import percentile
from segment.report.summary import Summary

COLOURS = ("#3b6ea5", "#d1793b", "#4a9a5b", "#8a5aa8", "#b8a03a", "#c04a5a", "#5a8a8a")


class MissingPlotting(Exception):
    """matplotlib is not installed."""


def _pyplot() -> Any:
    try:
        import matplotlib
    except ImportError as exc:
        raise MissingPlotting(
            "the HTML report draws its plots with matplotlib: pip install 'docsegment[report]'"
        ) from exc
    matplotlib.use("Agg", force=True)
    matplotlib.rcParams.update(
        {
            "svg.fonttype": "none",  # text stays text: the viewer's own fonts, nothing embedded or fetched
            "svg.hashsalt": "docsegment",  # stable element ids: the same figures give the same SVG
            "font.size": 9,
            "axes.spines.top": False,
            "axes.spines.right": False,
        }
    )
    import matplotlib.pyplot as plt

    return plt


def _svg(fig: Any) -> str:
    buffer = io.StringIO()
    fig.savefig(buffer, format="svg", metadata={"Date": None, "Creator": None}, bbox_inches="tight")
    fig.clear()
    text = buffer.getvalue()
    return text[text.index("<svg") :]  # drop the XML prolog and DOCTYPE: inline SVG in HTML


def token_histogram(tokens_by_format: Mapping[str, Sequence[int]], budget: int) -> str:
    """Histogram of chunk sizes, one outline per format, with the budget marked."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.0, 2.8))
    largest = max([budget] + [max(v) for v in tokens_by_format.values() if v])
    top = min(largest, int(budget * 1.5))  # a few huge oversize chunks would squash the rest
    bins = [top * i / 40 for i in range(41)]
    for i, (fmt, values) in enumerate(sorted(tokens_by_format.items())):
        clipped = [min(v, top) for v in values]
        ax.hist(
            clipped, bins=bins, histtype="step", linewidth=1.6, color=COLOURS[i % len(COLOURS)], label=fmt
        )
    if largest > top:
        ax.set_xlabel(f"tokens per chunk (over {top} counted in the last bar; largest {largest})")
    else:
        ax.set_xlabel("tokens per chunk")
    ax.axvline(budget, color="#b03030", linestyle="--", linewidth=1, label=f"budget {budget}")
    ax.yaxis.get_major_locator().set_params(integer=True)
    ax.set_ylabel("chunks")
    ax.legend(frameon=False)
    svg = _svg(fig)
    plt.close(fig)
    return svg


def budget_fill(tokens: Sequence[int], budget: int) -> str:
    """Share of the budget each chunk uses, in tenths (over 100% in red)."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.0, 2.4))
    edges = [i / 10 for i in range(11)]
    counts = [0] * 11
    for t in tokens:
        counts[10 if t > budget else min(int(10 * t / budget), 9)] += 1
    labels = [f"{int(100 * e)}–{int(100 * e) + 10}%" for e in edges[:10]] + [">100%"]
    colours = [COLOURS[0]] * 10 + ["#b03030"]
    ax.bar(range(11), counts, color=colours)
    ax.set_xticks(range(11), labels, rotation=45, ha="right")
    ax.set_ylabel("chunks")
    ax.set_xlabel("share of the budget used")
    svg = _svg(fig)
    plt.close(fig)
    return svg


def chunks_per_file(counts: Sequence[int]) -> str:
    """Histogram of how many chunks each file gave."""
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.0, 2.4))
    largest = max(counts) if counts else 1
    top = max(1, min(largest, int(percentile(list(counts), 98) * 1.5) + 1))  # the long tail in one bar
    if top <= 40:  # one bar per count, centred on it
        bins: Any = [n - 0.5 for n in range(top + 2)]
    else:
        bins = [top * i / 40 for i in range(41)]
    ax.hist([min(c, top) for c in counts], bins=bins, color=COLOURS[2], edgecolor="white")
    ax.yaxis.get_major_locator().set_params(integer=True)
    tail = f" (over {top} counted in the last bar; largest {largest})" if largest > top else ""
    ax.set_xlabel("chunks per file" + tail)
    ax.set_ylabel("files")
    svg = _svg(fig)
    plt.close(fig)
    return svg


def problems_per_file(rows: Sequence[tuple[str, Mapping[str, int]]]) -> str:
    """Stacked bars of problem kinds for the files with the most problems."""
    plt = _pyplot()
    height = 0.6 + 0.28 * max(1, len(rows))
    fig, ax = plt.subplots(figsize=(6.0, height))
    kinds = sorted({k for _, problems in rows for k, v in problems.items() if v})
    names = [_short(name) for name, _ in rows][::-1]
    left = [0] * len(rows)
    for i, kind in enumerate(kinds):
        values = [problems.get(kind, 0) for _, problems in rows][::-1]
        ax.barh(names, values, left=left, color=COLOURS[i % len(COLOURS)], label=kind)
        left = [a + b for a, b in zip(left, values)]
    if not rows:
        ax.text(0.5, 0.5, "no problems found", ha="center", va="center", transform=ax.transAxes)
        ax.set_yticks([])
    else:
        ax.legend(frameon=False, fontsize=8, loc="lower right")
    ax.set_xlabel("problems")
    svg = _svg(fig)
    plt.close(fig)
    return svg


def _short(name: str, width: int = 48) -> str:
    return name if len(name) <= width else "…" + name[-(width - 1) :]


def overview_plots(summary: Summary, tokens_by_format: Mapping[str, Sequence[int]]) -> dict[str, str]:
    """The four plots of the overview page, by title."""
    f = summary.figures
    all_tokens = [t for values in tokens_by_format.values() for t in values]
    rows = [
        (
            p.source,
            {
                "oversize": p.oversize,
                "over budget": p.over_budget_unflagged,
                "mid-sentence": p.mid_sentence,
                "heading-only": p.heading_only,
                "failed": p.failed,
                "no chunks": p.no_chunks,
            },
        )
        for p in summary.top_files
    ]
    return {
        "Tokens per chunk, by format": token_histogram(tokens_by_format, f.budget),
        "Budget fill": budget_fill(all_tokens, f.budget),
        "Chunks per file": chunks_per_file(list(f.chunks_per_file.values())),
        "Problems per file (most first)": problems_per_file(rows),
    }
