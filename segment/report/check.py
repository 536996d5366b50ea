"""`segment check OUT`: the summary's figures held against thresholds, for a docs repository's CI.

Thresholds come from flags or from the `[check]` table of the source root's `segment.toml`
(flags win). Three hold unless a threshold names them: no failed file, no file without chunks,
no chunk over the budget that is not flagged `oversize`. Unreadable chunk-file lines always
count as a breach.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from segment.errors import SettingsError
from segment.report.summary import Summary


@dataclass(frozen=True, slots=True)
class Limit:
    """One threshold a `[check]` key or `--max-...` flag sets."""

    key: str
    label: str
    share: bool
    """True for a share of all chunks (0-1), false for a count."""
    measure: Callable[[Summary], tuple[int, list[str]]]
    """(count, names of the offenders) from a summary."""
    default: float | None = None
    """The limit when none is given (None: not checked)."""


def _refs(refs: list[Any]) -> list[str]:
    return [f"{r.source} #{r.seq} ({r.tokens} tokens)" for r in refs]


LIMITS: tuple[Limit, ...] = (
    Limit("max_failed_files", "failed files", False,
          lambda s: (len(s.failed), [f"{f['source']}: {f['status']}: {f['reason']}" for f in s.failed]), 0),
    Limit("max_files_without_chunks", "files without chunks", False,
          lambda s: (len(s.no_chunks), list(s.no_chunks)), 0),
    Limit("max_over_budget_unflagged", "chunks over the budget not flagged oversize", False,
          lambda s: (len(s.figures.over_budget_unflagged), _refs(s.figures.over_budget_unflagged)), 0),
    Limit("max_oversize_share", "share of oversize chunks", True,
          lambda s: (len(s.figures.oversize), _refs(s.figures.oversize))),
    Limit("max_mid_sentence_share", "share of chunks ending mid-sentence", True,
          lambda s: (len(s.figures.mid_sentence), _refs(s.figures.mid_sentence))),
    Limit("max_heading_only", "heading-only chunks", False,
          lambda s: (len(s.figures.heading_only), _refs(s.figures.heading_only))),
    Limit("max_duplicate_groups", "groups of chunks repeated in other sources", False,
          lambda s: (len(s.figures.duplicates), [", ".join(g.sources) for g in s.figures.duplicates])),
)  # fmt: skip
BY_KEY = {limit.key: limit for limit in LIMITS}
SHOWN = 10


@dataclass(frozen=True, slots=True)
class Breach:
    """One threshold broken."""

    key: str
    message: str
    offenders: list[str]


def coerce_limits(values: dict[str, Any], origin: str) -> dict[str, float]:
    """Check the names and values of thresholds (keys with underscores or hyphens)."""
    out: dict[str, float] = {}
    for raw, value in values.items():
        key = raw.replace("-", "_")
        limit = BY_KEY.get(key)
        if limit is None:
            raise SettingsError(f"{origin}: unknown check threshold {raw!r} (known: {', '.join(BY_KEY)})")
        if isinstance(value, bool) or not isinstance(value, (int, float)) or value < 0:
            raise SettingsError(f"{origin}: {key} must be a number of 0 or more, got {value!r}")
        if limit.share and value > 1:
            raise SettingsError(f"{origin}: {key} is a share between 0 and 1, got {value!r}")
        out[key] = float(value)
    return out


def breaches(summary: Summary, limits: dict[str, float]) -> list[Breach]:
    """Every threshold the summary breaks: the given limits over the defaults."""
    found: list[Breach] = []
    if summary.bad_lines:
        found.append(
            Breach("unreadable_lines", f"{summary.bad_lines} chunk-file lines are not chunk records", [])
        )
    chunks = summary.figures.chunks
    for limit in LIMITS:
        allowed = limits.get(limit.key, limit.default)
        if allowed is None:
            continue
        count, offenders = limit.measure(summary)
        if limit.share:
            share = count / chunks if chunks else 0.0
            if share > allowed:
                message = (
                    f"{limit.label}: {share:.2%} ({count} of {chunks}) is over {allowed:.2%} ({limit.key})"
                )
                found.append(Breach(limit.key, message, offenders))
        elif count > allowed:
            message = f"{limit.label}: {count} is over {allowed:g} ({limit.key})"
            found.append(Breach(limit.key, message, offenders))
    return found


def breach_lines(found: list[Breach]) -> list[str]:
    """The breaches for people, each with its first offenders."""
    out: list[str] = []
    for breach in found:
        out.append(f"FAIL {breach.message}")
        out.extend(f"  {name}" for name in breach.offenders[:SHOWN])
        if len(breach.offenders) > SHOWN:
            out.append(f"  ... and {len(breach.offenders) - SHOWN} more")
    return out
