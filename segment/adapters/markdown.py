"""Markdown -> common tree, on markdown-it-py (CommonMark + GFM tables + YAML front matter).

Choices, each visible in the chunks:
- Inline markup is reduced to the text a reader sees: link text kept, URLs dropped (autolinks keep
  the URL, since it is their text); images become their alt text; code spans keep backticks.
- Raw HTML blocks are reduced to their text; HTML comments are dropped.
- Hugo shortcodes (`{{< name ... >}}`, `{{% name ... %}}`) are removed before parsing; the Markdown
  they wrap stays, and their visible labels (quoted arguments, `title=`) become a line of text.
- A code fence's `title="..."` (the file name documentation sites show above the code) becomes a
  line before the code, ending in ":" like a content tab's label, so it opens the code's chunk.
- GitHub alerts (`> [!NOTE]`) become quotes labelled "Note"; `## Title {#id}` sets the anchor.
- Documentation-site extensions (segment/adapters/markdown_site.py), each behind a setting:
  admonitions and `:::` containers become labelled quotes, content tabs their label as a line
  (ending in ":", so it opens the chunk of its body) then their body, definition lists the
  `definitions` block, footnote markers vanish and each note's text goes to the end of the
  section that first cites it, task items keep `[ ]` / `[x]`, abbreviation definitions vanish,
  `{: ...}` attribute lists are stripped (a heading's `#id` sets its anchor).
- Front matter fills the title, `metadata` and the declared `properties`
  (segment/adapters/markdown_properties.py).
- Anchors otherwise follow the common slug practice: lowercase, punctuation dropped, spaces to
  hyphens, `-1`, `-2`... for repeats.
"""

from __future__ import annotations

import operator
import re
from typing import Any

from markdown_it.common.utils import unescapeAll
from markdown_it.token import Token

from segment.adapters.markdown_inline import html_to_text, inline_text, inline_text_lines
from segment.adapters.markdown_properties import read_front_matter
from segment.adapters.markdown_site import (
    CONTAINER,
    MAX_NESTING,
    SiteSyntax,
    admonition_label,
    container_label,
    parser_for,
    used_in,
)
from segment.adapters.text import decode_text, sniff_binary
from segment.errors import ParseError
from segment.settings import Settings
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
    SectionBuilder,
    Span,
    Table,
    block_children,
    finish_spans,
)

_LEVEL = operator.attrgetter("level")
_SHORTCODE = re.compile(r"\{\{([<%])(.*?)([%>])\}\}", re.DOTALL)
_SHORTCODE_ARG = re.compile(r'(?:(\w+)\s*=\s*)?("(?:[^"\\]|\\.)*"|`[^`]*`|\S+)')
_LABEL_KEYS = {"title", "header", "caption", "label", "name"}
_HEADING_ID = re.compile(r"\s*\{#([\w.:-]+)[^}]*\}\s*$")
_HEADING_COLON_ATTRIBUTES = re.compile(r"\s*\{:([^{}]*)\}\s*$")
_ID_ATTRIBUTE = re.compile(r"(?:^|\s)#([\w.:-]+)")
_COLON_ATTRIBUTES_ONLY = re.compile(r"\{:[^{}\n]*\}")
_ATTRIBUTES_ONLY = re.compile(r"\{[#.][\w.:-]+(?:\s+[^{}]*)?\}")
_ALERT = re.compile(r"^\[!(\w+)\][ \t]*\n?")
_SLUG_DROP = re.compile(r"[^\w\- ]", re.UNICODE)
_CODE_TITLE = re.compile(r"""(?:^|\s)title=(["'])(.*?)\1""")
_MARKERS = re.compile(r"^(?:\s*(?:>+|(?:[-*+]|\d{1,9}[.)])(?=\s|$)))+\s*")


def is_attribute_line(text: str) -> bool:
    """A paragraph that is only a block attribute list (`{#id .class key=value}`, or `{: ...}`),
    an instruction to static site generators that never shows on the page."""
    stripped = text.strip()
    return bool(_ATTRIBUTES_ONLY.fullmatch(stripped) or _COLON_ATTRIBUTES_ONLY.fullmatch(stripped))


_MD = parser_for(SiteSyntax())
"""The parser with every documentation-site extension on (the default settings)."""


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse Markdown bytes into a Document; the `markdown_*` settings choose the site extensions."""
    sniff_binary(data, source, "Markdown text")
    doc = Document(source=source, format="markdown")
    text = strip_shortcodes(decode_text(data, doc.warnings))
    return parse_text(text, doc, SiteSyntax.from_settings(settings))


def parse_text(text: str, doc: Document, syntax: SiteSyntax) -> Document:
    """Build `doc`'s tree from decoded Markdown text (shared with the MDX adapter)."""
    env: dict[str, Any] = {}
    try:
        tokens = parser_for(used_in(syntax, text)).parse(text, env)
    except RecursionError as exc:
        raise ParseError(doc.source, "Markdown nested too deeply to parse", status="resource_limit") from exc
    builder = _TreeBuilder(doc, text, syntax)
    if env.get("footnotes", {}).get("list"):
        builder.note_citations(tokens)
    builder.build(tokens)
    return doc


def strip_shortcodes(text: str) -> str:
    """Remove Hugo shortcode tags, keeping their visible labels and the line count."""
    if "{{" not in text:
        return text

    def replace(m: re.Match[str]) -> str:
        newlines = m.group(0).count("\n")
        body = m.group(2).strip()
        if body.startswith("/*") and body.endswith("*/"):
            # {{</* x */>}} is Hugo's escape: the page shows the shortcode itself.
            label = "{{" + m.group(1) + " " + body[2:-2].strip() + " " + m.group(3) + "}}"
        elif body.startswith("/"):
            label = ""
        else:
            label = _shortcode_label(body)
            # Two trailing spaces make a hard break: the label stays on a line of its own.
            if label and text.startswith("\n", m.end()):
                label += "  "
        return label + "\n" * newlines

    return _SHORTCODE.sub(replace, text)


def _shortcode_label(body: str) -> str:
    args = _SHORTCODE_ARG.findall(body)
    if not args:
        return ""
    name = args[0][1]
    labels: list[str] = []
    for i, (key, value) in enumerate(args[1:]):
        quoted = value[:1] in '"`'
        plain = value.strip('"`')
        if (key and key.lower() in _LABEL_KEYS) or (
            not key and (quoted or (name in ("tab", "alert") and i == 0))
        ):
            labels.append(plain)
    return " ".join(label for label in labels if label)


def slugify(text: str) -> str:
    """Common heading-slug practice: lowercase, punctuation dropped, spaces to hyphens."""
    return _SLUG_DROP.sub("", text.strip().lower()).replace(" ", "-")


class _TreeBuilder:
    """Walks the flat token stream once, keeping a stack of open containers (no recursion)."""

    def __init__(self, doc: Document, text: str, syntax: SiteSyntax) -> None:
        self.doc = doc
        self.lines = text.split("\n")
        self.attributes = syntax.attributes
        self.tasks = syntax.tasks
        self.sections = SectionBuilder(doc.root)
        self.stack: list[Any] = []  # open ListBlock / ListItem / Quote / Definition... containers
        self.slugs: dict[str, int] = {}
        self.first_heading = True
        self.opened: list[Section] = [doc.root]  # sections in the order their headings came
        self.citing: dict[int, int] = {}  # footnote id -> index in `opened` of its first citing section
        self.note_id = -1  # the footnote being read

    def note_citations(self, tokens: list[Token]) -> None:
        """Where each footnote is first cited: the number of top-level headings before it."""
        headings = 0
        for tok in tokens:
            if tok.type == "heading_open" and tok.level == 0:
                headings += 1
            elif tok.type == "inline" and tok.children:
                for child in tok.children:
                    if child.type == "footnote_ref":
                        self.citing.setdefault(child.meta["id"], headings)

    # ----- containers ----------------------------------------------------------------------

    def add(self, block: Block) -> None:
        for container in reversed(self.stack):
            if isinstance(container, (ListItem, Quote, Definition)):
                container.blocks.append(block)
                return
        self.sections.add(block)

    def build(self, tokens: list[Token]) -> None:
        i = 0
        n = len(tokens)
        while i < n:
            tok = tokens[i]
            t = tok.type
            if t == "front_matter":
                self.front_matter(tok.content)
            elif t == "heading_open":
                self.heading(tok, tokens[i + 1])
                i += 2
            elif t == "paragraph_open":
                inline = tokens[i + 1]
                self.paragraph(inline, _span(tok))
                i += 2
            elif t in ("bullet_list_open", "ordered_list_open"):
                raw_start = tok.attrGet("start") if t == "ordered_list_open" else None
                start = int(raw_start) if raw_start is not None else 1
                block = ListBlock(ordered=t == "ordered_list_open", start=start, span=_span(tok))
                self.add(block)
                self.stack.append(block)
            elif t == "list_item_open":
                item = ListItem(span=_span(tok))
                self.stack[-1].items.append(item)
                self.stack.append(item)
            elif t == "blockquote_open":
                quote = Quote(span=_span(tok))
                self.add(quote)
                self.stack.append(quote)
            elif t in ("bullet_list_close", "ordered_list_close", "list_item_close", "blockquote_close"):
                closed = self.stack.pop()
                if isinstance(closed, Quote):
                    _label_alert(closed)
            elif t == "fence":
                info_text = unescapeAll(tok.info).strip()
                info = info_text.split()
                lang = info[0].strip("{}.") if info else None
                first = tok.map[0] + 2 if tok.map else None  # the line after the opening fence
                title = _CODE_TITLE.search(info_text)
                label = " ".join(title.group(2).split()) if title else ""
                if label:  # ending in ":", it opens the chunk of its code, as a tab label does
                    line = Span(lines=(tok.map[0] + 1, tok.map[0] + 1)) if tok.map else Span()
                    self.add(Paragraph(label if label.endswith(":") else label + ":", line))
                self.add(Code(_code_lines(tok.content), lang or None, _span(tok), first_line=first))
            elif t == "code_block":
                first = tok.map[0] + 1 if tok.map else None
                self.add(Code(_code_lines(tok.content), None, _span(tok), first_line=first))
            elif t == "html_block":
                text = html_to_text(tok.content)
                if text:
                    self.add(Paragraph(text, _span(tok)))
            elif t == "table_open":
                i = self.table(tokens, i)
            elif t in _SITE_TYPES:
                i = self.site_block(tokens, i)
            i += 1
        if tokens and max(map(_LEVEL, tokens)) >= MAX_NESTING - 1:
            self.recover_deep(tokens)
        finish_spans(self.doc.root)

    # ----- blocks --------------------------------------------------------------------------

    def front_matter(self, content: str) -> None:
        read_front_matter(self.doc, content)

    def site_block(self, tokens: list[Token], i: int) -> int:
        """Tokens of the documentation-site extensions; returns the index of the last one used."""
        tok = tokens[i]
        t = tok.type
        if t == "admonition_open" or t == _CONTAINER_OPEN:
            label = admonition_label(tok.info) if t == "admonition_open" else container_label(tok.info)
            quote = Quote(label=label, span=_span(tok))
            self.add(quote)
            self.stack.append(quote)
        elif t == "admonition_close" or t == _CONTAINER_CLOSE or t == "dd_close" or t == "dl_close":
            self.stack.pop()
        elif t == "admonition_title_open":
            return i + 2  # the title is in the label already
        elif t == "tab_label_open":
            label = inline_text(tokens[i + 1], self.attributes).strip()
            if label:
                self.add(Paragraph(label if label.endswith(":") else label + ":", _span(tok)))
            return i + 2
        elif t == "dl_open":
            definitions = DefinitionList(span=_span(tok))
            self.add(definitions)
            self.stack.append(definitions)
        elif t == "dt_open":
            term = " ".join(inline_text(tokens[i + 1], self.attributes).split())
            definitions = self.stack[-1]
            last = definitions.items[-1] if definitions.items else None
            if last is not None and not last.blocks and tokens[i - 1].type == "dt_close":
                last.terms.append(term)  # several terms for one definition
                last.span = last.span.merge(_span(tok))
            else:
                definitions.items.append(Definition([term], span=_span(tok)))
            return i + 2
        elif t == "dd_open":
            item = self.stack[-1].items[-1]
            item.span = item.span.merge(_span(tok))
            self.stack.append(item)
        elif t == "footnote_open":
            self.stack.append(ListItem())  # a holder for the note's blocks
            self.note_id = tok.meta.get("id", -1) if tok.meta else -1
        elif t == "footnote_close":
            holder = self.stack.pop()
            target = self.citing.get(self.note_id)
            section = self.opened[target] if target is not None else self.sections.current
            section.blocks.extend(_without_spans(holder.blocks))
        return i

    def heading(self, open_tok: Token, inline: Token) -> None:
        level = int(open_tok.tag[1])
        text = inline_text(inline)  # attribute lists are read below, where they may set the anchor
        anchor: str | None = None
        m = _HEADING_ID.search(text)
        if m:
            anchor = m.group(1)
            text = text[: m.start()]
        elif self.attributes and "{:" in text:
            m = _HEADING_COLON_ATTRIBUTES.search(text)
            if m:
                id_match = _ID_ATTRIBUTE.search(m.group(1))
                anchor = id_match.group(1) if id_match else None
                text = text[: m.start()]
        text = " ".join(text.split())
        if self.stack or open_tok.level > 0:  # inside a list item, quote or tab: stays there, as text
            self.add(Paragraph(text, _span(open_tok)))
            return
        if anchor is None:
            anchor = self.unique_slug(slugify(text))
        else:
            self.slugs[anchor] = self.slugs.get(anchor, 0) + 1
        if self.first_heading and self.doc.title is None and level == 1 and text:
            self.doc.title = text
        self.first_heading = False
        self.opened.append(self.sections.open(Heading(text, level, anchor, _span(open_tok))))

    def unique_slug(self, slug: str) -> str:
        n = self.slugs.get(slug, 0)
        self.slugs[slug] = n + 1
        return slug if n == 0 else f"{slug}-{n}"

    def paragraph(self, inline: Token, span: Span) -> None:
        raw, starts = inline_text_lines(inline, self.attributes)
        text = raw.strip()
        if self.tasks and text[:4] in _TASK_MARKS and self.stack:
            item = self.stack[-1]
            if isinstance(item, ListItem) and not item.blocks:
                text = _TASK_MARKS[text[:4]] + text[4:]  # `[X]` reads `[x]`
        if _ATTRIBUTES_ONLY.fullmatch(text):
            return  # `{#id .class}` alone on a line: block attributes for the generator, never shown
        if text:
            lead = len(raw) - len(raw.lstrip())
            starts = [k - lead for k in starts if lead < k < lead + len(text)]
            self.add(Paragraph(text, span, line_starts=starts))

    def table(self, tokens: list[Token], i: int) -> int:
        table = Table(span=_span(tokens[i]))
        row: Row | None = None
        in_head = False
        i += 1
        while i < len(tokens) and tokens[i].type != "table_close":
            tok = tokens[i]
            if tok.type == "thead_open":
                in_head = True
            elif tok.type == "thead_close":
                in_head = False
            elif tok.type == "tr_open":
                row = Row([], _span(tok))
                (table.header if in_head else table.rows).append(row)
            elif tok.type == "inline" and row is not None:
                row.cells.append(inline_text(tok, self.attributes).strip())
            i += 1
        self.add(table)
        return i

    def recover_deep(self, tokens: list[Token]) -> None:
        """Text past the nesting limit: the source lines no leaf block covers, markers stripped."""
        covered = [tok.map for tok in tokens if tok.map and tok.type in _LEAF_TYPES]
        seen = bytearray(len(self.lines) + 1)
        for b, e in covered:
            for k in range(b, min(e, len(self.lines))):
                seen[k] = 1
        lost = [
            _MARKERS.sub("", line).strip()
            for k, line in enumerate(self.lines)
            if not seen[k] and line.strip() and _MARKERS.sub("", line).strip()
        ]
        self.doc.warnings.append(
            f"nesting deeper than {MAX_NESTING} levels: {len(lost)} deep lines kept as plain text"
        )
        if lost:
            self.sections.add(Paragraph("\n".join(lost), Span()))


_LEAF_TYPES = frozenset(
    (
        *("paragraph_open", "heading_open", "fence", "code_block", "html_block", "tr_open", "hr"),
        *("front_matter", "admonition_title_open", "tab_label_open", "dt_open"),
    )
)
"""Tokens whose line map covers source text that reaches the tree."""

_TASK_MARKS = {"[ ] ": "[ ] ", "[x] ": "[x] ", "[X] ": "[x] "}
"""A task item's mark at the start of its first paragraph (GFM task list items), normalised."""

_CONTAINER_OPEN = f"container_{CONTAINER}_open"
_CONTAINER_CLOSE = f"container_{CONTAINER}_close"
_SITE_TYPES = frozenset(
    (
        *("admonition_open", "admonition_close", "admonition_title_open", _CONTAINER_OPEN, _CONTAINER_CLOSE),
        *("tab_label_open", "dl_open", "dt_open", "dd_open", "dd_close", "dl_close"),
        *("footnote_open", "footnote_close"),
    )
)
"""Tokens of the documentation-site extensions, handled by `_TreeBuilder.site_block`."""


def _label_alert(quote: Quote) -> None:
    """`> [!NOTE]` alerts: the marker becomes the quote's label."""
    first = quote.blocks[0] if quote.blocks else None
    if isinstance(first, Paragraph):
        m = _ALERT.match(first.text)
        if m:
            quote.label = m.group(1).capitalize()
            first.text = first.text[m.end() :].strip()
            if not first.text:
                quote.blocks.pop(0)


def _without_spans(blocks: list[Block]) -> list[Block]:
    """Footnote blocks moved to the end of the section citing them: their source lines (at the
    end of the file) would make the section's chunks jump back and forth, so they carry none."""
    stack = list(blocks)
    while stack:
        block = stack.pop()
        block.span = Span()
        if isinstance(block, Paragraph):
            block.line_starts = []
        elif isinstance(block, Table):
            for row in [*block.header, *block.rows]:
                row.span = Span()
        elif isinstance(block, ListBlock):
            for item in block.items:
                item.span = Span()
        elif isinstance(block, DefinitionList):
            for entry in block.items:
                entry.span = Span()
        stack.extend(block_children(block))
    return blocks


def _code_lines(content: str) -> list[str]:
    lines = content.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines


def _span(tok: Token) -> Span:
    """The token's source lines, 1-based and inclusive (markdown-it's map is 0-based, end exclusive)."""
    m = tok.map
    if m:
        first, end = m
        return Span((first + 1, end if end > first else first + 1))  # positional: a frozen init is dear
    return Span()
