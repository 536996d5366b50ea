"""The flat subset of YAML most front matter is written in, read without building a YAML tree.

Most pages declare a few `key: value` lines (`title: Getting started`, `tags: [setup, cli]`).
PyYAML reads those in about 50 microseconds, as much as parsing a short page, because every
scalar goes through its resolver and constructor in Python. `read_simple` reads them directly,
but only where the answer cannot differ from PyYAML's safe loader; for anything else it returns
None and the caller uses PyYAML. A line qualifies when it is blank, a comment, or
`key: value` at the start of the line, where:

- the key is an ASCII name (`[A-Za-z_][A-Za-z0-9_-]*`);
- the value is empty (null); a decimal integer without sign, leading zero or `_`; one of YAML
  1.1's boolean or null words in a spelling PyYAML resolves (`true`, `No`, `ON`, `null`, `~`...);
  a double-quoted string without backslashes; a single-quoted string (`''` is a quote); a plain
  string that starts with a letter or `/` and holds none of `#[]{}"` and no colon before a space
  (none at all in a list); or a flow list `[a, b]` of these;
- neither the key nor a plain string is a boolean or null word in another spelling (`tRUE`, `y`):
  those go to PyYAML;
- the line holds only printable characters (no tab, carriage return or YAML line break).

Other numbers, dates, anchors, tags, nested mappings, block lists and multi-line values all start with
something other than a letter, or span lines: they go to PyYAML. tests/test_simple_yaml.py checks
the answers equal `yaml.safe_load`'s on the front matter of the shared corpus and on generated
documents.
"""

from __future__ import annotations

import re

_LINE = re.compile(r"([A-Za-z_][A-Za-z0-9_-]*):(?:[ ]+(.*?))?[ ]*")
_PLAIN = re.compile(r"(?:[^\W\d_]|/)[^#\[\]{}\"]*")
_DOUBLE = re.compile(r'"[^"\\]*"')
_SINGLE = re.compile(r"'(?:[^']|'')*'")
_INT = re.compile(r"0|[1-9][0-9]{0,17}")
_RESOLVED: dict[str, bool | None] = {
    **dict.fromkeys(("yes", "Yes", "YES", "true", "True", "TRUE", "on", "On", "ON"), True),
    **dict.fromkeys(("no", "No", "NO", "false", "False", "FALSE", "off", "Off", "OFF"), False),
    **dict.fromkeys(("null", "Null", "NULL", "~"), None),
}
"""YAML 1.1's boolean and null words in the spellings PyYAML's resolver accepts."""
_RESOLVED_WORDS = frozenset(("yes", "no", "true", "false", "on", "off", "null", "y", "n"))
"""Words that resolve (or might, in another spelling): read here only in the spellings above."""

_NOT_SIMPLE = object()
"""What `_value` and `_scalar` return for text this module does not read."""

Scalar = str | int | bool | None
Value = Scalar | list[Scalar]


def read_simple(content: str) -> dict[str, Value] | None:
    """The mapping a flat front matter declares, or None when PyYAML must read it."""
    out: dict[str, Value] = {}
    for line in content.split("\n"):
        if not line.isprintable():  # tabs, carriage returns, YAML's own line breaks, controls
            return None
        if not line.strip() or line.startswith("#"):
            continue
        m = _LINE.fullmatch(line)
        if m is None or m.group(1).lower() in _RESOLVED_WORDS:
            return None
        value = _value(m.group(2) or "")
        if value is _NOT_SIMPLE:
            return None
        out[m.group(1)] = value  # type: ignore[assignment]
    return out or None  # PyYAML reads a front matter of comments alone as null


def _value(text: str) -> Value | object:
    if not text:
        return None
    if text[0] == "[":
        if not text.endswith("]"):
            return _NOT_SIMPLE
        inner = text[1:-1].strip()
        if not inner:
            return []
        items: list[Scalar] = []
        for part in inner.split(","):
            item = _scalar(part.strip(), flow=True)
            if item is _NOT_SIMPLE:
                return _NOT_SIMPLE
            items.append(item)  # type: ignore[arg-type]
        return items
    return _scalar(text, flow=False)


def _scalar(text: str, *, flow: bool) -> Scalar | object:
    """A scalar's value (string, integer, boolean, null), or _NOT_SIMPLE."""
    if not text:
        return _NOT_SIMPLE
    if text in _RESOLVED:
        return _RESOLVED[text]
    if _INT.fullmatch(text):
        return int(text)
    if text[0] == '"':
        return text[1:-1] if _DOUBLE.fullmatch(text) else _NOT_SIMPLE
    if text[0] == "'":
        return text[1:-1].replace("''", "'") if _SINGLE.fullmatch(text) else _NOT_SIMPLE
    if not _PLAIN.fullmatch(text) or text.lower() in _RESOLVED_WORDS:
        return _NOT_SIMPLE
    if ": " in text or text.endswith(":") or (flow and ("," in text or ":" in text)):
        return _NOT_SIMPLE  # a mapping's colon (a colon before a non-space is text in a block)
    if "  " in text or text != text.strip():
        return _NOT_SIMPLE
    return text
