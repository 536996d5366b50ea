"""UTF-8 bytes -> an lxml element tree, with fallbacks for what libxml2 will not build.

The fast path is lxml's HTML parser straight from bytes (lxml refuses a `str` that carries an
XML declaration, and bytes keep `sourceline`). Two fallbacks, each recorded as a warning:
- nesting past libxml2's depth limit (2048 levels even with `huge_tree`): the page is parsed
  again through a parser target that flattens elements deeper than `MAX_DEPTH` into their
  ancestor's text (words kept, structure below that depth lost, line numbers unknown);
- a document lxml cannot parse at all: beautifulsoup4 with Python's `html.parser`, converted
  into an lxml tree (line numbers from bs4's `sourceline`).
"""

from __future__ import annotations

import re
from typing import Any

from lxml import etree

MAX_DEPTH = 512
"""Elements nested deeper than this are flattened into text by the fallback parser."""

_TAG_START = re.compile(rb"<[A-Za-z]")
_BLOCK_LIKE = frozenset({"p", "div", "li", "tr", "td", "th", "dd", "dt", "br", "pre", "table", "section"})


def _parser(**extra: Any) -> etree.HTMLParser:
    return etree.HTMLParser(
        encoding="utf-8", remove_comments=True, remove_pis=True, huge_tree=True, no_network=True, **extra
    )


def parse_tree(data: bytes, warnings: list[str]) -> etree._Element | None:
    """The document's root element (`html`), or None for an empty document."""
    if not data.strip():
        return None
    parser = _parser()
    try:
        root = etree.fromstring(data, parser)
    except (etree.XMLSyntaxError, ValueError):
        root = None
    if any("Excessive depth" in entry.message for entry in parser.error_log):
        warnings.append(
            f"nesting deeper than libxml2 allows: elements below depth {MAX_DEPTH} flattened, no line numbers"
        )
        return _parse_flat(data)
    if root is None:
        if _TAG_START.search(data) is None:  # comments, a doctype, text without markup
            return None
        return _parse_soup(data, warnings)
    return root


class _FlatteningTarget:
    """lxml parser target that builds a tree no deeper than MAX_DEPTH."""

    def __init__(self) -> None:
        self.builder = etree.TreeBuilder()
        self.depth = 0

    def start(self, tag: str, attrib: dict[str, str]) -> None:
        self.depth += 1
        if self.depth <= MAX_DEPTH:
            self.builder.start(tag, dict(attrib))
        elif tag in _BLOCK_LIKE:
            self.builder.data("\n" if tag == "br" else " ")

    def end(self, tag: str) -> None:
        if self.depth <= MAX_DEPTH:
            self.builder.end(tag)
        elif tag in _BLOCK_LIKE:
            self.builder.data(" ")
        self.depth -= 1

    def data(self, text: str) -> None:
        self.builder.data(text)

    def comment(self, text: str) -> None:
        pass

    def close(self) -> etree._Element:
        return self.builder.close()


def _parse_flat(data: bytes) -> etree._Element | None:
    parser = _parser(target=_FlatteningTarget())
    root: etree._Element | None = etree.fromstring(data, parser)
    return root


def _parse_soup(data: bytes, warnings: list[str]) -> etree._Element | None:
    """Broken markup lxml gave up on: beautifulsoup4 + html.parser, rebuilt as an lxml tree."""
    import warnings as py_warnings

    from bs4 import BeautifulSoup

    warnings.append("lxml could not parse the page: read with beautifulsoup4's html.parser")
    with py_warnings.catch_warnings():  # bs4 warns about XHTML read as HTML: we know
        py_warnings.simplefilter("ignore")
        soup = BeautifulSoup(data, "html.parser", from_encoding="utf-8")
    return soup_to_etree(soup)


def soup_to_etree(soup: Any) -> etree._Element | None:
    """Convert a BeautifulSoup tree into lxml elements, iteratively, flattening past MAX_DEPTH.

    Element line numbers come from bs4's `sourceline` when its tree builder records them.
    """
    from bs4.element import Comment, Declaration, Doctype, NavigableString, ProcessingInstruction, Tag

    skip = (Comment, Declaration, Doctype, ProcessingInstruction)
    root = etree.Element("html")
    top = soup.find("html")
    if top is None:
        target = etree.SubElement(root, "body")
        start_children = list(soup.contents)
    else:
        _copy_attrs(top, root)
        start_children = list(top.contents)
        target = root
    # Frames: [lxml parent, iterator over bs4 children, depth, last lxml child or None]. The last
    # child is tracked because len(element) walks libxml2's child list (quadratic on wide trees).
    stack: list[list[Any]] = [[target, iter(start_children), 1, None]]
    while stack:
        frame = stack[-1]
        parent, it, depth, last = frame
        node = next(it, None)
        if node is None:
            stack.pop()
            continue
        if isinstance(node, skip):
            continue
        if isinstance(node, NavigableString):
            _append_text(parent, last, str(node))
            continue
        if not isinstance(node, Tag):
            continue
        if depth >= MAX_DEPTH:
            # Flatten: text of the whole subtree into the parent, block boundaries as spaces.
            _append_text(parent, last, " " + node.get_text(" ") + " ")
            continue
        try:
            el = etree.SubElement(parent, node.name.lower())
        except ValueError:  # a tag name lxml refuses: keep its text
            _append_text(parent, last, node.get_text(" "))
            continue
        _copy_attrs(node, el)
        if getattr(node, "sourceline", None):
            el.sourceline = node.sourceline
        frame[3] = el
        stack.append([el, iter(list(node.contents)), depth + 1, None])
    return root


def _copy_attrs(tag: Any, el: etree._Element) -> None:
    for key, value in tag.attrs.items():
        if isinstance(value, list):
            value = " ".join(value)
        try:
            el.set(key, str(value))
        except (ValueError, TypeError):
            continue


def _append_text(parent: etree._Element, last: etree._Element | None, text: str) -> None:
    if last is not None:
        last.tail = (last.tail or "") + text
    else:
        parent.text = (parent.text or "") + text
