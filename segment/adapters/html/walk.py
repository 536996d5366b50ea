"""The cleaned main-content element -> sections and blocks, in one iterative pass.

An explicit stack of frames replaces recursion, so a tree thousands of levels deep costs memory,
not Python stack. A frame reads one element's children in order: inline children and text are
gathered into a run that becomes a `Paragraph` when a block child (or the end) interrupts it, so
text written straight into a `div` is kept; block children become blocks or new frames.
Headings open sections only in the section flow: inside a list, quote, definition or table they
are ordinary paragraphs, as in the Markdown adapter.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

from lxml import etree

from segment.adapters.html.leaves import admonition_label, code_block, gutter_code, heading_text
from segment.adapters.html.tables import build_table, fostered_text, outside_caption, table_kind
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
from segment.adapters.html.text import collapse, flat_text, has_block, line_range
from segment.tree import (
    Block,
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

_CONTAINER, _LIST, _DL = 0, 1, 2
_ALERT = re.compile(r"^\[!(\w+)\][ \t]*\n?")
MAX_BLOCK_DEPTH = 64
"""Container blocks (lists, items, quotes, definitions) nested deeper than this are not built:
their content is read as paragraphs and the document warns. The segmenter and the renderers
recurse per nesting level; the Markdown adapter caps nesting near the same depth."""


Sink = list[Block] | None
"""Where blocks go: a container's block list, or None for the section flow."""


@dataclass(slots=True)
class _Frame:
    el: etree._Element | None
    children: Iterator[etree._Element]
    sink: Sink
    mode: int = _CONTAINER
    node: Any = None
    finish: Callable[[_Frame], None] | None = None
    parent_sink: Sink = None
    start: int | None = None
    line: int | None = None
    run_line: int | None = None
    parts: list[str] = field(default_factory=list)
    counted: bool = False
    """This frame holds a container block (list, item, quote, definitions) counted in the depth."""


class Walker:
    """Builds `doc.root` from the main content element."""

    def __init__(self, doc: Document, main: etree._Element) -> None:
        self.doc = doc
        self.main = main
        self.sections = SectionBuilder(doc.root)
        self.skip: set[etree._Element] = set()
        self.captions: dict[etree._Element, str] = {}
        self.first_h1: str | None = None
        self.depth = 0
        self.flattened = False
        """Container blocks open around the current point (lists, items, quotes, definitions)."""

    # ----- the loop ------------------------------------------------------------------------

    def run(self) -> None:
        main = self.main
        stack = [_Frame(main, iter(main), None, start=main.sourceline, line=main.sourceline)]
        self._text(stack[0], main.text, main.sourceline)
        while stack:
            f = stack[-1]
            child = next(f.children, None)
            if child is None:
                self._flush(f)
                stack.pop()
                if f.counted:
                    self.depth -= 1
                if f.finish is not None:
                    f.finish(f)
                if stack and f.el is not None:
                    parent = stack[-1]
                    parent.line = _later(parent.line, f.line)
                    self._text(parent, f.el.tail, parent.line)
                continue
            tag = tag_of(child)
            if not tag or child in self.skip:
                self._text(f, child.tail, f.line)
                continue
            if f.mode == _LIST:
                self._list_child(stack, f, child, tag)
            elif f.mode == _DL:
                self._dl_child(stack, f, child, tag)
            elif tag not in BLOCK_TAGS and child.get("role") != "heading" and not has_block(child):
                line = child.sourceline or f.line
                self._text(f, "".join(child.itertext()), line)
                self._text(f, child.tail, f.line)
            else:
                self._flush(f)
                pushed = self._block(stack, f, child, tag)
                if not pushed:
                    self._text(f, child.tail, f.line)

    # ----- inline runs ---------------------------------------------------------------------

    def _text(self, f: _Frame, text: str | None, line: int | None) -> None:
        if not text:
            return
        if not f.parts:
            f.run_line = line
        f.parts.append(text)
        if line is not None:
            f.line = _later(f.line, line + text.count("\n"))

    def _flush(self, f: _Frame) -> None:
        if not f.parts:
            return
        raw = "".join(f.parts)
        f.parts = []
        text = collapse(raw)
        if not text:
            return
        para = Paragraph(text, Span(lines=line_range(f.run_line, raw)))
        if f.mode == _LIST:
            items = f.node.items
            if not items:
                items.append(ListItem(span=para.span))
            items[-1].blocks.append(para)
        elif f.mode == _DL:
            items = f.node.items
            if not items:
                items.append(Definition(terms=[], span=para.span))
            items[-1].blocks.append(para)
        else:
            self._add(f.sink, para)

    def _add(self, sink: Sink, block: Block) -> None:
        if sink is None:
            self.sections.add(block)
        else:
            sink.append(block)

    # ----- block children ------------------------------------------------------------------

    def _paragraph(self, f: _Frame, el: etree._Element) -> None:
        """An element holding only inline content, as one paragraph (nothing when it is blank)."""
        raw = "".join(el.itertext())
        text = collapse(raw)
        if text:
            span = Span(lines=line_range(el.sourceline, raw))
            self._add(f.sink, Paragraph(text, span))
            f.line = _later(f.line, span.lines[1] if span.lines else None)

    def _block(self, stack: list[_Frame], f: _Frame, el: etree._Element, tag: str) -> bool:
        """Handle a block child; True when a frame was pushed (its tail is read when it closes)."""
        if tag == "p" and not has_block(el):  # the commonest block first
            self._paragraph(f, el)
            return False
        level = heading_level(el, tag)
        if level:
            self._heading(f, el, level)
            return False
        if tag in PRE_TAGS:
            code = code_block(el)
            if code.lines:
                self._add(f.sink, code)
                f.line = _later(f.line, code.span.lines[1] if code.span.lines else None)
            return False
        if tag == "table":
            gutter_pre = gutter_code(el)
            if gutter_pre is not None:
                code = code_block(gutter_pre)
                if code.lines:
                    self._add(f.sink, code)
                    f.line = _later(f.line, code.span.lines[1] if code.span.lines else None)
                return False
            kind = table_kind(el)
            if kind == "navigation":
                return False
            if kind == "data":
                stray = fostered_text(el)
                if stray:
                    self._add(f.sink, Paragraph(stray, Span(lines=_lines(el.sourceline, el.sourceline))))
                table = build_table(el, self.captions.pop(el, None))
                if table.rows or table.header:
                    self._add(f.sink, table)
                    f.line = _later(f.line, table.span.lines[1] if table.span.lines else None)
                elif table.caption:  # a table with no cells: its caption is still text a reader sees
                    self._add(
                        f.sink, Paragraph(table.caption, Span(lines=_lines(el.sourceline, el.sourceline)))
                    )
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
            start = 1
            if tag == "ol":
                try:
                    start = int((el.get("start") or "1").strip())
                except ValueError:
                    start = 1
            node = ListBlock(ordered=tag == "ol", start=start)
            self._push(stack, f, el, _LIST, node, self._finish_list)
            return True
        elif tag == "dl":
            self._push(stack, f, el, _DL, DefinitionList(), self._finish_dl)
            return True
        elif tag == "blockquote":
            self._push(stack, f, el, _CONTAINER, Quote(), self._finish_quote)
            return True
        elif tag == "details" and next(el.iter(*HEADING_TAGS), None) is None:
            # A collapsible box is one labelled block; one that holds headings wraps a part of
            # the page (rustdoc's "Expand description"), so it is read as ordinary content.
            summary = next((c for c in el if tag_of(c) == "summary"), None)
            label = flat_text(summary) if summary is not None else None
            if summary is not None:
                self.skip.add(summary)
            self._push(stack, f, el, _CONTAINER, Quote(label=label or None), self._finish_quote)
            return True
        elif tag in ("div", "section", "aside", "article") and is_admonition(el):
            self._push(stack, f, el, _CONTAINER, Quote(label=self._admonition_label(el)), self._finish_quote)
            return True
        elif tag in PARAGRAPH_TAGS and not has_block(el):
            self._paragraph(f, el)
            return False
        elif tag in ("hr", "col", "colgroup"):
            return False
        self._mark_captions(el, tag)
        frame = _Frame(el, iter(el), f.sink, start=el.sourceline, line=el.sourceline or f.line)
        stack.append(frame)
        self._text(frame, el.text, frame.line)
        return True

    def _push(
        self,
        stack: list[_Frame],
        f: _Frame,
        el: etree._Element,
        mode: int,
        node: Any,
        finish: Callable[[_Frame], None],
    ) -> None:
        sink = node.blocks if isinstance(node, Quote) else None
        frame = _Frame(el, iter(el), sink, mode, node, finish, f.sink, el.sourceline, el.sourceline or f.line)
        frame.counted = True
        self.depth += 1
        stack.append(frame)
        self._text(frame, el.text, frame.line)

    def _mark_captions(self, el: etree._Element, tag: str) -> None:
        found = outside_caption(el, tag)
        if found is not None:
            table, text, caption_el = found
            self.captions[table] = text
            self.skip.add(caption_el)

    def _admonition_label(self, el: etree._Element) -> str | None:
        label, title_el = admonition_label(el)
        if title_el is not None:
            self.skip.add(title_el)
        return label

    # ----- headings ------------------------------------------------------------------------

    def _heading(self, f: _Frame, el: etree._Element, level: int) -> None:
        raw, hint = heading_text(el)
        text = collapse(raw, breaks=False)
        if not text:
            return
        span = Span(lines=line_range(el.sourceline, raw))
        f.line = _later(f.line, span.lines[1] if span.lines else None)
        if f.sink is not None:
            self._add(f.sink, Paragraph(text, span))
            return
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
            if anc.get("id"):
                return anc.get("id")
            if anc is self.main:
                return None
        return None

    # ----- lists and definition lists ------------------------------------------------------

    def _list_child(self, stack: list[_Frame], f: _Frame, el: etree._Element, tag: str) -> None:
        self._flush(f)
        items: list[ListItem] = f.node.items
        if tag == "li":
            item = ListItem()
            items.append(item)
            frame = _Frame(
                el,
                iter(el),
                item.blocks,
                node=item,
                finish=_finish_item,
                start=el.sourceline,
                line=el.sourceline or f.line,
                counted=True,
            )
            self.depth += 1
            stack.append(frame)
            self._text(frame, el.text, frame.line)
            return
        # Not an item (a list nested straight into a list, say): it belongs to the last item.
        if not items:
            items.append(ListItem())
        item = items[-1]
        stack.append(
            _Frame(
                None,
                iter([el]),
                item.blocks,
                node=item,
                finish=_finish_item,
                start=el.sourceline,
                line=el.sourceline or f.line,
            )
        )

    def _dl_child(self, stack: list[_Frame], f: _Frame, el: etree._Element, tag: str) -> None:
        self._flush(f)
        items: list[Definition] = f.node.items
        if tag == "dt":
            raw = heading_text(el)[0]  # an API entry's term may carry a permalink mark too
            term = collapse(raw, breaks=False)
            span = Span(lines=line_range(el.sourceline, raw))
            if not items or items[-1].blocks:
                items.append(Definition(terms=[], span=span))
            if term:
                items[-1].terms.append(term)
                items[-1].span = items[-1].span.merge(span)
            f.line = _later(f.line, span.lines[1] if span.lines else None)
            self._text(f, el.tail, f.line)
            return
        if tag == "div":  # WHATWG allows div groups of dt/dd inside dl
            frame = _Frame(
                el, iter(el), None, _DL, f.node, None, start=el.sourceline, line=el.sourceline or f.line
            )
            stack.append(frame)
            self._text(frame, el.text, frame.line)
            return
        if not items:
            items.append(Definition(terms=[]))
        item = items[-1]
        frame = _Frame(
            el,
            iter(el),
            item.blocks,
            node=item,
            finish=_finish_item,
            start=el.sourceline,
            line=el.sourceline or f.line,
        )
        if tag != "dd":  # some other block inside dl: read it as part of the definition
            frame = _Frame(
                None,
                iter([el]),
                item.blocks,
                node=item,
                finish=_finish_item,
                start=el.sourceline,
                line=el.sourceline or f.line,
            )
        else:
            frame.counted = True
            self.depth += 1
        stack.append(frame)
        if tag == "dd":
            self._text(frame, el.text, frame.line)

    # ----- closing container blocks --------------------------------------------------------

    def _finish_list(self, f: _Frame) -> None:
        node: ListBlock = f.node
        if node.items:
            node.span = Span(lines=_lines(f.start, f.line))
            self._add(f.parent_sink, node)

    def _finish_dl(self, f: _Frame) -> None:
        node: DefinitionList = f.node
        node.items = [d for d in node.items if d.terms or d.blocks]
        if node.items:
            node.span = Span(lines=_lines(f.start, f.line))
            self._add(f.parent_sink, node)

    def _finish_quote(self, f: _Frame) -> None:
        node: Quote = f.node
        if node.label is None and node.blocks and isinstance(node.blocks[0], Paragraph):
            first = node.blocks[0]
            m = _ALERT.match(first.text)
            if m:  # GitHub alert syntax as markdown-it renders it, labelled as the Markdown adapter does
                node.label = m.group(1).capitalize()
                first.text = first.text[m.end() :].strip()
                if not first.text:
                    node.blocks.pop(0)
        elif (
            node.label
            and node.blocks
            and isinstance(node.blocks[0], Paragraph)
            and node.blocks[0].text.casefold().startswith(node.label.casefold() + ":")
        ):
            node.label = None  # the text says "Note: ..." itself; a label would repeat it
        if not node.blocks and not node.label:
            return
        node.span = Span(lines=_lines(f.start, f.line))
        self._add(f.parent_sink, node)


def _finish_item(f: _Frame) -> None:
    item = f.node
    item.span = item.span.merge(Span(lines=_lines(f.start, f.line)))


def _later(a: int | None, b: int | None) -> int | None:
    if a is None:
        return b
    if b is None:
        return a
    return a if a >= b else b


def _lines(start: int | None, end: int | None) -> tuple[int, int] | None:
    if start is None:
        return None
    return (start, max(start, end or start))
