"""The summary as text for people (`segment report OUT`)."""

from __future__ import annotations

from collections import Counter

from segment.report.summary import Summary

LIST_LIMIT = 10
LABELS = {"table": "tables", "list": "lists", "code": "code blocks"}


def _pct(part: int, whole: int) -> str:
    return f"{100 * part / whole:.1f}%" if whole else "0.0%"


def summary_text(summary: Summary) -> list[str]:
    """Lines of the text report."""
    f = summary.figures
    out: list[str] = []
    budget_note = "" if summary.budget_known else " (assumed: pass --max-tokens if the build used another)"
    out.append(f"output:   {summary.out}")
    out.append(f"source:   {summary.src or 'unknown'}")
    out.append(f"budget:   {summary.budget} tokens{budget_note}")
    out.append(f"files:    {summary.files}")
    for fmt, statuses in summary.files_by_format.items():
        parts = ", ".join(f"{status} {n}" for status, n in statuses.items())
        out.append(f"  {fmt:<10} {parts}")
    if summary.skipped is not None:
        reasons = ", ".join(f"{r} {n}" for r, n in summary.skipped.by_reason.items()) or "none"
        out.append(f"skipped:  {summary.skipped.count} ({reasons})")
        out.extend(f"  {name}" for name in summary.skipped.examples[:LIST_LIMIT])
    out.append(
        f"chunks:   {f.chunks}" + (f" ({summary.bad_lines} unreadable lines)" if summary.bad_lines else "")
    )
    out.append("tokens:   format       chunks    min     q1 median     q3    max  budget used")
    for fmt, t in f.tokens.items():
        out.append(
            f"          {fmt:<10} {t.chunks:>8} {t.min:>6} {t.q1:>6.0f} {t.median:>6.0f} {t.q3:>6.0f}"
            f" {t.max:>6} {100 * t.budget_share:>11.1f}%"
        )
    out.append(f"oversize (flagged):        {len(f.oversize)} ({_pct(len(f.oversize), f.chunks)})")
    out.append(f"over budget, not flagged:  {len(f.over_budget_unflagged)}")
    out.extend(f"  {r.source} #{r.seq}: {r.tokens} tokens" for r in f.over_budget_unflagged[:LIST_LIMIT])
    out.append(f"ends mid-sentence:         {len(f.mid_sentence)} ({_pct(len(f.mid_sentence), f.chunks)})")
    out.extend(f"  {r.source} #{r.seq}: …{r.note}" for r in f.mid_sentence[:LIST_LIMIT])
    out.append(f"heading-only chunks:       {len(f.heading_only)}")
    for kind in ("table", "list", "code"):
        cut = [b for b in f.split_blocks if b.kind == kind]
        hist = Counter(b.parts for b in cut)
        parts = ", ".join(f"{n} in {p} parts" for p, n in sorted(hist.items()))
        out.append(f"{LABELS[kind]} cut into parts: {len(cut)}" + (f" ({parts})" if parts else ""))
    depth = ", ".join(f"{d}: {n}" for d, n in f.breadcrumb_depth.items())
    out.append(f"breadcrumb depth:          {depth}")
    dup_chunks = sum(g.chunks for g in f.duplicates)
    out.append(f"repeated in other sources: {len(f.duplicates)} groups, {dup_chunks} chunks")
    for g in f.duplicates[:LIST_LIMIT]:
        shown = ", ".join(g.sources[:3]) + (f" and {len(g.sources) - 3} more" if len(g.sources) > 3 else "")
        out.append(f"  {g.chunks} x {g.tokens} tokens in {shown}: {g.preview[:60]}")
    out.append(f"files with no chunks:      {len(summary.no_chunks)}")
    out.extend(f"  {s}" for s in summary.no_chunks[:LIST_LIMIT])
    out.append(f"failed files:              {len(summary.failed)}")
    out.extend(f"  {e['source']}: {e['status']}: {e['reason']}" for e in summary.failed)
    out.append("files with the most problems:")
    for p in summary.top_files:
        kinds = {
            "oversize": p.oversize,
            "over budget": p.over_budget_unflagged,
            "mid-sentence": p.mid_sentence,
            "heading-only": p.heading_only,
            "failed": p.failed,
            "no chunks": p.no_chunks,
        }
        detail = ", ".join(f"{k} {v}" for k, v in kinds.items() if v)
        out.append(f"  {p.total:>5}  {p.source} ({detail})")
    if not summary.top_files:
        out.append("  none")
    return out
