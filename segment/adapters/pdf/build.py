"""Items in reading order -> the common tree (sections, paragraphs, lists, code, tables)."""

from __future__ import annotations

from segment.adapters.pdf.blocks import Item
from segment.adapters.pdf.extract import Box
from segment.adapters.pdf.tables import FoundTable
from segment.tree import (
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
    SectionBuilder,
    Span,
    Table,
    finish_spans,
)


def item_span(item: Item) -> Span:
    """Pages of the item and the box of its first block."""
    first, last = item.pages
    x0, y0, x1, y1 = item.first.bbox
    return Span(
        pages=(first, max(first, last)), bbox=(round(x0, 2), round(y0, 2), round(x1, 2), round(y1, 2))
    )


def table_node(found: FoundTable) -> Table:
    """A found table as a tree node; every row keeps its page."""
    pages = (found.page, found.page)
    rows = [
        Row(cells=list(cells), span=Span(pages=pages, bbox=_rounded(box)))
        for cells, box in zip(found.rows, found.row_boxes)
    ]
    rows += [Row(cells=list(c), span=Span(pages=pages)) for c in found.rows[len(found.row_boxes) :]]
    header = [Row(cells=list(cells), span=Span(pages=pages)) for cells in found.header]
    return Table(header=header, rows=rows, span=Span(pages=pages, bbox=_rounded(found.bbox)))


def _rounded(box: Box) -> Box:
    """A box with its coordinates rounded to hundredths of a point."""
    x0, y0, x1, y1 = box
    return (round(x0, 2), round(y0, 2), round(x1, 2), round(y1, 2))


ADMONITIONS = {"note", "tip", "warning", "caution", "important", "hint", "danger", "attention"}
"""Labels that open an admonition box in manuals (DocBook, Sphinx): common practice."""


def build_tree(document: Document, items: list[Item]) -> None:
    """Fill `document.root` from the flow of items."""
    builder = SectionBuilder(document.root)
    open_list: list[tuple[float, ListBlock]] = []
    pending_label: tuple[str, Item] | None = None
    for item in items:
        if item.label:
            continue
        if pending_label is not None:
            label, label_item = pending_label
            pending_label = None
            node = _node(item) if item.level is None and item.kind != "item" else None
            if node is not None and item.first.page == label_item.first.page:
                # "Warning" on its own line, then the warning: one quote, like a Markdown alert.
                span = item_span(label_item).merge(node.span)
                open_list.clear()
                builder.add(Quote(blocks=[node], label=label, span=span))
                continue
            builder.add(Paragraph(text=label_item.text.strip(), span=item_span(label_item)))
        if item.kind == "text" and item.level is None and item.text.strip().casefold() in ADMONITIONS:
            pending_label = (item.text.strip().capitalize(), item)
            continue
        if item.level is not None:
            open_list.clear()
            span = item_span(item)
            builder.open(Heading(text=item.text.strip(), level=item.level, anchor=_anchor(span), span=span))
            continue
        if item.kind == "item":
            _add_item(builder, open_list, item)
            continue
        node = _node(item)
        if node is None:
            continue
        if open_list and item.kind in ("text", "code") and item.first.x0 > open_list[-1][0] + 3:
            # Indented under the last item: a further paragraph or code sample of that item.
            owner = open_list[-1][1].items[-1]
            owner.blocks.append(node)
            owner.span = owner.span.merge(node.span)
            open_list[-1][1].span = open_list[-1][1].span.merge(node.span)
            continue
        open_list.clear()
        builder.add(node)
    if pending_label is not None:
        builder.add(Paragraph(text=pending_label[1].text.strip(), span=item_span(pending_label[1])))
    finish_spans(document.root)


def _anchor(span: Span) -> str | None:
    # PDF open parameters: "file.pdf#page=N" opens the page in common viewers.
    return f"page={span.pages[0]}" if span.pages else None


def _node(item: Item) -> Paragraph | Code | Table | DefinitionList | None:
    if item.kind == "table":
        payload = item.first.payload
        if not isinstance(payload, FoundTable):
            return None
        table = table_node(payload)
        for cells, page in item.extra_rows:
            table.rows.append(Row(cells=list(cells), span=Span(pages=(page, page))))
            table.span = table.span.merge(Span(pages=(page, page)))
        return table
    if item.kind == "code":
        return Code(lines=list(item.code_lines), span=item_span(item))
    if item.kind == "definitions":
        span = item_span(item)
        entries = [
            Definition(terms=[key], blocks=[Paragraph(text=value, span=span)] if value else [], span=span)
            for key, value in item.pairs
        ]
        return DefinitionList(items=entries, span=span)
    if item.kind == "heading":
        return None
    text = item.text.strip()
    return Paragraph(text=text, span=item_span(item)) if text else None


def _add_item(builder: SectionBuilder, open_list: list[tuple[float, ListBlock]], item: Item) -> None:
    span = item_span(item)
    entry = ListItem(blocks=[Paragraph(text=item.text.strip(), span=span)], span=span)
    x = item.marker_x
    while open_list and x < open_list[-1][0] - 2.5:
        open_list.pop()
    if open_list and abs(x - open_list[-1][0]) <= 2.5 and open_list[-1][1].ordered == item.ordered:
        lst = open_list[-1][1]
        lst.items.append(entry)
        lst.span = lst.span.merge(span)
        return
    if open_list and abs(x - open_list[-1][0]) <= 2.5:
        open_list.pop()  # same indent, other kind of list: a new list
    lst = ListBlock(items=[entry], ordered=item.ordered, start=item.number if item.ordered else 1, span=span)
    if open_list and x > open_list[-1][0] + 2.5:
        parent = open_list[-1][1]
        parent.items[-1].blocks.append(lst)
        parent.items[-1].span = parent.items[-1].span.merge(span)
        parent.span = parent.span.merge(span)
    else:
        open_list.clear()
        builder.add(lst)
    open_list.append((x, lst))
