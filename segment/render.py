"""Blocks of the tree as chunk text: plain paragraphs, marked lists, pipe tables, fenced code.

Each kind's rule takes the block and `render`, the renderer of any block (so that kinds holding
other blocks render them without knowing their kinds); `segment.kinds` keys the rules by kind.
"""

from __future__ import annotations

import re
from collections.abc import Callable

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

Render = Callable[[Block], str]
"""Renders any block as chunk text (`segment.kinds.render_block`)."""


def render_paragraph(block: Paragraph, render: Render) -> str:
    """Running text as it stands."""
    return block.text


def render_list(block: ListBlock, render: Render) -> str:
    """Every item with its marker, one after the other."""
    return "\n".join(render_item(block, i, render) for i in range(len(block.items)))


def render_table(block: Table, render: Render) -> str:
    """Caption, header, separator and body rows as a pipe table."""
    return "\n".join(table_prefix(block) + [render_row(r) for r in block.rows])


def render_code(block: Code, render: Render) -> str:
    """The lines between an opening and a closing fence."""
    return code_fence(block) + "\n" + "\n".join(block.lines) + "\n" + closing_fence(block)


def render_quote(block: Quote, render: Render) -> str:
    """The label (if any), then the quoted blocks apart by blank lines."""
    return quote_label(block) + "\n\n".join(render(b) for b in block.blocks)


def render_definitions(block: DefinitionList, render: Render) -> str:
    """Each entry: its terms, then its definitions indented."""
    return "\n".join(render_definition(d, render) for d in block.items)


def item_marker(block: ListBlock, index: int) -> str:
    """`- ` for bullets, `N. ` for ordered items."""
    return f"{block.start + index}. " if block.ordered else "- "


def render_item(block: ListBlock, index: int, render: Render) -> str:
    """One list item with its marker; nested blocks indented under it."""
    return _with_marker(item_marker(block, index), block.items[index], render)


def _with_marker(marker: str, item: ListItem, render: Render) -> str:
    parts = [render(b) for b in item.blocks]
    text = "\n".join(parts) if parts else ""
    pad = " " * len(marker)
    lines = text.split("\n")
    return marker + lines[0] + "".join("\n" + (pad + line if line else line) for line in lines[1:])


def render_definition(item: Definition, render: Render) -> str:
    """Terms on one line, each definition block indented beneath."""
    head = "; ".join(item.terms)
    body = [INDENT + line if line else line for b in item.blocks for line in render(b).split("\n")]
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
    """Opening fence with the language, if known.

    CommonMark 0.31.2, section 4.5 "Fenced code blocks": a block closes at the first line holding
    a run of the fence character at least as long as the opening fence, and a backtick fence's
    info string may not contain a backtick. So the fence is one longer than the longest run of
    its character in the lines (at least three), and tildes when the language holds a backtick."""
    char = "~" if code.language and "`" in code.language else "`"
    return _fence(code, char) + (code.language or "")


def closing_fence(code: Code) -> str:
    """The fence that closes `code_fence(code)`."""
    return _fence(code, "~" if code.language and "`" in code.language else "`")


def _fence(code: Code, char: str) -> str:
    longest = 0
    for line in code.lines:
        if char * 3 in line:
            longest = max(longest, *(len(run) for run in _RUNS[char].findall(line)))
    return char * max(3, longest + 1)


_RUNS = {"`": re.compile("`{3,}"), "~": re.compile("~{3,}")}


def quote_label(quote: Quote) -> str:
    """`Note: ` style label of an alert or admonition, empty for a plain quote."""
    return f"{quote.label}: " if quote.label else ""
