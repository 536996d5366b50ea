"""MDX -> common tree: the MDX layer removed, then the Markdown adapter (format `mdx`).

MDX is Markdown with JSX and ES modules. What a reader of the built page sees is kept:
- `import` / `export` blocks (from such a line at the start of a block to the next blank line) vanish;
- JSX tags vanish and the text between them stays; a component's `label` (or `title`) attribute,
  or a `TabItem`'s `value` when it has no label, becomes a line of text ending in ":", like the
  label of a Markdown content tab;
- `{expressions}` and `{/* comments */}` vanish; a heading ending in `{#id}` or `{/* #id */}` gets
  that anchor;
- indented lines are not code (MDX has no indented code blocks: JSX children are indented);
- `:::note Title` / `:::tip[Title]` admonitions become labelled quotes (markdown_site.py).
Code fences and code spans are left exactly as written. Every removal keeps the newlines it
covers, so line numbers stay those of the source. Text that only looks like JSX (an unclosed `<`
or `{`, which MDX itself would reject) stays as text: unbalanced JSX gives chunks, not an error.
"""

from __future__ import annotations

import html
import re
from collections.abc import Iterator
from functools import lru_cache

from segment.adapters.markdown import parse_text
from segment.adapters.markdown_site import SiteSyntax
from segment.adapters.text import decode_text, sniff_binary
from segment.settings import Settings
from segment.tree import Document

MAX_TAG_CHARS = 10_000
"""A JSX tag longer than this (its attributes included) is read as text: bounds the scan."""

_SPECIAL_LINE = re.compile(r"(?:[ \t]*(`{3,}|~{3,})|(?:import|export)(?=[ \t{*]))")
_SPECIAL_LINE_AFTER_NEWLINE = re.compile(r"\n(?:[ \t]*(`{3,}|~{3,})|(?:import|export)(?=[ \t{*]))")
"""A line opening a code fence or an ES module block; searched from the newline before it
(a literal first character lets the regex engine skip ahead, where `^` with MULTILINE tries
every position of the page)."""
_FRONT_MATTER = re.compile(r"---[ \t]*\n(?:.*\n)*?(?:---|\.\.\.)[ \t]*(?:\n|\Z)")
_SPECIAL = re.compile(r"[`\\{<]")
_BRACE_EVENT = re.compile(r"[{}\"'`\\]")
_BLANK_LINE = re.compile(r"\n[ \t]*(?=\n)")
_TAG_NAME = re.compile(r"[A-Za-z][\w.:-]*")
_ATTRIBUTE = re.compile(r"""\s*([A-Za-z_:][\w.:-]*)(?:\s*=\s*("[^"]*"|'[^']*'|\{))?""")
_AUTOLINK = re.compile(r"<[A-Za-z][A-Za-z0-9+.-]{1,31}:[^<>\s]*>")
_HEADING_ID = re.compile(r"\s*(?:/\*\s*)?#([\w.:-]+)\s*(?:\*/)?\s*")
_LABEL_ATTRIBUTES = ("label", "title")
_WORD_CHAR = re.compile(r"\w")


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse MDX bytes into a Document; the `markdown_*` settings apply as for Markdown."""
    sniff_binary(data, source, "MDX text")
    doc = Document(source=source, format="mdx")
    text = strip_mdx(decode_text(data, doc.warnings))
    syntax = SiteSyntax.from_settings(settings).without_indented_code()
    return parse_text(text, doc, syntax)


def strip_mdx(text: str) -> str:
    """The Markdown left when the MDX layer is removed; the same number of lines."""
    front = _front_matter_end(text)
    out: list[str] = [text[:front]]
    prose_start = front  # where the prose not yet written begins
    for start, after, fence in _special_lines(text, front):
        if start < prose_start:
            continue  # inside a fence or an ESM block already passed
        line_end = text.find("\n", start)
        line_end = len(text) if line_end == -1 else line_end
        if fence:
            if fence[0] == "`" and "`" in text[after:line_end]:
                continue  # CommonMark: no backtick in a backtick fence's info string
            closing = _closing_fence(fence).search(text, line_end)  # from the newline ending the line
            end = closing.end() if closing else len(text)
            out.append(_strip_run(text[prose_start:start]))
            out.append(text[start:end])
        else:
            if start > front and text[text.rfind("\n", 0, start - 1) + 1 : start].strip():
                continue  # ESM starts a block: the line before must be blank
            blank = _BLANK_LINE.search(text, start)
            end = blank.start() if blank else len(text)
            out.append(_strip_run(text[prose_start:start]))
            out.append("\n" * text.count("\n", start, end))
        prose_start = end
    out.append(_strip_run(text[prose_start:]))
    return "".join(out)


def _special_lines(text: str, front: int) -> Iterator[tuple[int, int, str | None]]:
    """(line start, end of the match, fence or None) of each line from `front` on (a line
    start) that opens a code fence or an ES module block."""
    if front == 0 or text[front - 1] != "\n":
        first = _SPECIAL_LINE.match(text, front)
        if first:
            yield front, first.end(), first.group(1)
    for m in _SPECIAL_LINE_AFTER_NEWLINE.finditer(text, max(front - 1, 0)):
        yield m.start() + 1, m.end(), m.group(1)


@lru_cache(maxsize=64)
def _closing_fence(fence: str) -> re.Pattern[str]:
    """A newline, then a line of the fence's character only, at least as long as the opening."""
    return re.compile(r"\n[ \t]*" + re.escape(fence[0]) + "{" + str(len(fence)) + r",}[ \t]*$", re.MULTILINE)


def _front_matter_end(text: str) -> int:
    """Length of the YAML front matter at the start (left for the Markdown adapter), or 0."""
    m = _FRONT_MATTER.match(text)
    return m.end() if m else 0


def _brace_pairs(s: str) -> dict[int, int]:
    """Matching `{` -> `}` positions in one run of prose, in one linear pass. JavaScript strings
    inside braces are skipped; a blank line closes nothing: braces open across it stay unmatched."""
    pairs: dict[int, int] = {}
    stack: list[int] = []
    blanks = [m.start() for m in _BLANK_LINE.finditer(s)]
    blanks.reverse()
    n = len(s)
    next_blank = blanks.pop() if blanks else n + 1
    skip_to = 0  # past a string or an escaped character
    for m in _BRACE_EVENT.finditer(s):
        i = m.start()
        if i < skip_to:
            continue
        while i >= next_blank:
            stack.clear()
            next_blank = blanks.pop() if blanks else n + 1
        c = s[i]
        if c == "{":
            stack.append(i)
        elif c == "}":
            if stack:
                pairs[stack.pop()] = i
        elif c == "\\":
            skip_to = i + 2
        elif stack:  # a JavaScript string inside an expression
            end = s.find(c, i + 1)
            limit = s.find("\n", i + 1) if c != "`" else next_blank
            if end != -1 and (limit == -1 or end < limit):
                skip_to = end + 1
    return pairs


def _strip_run(s: str) -> str:
    """JSX tags and expressions out of one run of prose (no fences or ESM inside)."""
    if "{" not in s and "<" not in s:
        return s
    pairs = _brace_pairs(s) if "{" in s else {}
    out: list[str] = []
    i, n = 0, len(s)
    while i < n:
        m = _SPECIAL.search(s, i)
        if m is None:
            out.append(s[i:])
            break
        j = m.start()
        out.append(s[i:j])
        c = s[j]
        if c == "\\":
            out.append(s[j : j + 2])
            i = j + 2
        elif c == "`":
            i = _code_span(s, j, out)
        elif c == "{":
            end = pairs.get(j)
            if end is None:
                out.append("{")
                i = j + 1
            else:
                out.append(_expression(s, j, end))
                i = end + 1
        else:
            i = _tag(s, j, pairs, out)
    return "".join(out)


def _code_span(s: str, j: int, out: list[str]) -> int:
    """A code span kept verbatim (closed on the same line by a run of as many backticks)."""
    k = j
    while k < len(s) and s[k] == "`":
        k += 1
    run = s[j:k]
    line_end = s.find("\n", k)
    line_end = len(s) if line_end == -1 else line_end
    close = s.find(run, k, line_end)
    while close != -1 and close + len(run) < len(s) and s[close + len(run)] == "`":
        close = s.find(run, close + len(run) + 1, line_end)
    if close == -1:
        out.append(run)
        return k
    out.append(s[j : close + len(run)])
    return close + len(run)


def _expression(s: str, start: int, end: int) -> str:
    """An expression vanishes, keeping its newlines; a heading's trailing `{#id}` stays for the
    Markdown adapter, which makes it the anchor."""
    inner = s[start + 1 : end]
    line_start = s.rfind("\n", 0, start) + 1
    line_end = s.find("\n", end)
    rest = s[end + 1 : line_end if line_end != -1 else len(s)]
    m = _HEADING_ID.fullmatch(inner)
    if m and not rest.strip() and s[line_start:start].lstrip().startswith("#"):
        return "{#" + m.group(1) + "}"
    return "\n" * inner.count("\n")


def _tag(s: str, j: int, pairs: dict[int, int], out: list[str]) -> int:
    """A JSX tag at `s[j]` == "<": replaced by its label, or nothing; else `<` stays as text."""
    end, label = _read_tag(s, j, pairs)
    if end < 0:
        out.append("<")
        return j + 1
    newlines = s.count("\n", j, end)
    line_end = s.find("\n", end)
    rest_of_line = s[end : line_end if line_end != -1 else len(s)]
    if label:
        # The label and a colon, as the Markdown adapter writes a content tab's label (a lead-in
        # that opens the chunk of its content): on a line of its own (two trailing spaces make a
        # hard break before content on the next line), or before content on the same line.
        text = label + ("" if label.endswith(":") else ":") + ("  " if not rest_of_line.strip() else " ")
    else:
        before = s[j - 1] if j > 0 else ""
        after = s[end] if end < len(s) else ""
        text = " " if _WORD_CHAR.match(before) and _WORD_CHAR.match(after) else ""
    out.append(text + "\n" * newlines)
    return end


def _read_tag(s: str, j: int, pairs: dict[int, int]) -> tuple[int, str]:
    """End (exclusive) of the JSX tag starting at `j` and its visible label; -1 when it is none."""
    if _AUTOLINK.match(s, j):
        return -1, ""
    i = j + 1
    closing = s.startswith("/", i)
    if closing:
        i += 1
    name_match = _TAG_NAME.match(s, i)
    name = name_match.group(0) if name_match else ""
    if name_match:
        i = name_match.end()
    elif not s.startswith(">", i):  # `<>` and `</>` are fragments; anything else is text
        return -1, ""
    attributes: dict[str, str] = {}
    limit = min(len(s), j + MAX_TAG_CHARS)
    while i < limit:
        while i < limit and s[i] in " \t\r\n":
            if s.startswith("\n", i) and _BLANK_LINE.match(s, i):
                return -1, ""
            i += 1
        if s.startswith(">", i):
            return i + 1, "" if closing else _label(name, attributes)
        if s.startswith("/>", i):
            return i + 2, "" if closing else _label(name, attributes)
        if s.startswith("{", i):  # a spread `{...props}`
            end = pairs.get(i)
            if end is None:
                return -1, ""
            i = end + 1
            continue
        m = _ATTRIBUTE.match(s, i)
        if m is None or m.end() == i:
            return -1, ""
        value = m.group(2)
        if value == "{":
            end = pairs.get(m.end() - 1)
            if end is None:
                return -1, ""
            i = end + 1
        else:
            if value:
                attributes[m.group(1)] = html.unescape(value[1:-1])
            i = m.end()
    return -1, ""


def _label(name: str, attributes: dict[str, str]) -> str:
    for key in _LABEL_ATTRIBUTES:
        value = " ".join(attributes.get(key, "").split())
        if value:
            return value
    if name.endswith("TabItem"):
        return " ".join(attributes.get("value", "").split())
    return ""
