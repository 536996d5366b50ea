"""Leaf blocks read whole from one element: heading text and code blocks."""

from __future__ import annotations

from lxml import etree

from segment.adapters.html.element_text import has_block, is_permalink
from segment.adapters.html.tags import BLOCK_TAGS, tag_of
from segment.tree import Code, Span

_LANG_PREFIXES = ("language-", "lang-", "highlight-", "sourcecode-")
_NO_LANG = {"default", "none", "nohighlight"}
"""Class suffixes that name no language (Sphinx `highlight-default`, highlight.js `nohighlight`)."""


def heading_text(el: etree._Element) -> tuple[str, str | None]:
    """A heading's raw text without permalink markers, and an anchor found inside it."""
    pieces: list[str] = [el.text or ""]
    anchor: str | None = None
    walker = etree.iterwalk(el, events=("start", "end"))
    for event, node in walker:
        if node is el:
            continue
        if event == "end":
            if node.tag in BLOCK_TAGS:
                pieces.append(" ")
            pieces.append(node.tail or "")
            continue
        if tag_of(node) == "a":
            if is_permalink(node):
                href = node.get("href") or ""
                anchor = (
                    anchor
                    or (href[1:] if href.startswith("#") and len(href) > 1 else None)
                    or node.get("id")
                    or node.get("name")
                )
                walker.skip_subtree()
                continue
            if not node.get("href") and (node.get("id") or node.get("name")):
                anchor = anchor or node.get("id") or node.get("name")
        if node.tag in BLOCK_TAGS:
            pieces.append(" ")
        pieces.append(node.text or "")
    return "".join(pieces), anchor


def code_block(el: etree._Element) -> Code:
    """A `pre` as code lines; a block element inside it (rare) starts a new line, as rendered."""
    raw = _lined_text(el) if has_block(el) else "".join(el.itertext())
    raw = raw.replace("\r\n", "\n").replace("\r", "\n")
    line = el.sourceline
    if raw.startswith("\n"):  # the HTML parser rule: a newline right after <pre> is dropped
        raw = raw[1:]
        line = line + 1 if line is not None else None
    lines = raw.split("\n")
    while lines and not lines[-1].strip():
        lines.pop()
    span = Span(lines=(line, line + max(len(lines), 1) - 1)) if line is not None else Span()
    return Code(lines, language(el), span)


def _lined_text(el: etree._Element) -> str:
    pieces: list[str] = [el.text or ""]

    def newline() -> None:
        if pieces and not pieces[-1].endswith("\n"):
            pieces.append("\n")

    for event, node in etree.iterwalk(el, events=("start", "end")):
        if node is el:
            continue
        block = node.tag in BLOCK_TAGS
        if event == "start":
            if block:
                newline()
            pieces.append(node.text or "")
        else:
            if block:
                newline()
            pieces.append(node.tail or "")
    return "".join(pieces)


def gutter_code(table: etree._Element) -> etree._Element | None:
    """The code `pre` of a highlighter's line-number table (Pygments `highlighttable`, Hugo's
    chroma `lntable`, Rouge): one row, two cells each holding a `pre`, the first only numbers."""
    if table.find(".//pre") is None:
        return None
    rows = list(table.iter("tr"))
    if len(rows) != 1:
        return None
    cells = [c for c in rows[0] if tag_of(c) in ("td", "th")]
    if len(cells) != 2:
        return None
    pres = [next(c.iter("pre"), None) for c in cells]
    if pres[0] is None or pres[1] is None:
        return None
    if not all(token.isdigit() for token in "".join(pres[0].itertext()).split()):
        return None
    return pres[1]


def language(el: etree._Element) -> str | None:
    """From `language-*`/`lang-*`/`highlight-*` classes or `data-lang` on the `pre`, its `code`,
    or an enclosing wrapper (Sphinx puts `highlight-python` a few levels up)."""
    candidates = [el]
    candidates.extend(c for c in el if tag_of(c) == "code")
    for depth, anc in enumerate(el.iterancestors()):
        if depth >= 7:
            break
        candidates.append(anc)
    for node in candidates:
        lang: str | None = node.get("data-lang") or node.get("data-language")
        if lang:
            return lang
        for token in (node.get("class") or "").split():
            for prefix in _LANG_PREFIXES:
                if token.startswith(prefix) and len(token) > len(prefix):
                    value = token[len(prefix) :]
                    return None if value.lower() in _NO_LANG else value
    return None
