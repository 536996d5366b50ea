"""Markdown -> common tree, on markdown-it-py (CommonMark + GFM tables + YAML front matter).

Choices, each visible in the chunks:
- Inline markup is reduced to the text a reader sees: link text kept, URLs dropped (autolinks keep
  the URL, since it is their text); images become their alt text; code spans keep backticks.
- Raw HTML blocks are reduced to their text; HTML comments are dropped.
- Hugo shortcodes (`{{< name ... >}}`, `{{% name ... %}}`) are removed before parsing; the Markdown
  they wrap stays, and their visible labels (quoted arguments, `title=`) become a line of text.
- GitHub alerts (`> [!NOTE]`) become quotes labelled "Note"; `## Title {#id}` sets the anchor.
- Anchors otherwise follow the common slug practice: lowercase, punctuation dropped, spaces to
  hyphens, `-1`, `-2`... for repeats.
"""

from __future__ import annotations

import html
import re
from typing import Any

import yaml
from markdown_it import MarkdownIt
from markdown_it.common.utils import unescapeAll
from markdown_it.token import Token
from mdit_py_plugins.front_matter import front_matter_plugin

from segment.adapters.text import decode_text, sniff_binary
from segment.errors import ParseError
from segment.settings import Settings
from segment.tree import (
    Block,
    Code,
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

MAX_NESTING = 40
"""markdown-it's nesting limit, set deliberately. Block nesting costs a level per container and
per paragraph (about 18 nested lists or 38 nested quotes fit), and the inline parser's time on
hostile runs such as 100,000 `[` grows with it (1.6 s at 20, 2.6 s at 40, 5.6 s at 120). Content
past the limit is not silently dropped: it is recovered as plain text and the document warns."""

_SHORTCODE = re.compile(r"\{\{([<%])(.*?)([%>])\}\}", re.DOTALL)
_SHORTCODE_ARG = re.compile(r'(?:(\w+)\s*=\s*)?("(?:[^"\\]|\\.)*"|`[^`]*`|\S+)')
_LABEL_KEYS = {"title", "header", "caption", "label", "name"}
_HEADING_ID = re.compile(r"\s*\{#([\w.:-]+)[^}]*\}\s*$")
_ATTRIBUTES_ONLY = re.compile(r"\{[#.][\w.:-]+(?:\s+[^{}]*)?\}")
_ALERT = re.compile(r"^\[!(\w+)\][ \t]*\n?")
_COMMENT = re.compile(r"<!--.*?(-->|$)", re.DOTALL)
_HIDDEN = re.compile(r"<(script|style|template)\b.*?(</\1\s*>|$)", re.DOTALL | re.IGNORECASE)
_TAG = re.compile(r"<[^>]*>")
_BR = re.compile(r"<br\s*/?>", re.IGNORECASE)
_BLOCK_TAG = re.compile(
    r"</?\s*(p|div|li|ul|ol|dl|dt|dd|tr|td|th|table|thead|tbody|h[1-6]|hr|pre|blockquote|section)\b",
    re.IGNORECASE,
)
_SLUG_DROP = re.compile(r"[^\w\- ]", re.UNICODE)
_MARKERS = re.compile(r"^(?:\s*(?:>+|(?:[-*+]|\d{1,9}[.)])(?=\s|$)))+\s*")


def is_attribute_line(text: str) -> bool:
    """A paragraph that is only a block attribute list (`{#id .class key=value}`), an instruction
    to static site generators that never shows on the page."""
    return bool(_ATTRIBUTES_ONLY.fullmatch(text.strip()))


def _parser() -> MarkdownIt:
    md = MarkdownIt("commonmark", {"maxNesting": MAX_NESTING, "html": True})
    md.enable(["table", "strikethrough"])
    md.use(front_matter_plugin)
    return md


_MD = _parser()
_YAML_LOADER = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
"""libyaml's safe loader when PyYAML was built with it (about 10x faster), else the Python one."""


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse Markdown bytes into a Document (no setting changes how Markdown is read)."""
    sniff_binary(data, source, "Markdown text")
    doc = Document(source=source, format="markdown")
    text = decode_text(data, doc.warnings)
    text = strip_shortcodes(text)
    try:
        tokens = _MD.parse(text)
    except RecursionError as exc:
        raise ParseError(source, "Markdown nested too deeply to parse", status="resource_limit") from exc
    _TreeBuilder(doc, text).build(tokens)
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

    def __init__(self, doc: Document, text: str) -> None:
        self.doc = doc
        self.lines = text.split("\n")
        self.sections = SectionBuilder(doc.root)
        self.stack: list[Any] = []  # open ListBlock / ListItem / Quote / Table containers
        self.slugs: dict[str, int] = {}
        self.first_heading = True

    # ----- containers ----------------------------------------------------------------------

    def add(self, block: Block) -> None:
        for container in reversed(self.stack):
            if isinstance(container, (ListItem, Quote)):
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
                info = unescapeAll(tok.info).strip().split()
                lang = info[0].strip("{}.") if info else None
                first = tok.map[0] + 2 if tok.map else None  # the line after the opening fence
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
            i += 1
        if tokens and max(tok.level for tok in tokens) >= MAX_NESTING - 1:
            self.recover_deep(tokens)
        finish_spans(self.doc.root)

    # ----- blocks --------------------------------------------------------------------------

    def front_matter(self, content: str) -> None:
        try:
            data = yaml.load(content, Loader=_YAML_LOADER)
        except yaml.YAMLError as exc:
            self.doc.warnings.append(f"front matter is not valid YAML: {str(exc).splitlines()[0]}")
            data = None
        if isinstance(data, dict):
            meta = {str(k): _plain(v) for k, v in data.items()}
            title = meta.pop("title", None)
            if isinstance(title, str) and title.strip():
                self.doc.title = " ".join(title.split())
            elif title is not None:
                meta["title"] = title
            self.doc.metadata.update(meta)

    def heading(self, open_tok: Token, inline: Token) -> None:
        level = int(open_tok.tag[1])
        text = inline_text(inline)
        anchor: str | None = None
        m = _HEADING_ID.search(text)
        if m:
            anchor = m.group(1)
            text = text[: m.start()]
        text = " ".join(text.split())
        if self.stack:  # a heading inside a list item or quote stays there, as text
            self.add(Paragraph(text, _span(open_tok)))
            return
        if anchor is None:
            anchor = self.unique_slug(slugify(text))
        else:
            self.slugs[anchor] = self.slugs.get(anchor, 0) + 1
        if self.first_heading and self.doc.title is None and level == 1 and text:
            self.doc.title = text
        self.first_heading = False
        self.sections.open(Heading(text, level, anchor, _span(open_tok)))

    def unique_slug(self, slug: str) -> str:
        n = self.slugs.get(slug, 0)
        self.slugs[slug] = n + 1
        return slug if n == 0 else f"{slug}-{n}"

    def paragraph(self, inline: Token, span: Span) -> None:
        raw, starts = inline_text_lines(inline)
        text = raw.strip()
        if is_attribute_line(text):
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
                row.cells.append(inline_text(tok).strip())
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
    ("paragraph_open", "heading_open", "fence", "code_block", "html_block", "tr_open", "hr", "front_matter")
)
"""Tokens whose line map covers source text that reaches the tree."""


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


def inline_text(inline: Token) -> str:
    """The visible text of an inline token's children."""
    return inline_text_lines(inline)[0]


def inline_text_lines(inline: Token) -> tuple[str, list[int]]:
    """The visible text of an inline token, and the offsets where each later source line starts."""
    out: list[str] = []
    starts: list[int] = []
    size = 0
    for child in inline.children or []:
        t = child.type
        if t == "text" or t == "image":
            piece = child.content
        elif t == "code_inline":
            piece = f"`{child.content}`"
        elif t == "softbreak" or t == "hardbreak":
            piece = " " if t == "softbreak" else "\n"
            starts.append(size + 1)
        elif t == "html_inline" and _BR.fullmatch(child.content.strip()):
            piece = "\n"
        elif t == "html_inline" and _BLOCK_TAG.match(child.content):
            piece = " "  # a block-level tag inside inline text still separates words
        else:
            continue
        out.append(piece)
        size += len(piece)
    return "".join(out), starts


def html_to_text(raw: str) -> str:
    """Raw HTML reduced to the text a reader sees: comments and script/style bodies dropped,
    tags removed, entities decoded."""
    text = _HIDDEN.sub("", _COMMENT.sub("", raw))
    text = _BR.sub("\n", text)
    text = html.unescape(_TAG.sub(" ", text))
    lines = [" ".join(line.split()) for line in text.split("\n")]
    return "\n".join(line for line in lines if line)


def _code_lines(content: str) -> list[str]:
    lines = content.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines


def _span(tok: Token) -> Span:
    if tok.map:
        return Span(lines=(tok.map[0] + 1, max(tok.map[1], tok.map[0] + 1)))
    return Span()


def _plain(value: Any) -> Any:
    """Front-matter values as JSON-safe data (dates become ISO strings)."""
    if isinstance(value, dict):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v) for v in value]
    if value is None or isinstance(value, (str, int, float, bool)):
        return value
    return str(value)
