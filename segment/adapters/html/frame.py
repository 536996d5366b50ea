"""The walk's stack entries: a frame reads one element's children; a container is what it builds.

A `Frame` is a reading position: the element, the iterator over its children, where blocks go,
the source lines seen so far and the inline text gathered since the last block. When the frame's
element opened a container block (a list, an item, a quote, definitions), the frame also holds a
`Container`: the block being filled and where it goes once the element ends.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from enum import StrEnum

from lxml import etree

from segment.tree import Block, Definition, DefinitionList, ListBlock, ListItem, Quote

Sink = list[Block] | None
"""Where blocks go: a container's block list, or None for the section flow."""


class FrameMode(StrEnum):
    """How a frame reads the children of its element."""

    FLOW = "flow"
    """Inline children gather into paragraphs, block children become blocks, into the sink."""
    LIST_ITEMS = "list-items"
    """`li` children become items of the list; any other child joins the last item."""
    DEFINITIONS = "definitions"
    """`dt` children add terms, `dd` children definitions, `div` children are groups of both."""
    TABS = "tabs"
    """A tab set: each `label` child is a tab's label, read as a lead-in line before its body."""


ContainerNode = ListBlock | DefinitionList | Quote | ListItem | Definition
"""Blocks (and parts of blocks) that a frame fills from its element's children."""


@dataclass(slots=True)
class Container:
    """A container block a frame builds, finished when the frame's element ends."""

    node: ContainerNode
    parent_sink: Sink = None
    """Where the finished block goes; unused for items, which join their list when they open."""
    counted: bool = True
    """The block counts towards the nesting depth cap (a frame over a stray child does not)."""


@dataclass(slots=True)
class Frame:
    """One element being read: its children in order, and the inline run gathered so far."""

    el: etree._Element | None
    """None for a frame made to read one stray child into the last list item or definition."""
    children: Iterator[etree._Element]
    sink: Sink
    mode: FrameMode = FrameMode.FLOW
    items_of: ListBlock | DefinitionList | None = None
    """The list or definition list whose items this frame adds (list-items and definitions modes)."""
    container: Container | None = None
    start: int | None = None
    """Source line where the element starts."""
    line: int | None = None
    """The latest source line read inside the element so far."""
    run_line: int | None = None
    """Source line where the inline run in `parts` starts."""
    parts: list[str] = field(default_factory=list)
    """Raw inline text gathered since the last block; it becomes one paragraph."""

    def list_block(self) -> ListBlock:
        """The list this frame fills (list-items mode)."""
        assert isinstance(self.items_of, ListBlock), "a list-items frame holds its list"
        return self.items_of

    def definition_list(self) -> DefinitionList:
        """The definition list this frame fills (definitions mode)."""
        assert isinstance(self.items_of, DefinitionList), "a definitions frame holds its list"
        return self.items_of


def later(a: int | None, b: int | None) -> int | None:
    """The later of two source lines, either of which may be unknown."""
    if a is None:
        return b
    if b is None:
        return a
    return a if a >= b else b


def line_span(start: int | None, end: int | None) -> tuple[int, int] | None:
    """A line range from `start` to `end` (never before `start`); None when `start` is unknown."""
    if start is None:
        return None
    return (start, max(start, end or start))
