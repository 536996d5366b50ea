"""A source's declared properties as chunk records carry them: kept keys, JSON-safe, capped.

Adapters fill `Document.properties` with what the source declares (front matter, HTML meta, PDF
document information, notebook metadata). Records carry a filtered copy, the same on every chunk
of a file:
- only keys matching `Settings.properties` (`*` wildcards; `!pattern` leaves keys out);
- only JSON scalars (text, numbers, booleans, null) and lists of scalars; other values (objects,
  lists of objects, non-finite numbers) are left out, as are such items of a list;
- a value longer than `Settings.property_value_chars` (as JSON) is cut: text to that many
  characters, a list to the items that fit;
- properties are added in the source's order while their JSON form stays within
  `Settings.properties_chars`; one that would pass the cap is left out.
"""

from __future__ import annotations

import fnmatch
import json
import math
from typing import Any

_ENCODER = json.JSONEncoder(ensure_ascii=False, separators=(",", ":"))

Scalar = str | int | float | bool | None


def wanted(key: str, patterns: tuple[str, ...]) -> bool:
    """True when `key` matches a pattern and no `!pattern` after it leaves it out."""
    keep = False
    for pattern in patterns:
        if pattern.startswith("!"):
            if fnmatch.fnmatchcase(key, pattern[1:]):
                keep = False
        elif fnmatch.fnmatchcase(key, pattern):
            keep = True
    return keep


def _scalar(value: Any) -> bool:
    if isinstance(value, float):
        return math.isfinite(value)
    return value is None or isinstance(value, (str, int, bool))


def _size(value: Any) -> int:
    return len(_ENCODER.encode(value))


def _capped_text(text: str, cap: int) -> str:
    while _size(text) > cap and text:
        over = _size(text) - cap
        text = text[: max(0, len(text) - max(1, over))]
    return text


def capped_value(value: Any, cap: int) -> Scalar | list[Scalar] | None:
    """A JSON-safe form of `value` within `cap` characters: text cut, the list items that fit.
    Meant for values `_keeps` accepts; anything else gives None."""
    if isinstance(value, str):
        return _capped_text(value, cap)
    if _scalar(value):
        return value  # type: ignore[no-any-return]
    if isinstance(value, (list, tuple)):
        items: list[Scalar] = []
        for item in value:
            if not _scalar(item):
                continue
            if _size([*items, item]) > cap:
                break
            items.append(item)
        return items
    return None


def _keeps(value: Any) -> bool:
    """Values a record can carry at all: scalars and lists (filtered to their scalar items)."""
    return _scalar(value) or isinstance(value, (list, tuple))


def record_properties(
    properties: dict[str, Any], keep: tuple[str, ...], value_chars: int, total_chars: int
) -> dict[str, Any]:
    """The properties every chunk of a file carries (see the module docstring)."""
    whole = _whole_if_within(properties, keep, min(value_chars, total_chars))
    if whole is not None:
        return whole
    out: dict[str, Any] = {}
    used = 2  # "{}"
    for raw_key, value in properties.items():
        key = str(raw_key)
        if not wanted(key, keep) or not _keeps(value):
            continue
        kept = capped_value(value, value_chars)
        cost = _size(key) + 1 + _size(kept) + (1 if out else 0)
        if used + cost > total_chars:
            continue
        out[key] = kept
        used += cost
    return out


def _whole_if_within(properties: dict[Any, Any], keep: tuple[str, ...], cap: int) -> dict[str, Any] | None:
    """The common case in one measurement: every key kept, every value a scalar or a list of
    scalars, and the whole JSON form within both caps, so nothing is cut or left out (the
    answer `record_properties` gives key by key). None when any of that does not hold."""
    if keep != ("*",):
        return None
    for key, value in properties.items():
        if not isinstance(key, str):
            return None
        if isinstance(value, (list, tuple)):
            if not all(_scalar(item) for item in value):
                return None
        elif not _scalar(value):
            return None
    if len(_ENCODER.encode(properties)) > cap:
        return None
    return {
        key: list(value) if isinstance(value, (list, tuple)) else value for key, value in properties.items()
    }
