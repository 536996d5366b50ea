"""The cleaned main-content element -> sections and blocks, in one iterative pass.

An explicit stack of frames (`frame.Frame`) replaces recursion, so a tree thousands of levels
deep costs memory, not Python stack. A frame reads one element's children in order: inline
children and text are gathered into a run that becomes a `Paragraph` when a block child (or the
end) interrupts it, so text written straight into a `div` is kept; block children become blocks
or new frames. Headings open sections only in the section flow: inside a list, quote, definition
or table they are ordinary paragraphs, as in the Markdown adapter.
"""

from __future__ import annotations

from lxml import etree

from segment.adapters.html.boxes import (
    admonition_kind,
    admonition_label,
    box_label,
    is_tab_set,
    tab_children,
    tab_label,
)
from segment.adapters.html.containers import finish, list_start
from segment.adapters.html.element_text import collapse, flat_text, has_block, line_range
from segment.adapters.html.frame import Container, ContainerNode, Frame, FrameMode, Sink, later, line_span
from segment.adapters.html.leaves import code_block, gutter_code, heading_text
from segment.adapters.html.tables import TableKind, build_table, fostered_text, outside_caption, table_kind
from segment.adapters.html.tags import (
    BLOCK_TAGS,
    HEADING_TAGS,
    LIST_TAGS,
    PARAGRAPH_TAGS,
    PRE_TAGS,
    heading_level,
    is_admonition,
    tag_of,
)
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
    SectionBuilder,
    Span,
)

MAX_BLOCK_DEPTH = 64
"""Container blocks (lists, items, quotes, definitions) nested deeper than this are not built:
their content is read as paragraphs and the document warns. The segmenter and the renderers
recurse per nesting level; the Markdown adapter caps nesting near the same depth."""

_BOX_TAGS = ("div", "section", "aside", "article")
"""Elements that may be an admonition box."""


class Walker:
    """Builds `doc.root` from the main content element."""

    def __init__(self, doc: Document, main: etree._Element) -> None:
        self.doc = doc
        self.main = main
        self.sections = SectionBuilder(doc.root)
        self.skip: set[etree._Element] = set()
        """Elements already read by the block that owns them (a box's title, a moved caption)."""
        self.captions: dict[etree._Element, str] = {}
        self.first_h1: str | None = None
        self.depth = 0
        """Container blocks open around the current point (lists, items, quotes, definitions)."""
        self.flattened = False

    # ----- the loop ------------------------------------------------------------------------

    def run(self) -> None:
        """Walk the main content element to its end."""
        main = self.main
        stack = [Frame(main, iter(main), None, start=main.sourceline, line=main.sourceline)]
        self._text(stack[0], main.text, main.sourceline)
        while stack:
            f = stack[-1]
            child = next(f.children, None)
            if child is None:
                self._flush(f)
                stack.pop()
                self._close(f)
                if stack and f.el is not None:
                    parent = stack[-1]
                    parent.line = later(parent.line, f.line)
                    self._text(parent, f.el.tail, parent.line)
                continue
            tag = tag_of(child)
            if not tag or child in self.skip:
                self._text(f, child.tail, f.line)
                continue
            if f.mode is FrameMode.LIST_ITEMS:
                pushed = self._list_child(stack, f, child, tag)
            elif f.mode is FrameMode.DEFINITIONS:
                pushed = self._definitions_child(stack, f, child, tag)
            elif f.mode is FrameMode.TABS and tag == "label":
                self._flush(f)
                self._tab_label(f, child)
                pushed = False
            elif tag not in BLOCK_TAGS and child.get("role") != "heading" and not has_block(child):
                line = child.sourceline or f.line
                self._text(f, "".join(child.itertext()), line)
                pushed = False
            else:
                self._flush(f)
                pushed = self._block(stack, f, child, tag)
            if not pushed:  # a pushed frame reads its element's tail when it closes
                self._text(f, child.tail, f.line)

    def _enter(self, stack: list[Frame], frame: Frame) -> bool:
        """Push `frame` and read its element's leading text."""
        if frame.container is not None and frame.container.counted:
            self.depth += 1
        stack.append(frame)
        if frame.el is not None:
            self._text(frame, frame.el.text, frame.line)
        return True

    def _close(self, f: Frame) -> None:
        """The frame's element ended: finish the container block it built."""
        box = f.container
        if box is None:
            return
        if box.counted:
            self.depth -= 1
        block = finish(box.node, line_span(f.start, f.line))
        if block is not None:
            self._add(box.parent_sink, block)

    def _open(
        self, f: Frame, el: etree._Element, node: ContainerNode, sink: Sink, mode: FrameMode = FrameMode.FLOW
    ) -> Frame:
        """A frame for `el` that builds the container block `node`."""
        items_of = node if isinstance(node, ListBlock | DefinitionList) else None
        container = Container(node, f.sink)
        return Frame(el, iter(el), sink, mode, items_of, container, el.sourceline, el.sourceline or f.line)

    # ----- inline runs ---------------------------------------------------------------------

    def _text(self, f: Frame, text: str | None, line: int | None) -> None:
        if not text:
            return
        if not f.parts:
            f.run_line = line
        f.parts.append(text)
        if line is not None:
            f.line = later(f.line, line + text.count("\n"))

    def _flush(self, f: Frame) -> None:
        """The inline run gathered so far becomes a paragraph (nothing when it is blank)."""
        if not f.parts:
            return
        raw = "".join(f.parts)
        f.parts = []
        text = collapse(raw)
        if not text:
            return
        para = Paragraph(text, Span(lines=line_range(f.run_line, raw)))
        if f.mode is FrameMode.LIST_ITEMS:
            items = f.list_block().items
            if not items:
                items.append(ListItem(span=para.span))
            items[-1].blocks.append(para)
        elif f.mode is FrameMode.DEFINITIONS:
            entries = f.definition_list().items
            if not entries:
                entries.append(Definition(terms=[], span=para.span))
            entries[-1].blocks.append(para)
        else:
            self._add(f.sink, para)

    def _add(self, sink: Sink, block: Block) -> None:
        if sink is None:
            self.sections.add(block)
        else:
            sink.append(block)

    def _add_leaf(self, f: Frame, block: Block) -> None:
        """Add a block read whole from one element and move the frame's line past it."""
        self._add(f.sink, block)
        f.line = later(f.line, block.span.lines[1] if block.span.lines else None)

    # ----- block children ------------------------------------------------------------------

    def _paragraph(self, f: Frame, el: etree._Element) -> None:
        """An element holding only inline content, as one paragraph (nothing when it is blank)."""
        raw = "".join(el.itertext())
        text = collapse(raw)
        if text:
            self._add_leaf(f, Paragraph(text, Span(lines=line_range(el.sourceline, raw))))

    def _block(self, stack: list[Frame], f: Frame, el: etree._Element, tag: str) -> bool:
        """Handle a block child; True when a frame was pushed (its tail is read when it closes)."""
        if tag == "p" and not has_block(el):  # the commonest block first
            self._paragraph(f, el)
            return False
        level = heading_level(el, tag)
        if level:
            self._heading(f, el, level)
            return False
        if tag in PRE_TAGS:
            self._code(f, code_block(el))
            return False
        if tag == "table":
            if self._table(f, el):
                return False
        elif self.depth >= MAX_BLOCK_DEPTH and (
            tag in LIST_TAGS or tag in ("dl", "blockquote", "details") or is_admonition(el)
        ):
            if not self.flattened:
                self.flattened = True
                self.doc.warnings.append(
                    f"lists and quotes nested deeper than {MAX_BLOCK_DEPTH} blocks read as paragraphs"
                )
        elif tag in LIST_TAGS:
            node = ListBlock(ordered=tag == "ol", start=list_start(el) if tag == "ol" else 1)
            return self._enter(stack, self._open(f, el, node, None, FrameMode.LIST_ITEMS))
        elif tag == "dl":
            return self._enter(stack, self._open(f, el, DefinitionList(), None, FrameMode.DEFINITIONS))
        elif tag == "blockquote":
            quote = Quote()
            return self._enter(stack, self._open(f, el, quote, quote.blocks))
        elif tag == "details" and next(el.iter(*HEADING_TAGS), None) is None:
            # A collapsible box is one labelled block; one that holds headings wraps a part of
            # the page (rustdoc's "Expand description"), so it is read as ordinary content.
            summary = next((c for c in el if tag_of(c) == "summary"), None)
            title = flat_text(summary) if summary is not None else None
            if summary is not None:
                self.skip.add(summary)
            quote = Quote(label=box_label(admonition_kind(el), title))
            return self._enter(stack, self._open(f, el, quote, quote.blocks))
        elif tag in _BOX_TAGS and is_admonition(el):
            quote = Quote(label=self._admonition_label(el))
            return self._enter(stack, self._open(f, el, quote, quote.blocks))
        elif tag == "div" and is_tab_set(el):
            children = iter(tab_children(el))
            tabs = Frame(
                el, children, f.sink, FrameMode.TABS, start=el.sourceline, line=el.sourceline or f.line
            )
            return self._enter(stack, tabs)
        elif tag in PARAGRAPH_TAGS and not has_block(el):
            self._paragraph(f, el)
            return False
        elif tag in ("hr", "col", "colgroup"):
            return False
        self._mark_captions(el, tag)
        return self._enter(
            stack, Frame(el, iter(el), f.sink, start=el.sourceline, line=el.sourceline or f.line)
        )

    def _code(self, f: Frame, code: Code) -> None:
        if code.lines:
            self._add_leaf(f, code)

    def _table(self, f: Frame, el: etree._Element) -> bool:
        """A table read whole (data, navigation, a highlighter's line-number table): True; a
        layout table: False, its cells are then read as ordinary content."""
        gutter_pre = gutter_code(el)
        if gutter_pre is not None:
            self._code(f, code_block(gutter_pre))
            return True
        kind = table_kind(el)
        if kind is TableKind.NAVIGATION:
            words = len(flat_text(el).split())
            self.doc.warnings.append(f"navigation table dropped (line {el.sourceline}): {words} words")
            return True
        if kind is TableKind.LAYOUT:
            return False
        here = Span(lines=line_span(el.sourceline, el.sourceline))
        stray = fostered_text(el)
        if stray:
            self._add(f.sink, Paragraph(stray, here))
        table = build_table(el, self.captions.pop(el, None))
        if table.rows or table.header:
            self._add_leaf(f, table)
        elif table.caption:  # a table with no cells: its caption is still text a reader sees
            self._add(f.sink, Paragraph(table.caption, here))
        return True

    def _mark_captions(self, el: etree._Element, tag: str) -> None:
        found = outside_caption(el, tag)
        if found is not None:
            table, text, caption_el = found
            self.captions[table] = text
            self.skip.add(caption_el)

    def _tab_label(self, f: Frame, label: etree._Element) -> None:
        text = tab_label(label)
        if text:
            self._add_leaf(f, Paragraph(text, Span(lines=line_span(label.sourceline, label.sourceline))))

    def _admonition_label(self, el: etree._Element) -> str | None:
        label, title_el = admonition_label(el)
        if title_el is not None:
            self.skip.add(title_el)
        return label

    # ----- headings ------------------------------------------------------------------------

    def _heading(self, f: Frame, el: etree._Element, level: int) -> None:
        raw, hint = heading_text(el)
        text = collapse(raw, breaks=False)
        if not text:
            return
        span = Span(lines=line_range(el.sourceline, raw))
        if f.sink is not None:
            self._add_leaf(f, Paragraph(text, span))
            return
        f.line = later(f.line, span.lines[1] if span.lines else None)
        if level == 1 and self.first_h1 is None:
            self.first_h1 = text
        anchor = el.get("id") or hint or self._owner_id(el)
        self.sections.open(Heading(text, level, anchor, span))

    def _owner_id(self, heading: etree._Element) -> str | None:
        """The id of the nearest enclosing element whose first heading is this one."""
        if tag_of(heading) not in HEADING_TAGS:
            return None
        for anc in heading.iterancestors():
            if tag_of(anc) in ("body", "html"):
                return None
            first = next(anc.iter(*HEADING_TAGS), None)
            if first is not heading:
                return None
            owner_id: str | None = anc.get("id")
            if owner_id:
                return owner_id
            if anc is self.main:
                return None
        return None

    # ----- children of lists and definition lists ------------------------------------------

    def _list_child(self, stack: list[Frame], f: Frame, el: etree._Element, tag: str) -> bool:
        self._flush(f)
        items = f.list_block().items
        if tag == "li":
            item = ListItem()
            items.append(item)
            return self._enter(stack, self._open(f, el, item, item.blocks))
        # Not an item (a list nested straight into a list, say): it belongs to the last item.
        if not items:
            items.append(ListItem())
        return self._enter(stack, _stray_frame(f, el, items[-1]))

    def _definitions_child(self, stack: list[Frame], f: Frame, el: etree._Element, tag: str) -> bool:
        self._flush(f)
        dl = f.definition_list()
        entries = dl.items
        if tag == "dt":
            raw = heading_text(el)[0]  # an API entry's term may carry a permalink mark too
            term = collapse(raw, breaks=False)
            span = Span(lines=line_range(el.sourceline, raw))
            if not entries or entries[-1].blocks:
                entries.append(Definition(terms=[], span=span))
            if term:
                entries[-1].terms.append(term)
                entries[-1].span = entries[-1].span.merge(span)
            f.line = later(f.line, span.lines[1] if span.lines else None)
            return False
        if tag == "div":  # WHATWG allows div groups of dt/dd inside dl
            group = Frame(
                el, iter(el), None, FrameMode.DEFINITIONS, dl, None, el.sourceline, el.sourceline or f.line
            )
            return self._enter(stack, group)
        if not entries:
            entries.append(Definition(terms=[]))
        if tag == "dd":
            return self._enter(stack, self._open(f, el, entries[-1], entries[-1].blocks))
        # Some other block inside dl: read it as part of the definition.
        return self._enter(stack, _stray_frame(f, el, entries[-1]))


def _stray_frame(f: Frame, el: etree._Element, owner: ListItem | Definition) -> Frame:
    """A frame that reads one stray child of a list into `owner`, the last item (not counted in
    the depth: the child opens its own frame)."""
    return Frame(
        None,
        iter([el]),
        owner.blocks,
        container=Container(owner, counted=False),
        start=el.sourceline,
        line=el.sourceline or f.line,
    )
