"""The Markdown dialects of documentation sites: which extensions the parser reads, and their labels.

Each extension has a setting (`markdown_<name>` in Settings), on by default: none of these
syntaxes means anything else to a CommonMark reader that a writer would mean on purpose.

- admonitions `!!! kind "Title"`, collapsible `??? kind` / `???+ kind` (mdit-py-plugins `admon`);
- content tabs `=== "Label"` with an indented body (our own block rule, below);
- definition lists `Term` / `: definition` (mdit-py-plugins `deflist`);
- footnotes `[^label]` and `[^label]: text` (mdit-py-plugins `footnote`);
- task lists `- [ ]` / `- [x]` (read by the tree builder: mdit-py-plugins' `tasklists` rule looks
  back to the list's start for every item, quadratic in a long list);
- containers `:::kind Title`, `:::kind[Title]` ... `:::` (mdit-py-plugins `container`, any kind);
- abbreviation definitions `*[HTML]: Hypertext Markup Language` (our own block rule: the line
  vanishes; mdit-py-plugins has no rule for them);
- attribute lists `{: .class #id key=value }` (stripped by the tree builder: mdit-py-plugins'
  `attrs` reads the `{#id .class}` form and applies it to the next block, not this colon form).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, replace
from functools import lru_cache

from markdown_it import MarkdownIt
from markdown_it.rules_block import StateBlock
from mdit_py_plugins.admon import admon_plugin
from mdit_py_plugins.container import container_plugin
from mdit_py_plugins.deflist import deflist_plugin
from mdit_py_plugins.footnote import footnote_plugin
from mdit_py_plugins.front_matter import front_matter_plugin

from segment.adapters.markdown_parser import TextParser, plain_text_inline
from segment.settings import Settings

MAX_NESTING = 40
"""markdown-it's nesting limit, set deliberately. Block nesting costs a level per container and
per paragraph (about 18 nested lists or 38 nested quotes fit), and the inline parser's time on
hostile runs such as 100,000 `[` grows with it (1.6 s at 20, 2.6 s at 40, 5.6 s at 120). Content
past the limit is not silently dropped: it is recovered as plain text and the document warns."""

CONTAINER = "site"
"""Name under which the container rule is registered: its tokens are `container_site_open/close`."""

_TAB = re.compile(r'===[!+]?[ \t]+"([^"\n]*)"[ \t]*$')
_ABBREVIATION = re.compile(r"\*\[[^\]\n]+\]:")
_CONTAINER_KIND = re.compile(r"[ \t]*\{?([A-Za-z][\w-]*)\}?")
_ADMONITION_PARAMS = re.compile(r'\s*(?P<kind>[^\s"]+)(?:[^"]*?)(?:"(?P<title>.*)"[^"]*)?$')
_CONTAINER_PARAMS = re.compile(r"\s*\{?(?P<kind>[A-Za-z][\w-]*)\}?\s*(?:\[(?P<bracket>.*)\]|(?P<rest>.*))")


@dataclass(frozen=True, slots=True)
class SiteSyntax:
    """Which documentation-site extensions the parser reads."""

    admonitions: bool = True
    tabs: bool = True
    definitions: bool = True
    footnotes: bool = True
    tasks: bool = True
    containers: bool = True
    abbreviations: bool = True
    attributes: bool = True
    indented_code: bool = True
    """Indented lines as code blocks (CommonMark); off for MDX, whose JSX children are indented."""

    @classmethod
    def from_settings(cls, settings: Settings | None) -> SiteSyntax:
        """The extensions switched on in `settings` (all, without settings)."""
        return _syntax_of(settings)

    def without_indented_code(self) -> SiteSyntax:
        """The same extensions, indented lines not code (MDX)."""
        return _without_indented_code(self)


@lru_cache(maxsize=64)
def _without_indented_code(syntax: SiteSyntax) -> SiteSyntax:
    return replace(syntax, indented_code=False)


@lru_cache(maxsize=64)
def _syntax_of(settings: Settings | None) -> SiteSyntax:
    if settings is None:
        return SiteSyntax()
    return SiteSyntax(
        admonitions=settings.markdown_admonitions,
        tabs=settings.markdown_tabs,
        definitions=settings.markdown_definitions,
        footnotes=settings.markdown_footnotes,
        tasks=settings.markdown_tasks,
        containers=settings.markdown_containers,
        abbreviations=settings.markdown_abbreviations,
        attributes=settings.markdown_attributes,
    )


_DEFINITION_MARKER = re.compile(r"[ \t>]*[:~][ \t]+\S")
_DEFINITION_MARKER_LINE = re.compile(r"\n[ \t>]*[:~][ \t]+\S")
"""A definition's `:` or `~` marker at the start of a line (after quote marks); searched from a
newline rather than with `^` and MULTILINE, which tries every position of the page."""
_TASK_MARKER = re.compile(r"\[[ xX]\] ")


def used_in(syntax: SiteSyntax, text: str) -> SiteSyntax:
    """`syntax` less the extensions whose marker characters `text` does not hold: the same tree
    from a parser with fewer rules to try on every line (each rule costs time on every page)."""
    present = (
        "!!!" in text or "???" in text,
        "===" in text,
        _DEFINITION_MARKER.match(text) is not None or _DEFINITION_MARKER_LINE.search(text) is not None,
        "[^" in text or "^[" in text,
        _TASK_MARKER.search(text) is not None,
        ":::" in text,
        "*[" in text,
    )
    return _narrowed(syntax, present)


@lru_cache(maxsize=1024)
def _narrowed(syntax: SiteSyntax, present: tuple[bool, ...]) -> SiteSyntax:
    admonitions, tabs, definitions, footnotes, tasks, containers, abbreviations = present
    return replace(
        syntax,
        admonitions=syntax.admonitions and admonitions,
        tabs=syntax.tabs and tabs,
        definitions=syntax.definitions and definitions,
        footnotes=syntax.footnotes and footnotes,
        tasks=syntax.tasks and tasks,
        containers=syntax.containers and containers,
        abbreviations=syntax.abbreviations and abbreviations,
    )


@lru_cache(maxsize=256)
def parser_for(syntax: SiteSyntax) -> MarkdownIt:
    """A markdown-it parser (CommonMark + GFM tables and strikethrough + front matter) with the
    chosen extensions; built once per combination. It gives the tokens of a stock markdown-it
    parser, less some work whose result chunks never show (segment/adapters/markdown_parser.py)."""
    md = configure(TextParser("commonmark", {"maxNesting": MAX_NESTING, "html": True}), syntax)
    plain_text_inline(md)
    return md


def configure(md: MarkdownIt, syntax: SiteSyntax) -> MarkdownIt:
    """`md` (a CommonMark parser) with GFM tables and strikethrough, front matter and the chosen
    extensions."""
    md.enable(["table", "strikethrough"])
    md.use(front_matter_plugin)
    if not syntax.indented_code:
        md.disable("code")
    if syntax.admonitions:
        md.use(admon_plugin)
    if syntax.tabs:
        md.block.ruler.before(
            "fence", "content_tab", _content_tab, {"alt": ["paragraph", "reference", "blockquote", "list"]}
        )
    if syntax.definitions:
        md.use(deflist_plugin)
    if syntax.footnotes:
        md.use(footnote_plugin)
    if syntax.containers:
        md.use(container_plugin, name=CONTAINER, validate=_is_container_opening)
    if syntax.abbreviations:
        # Before the setext-heading rule, and ending a paragraph: otherwise that rule scans ahead
        # to the end of a run of definition lines from each of them (quadratic).
        md.block.ruler.before("lheading", "abbreviation", _abbreviation, {"alt": ["paragraph"]})
    return md


def _is_container_opening(params: str, _markup: str) -> bool:
    return _CONTAINER_KIND.match(params) is not None


def _content_tab(state: StateBlock, start_line: int, end_line: int, silent: bool) -> bool:
    """`=== "Label"` then lines indented four more columns: one tab of a tabbed set.

    Tokens: `tab_open`, a `tab_label_open` / `inline` / `tab_label_close` triple (so that an
    HTML rendering shows the label), the body's own tokens, `tab_close`."""
    if state.sCount[start_line] - state.blkIndent >= 4:
        return False  # indented code
    start = state.bMarks[start_line] + state.tShift[start_line]
    end = state.eMarks[start_line]
    if not state.src.startswith("===", start):
        return False
    m = _TAB.match(state.src, start, end)
    if m is None:
        return False
    if silent:
        return True
    indent = state.sCount[start_line] + 4
    last = start_line
    line = start_line + 1
    while line < end_line:
        if not state.isEmpty(line):
            if state.sCount[line] < indent:
                break
            last = line
        line += 1
    old_line_max, old_indent = state.lineMax, state.blkIndent
    state.lineMax = last + 1
    state.blkIndent = indent

    token = state.push("tab_open", "div", 1)
    token.block = True
    token.map = [start_line, last + 1]
    token.meta = {"label": m.group(1)}
    token = state.push("tab_label_open", "p", 1)
    token.map = [start_line, start_line + 1]
    token = state.push("inline", "", 0)
    token.content = m.group(1)
    token.map = [start_line, start_line + 1]
    token.children = []
    state.push("tab_label_close", "p", -1)
    state.md.block.tokenize(state, start_line + 1, last + 1)
    token = state.push("tab_close", "div", -1)
    token.block = True

    state.lineMax = old_line_max
    state.blkIndent = old_indent
    state.line = last + 1
    return True


def _abbreviation(state: StateBlock, start_line: int, end_line: int, silent: bool) -> bool:
    """`*[ABBR]: expansion` lines: definitions for hover text, never shown as text; they vanish."""
    if state.sCount[start_line] - state.blkIndent >= 4:
        return False
    start = state.bMarks[start_line] + state.tShift[start_line]
    if not state.src.startswith("*[", start) or not _ABBREVIATION.match(state.src, start):
        return False
    if silent:
        return True
    state.line = start_line + 1
    return True


def admonition_label(params: str) -> str:
    """`note "Title"` -> "Note: Title"; `warning` -> "Warning"; `tip ""` -> "Tip"."""
    m = _ADMONITION_PARAMS.match(params)
    if m is None:
        return params.strip().capitalize()
    kind = m.group("kind").capitalize()
    title = " ".join((m.group("title") or "").split())
    return f"{kind}: {title}" if title else kind


def container_label(params: str) -> str:
    """`tip My title`, `tip[My title]`, `{note}` -> "Tip: My title", "Tip: My title", "Note"."""
    m = _CONTAINER_PARAMS.match(params)
    if m is None:
        return params.strip().capitalize()
    kind = m.group("kind").capitalize()
    title = m.group("bracket") if m.group("bracket") is not None else m.group("rest")
    title = " ".join((title or "").split()).strip("\"'")
    return f"{kind}: {title}" if title else kind
