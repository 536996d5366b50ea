"""Container blocks finished when their element ends: lists, items, definitions and quotes.

`finish` takes the block a frame filled and the lines its element covered, and returns the block
to add where the element stood, or None when nothing is left to add (an empty list, an item that
already sits in its list).
"""

from __future__ import annotations

import re
from collections.abc import Callable

from lxml import etree

from segment.adapters.html.frame import ContainerNode
from segment.tree import Block, Definition, DefinitionList, ListBlock, ListItem, Paragraph, Quote, Span

_ALERT = re.compile(r"^\[!(\w+)\][ \t]*\n?")
"""GitHub's alert syntax as markdown-it renders it inside a blockquote: `[!NOTE]` first."""

Lines = tuple[int, int] | None


def finish(node: ContainerNode, lines: Lines) -> Block | None:
    """The finished block for `node`, or None when there is nothing to add."""
    return _FINISHERS[type(node)](node, lines)


def list_start(el: etree._Element) -> int:
    """The first number of an `ol` (its `start` attribute; 1 when missing or not a number)."""
    try:
        return int((el.get("start") or "1").strip())
    except ValueError:
        return 1


def _finish_list(node: ContainerNode, lines: Lines) -> Block | None:
    assert isinstance(node, ListBlock)
    if not node.items:
        return None
    node.span = Span(lines=lines)
    return node


def _finish_definitions(node: ContainerNode, lines: Lines) -> Block | None:
    assert isinstance(node, DefinitionList)
    node.items = [d for d in node.items if d.terms or d.blocks]
    if not node.items:
        return None
    node.span = Span(lines=lines)
    return node


def _finish_item(node: ContainerNode, lines: Lines) -> Block | None:
    assert isinstance(node, ListItem | Definition)
    node.span = node.span.merge(Span(lines=lines))
    return None


def _finish_quote(node: ContainerNode, lines: Lines) -> Block | None:
    assert isinstance(node, Quote)
    first = node.blocks[0] if node.blocks and isinstance(node.blocks[0], Paragraph) else None
    if node.label is None and first is not None:
        m = _ALERT.match(first.text)
        if m:  # labelled as the Markdown adapter labels the same alert
            node.label = m.group(1).capitalize()
            first.text = first.text[m.end() :].strip()
            if not first.text:
                node.blocks.pop(0)
    elif node.label and first is not None and first.text.casefold().startswith(node.label.casefold() + ":"):
        node.label = None  # the text says "Note: ..." itself; a label would repeat it
    if not node.blocks and not node.label:
        return None
    node.span = Span(lines=lines)
    return node


_FINISHERS: dict[type, Callable[[ContainerNode, Lines], Block | None]] = {
    ListBlock: _finish_list,
    DefinitionList: _finish_definitions,
    ListItem: _finish_item,
    Definition: _finish_item,
    Quote: _finish_quote,
}
