"""The common tree every adapter produces and the segmenter consumes.

A `Document` has a root `Section` (no heading) whose blocks are the text before the first
heading and whose children are the top-level sections. Every node carries a `Span` saying where
it came from: 1-based inclusive line range for Markdown and HTML, page range for PDF.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any


@dataclass(slots=True, frozen=True)
class Span:
    """Where a node came from in its source file."""

    lines: tuple[int, int] | None = None
    """1-based inclusive line range (Markdown, HTML)."""
    pages: tuple[int, int] | None = None
    """1-based inclusive page range (PDF)."""
    bbox: tuple[float, float, float, float] | None = None
    """Bounding box (x0, y0, x1, y1) of the node's first block on its first page (PDF)."""

    def merge(self, other: Span) -> Span:
        """The smallest span covering both; the bounding box of the first is kept."""
        return Span(
            lines=_union(self.lines, other.lines),
            pages=_union(self.pages, other.pages),
            bbox=self.bbox if self.bbox is not None else other.bbox,
        )


def _union(a: tuple[int, int] | None, b: tuple[int, int] | None) -> tuple[int, int] | None:
    if a is None:
        return b
    if b is None:
        return a
    return (min(a[0], b[0]), max(a[1], b[1]))


def merge_spans(spans: list[Span]) -> Span:
    """Merge many spans; an empty list gives an empty span (one pass: it runs for every
    section and every chunk)."""
    first = last = first_page = last_page = -1
    bbox = None
    for span in spans:
        if span.lines is not None:
            a, b = span.lines
            if first < 0 or a < first:
                first = a
            if b > last:
                last = b
        if span.pages is not None:
            a, b = span.pages
            if first_page < 0 or a < first_page:
                first_page = a
            if b > last_page:
                last_page = b
        if bbox is None:
            bbox = span.bbox
    return Span(
        lines=(first, last) if first >= 0 else None,
        pages=(first_page, last_page) if first_page >= 0 else None,
        bbox=bbox,
    )


class BlockKind(StrEnum):
    """Kinds of block; the values are the strings that appear in `Chunk.blocks`."""

    PARAGRAPH = "paragraph"
    LIST = "list"
    TABLE = "table"
    CODE = "code"
    QUOTE = "quote"
    DEFINITIONS = "definitions"
    HEADING = "heading"


@dataclass(slots=True)
class Heading:
    """A section heading: plain text, level 1-6 (deeper levels allowed for PDF), anchor."""

    text: str
    level: int
    anchor: str | None = None
    span: Span = field(default_factory=Span)


@dataclass(slots=True)
class Paragraph:
    """Running text. Line breaks inside are kept as `\\n` only where the source forced them."""

    text: str
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.PARAGRAPH, init=False)
    line_starts: list[int] = field(default_factory=list)
    """Offsets in `text` where source lines after the first begin (lets a split part know its lines)."""


@dataclass(slots=True)
class ListItem:
    """One list item; its blocks may hold paragraphs, nested lists, code..."""

    blocks: list[Block] = field(default_factory=list)
    span: Span = field(default_factory=Span)


@dataclass(slots=True)
class ListBlock:
    """An ordered or unordered list."""

    items: list[ListItem] = field(default_factory=list)
    ordered: bool = False
    start: int = 1
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.LIST, init=False)


@dataclass(slots=True)
class Row:
    """One table row: cell texts, already expanded for column and row spans."""

    cells: list[str]
    span: Span = field(default_factory=Span)


@dataclass(slots=True)
class Table:
    """A table: optional caption, header rows, body rows."""

    header: list[Row] = field(default_factory=list)
    rows: list[Row] = field(default_factory=list)
    caption: str | None = None
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.TABLE, init=False)


@dataclass(slots=True)
class Code:
    """Preformatted code: its lines exactly, and the language when the source names one."""

    lines: list[str]
    language: str | None = None
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.CODE, init=False)
    first_line: int | None = None
    """Source line of `lines[0]`, when known (a fence's opening line is not part of the code)."""


@dataclass(slots=True)
class Quote:
    """A block quote or an admonition box; `label` is e.g. "Note" for an alert."""

    blocks: list[Block] = field(default_factory=list)
    label: str | None = None
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.QUOTE, init=False)


@dataclass(slots=True)
class Definition:
    """One entry of a definition list: its terms and the blocks that define them."""

    terms: list[str]
    blocks: list[Block] = field(default_factory=list)
    span: Span = field(default_factory=Span)


@dataclass(slots=True)
class DefinitionList:
    """Terms with their definitions (HTML `dl`, API parameter lists)."""

    items: list[Definition] = field(default_factory=list)
    span: Span = field(default_factory=Span)
    kind: BlockKind = field(default=BlockKind.DEFINITIONS, init=False)


Block = Paragraph | ListBlock | Table | Code | Quote | DefinitionList
"""Any block node."""


@dataclass(slots=True)
class Section:
    """A heading with its own blocks and its child sections. The root section has no heading."""

    heading: Heading | None = None
    blocks: list[Block] = field(default_factory=list)
    children: list[Section] = field(default_factory=list)
    span: Span = field(default_factory=Span)

    @property
    def level(self) -> int:
        """Heading level; 0 for the root."""
        return self.heading.level if self.heading else 0


class TitleOrigin(StrEnum):
    """Where a document's title came from."""

    SOURCE = "source"
    """Written by the author: front matter, a title element, document information, a top heading."""
    FILE_NAME = "file_name"
    """Derived by docsegment from the file name (or its folder's, for an index page)."""


@dataclass(slots=True)
class Document:
    """One parsed source file."""

    source: str
    format: str
    title: str | None = None
    metadata: dict[str, Any] = field(default_factory=dict)
    root: Section = field(default_factory=Section)
    warnings: list[str] = field(default_factory=list)
    """What the adapter could not keep or had to guess, for the file's result (never silent)."""
    properties: dict[str, Any] = field(default_factory=dict)
    """The source's own declared properties (front matter, HTML meta, PDF document information):
    JSON scalars or lists of scalars, nothing of ours. Filled by the adapters."""
    title_origin: TitleOrigin = TitleOrigin.SOURCE
    """Where `title` came from: the author's text, or derived from the file name when the source
    declares no title and has no top-level heading (see `segment.api.parse_bytes`)."""
    repaired: bool = False
    """The file was damaged and its reader had to repair it, so its text may be partial."""

    @property
    def sections(self) -> list[Section]:
        """Top-level sections."""
        return self.root.children

    def walk(self) -> Iterator[tuple[list[Section], Section]]:
        """Every section depth-first, with the path of its ancestors (root excluded)."""
        stack: list[tuple[list[Section], Section]] = [([], self.root)]
        while stack:
            path, section = stack.pop()
            yield path, section
            child_path = path + [section] if section.heading else path
            for child in reversed(section.children):
                stack.append((child_path, child))


class SectionBuilder:
    """Nests headings into sections as an adapter meets them in reading order."""

    def __init__(self, root: Section) -> None:
        self.root = root
        self._stack: list[Section] = [root]

    @property
    def current(self) -> Section:
        """The section new blocks go into."""
        return self._stack[-1]

    def open(self, heading: Heading) -> Section:
        """Start a section for `heading`, closing any open section at the same or deeper level."""
        while len(self._stack) > 1 and self._stack[-1].level >= heading.level:
            self._stack.pop()
        section = Section(heading=heading, span=heading.span)
        self._stack[-1].children.append(section)
        self._stack.append(section)
        return section

    def add(self, block: Block) -> None:
        """Add a block to the current section."""
        self.current.blocks.append(block)


def finish_spans(section: Section) -> None:
    """Set every section's span to cover its heading, blocks and children (iteratively)."""
    order: list[Section] = []
    stack = [section]
    while stack:
        node = stack.pop()
        order.append(node)
        stack.extend(node.children)
    for node in reversed(order):
        parts = [node.heading.span] if node.heading else []
        parts += [b.span for b in node.blocks] + [c.span for c in node.children]
        node.span = merge_spans(parts)


def block_children(block: Block) -> list[Block]:
    """Blocks nested directly inside a block (list items', quotes', definitions')."""
    from segment.kinds import block_children as children  # the rules of each kind: segment.kinds

    return children(block)


def visible_texts(document: Document, title: bool = True) -> Iterator[str]:
    """Every text a reader sees in the tree: title (unless `title=False`; a title derived from the
    file name is not in the source), headings, paragraphs, code lines, table captions and cells,
    quote labels, terms (iteratively; order not kept)."""
    from segment.kinds import RULES

    if title and document.title and document.title_origin is not TitleOrigin.FILE_NAME:
        yield document.title
    stack: list[Block] = []
    for _path, section in document.walk():
        if section.heading is not None:
            yield section.heading.text
        stack.extend(section.blocks)
    while stack:
        block = stack.pop()
        rules = RULES[block.kind]
        yield from rules.texts(block)
        stack.extend(rules.children(block))


def pretty(document: Document) -> str:
    """A readable, diffable text form of the tree (used by `segment tree` and golden files)."""
    from segment.kinds import describe_node

    out: list[str] = [f"document format={document.format} title={document.title!r}"]
    if document.title_origin != TitleOrigin.SOURCE:
        out[0] += f" title_origin={document.title_origin.value}"
    for key in sorted(document.metadata):
        out.append(f"  meta {key}={document.metadata[key]!r}")
    for warning in document.warnings:
        out.append(f"  warning {warning}")
    # Iterative walk: (depth, node) pairs; nodes are sections, blocks and their items.
    stack: list[tuple[int, object]] = [(1, document.root)]
    while stack:
        depth, node = stack.pop()
        pad = "  " * depth
        if isinstance(node, Section):
            if node.heading is not None:
                h = node.heading
                anchor = f" #{h.anchor}" if h.anchor else ""
                out.append(f"{pad}section h{h.level} {h.text!r}{anchor} {span_text(h.span)}")
            else:
                out.append(f"{pad}root {span_text(node.span)}")
            children: list[object] = [*node.blocks, *node.children]
        else:
            lines, children = describe_node(node)
            out.extend(pad + line for line in lines)
        for child in reversed(children):
            stack.append((depth + 1, child))
    return "\n".join(out) + "\n"


def span_text(span: Span) -> str:
    """A span as `[L3-7 p1-2]` (the `pretty()` form)."""
    parts = []
    if span.lines:
        parts.append(f"L{span.lines[0]}-{span.lines[1]}")
    if span.pages:
        parts.append(f"p{span.pages[0]}-{span.pages[1]}")
    return "[" + " ".join(parts) + "]"
