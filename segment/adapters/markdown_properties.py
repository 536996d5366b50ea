"""YAML front matter -> the document's title, metadata and declared properties, under caps.

Rules (docs/markdown.md, "Front matter and properties"):
- parsed with PyYAML's safe loader (no Python objects), after a scan of the YAML event stream that
  refuses more than MAX_ALIASES aliases, aliases that expand to more than MAX_EXPANDED_VALUES values,
  or nesting deeper than MAX_DEPTH (a "billion laughs" alias bomb, or a deeply nested block, costs
  nothing but the scan); front matter over
  MAX_FRONT_MATTER_CHARS is not parsed at all;
- `properties` keeps every scalar (strings, numbers, booleans, null; dates and times as ISO 8601
  strings) and every list of scalars; a nested mapping is flattened into dotted keys
  (`params: {version: 2}` -> `params.version`); items of a list that are not scalars are dropped;
- a string longer than MAX_VALUE_CHARS is cut to that length, a list longer than MAX_LIST_ITEMS
  to that many items, and once the properties' JSON size passes MAX_TOTAL_CHARS the later keys
  are dropped; each of these says so in the document's warnings.
"""

from __future__ import annotations

import datetime
import json
import math
from typing import Any

import yaml

from segment.adapters.simple_yaml import read_simple
from segment.tree import Document

MAX_FRONT_MATTER_CHARS = 1_000_000
"""Front matter longer than this (1 MB of text) is not parsed: a warning, no properties."""
MAX_ALIASES = 100
"""YAML aliases (`*name`) allowed in one front matter; more is refused as a likely alias bomb."""
MAX_EXPANDED_VALUES = 10_000
"""Values the front matter may hold once every alias is expanded; more is refused as an alias bomb."""
MAX_DEPTH = 32
"""Nesting of YAML collections allowed; deeper front matter is refused."""
MAX_VALUE_CHARS = 2_000
"""A string property is cut to this many characters."""
MAX_LIST_ITEMS = 100
"""A list property keeps this many items."""
MAX_TOTAL_CHARS = 16_000
"""Size cap of all properties together, as compact JSON; later keys are dropped past it."""

_YAML_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
"""libyaml's safe loader when PyYAML was built with it (about 10x faster), else the Python one."""
_Scalar = str | int | float | bool | None


def read_front_matter(doc: Document, content: str) -> None:
    """Fill `doc.title`, `doc.metadata` and `doc.properties` from YAML front matter text."""
    data = _load(doc, content)
    if not isinstance(data, dict):
        if data is not None:
            doc.warnings.append("front matter is not a mapping of names to values: ignored")
        return
    meta = {str(k): _plain(v) for k, v in data.items()}
    title = meta.pop("title", None)
    if isinstance(title, str) and title.strip():
        doc.title = " ".join(title.split())
    elif title is not None:
        meta["title"] = title
    doc.metadata.update(meta)
    doc.properties.update(properties_of(data, doc.warnings))


def _load(doc: Document, content: str) -> Any:
    if len(content) > MAX_FRONT_MATTER_CHARS:
        doc.warnings.append(
            f"front matter of {len(content)} characters is over {MAX_FRONT_MATTER_CHARS}: not read"
        )
        return None
    simple = read_simple(content)
    if simple is not None:
        return simple  # flat `key: value` lines: the same answer as PyYAML's, without building a tree
    try:
        refusal = None if _plainly_safe(content) else _refusal(content)
        if refusal:
            doc.warnings.append(f"front matter refused: {refusal}")
            return None
        return yaml.load(content, Loader=_YAML_LOADER)
    except yaml.YAMLError as exc:
        doc.warnings.append(f"front matter is not valid YAML: {str(exc).splitlines()[0]}")
    except RecursionError:
        doc.warnings.append("front matter nested too deeply to read")
    return None


def _plainly_safe(content: str) -> bool:
    """No alias, too few brackets and too little indentation to nest past MAX_DEPTH: the event
    scan can be skipped (most front matter)."""
    return (
        "*" not in content
        and content.count("[") + content.count("{") <= MAX_DEPTH
        and "\n" + " " * MAX_DEPTH not in content
        and "- -" not in content  # `- - - x` nests sequences on one line
    )


def _refusal(content: str) -> str | None:
    """Why the YAML must not be built (too many aliases, aliases expanding to too many values,
    too deep), from its event stream alone: nothing is constructed before this says yes."""
    aliases = 0
    weights: dict[str, int] = {}  # anchor -> values its node expands to
    open_nodes: list[tuple[str | None, int]] = [(None, 0)]  # (anchor, values so far) per collection
    for event in yaml.parse(content, Loader=_YAML_LOADER):
        if isinstance(event, yaml.ScalarEvent):
            if event.anchor:
                weights[event.anchor] = 1
            anchor, weight = open_nodes[-1]
            open_nodes[-1] = (anchor, weight + 1)
        elif isinstance(event, yaml.AliasEvent):
            aliases += 1
            if aliases > MAX_ALIASES:
                return f"more than {MAX_ALIASES} aliases"
            anchor, weight = open_nodes[-1]
            open_nodes[-1] = (anchor, weight + weights.get(event.anchor or "", 1))
        elif isinstance(event, yaml.CollectionStartEvent):
            if len(open_nodes) > MAX_DEPTH:
                return f"collections nested deeper than {MAX_DEPTH} levels"
            open_nodes.append((event.anchor, 1))
        elif isinstance(event, yaml.CollectionEndEvent):
            anchor, weight = open_nodes.pop()
            if anchor:
                weights[anchor] = weight
            parent, total = open_nodes[-1]
            open_nodes[-1] = (parent, total + weight)
        if open_nodes[-1][1] > MAX_EXPANDED_VALUES:
            return f"aliases expand to more than {MAX_EXPANDED_VALUES} values (an alias bomb)"
    return None


def properties_of(data: dict[Any, Any], warnings: list[str]) -> dict[str, Any]:
    """Declared properties: scalars and lists of scalars, nested mappings as dotted keys, capped."""
    if _flat_and_small(data):
        return {key: list(value) if type(value) is list else value for key, value in data.items()}
    return walked_properties(data, warnings)


def walked_properties(data: dict[Any, Any], warnings: list[str]) -> dict[str, Any]:
    """`properties_of` key by key, for any front matter (its answer where the common case is not)."""
    flat: list[tuple[str, Any]] = []
    stack: list[tuple[str, Any]] = [(str(k), v) for k, v in reversed(list(data.items()))]
    while stack:  # iterative: depth is already capped, but no recursion anyway
        key, value = stack.pop()
        if isinstance(value, dict):
            stack.extend((f"{key}.{k}", v) for k, v in reversed(list(value.items())))
        else:
            flat.append((key, value))
    kept_values = [(key, _property_value(key, value, warnings)) for key, value in flat]
    kept_values = [(key, value) for key, value in kept_values if value is not _DROP]
    whole = dict(kept_values)
    if len(json.dumps(whole, ensure_ascii=False, separators=(",", ":"))) <= MAX_TOTAL_CHARS:
        return whole  # the common case: one measurement
    out: dict[str, Any] = {}
    total = 2  # the braces
    for key, kept in kept_values:
        size = len(json.dumps({key: kept}, ensure_ascii=False, separators=(",", ":"))) - 1
        if total + size > MAX_TOTAL_CHARS:
            warnings.append(
                f"front matter properties over {MAX_TOTAL_CHARS} characters: {key!r} and later keys dropped"
            )
            break
        total += size
        out[key] = kept
    return out


_PLAIN_SCALARS = (str, int, bool, type(None))


def _flat_and_small(data: dict[Any, Any]) -> bool:
    """The common case, in which `properties_of` keeps everything as it is: string keys, values
    that are strings, integers, booleans or null (or lists of at most MAX_LIST_ITEMS of them), no
    string over MAX_VALUE_CHARS, and a JSON form within MAX_TOTAL_CHARS."""
    for key, value in data.items():
        if type(key) is not str:
            return False
        items = value if type(value) is list else (value,)
        if len(items) > MAX_LIST_ITEMS:
            return False
        for item in items:
            if type(item) not in _PLAIN_SCALARS or (type(item) is str and len(item) > MAX_VALUE_CHARS):
                return False
    return len(json.dumps(data, ensure_ascii=False, separators=(",", ":"))) <= MAX_TOTAL_CHARS


_DROP = object()


def _property_value(key: str, value: Any, warnings: list[str]) -> Any:
    if isinstance(value, (list, tuple, set)):
        items = sorted(value, key=repr) if isinstance(value, set) else list(value)
        scalars = [_scalar(key, v, warnings) for v in items if not isinstance(v, (dict, list, tuple, set))]
        if len(scalars) < len(items):
            warnings.append(f"front matter {key!r}: items that are not scalars dropped")
        if len(scalars) > MAX_LIST_ITEMS:
            warnings.append(f"front matter {key!r}: list cut to {MAX_LIST_ITEMS} items")
            scalars = scalars[:MAX_LIST_ITEMS]
        return [v for v in scalars if v is not _DROP]
    return _scalar(key, value, warnings)


def _scalar(key: str, value: Any, warnings: list[str]) -> Any:
    if isinstance(value, bool) or value is None or isinstance(value, int):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else str(value)
    if isinstance(value, (datetime.date, datetime.time)):  # datetime is a date
        return value.isoformat()
    if isinstance(value, bytes):
        warnings.append(f"front matter {key!r}: binary value dropped")
        return _DROP
    text = value if isinstance(value, str) else str(value)
    if len(text) > MAX_VALUE_CHARS:
        warnings.append(f"front matter {key!r}: value of {len(text)} characters cut to {MAX_VALUE_CHARS}")
        text = text[:MAX_VALUE_CHARS]
    return text


def _plain(value: Any) -> Any:
    """Front-matter values as JSON-safe data (dates become ISO strings); input depth is capped."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if isinstance(value, set):
        return [_plain(v) for v in sorted(value, key=repr)]
    if value is None or isinstance(value, (str, int, float, bool)):
        return value
    return str(value)
