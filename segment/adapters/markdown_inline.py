"""Inline Markdown reduced to the text a reader sees, and raw HTML reduced to its text."""

from __future__ import annotations

import html
import re

from markdown_it.token import Token

_COMMENT = re.compile(r"<!--.*?(-->|$)", re.DOTALL)
_HIDDEN = re.compile(r"<(script|style|template)\b.*?(</\1\s*>|$)", re.DOTALL | re.IGNORECASE)
_TAG = re.compile(r"<[^>]*>")
_BR = re.compile(r"<br\s*/?>", re.IGNORECASE)
_BLOCK_TAG = re.compile(
    r"</?\s*(p|div|li|ul|ol|dl|dt|dd|tr|td|th|table|thead|tbody|h[1-6]|hr|pre|blockquote|section)\b",
    re.IGNORECASE,
)
COLON_ATTRIBUTES = re.compile(r"[ \t]*\{:[^{}\n]*\}")
"""`{: .class #id key=value }`: a Python-Markdown / kramdown attribute list, never shown."""


def inline_text(inline: Token, attributes: bool = False) -> str:
    """The visible text of an inline token's children."""
    return inline_text_lines(inline, attributes)[0]


def inline_text_lines(inline: Token, attributes: bool = False) -> tuple[str, list[int]]:
    """The visible text of an inline token, and the offsets where each later source line starts.

    Footnote markers and anchors are dropped; with `attributes`, `{: ...}` attribute lists are stripped from the text."""
    out: list[str] = []
    starts: list[int] = []
    size = 0
    for child in inline.children or []:
        t = child.type
        if t == "text" or t == "image":
            piece = child.content
            if attributes and "{:" in piece:
                piece = COLON_ATTRIBUTES.sub("", piece)
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
