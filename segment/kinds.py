"""Block kinds and their rules: one row per kind, keyed by `BlockKind`.

A row says how a block of its kind is walked (the blocks nested in it, the texts a reader sees
in it, its line in the `pretty()` form), rendered as chunk text and split when over budget.
Adding a block kind is a node class in `segment.tree`, its `BlockKind` value and one row here.
The rules receive what they recurse through (`render`, the `Splitter`) rather than looking it
up, as a renderer's rules keyed by token type receive the renderer.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from typing import Any

from segment import render, split
from segment.render import Render
from segment.split import Part, Splitter
from segment.tokens import TokenCounter
from segment.tree import (
    Block,
    BlockKind,
    Code,
    Definition,
    DefinitionList,
    ListBlock,
    ListItem,
    Paragraph,
    Quote,
    Table,
    span_text,
)


@dataclass(frozen=True, slots=True)
class KindRules:
    """Everything kind-specific about one block kind. Each callable receives a block of its kind."""

    node: type[Any]
    """The tree class of the kind's blocks."""
    children: Callable[[Any], list[Block]]
    """Blocks nested directly inside (list items', quotes', definitions' blocks)."""
    texts: Callable[[Any], Iterable[str]]
    """Texts a reader sees in the block itself, nested blocks excluded."""
    describe: Callable[[Any], tuple[list[str], list[object]]]
    """Its lines in `segment.tree.pretty` (without indentation) and the nodes shown beneath it."""
    render: Callable[[Any, Render], str]
    """Its text in a chunk."""
    split: Callable[[Splitter, Any, int, int], list[Part]]
    """Its parts, the first fitting the first budget, the others the second."""


def _no_children(block: Any) -> list[Block]:
    return []


def _list_children(block: ListBlock | DefinitionList) -> list[Block]:
    return [b for item in block.items for b in item.blocks]


def _describe_paragraph(block: Paragraph) -> tuple[list[str], list[object]]:
    return [f"paragraph {span_text(block.span)} {block.text!r}"], []


def _describe_list(block: ListBlock) -> tuple[list[str], list[object]]:
    kind = f"ordered start={block.start}" if block.ordered else "bullet"
    return [f"list {kind} {span_text(block.span)}"], list(block.items)


def _describe_table(block: Table) -> tuple[list[str], list[object]]:
    cap = f" caption={block.caption!r}" if block.caption else ""
    lines = [f"table{cap} {span_text(block.span)}"]
    lines += [f"  header {row.cells!r}" for row in block.header]
    lines += [f"  row {span_text(row.span)} {row.cells!r}" for row in block.rows]
    return lines, []


def _describe_code(block: Code) -> tuple[list[str], list[object]]:
    head = f"code lang={block.language!r} {span_text(block.span)} lines={len(block.lines)}"
    return [head, *(f"  | {line}" for line in block.lines)], []


def _describe_quote(block: Quote) -> tuple[list[str], list[object]]:
    label = f" label={block.label!r}" if block.label else ""
    return [f"quote{label} {span_text(block.span)}"], list(block.blocks)


def _describe_definitions(block: DefinitionList) -> tuple[list[str], list[object]]:
    return [f"definitions {span_text(block.span)}"], list(block.items)


def _table_texts(block: Table) -> Iterable[str]:
    if block.caption:
        yield block.caption
    for row in [*block.header, *block.rows]:
        yield from row.cells


RULES: dict[BlockKind, KindRules] = {
    BlockKind.PARAGRAPH: KindRules(
        node=Paragraph,
        children=_no_children,
        texts=lambda b: [b.text],
        describe=_describe_paragraph,
        render=render.render_paragraph,
        split=split.split_paragraph,
    ),
    BlockKind.LIST: KindRules(
        node=ListBlock,
        children=_list_children,
        texts=lambda b: [],
        describe=_describe_list,
        render=render.render_list,
        split=split.split_list,
    ),
    BlockKind.TABLE: KindRules(
        node=Table,
        children=_no_children,
        texts=_table_texts,
        describe=_describe_table,
        render=render.render_table,
        split=split.split_table,
    ),
    BlockKind.CODE: KindRules(
        node=Code,
        children=_no_children,
        texts=lambda b: b.lines,
        describe=_describe_code,
        render=render.render_code,
        split=split.split_code,
    ),
    BlockKind.QUOTE: KindRules(
        node=Quote,
        children=lambda b: list(b.blocks),
        texts=lambda b: [b.label] if b.label else [],
        describe=_describe_quote,
        render=render.render_quote,
        split=split.split_quote,
    ),
    BlockKind.DEFINITIONS: KindRules(
        node=DefinitionList,
        children=_list_children,
        texts=lambda b: [term for item in b.items for term in item.terms],
        describe=_describe_definitions,
        render=render.render_definitions,
        split=split.split_definitions,
    ),
}
"""The rules of every block kind. `BlockKind.HEADING` names heading lines in chunks, not a block."""


def render_block(block: Block) -> str:
    """The text of one block as it appears in a chunk."""
    return RULES[block.kind].render(block, render_block)


def block_children(block: Block) -> list[Block]:
    """Blocks nested directly inside a block."""
    return RULES[block.kind].children(block)


def block_texts(block: Block) -> Iterable[str]:
    """Texts a reader sees in the block itself, nested blocks excluded."""
    return RULES[block.kind].texts(block)


def describe_node(node: object) -> tuple[list[str], list[object]]:
    """Lines of `pretty()` for a block or a block's item, and the nodes shown beneath it."""
    if isinstance(node, ListItem):
        return [f"item {span_text(node.span)}"], list(node.blocks)
    if isinstance(node, Definition):
        return [f"term {node.terms!r} {span_text(node.span)}"], list(node.blocks)
    kind = getattr(node, "kind", None)
    if isinstance(kind, BlockKind) and kind in RULES:
        return RULES[kind].describe(node)
    raise TypeError(f"not a node of the tree: {type(node).__name__}")


def splitter(counter: TokenCounter, language: str) -> Splitter:
    """A `Splitter` that knows every kind's rules."""
    return Splitter(counter, language, RULES)
