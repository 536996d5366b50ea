"""doctree -> common tree: sections with levels from docutils, blocks by node class.

- The document title (docutils promotes a lone top section's title) is a level-1 section holding
  everything; sections below it count on from level 2, as docutils' HTML writer numbers them.
- Docinfo fields (author, version, date...) fill `Document.properties` and stay visible as a
  definition list, as docutils shows them.
- Field, option and definition lists become definition lists; admonitions labelled quotes;
  footnotes and citations a definition list ("[1]" as the term) at the end of their section.
- Tables follow docutils' table model: `morecols`/`morerows` spans expanded (each spanned cell
  repeats the text), header rows kept, the title as caption.
- Inline markup reduces to the text a reader sees; inline literals keep backticks, footnote
  references read "[1]", images their alt text.
- Containers nested past `MAX_BLOCK_DEPTH` are kept as paragraphs of their text, with a warning.
"""

from __future__ import annotations

from typing import Any

from docutils import nodes
from docutils.languages import get_language

from segment.adapters import MAX_BLOCK_DEPTH
from segment.adapters.rst.lines import LineMap
from segment.tree import (
    Block,
    Code,
    Definition,
    DefinitionList,
    Document,
    Heading,
    ListBlock,
    ListItem,
    Paragraph,
    Quote,
    Row,
    Section,
    Span,
    Table,
    finish_spans,
)

_LABELS: dict[str, str] = get_language("en").labels
_SKIP = (
    nodes.comment,
    nodes.target,
    nodes.substitution_definition,
    nodes.pending,
    nodes.raw,
    nodes.system_message,
    nodes.transition,
    nodes.decoration,
    nodes.meta,
    nodes.title,
)
_NOTES = (nodes.footnote, nodes.citation)
_BIBLIOGRAPHIC = {
    nodes.author: "author",
    nodes.organization: "organization",
    nodes.address: "address",
    nodes.contact: "contact",
    nodes.version: "version",
    nodes.revision: "revision",
    nodes.status: "status",
    nodes.date: "date",
    nodes.copyright: "copyright",
}


class TreeBuilder:
    """Fills a Document from one doctree."""

    def __init__(self, doc: Document, lines: LineMap) -> None:
        self.doc = doc
        self.lines = lines
        self.flattened = False

    def build(self, document: nodes.document) -> None:
        """Map the whole doctree into `self.doc`."""
        root = self.doc.root
        title = _first(document, nodes.title)
        if title is not None:
            text = self.inline(title)
            self.doc.title = " ".join(text.split()) or None
            top = Section(heading=self.heading(title, 1, document))
            root.children.append(top)
            self.fill(top, document, 2)
        else:
            self.fill(root, document, 1)
        fill_missing_spans(root)
        finish_spans(root)
        if self.flattened:
            self.doc.warnings.append(
                f"lists and quotes nested deeper than {MAX_BLOCK_DEPTH} blocks read as paragraphs"
            )

    def heading(self, title: nodes.Element, level: int, section: nodes.Element) -> Heading:
        ids: list[str] = list(section.get("ids", []))
        # A section's own id comes first; ids propagated from `.. _label:` targets follow it.
        anchor = ids[1] if len(ids) > 1 else (ids[0] if ids else None)
        text = " ".join(self.inline(title).split())
        return Heading(text=text, level=level, anchor=anchor, span=self.lines.title_span(title))

    def fill(self, section: Section, node: nodes.Element, level: int) -> None:
        """Blocks and subsections of a section (or of the document)."""
        notes: list[nodes.Element] = []
        body: list[nodes.Node] = []
        for child in node.children:
            if isinstance(child, nodes.section):
                if "system-messages" in child.get("classes", []):
                    continue
                title = _first(child, nodes.title)
                if title is None:
                    continue
                sub = Section(heading=self.heading(title, level, child))
                section.children.append(sub)
                self.fill(sub, child, level + 1)
            elif isinstance(child, _NOTES):
                notes.append(child)
            elif isinstance(child, nodes.subtitle):
                body.append(nodes.paragraph(child.rawsource, "", *child.children))
                body[-1].line = child.line
            elif isinstance(child, nodes.docinfo):
                self.docinfo(child)
                body.append(child)
            else:
                body.append(child)
        section.blocks.extend(self.blocks(body, 0))
        if notes:
            section.blocks.append(self.notes(notes))

    # ----- blocks ------------------------------------------------------------------------------

    def blocks(self, children: list[nodes.Node], depth: int) -> list[Block]:
        out: list[Block] = []
        for child in children:
            out.extend(self.block(child, depth))
        return out

    def block(self, node: nodes.Node, depth: int) -> list[Block]:
        if isinstance(node, nodes.Text):
            text = " ".join(node.astext().split())  # astext resolves docutils' escape markers
            return [Paragraph(text=text)] if text else []
        if isinstance(node, nodes.decoration) and node.astext().strip():
            # Page header and footer (`.. header::`, `.. footer::`): page chrome, like a PDF's
            # running heads, so left out, but never silently.
            words = len(node.astext().split())
            self.doc.warnings.append(f"page header/footer left out: {words} words")
            return []
        if not isinstance(node, nodes.Element) or isinstance(node, _SKIP):
            return []
        container = isinstance(
            node,
            (
                nodes.bullet_list,
                nodes.enumerated_list,
                nodes.definition_list,
                nodes.field_list,
                nodes.option_list,
                nodes.docinfo,
                nodes.block_quote,
                nodes.Admonition,
                nodes.topic,
                nodes.sidebar,
            ),
        )
        if container and depth >= MAX_BLOCK_DEPTH:
            self.flattened = True
            return self.flat(node)
        span = self.lines.span(node)
        if isinstance(node, nodes.paragraph | nodes.rubric | nodes.caption | nodes.attribution):
            return self.paragraph(node)
        if isinstance(node, nodes.bullet_list | nodes.enumerated_list):
            ordered = isinstance(node, nodes.enumerated_list)
            items = [
                ListItem(blocks=self.blocks(list(item.children), depth + 1), span=self.lines.span(item))
                for item in node.children
                if isinstance(item, nodes.list_item)
            ]
            return [ListBlock(items=items, ordered=ordered, start=int(node.get("start", 1)), span=span)]
        if isinstance(node, nodes.definition_list):
            return [self.definitions(node, depth)]
        if isinstance(node, nodes.field_list | nodes.docinfo):
            return [self.fields(node, depth)]
        if isinstance(node, nodes.option_list):
            return [self.options(node, depth)]
        if isinstance(node, nodes.literal_block | nodes.doctest_block):
            return [self.code(node, span)]
        if isinstance(node, nodes.math_block):
            return [
                Code(
                    lines=node.astext().split("\n"),
                    language="latex",
                    span=span,
                    first_line=span.lines[0] if span.lines else None,
                )
            ]
        if isinstance(node, nodes.line_block):
            return self.line_block(node, span)
        if isinstance(node, nodes.block_quote):
            return [Quote(blocks=self.blocks(list(node.children), depth + 1), span=span)]
        if isinstance(node, nodes.Admonition):
            return [self.admonition(node, depth, span)]
        if isinstance(node, nodes.topic | nodes.sidebar):
            if "contents" in node.get("classes", []):
                return []  # a generated table of contents: navigation, not text
            label = _first(node, nodes.title)
            inner = [c for c in node.children if not isinstance(c, nodes.title)]
            return [
                Quote(
                    blocks=self.blocks(inner, depth + 1),
                    label=" ".join(self.inline(label).split()) if label is not None else None,
                    span=span,
                )
            ]
        if isinstance(node, nodes.table):
            return [self.table(node, span)]
        if isinstance(node, _NOTES):
            return [self.notes([node])]
        if isinstance(node, nodes.image):
            alt = " ".join(str(node.get("alt", "")).split())
            return [Paragraph(text=alt, span=span)] if alt else []
        if isinstance(node, nodes.TextElement):
            return self.paragraph(node)
        # figure, compound, container, legend and unknown wrappers: their blocks in order.
        return self.blocks(list(node.children), depth)

    def flat(self, node: nodes.Element) -> list[Block]:
        text = " ".join(node.astext().split())
        return [Paragraph(text=text, span=self.lines.span(node))] if text else []

    def paragraph(self, node: nodes.Element) -> list[Block]:
        raw = self.inline(node)
        if isinstance(node, nodes.attribution):
            raw = "\u2014 " + raw
        text = raw.replace("\n", " ").strip()
        if not text.strip():
            return []
        lead = len(raw) - len(raw.lstrip())
        starts = [i + 1 - lead for i, ch in enumerate(raw) if ch == "\n" and 0 < i + 1 - lead < len(text)]
        return [Paragraph(text=text, span=self.lines.span(node), line_starts=starts)]

    def line_block(self, node: nodes.Element, span: Any) -> list[Block]:
        lines: list[str] = []
        # Lines and nested blocks in document order; a nested block's lines are indented.
        stack: list[tuple[nodes.Node, int]] = [(child, 0) for child in reversed(node.children)]
        while stack:
            current, indent = stack.pop()
            if isinstance(current, nodes.line_block):
                stack.extend((child, indent + 1) for child in reversed(current.children))
            elif isinstance(current, nodes.line):
                lines.append("  " * indent + " ".join(self.inline(current).split()))
        text = "\n".join(line for line in lines if line.strip())
        return [Paragraph(text=text, span=span)] if text else []

    def code(self, node: nodes.Element, span: Any) -> Code:
        classes = [c for c in node.get("classes", []) if c not in ("code", "literal-block", "doctest")]
        language = node.get("language") or (
            classes[0] if classes and "code" in node.get("classes", []) else None
        )
        if isinstance(node, nodes.doctest_block):
            language = "pycon"
        lines = self.inline(node, code=True).split("\n")  # parsed literals may hold references
        first = node.get("first_line")
        if not isinstance(first, int):
            first = span.lines[0] if span.lines else None
        if span.lines and first is not None:
            span = type(span)(lines=(min(span.lines[0], first), max(span.lines[1], first + len(lines) - 1)))
        return Code(lines=lines, language=language or None, span=span, first_line=first)

    def admonition(self, node: nodes.Element, depth: int, span: Any) -> Quote:
        title = _first(node, nodes.title)
        if title is not None:
            label = " ".join(self.inline(title).split())
        else:
            label = _LABELS.get(node.tagname, node.tagname.capitalize())
        inner = [c for c in node.children if not isinstance(c, nodes.title)]
        return Quote(blocks=self.blocks(inner, depth + 1), label=label, span=span)

    def definitions(self, node: nodes.Element, depth: int) -> DefinitionList:
        items: list[Definition] = []
        for item in node.children:
            if not isinstance(item, nodes.definition_list_item):
                continue
            terms: list[str] = []
            blocks: list[Block] = []
            for part in item.children:
                if isinstance(part, nodes.term):
                    terms.append(" ".join(self.inline(part).split()))
                elif isinstance(part, nodes.classifier) and terms:
                    terms[-1] += " : " + " ".join(self.inline(part).split())
                elif isinstance(part, nodes.definition):
                    blocks.extend(self.blocks(list(part.children), depth + 1))
            items.append(Definition(terms=terms, blocks=blocks, span=self.lines.span(item)))
        return DefinitionList(items=items, span=self.lines.span(node))

    def fields(self, node: nodes.Element, depth: int) -> DefinitionList:
        items: list[Definition] = []
        fallback = self.lines.first(node)
        for field in node.children:
            if isinstance(field, nodes.field):
                name = _first(field, nodes.field_name)
                body = _first(field, nodes.field_body)
                term = " ".join(self.inline(name).split()) if name is not None else ""
                blocks = self.blocks(list(body.children), depth + 1) if body is not None else []
            elif isinstance(field, nodes.authors):
                term = _LABELS.get("authors", "Authors")
                blocks = [p for a in field.children for p in self.paragraph(a)]
            elif isinstance(field, nodes.address):
                term = _LABELS.get("address", "Address")
                blocks = [Code(lines=field.astext().split("\n"))]  # kept line for line, as docutils does
            elif isinstance(field, nodes.TextElement):
                term = _LABELS.get(field.tagname, field.tagname.capitalize())
                blocks = self.paragraph(field)
            else:
                continue
            span = self.lines.span(field, fallback)
            for block in blocks:
                if block.span.lines is None:
                    block.span = span
            items.append(Definition(terms=[term], blocks=blocks, span=span))
        return DefinitionList(items=items, span=self.lines.span(node, fallback))

    def options(self, node: nodes.Element, depth: int) -> DefinitionList:
        items: list[Definition] = []
        for item in node.children:
            group = _first(item, nodes.option_group)
            description = _first(item, nodes.description)
            term = ", ".join(_option_text(o) for o in group.children) if group is not None else ""
            blocks = self.blocks(list(description.children), depth + 1) if description is not None else []
            items.append(
                Definition(terms=[term], blocks=blocks, span=self.lines.span(item, self.lines.first(node)))
            )
        return DefinitionList(items=items, span=self.lines.span(node))

    def notes(self, notes: list[nodes.Element]) -> DefinitionList:
        items: list[Definition] = []
        for note in notes:
            label = _first(note, nodes.label)
            term = f"[{label.astext()}]" if label is not None else ""
            inner = [c for c in note.children if not isinstance(c, nodes.label)]
            items.append(Definition(terms=[term], blocks=self.blocks(inner, 1), span=self.lines.span(note)))
        span = items[0].span.merge(items[-1].span) if items else self.lines.span(notes[0])
        return DefinitionList(items=items, span=span)

    def table(self, node: nodes.Element, span: Any) -> Table:
        title = _first(node, nodes.title)
        caption = " ".join(self.inline(title).split()) if title is not None else None
        table = Table(caption=caption or None, span=span)
        for group in node.children:
            if not isinstance(group, nodes.tgroup):
                continue
            width = int(group.get("cols", 0)) or sum(
                1 for c in group.children if isinstance(c, nodes.colspec)
            )
            pending: dict[int, tuple[int, str]] = {}  # column -> (rows still spanned, text)
            for part in group.children:
                if not isinstance(part, nodes.thead | nodes.tbody):
                    continue
                target = table.header if isinstance(part, nodes.thead) else table.rows
                for row in part.children:
                    if isinstance(row, nodes.row):
                        target.append(self.row(row, width, pending, span))
        return table

    def row(
        self, row: nodes.Element, width: int, pending: dict[int, tuple[int, str]], table_span: Any
    ) -> Row:
        cells: list[str] = []
        entries = [e for e in row.children if isinstance(e, nodes.entry)]
        col = 0
        for entry in entries:
            while col in pending:
                cells.append(self._carry(pending, col))
                col += 1
            text = " ".join(" ".join(self.inline_blocks(entry)).split())
            across = int(entry.get("morecols", 0)) + 1
            down = int(entry.get("morerows", 0))
            for k in range(across):
                cells.append(text)
                if down:
                    pending[col + k] = (down, text)
            col += across
        while col < max(width, len(cells)) and col in pending:
            cells.append(self._carry(pending, col))
            col += 1
        fallback = table_span.lines[0] if table_span.lines else None
        span = self.lines.span(row, fallback)
        if (
            table_span.lines
            and span.lines
            and not (table_span.lines[0] <= span.lines[0] and span.lines[1] <= table_span.lines[1])
        ):
            span = table_span  # csv-table cells carry lines of the CSV text, not of the file
        return Row(cells=cells, span=span)

    @staticmethod
    def _carry(pending: dict[int, tuple[int, str]], col: int) -> str:
        left, text = pending[col]
        if left <= 1:
            del pending[col]
        else:
            pending[col] = (left - 1, text)
        return text

    # ----- inline ------------------------------------------------------------------------------

    def inline_blocks(self, node: nodes.Element) -> list[str]:
        """Texts of a table cell's blocks, each reduced to what a reader sees."""
        out: list[str] = []
        for child in node.children:
            if isinstance(child, nodes.label):  # a footnote's or citation's, as the notes show it
                out.append(f"[{child.astext()}]")
            elif isinstance(child, nodes.TextElement):
                out.append(self.inline(child))
            elif isinstance(child, nodes.Element) and not isinstance(child, _SKIP):
                out.extend(self.inline_blocks(child) if child.children else [])
        return out

    def inline(self, node: nodes.Node, code: bool = False) -> str:
        """The text a reader sees of inline markup (literals keep backticks outside code)."""
        parts: list[str] = []
        stack: list[nodes.Node] = [node]
        while stack:
            current = stack.pop()
            if isinstance(current, nodes.Text):
                parts.append(current.astext())  # escapes resolved (docutils keeps them as NULs)
            elif isinstance(current, nodes.system_message | nodes.raw | nodes.target | nodes.comment):
                if isinstance(current, nodes.target) and current.children:
                    stack.extend(reversed(current.children))
            elif isinstance(current, nodes.literal) and not code:
                parts.append("`" + current.astext() + "`")
            elif isinstance(current, nodes.footnote_reference | nodes.citation_reference):
                parts.append("[" + current.astext() + "]")
            elif isinstance(current, nodes.image):
                parts.append(str(current.get("alt", "")))
            elif isinstance(current, nodes.Element):
                stack.extend(reversed(current.children))
        return "".join(parts)

    def docinfo(self, node: nodes.Element) -> None:
        """Bibliographic fields into `Document.properties` (lowercase names, text values)."""
        props = self.doc.properties
        for field in node.children:
            if isinstance(field, nodes.authors):
                props["authors"] = [" ".join(a.astext().split()) for a in field.children]
            elif type(field) in _BIBLIOGRAPHIC:
                props[_BIBLIOGRAPHIC[type(field)]] = " ".join(field.astext().split())
            elif isinstance(field, nodes.field):
                name = _first(field, nodes.field_name)
                body = _first(field, nodes.field_body)
                if name is not None:
                    key = "_".join(name.astext().lower().split())
                    props[key] = " ".join(body.astext().split()) if body is not None else ""


def fill_missing_spans(root: Section) -> None:
    """Give a node docutils left without a line (docinfo fields, empty rows) the line of the
    node before it, so that every node has a span."""
    last = 1
    stack: list[Any] = [root]
    while stack:
        node = stack.pop()
        if isinstance(node, Section):
            if node.heading is not None:
                last = _settle(node.heading, last)
            stack.extend(reversed([*node.blocks, *node.children]))
            continue
        last = _settle(node, last)
        if isinstance(node, Table):
            for row in [*node.header, *node.rows]:
                last = _settle(row, last)
        elif isinstance(node, ListBlock | DefinitionList):
            stack.extend(reversed(node.items))
        elif isinstance(node, ListItem | Definition | Quote):
            stack.extend(reversed(node.blocks))


def _settle(node: Any, last: int) -> int:
    if node.span.lines is None:
        node.span = Span(lines=(last, last))
        return last
    start: int = node.span.lines[0]
    return max(last, start)


def _first(node: nodes.Element, kind: type[nodes.Element]) -> Any:
    for child in node.children:
        if isinstance(child, kind):
            return child
    return None


def _option_text(option: nodes.Node) -> str:
    # An option_argument's text starts with its delimiter ("=" or " ").
    return "".join(part.astext() for part in option.children) if isinstance(option, nodes.Element) else ""
