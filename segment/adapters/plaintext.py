"""Plain text (`.txt`, and extension-less README/NOTES-like files a user includes) -> common tree.

Plain text has no markup, only habits of layout; these are read, in this order, line by line:
- a line followed by a line of `=` (level 1) or `-` (level 2) of the same length is a heading;
- a run of lines indented by four spaces or a tab, after a blank line, is code (dedented);
- lines that start with a bullet (`-`, `*`, `+`, `•`) or a number (`1.`, `2)`) are list items; a
  wrapped item's further lines, and indented paragraphs after a blank line, stay in the item;
- everything else is paragraphs, separated by blank lines (wrapped lines joined by spaces);
- a line of only `=`, `-`, `*`, `_` or `~` (three or more), not under a heading, is a separator
  and is dropped.
Headings get no anchor: a plain-text file served as it is has no fragments to link to.
"""

from __future__ import annotations

import re

from segment.adapters.text import decode_text, sniff_binary
from segment.settings import Settings
from segment.tree import (
    Code,
    Document,
    Heading,
    ListBlock,
    ListItem,
    Paragraph,
    SectionBuilder,
    Span,
    finish_spans,
)

_BULLET = re.compile(r"^[ \t]{0,3}(?:([-*+•])|(\d{1,9})[.)])[ \t]+(?=\S)")
_RULE = re.compile(r"^[ \t]*([=\-*_~])(?:[ \t]*\1){2,}[ \t]*$")
_UNDERLINE = re.compile(r"^(=+|-+)[ \t]*$")


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse plain-text bytes into a Document (no setting changes how text is read)."""
    sniff_binary(data, source, "plain text")
    doc = Document(source=source, format="text")
    text = decode_text(data, doc.warnings).replace("\r\n", "\n").replace("\r", "\n")
    _TextReader(doc, text.split("\n")).read()
    finish_spans(doc.root)
    return doc


def _indented(line: str) -> bool:
    return line.startswith(("    ", "\t"))


def _blank(line: str) -> bool:
    return not line.strip()


class _TextReader:
    """One pass over the lines with an index; every branch consumes at least one line."""

    def __init__(self, doc: Document, lines: list[str]) -> None:
        self.doc = doc
        self.lines = lines
        self.sections = SectionBuilder(doc.root)
        self.first_heading = True

    def heading_level(self, i: int) -> int:
        """1 or 2 when line i is a heading underlined by line i+1, else 0."""
        if i + 1 >= len(self.lines):
            return 0
        line, under = self.lines[i], self.lines[i + 1]
        m = _UNDERLINE.match(under)
        title = line.strip()
        if not m or not title or _indented(line) or _UNDERLINE.match(line) or _RULE.match(line):
            return 0
        if len(m.group(1)) != len(line.rstrip()):
            return 0
        return 1 if m.group(1)[0] == "=" else 2

    def read(self) -> None:
        i, n = 0, len(self.lines)
        after_blank = True
        while i < n:
            line = self.lines[i]
            if _blank(line):
                i += 1
                after_blank = True
                continue
            level = self.heading_level(i)
            if level:
                self.heading(line.strip(), level, i)
                i += 2
            elif _RULE.match(line):
                i += 1
            elif _BULLET.match(line):
                i = self.list_block(i)
            elif after_blank and _indented(line):
                i = self.code(i)
            else:
                i = self.paragraph(i)
            after_blank = False

    def heading(self, text: str, level: int, i: int) -> None:
        text = " ".join(text.split())
        if self.first_heading and level == 1:
            self.doc.title = text
        self.first_heading = False
        self.sections.open(Heading(text, level, None, Span(lines=(i + 1, i + 2))))

    def code(self, i: int) -> int:
        start, end = i, i
        j = i
        while j < len(self.lines) and (_indented(self.lines[j]) or _blank(self.lines[j])):
            if not _blank(self.lines[j]):
                end = j
            j += 1
        run = [ln.expandtabs(4) for ln in self.lines[start : end + 1]]
        pad = min(len(ln) - len(ln.lstrip(" ")) for ln in run if ln.strip())
        body = [ln[pad:].rstrip() if ln.strip() else "" for ln in run]
        self.sections.add(Code(body, None, Span(lines=(start + 1, end + 1)), first_line=start + 1))
        return end + 1

    def paragraph_end(self, i: int) -> int:
        """Index after the paragraph starting at line i."""
        j = i + 1
        while j < len(self.lines):
            line = self.lines[j]
            if _blank(line) or _BULLET.match(line) or _RULE.match(line) or self.heading_level(j):
                break
            j += 1
        return j

    def paragraph(self, i: int) -> int:
        end = self.paragraph_end(i)
        self.sections.add(self.make_paragraph(i, end))
        return end

    def make_paragraph(self, i: int, end: int, first: str | None = None) -> Paragraph:
        pieces = [first if first is not None else self.lines[i].strip()]
        pieces += [ln.strip() for ln in self.lines[i + 1 : end]]
        starts: list[int] = []
        size = 0
        for piece in pieces[:-1]:
            size += len(piece) + 1
            starts.append(size)
        return Paragraph(" ".join(pieces), Span(lines=(i + 1, end)), line_starts=starts)

    def list_block(self, i: int) -> int:
        first = _BULLET.match(self.lines[i])
        assert first is not None
        ordered = first.group(2) is not None
        block = ListBlock(ordered=ordered, start=int(first.group(2)) if ordered else 1)
        n = len(self.lines)
        while i < n:
            m = _BULLET.match(self.lines[i])
            if m is None or (m.group(2) is not None) != ordered:
                break
            # The item's first paragraph: its line and the wrapped lines after it.
            end = self.paragraph_end(i)
            item = ListItem(blocks=[self.make_paragraph(i, end, self.lines[i][m.end() :].strip())])
            i = end
            # Indented paragraphs after a blank line belong to the item.
            while i < n:
                j = i
                while j < n and _blank(self.lines[j]):
                    j += 1
                if j == i or j >= n or not _indented(self.lines[j]) or _BULLET.match(self.lines[j]):
                    break
                end = self.paragraph_end(j)
                item.blocks.append(self.make_paragraph(j, end))
                i = end
            item.span = Span(lines=(item.blocks[0].span.lines or (1, 1))[:1] + (i,))
            block.items.append(item)
            # Blank lines between items keep one list.
            j = i
            while j < n and _blank(self.lines[j]):
                j += 1
            if j < n and _BULLET.match(self.lines[j]):
                i = j
            else:
                break
        block.span = Span(lines=(block.items[0].span.lines or (1, 1))[:1] + (i,))
        self.sections.add(block)
        return i
