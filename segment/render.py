"""Blocks of the tree as chunk text: plain paragraphs, marked lists, pipe tables, fenced code."""

from __future__ import annotations

from segment.tree import (
    Block,
    Code,
    Definition,
    DefinitionList,
    ListBlock,
    ListItem,
    Paragraph,
    Quote,
    Row,
    Table,
)

INDENT = "  "


def render_block(block: Block) -> str:
    """The text of one block as it appears in a chunk."""
    if isinstance(block, Paragraph):
        return block.text
    if isinstance(block, ListBlock):
        return "\n".join(render_item(block, i) for i in range(len(block.items)))
    if isinstance(block, Table):
        return "\n".join(table_prefix(block) + [render_row(r) for r in block.rows])
    if isinstance(block, Code):
        return code_fence(block) + "\n" + "\n".join(block.lines) + "\n```"
    if isinstance(block, Quote):
        return quote_label(block) + "\n\n".join(render_block(b) for b in block.blocks)
    if isinstance(block, DefinitionList):
        return "\n".join(render_definition(d) for d in block.items)
    raise TypeError(f"not a block: {type(block).__name__}")


def item_marker(block: ListBlock, index: int) -> str:
    """`- ` for bullets, `N. ` for ordered items."""
    return f"{block.start + index}. " if block.ordered else "- "


def render_item(block: ListBlock, index: int) -> str:
    """One list item with its marker; nested blocks indented under it."""
    return _with_marker(item_marker(block, index), block.items[index])


def _with_marker(marker: str, item: ListItem) -> str:
    parts = [render_block(b) for b in item.blocks]
    text = "\n".join(parts) if parts else ""
    pad = " " * len(marker)
    lines = text.split("\n")
    return marker + lines[0] + "".join("\n" + (pad + line if line else line) for line in lines[1:])


def render_definition(item: Definition) -> str:
    """Terms on one line, each definition block indented beneath."""
    head = "; ".join(item.terms)
    body = [INDENT + line if line else line for b in item.blocks for line in render_block(b).split("\n")]
    return head + ("\n" + "\n".join(body) if body else "")


def _cell(text: str) -> str:
    return " ".join(text.split()).replace("|", "\\|")


def render_row(row: Row) -> str:
    """A pipe-table row: `| a | b |`."""
    return "| " + " | ".join(_cell(c) for c in row.cells) + " |"


def table_prefix(table: Table) -> list[str]:
    """Caption, header rows and the separator line: repeated at the top of every part of a table."""
    out: list[str] = []
    if table.caption:
        out.append(table.caption)
    if table.header:
        out.extend(render_row(r) for r in table.header)
        width = max(len(r.cells) for r in table.header)
        out.append("|" + " --- |" * width)
    return out


def code_fence(code: Code) -> str:
    """Opening fence with the language, if known."""
    return "```" + (code.language or "")


def quote_label(quote: Quote) -> str:
    """`Note: ` style label of an alert or admonition, empty for a plain quote."""
    return f"{quote.label}: " if quote.label else ""
