"""The page's own declared properties, for `Document.properties`.

Read from the document head as the HTML standard defines them:
- "title": the `title` element's text, whitespace collapsed;
- "description", "keywords", "author": `<meta name=... content=...>` (names matched without
  regard to case, HTML standard "Standard metadata names"); "keywords" is split at commas into
  a list of strings (the standard's rule for that name); several "author" elements give a list
  (the standard allows one per author), one gives a string; of several descriptions the first
  with content counts;
- "lang": the `lang` attribute of the `html` element (`xml:lang` in XHTML pages without one).

Values are strings or lists of strings, nothing of ours (no file name, no locator). Each value is
capped at `MAX_VALUE_CHARS` characters (a list: its items together), and the document warns when
a value was cut; empty values are left out.
"""

from __future__ import annotations

from typing import Any

from lxml import etree

from segment.adapters.html.tags import tag_of

MAX_VALUE_CHARS = 2000
"""Longest a property value may be, in characters (a list: the sum of its items)."""

_META_NAMES = ("description", "keywords", "author")
_XML_LANG = "{http://www.w3.org/XML/1998/namespace}lang"


def page_properties(root: etree._Element, warnings: list[str]) -> dict[str, Any]:
    """The declared properties of the page rooted at `root` (warnings appended for cut values)."""
    found: dict[str, Any] = {}
    title = _title(root)
    if title:
        found["title"] = title
    metas: dict[str, list[str]] = {}
    for meta in root.iter("meta"):
        name = (meta.get("name") or "").strip().lower()
        content = " ".join((meta.get("content") or "").split())
        if name in _META_NAMES and content:
            metas.setdefault(name, []).append(content)
    if "description" in metas:
        found["description"] = metas["description"][0]
    if "keywords" in metas:
        words = [w.strip() for value in metas["keywords"] for w in value.split(",")]
        found["keywords"] = [w for w in words if w]
    if "author" in metas:
        authors = metas["author"]
        found["author"] = authors[0] if len(authors) == 1 else authors
    lang = (root.get("lang") or root.get(_XML_LANG) or root.get("xml:lang") or "").strip()
    if lang:
        found["lang"] = lang
    return {key: _capped(key, value, warnings) for key, value in found.items() if value}


def _title(root: etree._Element) -> str | None:
    title_el = root.find("head/title")
    if title_el is None:  # a title outside the head, but never an SVG drawing's own title
        title_el = next((t for t in root.iter("title") if not _in_svg(t)), None)
    if title_el is None:
        return None
    return " ".join("".join(title_el.itertext()).split()) or None


def _in_svg(el: etree._Element) -> bool:
    return any(tag_of(anc).endswith("svg") for anc in el.iterancestors())


def _capped(key: str, value: str | list[str], warnings: list[str]) -> str | list[str]:
    if isinstance(value, str):
        if len(value) <= MAX_VALUE_CHARS:
            return value
        warnings.append(f"page property {key!r} cut to {MAX_VALUE_CHARS} characters (of {len(value)})")
        return value[:MAX_VALUE_CHARS]
    kept: list[str] = []
    room = MAX_VALUE_CHARS
    for item in value:
        if len(item) > room:
            warnings.append(
                f"page property {key!r} cut to {MAX_VALUE_CHARS} characters: "
                f"{len(value) - len(kept)} of {len(value)} items left out"
            )
            break
        kept.append(item)
        room -= len(item)
    return kept
