"""The markdown-it parser the Markdown adapter runs: stock markdown-it, less work chunks never show.

Two shortcuts, each giving the token stream a stock parser gives (tests/test_markdown_parser.py
compares the two on the shared corpora, fixtures and generated text):

Link destinations. markdown-it normalises every link and image destination (mdurl's parse,
punycode, percent-encoding) so that a renderer can write it into `href`, then rejects a link whose
normalised destination starts with `javascript:`, `vbscript:`, `file:` or `data:` (but a
`data:image/...`): such text stays literal `[text](url)`. Chunks keep a link's text and drop its
URL, so only that verdict matters. `TextParser` keeps destinations as written, and
`allowed_destination` reaches markdown-it's verdict without normalising wherever it is certain:
- no `:` in the destination: normalisation never adds one (encoding writes `%3A`; a scheme or a
  port comes from a `:` already there), and every rejected prefix ends in one;
- the destination opens with an ASCII scheme (mdurl's protocol pattern, `[a-z0-9.+-]+:` in any
  case) that is not one of the four: normalisation writes that scheme first and leaves it as it
  is, so the normalised destination opens with it too.
Anything else (one of the four, a scheme with other letters, a leading space inside `<...>`) goes
through markdown-it's own normalise-then-validate.

Plain inline text. A third of the inline runs of real documentation (headings, short paragraphs,
list items, table cells) hold no character that any inline rule reacts to (markdown-it's
`terminator_re`: no `*`, `_`, `[`, backtick, `<`, `&`, `\\`, newline...). markdown-it's inline
parser turns such a run into one `text` token after setting up its state and running its
post-processing rules on nothing; `plain_text_inline` makes that token directly. It is installed
only where that holds: the `text` rule runs first and the post-processing rules are markdown-it's
own (delimiter balancing, emphasis, strikethrough, fragment joining), which leave a lone text token
as it is.
"""

from __future__ import annotations

import re

from markdown_it import MarkdownIt
from markdown_it.common.normalize_url import normalizeLink, validateLink
from markdown_it.rules_core import StateCore
from markdown_it.token import Token

_SCHEME = re.compile(r"[A-Za-z0-9.+-]+:")
_CHECKED_SCHEMES = frozenset({"javascript:", "vbscript:", "file:", "data:"})
_QUIET_POST_RULES = frozenset({"balance_pairs", "strikethrough", "emphasis", "fragments_join"})
"""markdown-it's own inline post-processing rules: all work on delimiters and adjacent text tokens."""


def allowed_destination(url: str) -> bool:
    """markdown-it's verdict on `url` once normalised: may it be a link?"""
    if ":" not in url:
        return True
    scheme = _SCHEME.match(url)
    if scheme is not None and scheme.group().lower() not in _CHECKED_SCHEMES:
        return True
    return validateLink(normalizeLink(url))


class TextParser(MarkdownIt):
    """A markdown-it parser for readers of the text: `href`s keep the destination as written."""

    def normalizeLink(self, url: str) -> str:
        return url

    def validateLink(self, url: str) -> bool:
        return allowed_destination(url)


def plain_text_inline(md: MarkdownIt) -> bool:
    """Replace `md`'s core `inline` rule with one that makes plain runs' text token directly; call it
    once every plugin is in. Returns False (and changes nothing) where the shortcut would not be exact."""
    terminators = getattr(md.inline, "terminator_re", None)  # markdown-it-py 4.3 and later
    rules = md.inline.ruler.get_active_rules()
    if (
        not isinstance(terminators, re.Pattern)
        or not rules
        or rules[0] != "text"
        or not set(md.inline.ruler2.get_active_rules()) <= _QUIET_POST_RULES
        or md.options["maxNesting"] < 1
    ):
        return False

    def inline(state: StateCore) -> None:
        parse = state.md.inline.parse
        search = state.md.inline.terminator_re.search
        for token in state.tokens:
            if token.type == "inline":
                if token.children is None:
                    token.children = []
                content = token.content
                if search(content) is None:
                    if content:
                        token.children.append(Token("text", "", 0, content=content))
                else:
                    parse(content, state.md, state.env, token.children)

    md.core.ruler.at("inline", inline)
    return True
