"""The corpus checker: what a person expects of the chunks of a real Markdown page.

Used by tests/test_corpus_markdown.py and tests/test_properties.py; run by hand for figures:

    python tests/checker.py [FOLDER] [--max-tokens 256 512]

For one source file and one budget it checks, independently of how the segmenter works:

1. table rows and code lines: every pipe-table row line in chunk text has its table header's cell
   count, every table part starts with the header row and its separator, and every row of the
   tree's tables appears whole in some chunk; likewise every code line of the tree (unless the
   line inside its fences is over budget) is a whole line of some chunk, in source order;
2. heading path: every chunk holding (part of) a paragraph carries the breadcrumb of the deepest
   section whose lines cover the whole chunk: the paragraph's own section, or, for chunks that pack
   sibling sections together, their common parent (DESIGN.md section 6, rule 1). Where a section
   has no blocks of its own and a single child, the child's breadcrumb is accepted too (the two
   hold the same content but for the parent's heading line);
3. words: the visible words of the page (rendered to HTML by markdown-it-py, text taken with lxml)
   reach some chunk's text or breadcrumb (counted with multiplicity);
4. budget: no chunk's token count exceeds the budget unless it is flagged `oversize`, the count
   is the counter's count of the text, and an oversize chunk holds one unbreakable unit;
5. boundaries: a chunk ends at the end of a block, at the end of a sentence (a sentence-final
   mark, or where spaCy's rule-based sentencizer starts a new sentence), or inside a sentence only
   when that sentence alone is over budget;
6. lines: chunks follow the source, each starting no earlier than the line where the previous one
   ends (two chunks may share the line where one sentence ends and the next begins);
7. syntax: markup a reader never sees (shortcode delimiters, `[!NOTE]` alert markers, lines that
   are only a `{#id}` / `{.class}` attribute list) is in no chunk's text outside code, and no
   breadcrumb carries it or a `{#id}`.

The visible-words reference follows what a reader of the rendered site sees: YAML front matter,
static-site shortcode markers (`{{< ... >}}`, `{{% ... %}}`, whose inner text stays), explicit
heading ids (`## Title {#id}`) and lines holding only an attribute list (`{#id}`, applied by the
site generator to a neighbouring block; Goldmark's block attributes, from memory) are not
visible words; link URLs and image sources are not text in HTML,
nor are the bodies of `<script>` and `<style>` elements. Footnote marks (`[^1]`, and the `[^1]:`
opening a note) are not words either: sites render them as superscript numbers linking to the
note (markdown-it-py's footnote plugin in mdit-py-plugins); the note's text is.
"""

from __future__ import annotations

import re
import sys
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import lxml.html

import segment
from segment.chunk import Chunk
from segment.settings import Settings
from segment.tokens import TokenCounter, counter_for
from segment.tree import (
    Block,
    Code,
    DefinitionList,
    Document,
    ListBlock,
    Paragraph,
    Quote,
    Section,
    Table,
)

WORD = re.compile(r"\w+", re.UNICODE)
FRONT_MATTER = re.compile(r"\A(?:\ufeff)?---[ \t]*\r?\n.*?\r?\n(?:---|\.\.\.)[ \t]*(?:\r?\n|\Z)", re.S)
SHORTCODE = re.compile(r"\{\{[<%].*?[%>]\}\}", re.S)
HEADING_ID = re.compile(r"^([ \t]{0,3}#{1,6}[ \t].*?)[ \t]*\{#[^}\n]*\}[ \t]*$", re.M)
FOOTNOTE_MARK = re.compile(r"\[\^[^\]\s]+\]")
FOOTNOTE_OPENER = re.compile(r"^\[\^[^\]\s]+\]:[ \t]*", re.M)
ATTRIBUTE_LINE = re.compile(r"^[ \t]{0,3}\{[#.][\w.:-]+(?:[ \t][^}\n]*)?\}[ \t]*$", re.M)
SENTENCE_END = re.compile(r"[.!?\u2026\u3002][\"'\u201d\u2019)\]*_`]*\s*$")
SENTENCE_END_INSIDE = re.compile(r"[.!?\u2026\u3002][\"'\u201d\u2019)\]*_`]*\s")
PIPE_ROW = re.compile(r"^\|.*\|$")
DELIMITER_ROW = re.compile(r"^\|(?: ?:?-+:? ?\|)+$")
TAIL_WORDS = 4
ROUNDING = 2
"""Tokens a sum of separately counted pieces (fence, line) may exceed the joined text's count."""
CHECKS = ("rows", "code", "crumbs", "budget", "boundaries", "lines", "syntax")
MARKUP = re.compile(
    r"\{\{[<%]|[%>]\}\}"  # static-site shortcode delimiters
    r"|^\s*\[!(?:NOTE|TIP|IMPORTANT|WARNING|CAUTION)\]"  # GitHub alert markers
    r"|^\s*\{[#.][\w.:-]+(?:\s[^}]*)?\}\s*$",  # a line that is only a block attribute list
    re.IGNORECASE | re.MULTILINE,
)
BLOCK_TAGS = (
    "br",
    "p",
    "div",
    "li",
    "td",
    "th",
    "tr",
    "h1",
    "h2",
    "h3",
    "h4",
    "h5",
    "h6",
    "pre",
    "blockquote",
    "table",
    "ul",
    "ol",
    "dt",
    "dd",
    "hr",
    "section",
    "details",
    "summary",
)


def corpus_root() -> Path:
    """The shared Markdown corpus, located relative to the repository (may not exist)."""
    return Path(__file__).resolve().parents[1].parent / "shared" / "corpus" / "markdown"


def corpus_files(root: Path) -> list[Path]:
    """Corpus documents: every `*.md` below `root` except provenance files (corpus README)."""
    return sorted(p for p in root.rglob("*.md") if p.name not in ("SOURCE.md", "README.md"))


def words(text: str) -> list[str]:
    """Word tokens, casefolded (case is not what the checks are about).

    Backticks are dropped first: chunk text keeps inline code as `` `name`s ``, which is the same
    word as the rendered page's "names".
    """
    return [w.casefold() for w in WORD.findall(text.replace("`", ""))]


# ----- 3. visible words: an independent rendering with markdown-it-py + lxml -----------------


@lru_cache(maxsize=1)
def _renderer():  # type: ignore[no-untyped-def]
    from markdown_it import MarkdownIt

    md = MarkdownIt("commonmark", {"html": True, "maxNesting": 10_000}).enable("table")
    return md


def visible_text(markdown: str) -> str:
    """What a reader sees of a Markdown page: rendered to HTML, then the text of that HTML."""
    body = FRONT_MATTER.sub("", markdown, count=1)
    body = SHORTCODE.sub("", body)
    body = HEADING_ID.sub(r"\1", body)
    body = ATTRIBUTE_LINE.sub("", body)
    # A zero-width space (no word) keeps an opener's indented lines a paragraph, as in the note.
    body = FOOTNOTE_MARK.sub("", FOOTNOTE_OPENER.sub("\u200b", body))
    html = _renderer().render(body)
    if not html.strip():
        return ""
    root = lxml.html.fromstring(f"<div>{html}</div>")
    # A line break or a block's start or end separates words even where the HTML has no
    # whitespace (`23<br/>OpenJ9` or `arg<p>VAR</p>` in a table cell read as two words).
    for el in root.iter(*BLOCK_TAGS):
        el.text = "\n" + (el.text or "")
        el.tail = "\n" + (el.tail or "")
    # Script and style bodies are not shown to a reader.
    for el in list(root.iter("script", "style")):
        el.drop_tree()
    # Comments and processing instructions are not text; lxml's text_content() skips them.
    return str(root.text_content())


def visible_words(markdown: str) -> Counter[str]:
    return Counter(words(visible_text(markdown)))


def output_words(chunks: Iterable[Chunk]) -> Counter[str]:
    out: Counter[str] = Counter()
    for c in chunks:
        out.update(words(c.text))
        for crumb in c.breadcrumb:
            out.update(words(crumb))
    return out


# ----- the tree, walked iteratively ------------------------------------------------------------


def all_blocks(blocks: Iterable[Block]) -> list[Block]:
    """Blocks and every block nested in them (list items, quotes, definitions), in order."""
    out: list[Block] = []
    stack = list(reversed(list(blocks)))
    while stack:
        b = stack.pop()
        out.append(b)
        inner: list[Block] = []
        if isinstance(b, ListBlock):
            inner = [x for item in b.items for x in item.blocks]
        elif isinstance(b, Quote):
            inner = list(b.blocks)
        elif isinstance(b, DefinitionList):
            inner = [x for d in b.items for x in d.blocks]
        stack.extend(reversed(inner))
    return out


def expected_crumb(doc: Document, path: list[Section], section: Section) -> list[str]:
    """Breadcrumb from the document title down to `section` (DESIGN.md section 4).

    A first heading that repeats the title is kept once (a page titled "Install" whose first
    heading is "Install" reads as one level, not two).
    """
    heads = [s.heading.text for s in [*path, section] if s.heading is not None]
    if doc.title is None:
        return heads
    if heads and _norm(heads[0]).casefold() == _norm(doc.title).casefold():
        heads = heads[1:]
    return [doc.title, *heads]


def _norm(text: str) -> str:
    return " ".join(text.split())


def _cells(line: str) -> list[str]:
    """Cells of a pipe-table line; `\\|` is a literal pipe."""
    inner = line.strip()[1:-1]
    cells = re.split(r"(?<!\\)\|", inner)
    return [_norm(c.replace("\\|", "|")) for c in cells]


def _unit_texts(doc: Document) -> list[str]:
    """Texts a chunk may end with when it ends at a block boundary."""
    out: list[str] = []
    for _path, section in doc.walk():
        if section.heading is not None:
            out.append(section.heading.text)
        for b in all_blocks(section.blocks):
            if isinstance(b, Paragraph):
                out.append(b.text)
            elif isinstance(b, Code):
                out.extend(b.lines)
            elif isinstance(b, Table):
                out.extend(" ".join(r.cells) for r in [*b.header, *b.rows])
                if b.caption:
                    out.append(b.caption)
            elif isinstance(b, DefinitionList):
                out.extend(t for d in b.items for t in d.terms)
            elif isinstance(b, Quote) and b.label:
                out.append(b.label)
    return out


# ----- the report --------------------------------------------------------------------------------


@dataclass
class FileReport:
    """What the checker found for one file under one budget."""

    source: str
    max_tokens: int
    chunks: int = 0
    oversize: int = 0
    words_source: int = 0
    words_found: int = 0
    missing: Counter[str] = field(default_factory=Counter)
    rows: list[str] = field(default_factory=list)
    crumbs: list[str] = field(default_factory=list)
    budget: list[str] = field(default_factory=list)
    boundaries: list[str] = field(default_factory=list)
    lines: list[str] = field(default_factory=list)
    code: list[str] = field(default_factory=list)
    syntax: list[str] = field(default_factory=list)
    error: str | None = None


def check_chunks(
    doc: Document,
    chunks: list[Chunk],
    markdown: str,
    max_tokens: int,
    counter: TokenCounter,
    seen_words: Counter[str] | None = None,
) -> FileReport:
    """Run the five checks on one document's chunks."""
    rep = FileReport(doc.source, max_tokens, chunks=len(chunks), oversize=sum(c.oversize for c in chunks))
    _check_rows(doc, chunks, rep)
    _check_crumbs(doc, chunks, rep)
    _check_words(chunks, markdown, rep, seen_words)
    _check_budget(chunks, max_tokens, counter, rep)
    _check_boundaries(doc, chunks, max_tokens, counter, rep)
    _check_lines(chunks, rep)
    _check_code(doc, chunks, max_tokens, counter, rep)
    _check_syntax(chunks, rep)
    return rep


def _table_runs(text: str) -> list[list[str]]:
    """Maximal runs of pipe-table lines in a chunk's text, outside code fences."""
    runs: list[list[str]] = []
    current: list[str] = []
    fenced = False
    for line in text.split("\n"):
        if line.startswith("```"):
            fenced = not fenced
        if not fenced and PIPE_ROW.match(line):
            current.append(line)
            continue
        if current:
            runs.append(current)
            current = []
    if current:
        runs.append(current)
    return runs


def _check_rows(doc: Document, chunks: list[Chunk], rep: FileReport) -> None:
    tables = [b for _p, s in doc.walk() for b in all_blocks(s.blocks) if isinstance(b, Table)]
    if not tables:
        return
    found: set[tuple[str, ...]] = set()
    for c in chunks:
        for run in _table_runs(c.text):
            has_header = len(run) >= 2 and DELIMITER_ROW.match(run[1]) is not None
            width = len(_cells(run[0]))
            if not has_header:
                rep.rows.append(f"chunk {c.seq}: table part without its header row: {run[0][:80]!r}")
            for line in run:
                if DELIMITER_ROW.match(line):
                    continue
                cells = _cells(line)
                if len(cells) != width:
                    rep.rows.append(
                        f"chunk {c.seq}: row has {len(cells)} cells, header {width}: {line[:80]!r}"
                    )
                found.add(tuple(cells))
    for t in tables:
        for row in [*t.header, *t.rows]:
            cells = tuple(_norm(x) for x in row.cells)
            if cells not in found:
                rep.rows.append(f"row {row.span.lines} not whole in any chunk: {cells!r:.100}")


def _check_crumbs(doc: Document, chunks: list[Chunk], rep: FileReport) -> None:
    sections: list[tuple[int, Section, list[str]]] = []
    paragraphs: list[Paragraph] = []
    crumb_of: dict[int, list[str]] = {}
    for path, s in doc.walk():
        sections.append((len(path) + (1 if s.heading else 0), s, expected_crumb(doc, path, s)))
        crumb_of[id(s)] = sections[-1][2]
        paragraphs.extend(b for b in all_blocks(s.blocks) if isinstance(b, Paragraph))
    checked: set[int] = set()
    for p in paragraphs:
        if p.span.lines is None or not p.text.strip():
            continue
        a, b = p.span.lines
        holders = [c for c in chunks if c.lines and c.lines[0] <= b and a <= c.lines[1]]
        if not holders:
            rep.crumbs.append(f"paragraph at lines {a}-{b} is in no chunk's line range: {p.text[:60]!r}")
        for c in holders:
            if c.seq in checked or c.lines is None:
                continue
            checked.add(c.seq)
            x, y = c.lines
            covering = [
                (depth, s, crumb)
                for depth, s, crumb in sections
                if s.span.lines is not None and s.span.lines[0] <= x and y <= s.span.lines[1]
            ]
            if not covering:
                # Only the root (no heading) covers everything: its crumb is the title alone.
                covering = [(0, None, [doc.title] if doc.title else [])]  # type: ignore[list-item]
            deepest = max(covering, key=lambda t: t[0])
            # Sections with the same lines hold the same content (a root whose only content is
            # one section): either one's breadcrumb names that content rightly.
            same = deepest[1].span.lines if deepest[1] is not None else None
            wants = [crumb for _d, s, crumb in covering if s is None or s.span.lines == same]
            # A section with no blocks of its own and one child holds only its heading besides
            # that child: the child's breadcrumb names the chunk as well (and more precisely).
            node = deepest[1] if deepest[1] is not None else doc.root
            while not node.blocks and len(node.children) == 1 and node.children[0].heading is not None:
                node = node.children[0]
                wants.append(crumb_of[id(node)])
            if list(c.breadcrumb) not in wants:
                rep.crumbs.append(
                    f"chunk {c.seq} lines {x}-{y}: breadcrumb {c.breadcrumb!r}, expected {deepest[2]!r}"
                )


def _check_words(chunks: list[Chunk], markdown: str, rep: FileReport, seen: Counter[str] | None) -> None:
    src = seen if seen is not None else visible_words(markdown)
    out = output_words(chunks)
    rep.words_source = sum(src.values())
    rep.words_found = sum(min(n, out[w]) for w, n in src.items())
    rep.missing = Counter({w: n - out[w] for w, n in src.items() if out[w] < n})


def _check_budget(chunks: list[Chunk], max_tokens: int, counter: TokenCounter, rep: FileReport) -> None:
    for c in chunks:
        real = counter.count(c.text)
        if real != c.tokens:
            rep.budget.append(f"chunk {c.seq}: says {c.tokens} tokens, counter gives {real}")
        if real > max_tokens and not c.oversize:
            rep.budget.append(f"chunk {c.seq}: {real} tokens > {max_tokens} and not oversize")
        if c.oversize:
            if real <= max_tokens:
                rep.budget.append(f"chunk {c.seq}: oversize but only {real} tokens")
            runs = _table_runs(c.text)
            body_rows = sum(1 for run in runs for line in run[2:]) if runs else 0
            one_row = len(runs) == 1 and body_rows == 1
            long_word = any(counter.count(w) > max_tokens for w in c.text.split())
            if not (one_row or long_word):
                rep.budget.append(
                    f"chunk {c.seq}: oversize ({real} tokens) but holds neither one table row nor one over-long word"
                )


def _check_boundaries(
    doc: Document, chunks: list[Chunk], max_tokens: int, counter: TokenCounter, rep: FileReport
) -> None:
    tails: set[tuple[str, ...]] = set()
    for text in _unit_texts(doc):
        w = words(text)
        if w:
            tails.add(tuple(w[-TAIL_WORDS:]))
    for i, c in enumerate(chunks):
        text = c.text.rstrip()
        if not text or text.endswith("```") or SENTENCE_END.search(text):
            continue
        last = text.split("\n")[-1]
        if PIPE_ROW.match(last):
            continue  # a whole table row (wholeness is check 1)
        w = words(text)
        if not w or any(tuple(w[-k:]) in tails for k in range(TAIL_WORDS, 0, -1)):
            continue
        # Cut inside a sentence: allowed only when that sentence alone is over budget.
        ends = list(SENTENCE_END_INSIDE.finditer(text))
        tail = text[ends[-1].end() :] if ends else text.split("\n\n")[-1]
        nxt = chunks[i + 1].text if i + 1 < len(chunks) else ""
        m = SENTENCE_END_INSIDE.search(nxt + " ")
        head = nxt[: m.end()] if m else nxt.split("\n\n")[0]
        sentence = tail + " " + head
        if counter.count(sentence) <= max_tokens and not _sentencizer_boundary(text, nxt):
            rep.boundaries.append(
                f"chunk {c.seq} ends inside a sentence of {counter.count(sentence)} tokens: ...{text[-60:]!r}"
            )


@lru_cache(maxsize=1)
def _sentencizer():  # type: ignore[no-untyped-def]
    import spacy

    nlp = spacy.blank("en")
    nlp.add_pipe("sentencizer")
    nlp.max_length = 10_000_000
    return nlp


def _sentencizer_boundary(before: str, after: str) -> bool:
    """Does spaCy's rule-based sentencizer (the reference DESIGN.md names) start a sentence
    where `before` ends and `after` begins? Text around the cut: one paragraph each side."""
    left = before.split("\n\n")[-1]
    right = after.split("\n\n")[0]
    if not right:
        return True
    # The chunk text may have lost the exact whitespace at the cut (a line break or a space):
    # a boundary under either reading counts.
    for joiner in (" ", "\n"):
        doc = _sentencizer()(left + joiner + right)
        if any(s.start_char in (len(left), len(left) + 1) for s in doc.sents):
            return True
    return False


def _check_code(
    doc: Document, chunks: list[Chunk], max_tokens: int, counter: TokenCounter, rep: FileReport
) -> None:
    """Every code line of the tree is a whole line of some chunk (indentation aside)."""
    codes = [b for _p, s in doc.walk() for b in all_blocks(s.blocks) if isinstance(b, Code)]
    if not codes:
        return
    have = {line.strip() for c in chunks for line in c.text.split("\n")}
    _check_code_order(codes, chunks, rep)
    for code in codes:
        fence = "```" + (code.language or "")
        for i, line in enumerate(code.lines):
            # A line that cannot fit the budget inside its fences must be cut between words. The
            # segmenter may judge with sums of per-piece counts (an upper bound the estimator
            # promises, each piece rounded up): a line within ROUNDING of the budget may be cut.
            alone = counter.count(f"{fence}\n{line}\n```")
            if line.strip() and line.strip() not in have and alone + ROUNDING <= max_tokens:
                first = code.span.lines[0] if code.span.lines else 0
                rep.code.append(
                    f"code line {i + 1} of block at line {first} not whole in any chunk: {line.strip()[:70]!r}"
                )


def _check_code_order(codes: list[Code], chunks: list[Chunk], rep: FileReport) -> None:
    """The lines of each code block reach the chunks in their source order."""
    out = [line.strip() for c in chunks for line in c.text.split("\n")]
    where: dict[str, list[int]] = {}
    for i, line in enumerate(out):
        where.setdefault(line, []).append(i)
    start = -1
    for code in codes:
        lines = [line.strip() for line in code.lines if line.strip()]
        if not lines or lines[0] not in where:
            continue
        first = next((i for i in where[lines[0]] if i > start), where[lines[0]][0])
        start = cursor = first
        for line in lines[1:]:
            spots = where.get(line)
            if not spots:
                break  # a cut line: the wholeness check reports it
            nxt = next((i for i in spots if i > cursor), None)
            if nxt is None:
                first_line = code.span.lines[0] if code.span.lines else 0
                rep.code.append(
                    f"code block at line {first_line}: {line[:60]!r} comes out before the line above it"
                )
                break
            cursor = nxt


def _check_syntax(chunks: list[Chunk], rep: FileReport) -> None:
    """Markup a reader never sees stays out of chunk text (outside code) and breadcrumbs."""
    for c in chunks:
        fenced = False
        for line in c.text.split("\n"):
            if line.lstrip().startswith("```"):
                fenced = not fenced
                continue
            if not fenced and MARKUP.search(line):
                rep.syntax.append(f"chunk {c.seq}: markup in text: {line.strip()[:80]!r}")
        for crumb in c.breadcrumb:
            if MARKUP.search(crumb) or re.search(r"\{#[\w.:-]+\}", crumb):
                rep.syntax.append(f"chunk {c.seq}: markup in breadcrumb: {crumb!r}")


def _check_lines(chunks: list[Chunk], rep: FileReport) -> None:
    """Chunks follow the source: each starts no earlier than the line where the previous ends."""
    prev: Chunk | None = None
    for c in chunks:
        if c.lines is None:
            continue
        if c.lines[0] > c.lines[1]:
            rep.lines.append(f"chunk {c.seq}: empty line range {c.lines}")
        if prev is not None and prev.lines is not None and c.lines[0] < prev.lines[1]:
            rep.lines.append(
                f"chunk {c.seq} lines {list(c.lines)} start before chunk {prev.seq} {list(prev.lines)} ends"
            )
        prev = c


# ----- one file, many files ----------------------------------------------------------------------


def check_file(
    path: Path, source: str, max_tokens: int, seen_words: Counter[str] | None = None
) -> FileReport:
    """Build one file at one budget with the public API and check the result."""
    settings = Settings(max_tokens=max_tokens)
    try:
        chunks = segment.chunk_file(path, settings, source=source)
        doc = segment.parse(path, settings, source=source)
    except segment.SegmentError as exc:
        return FileReport(source, max_tokens, error=str(exc))
    markdown = path.read_bytes().decode("utf-8", errors="replace")
    return check_chunks(doc, chunks, markdown, max_tokens, counter_for(settings.tokenizer), seen_words)


def main(argv: list[str]) -> int:
    import argparse

    ap = argparse.ArgumentParser(description="Check the chunks of a folder of Markdown.")
    ap.add_argument("folder", nargs="?", type=Path, default=corpus_root())
    ap.add_argument("--max-tokens", type=int, nargs="+", default=[256, 512])
    ap.add_argument("--show", type=int, default=5, help="failures to show per check")
    args = ap.parse_args(argv)
    files = corpus_files(args.folder)
    seen = {p: visible_words(p.read_bytes().decode("utf-8", errors="replace")) for p in files}
    for n in args.max_tokens:
        reports = [check_file(p, p.relative_to(args.folder).as_posix(), n, seen[p]) for p in files]
        src = sum(r.words_source for r in reports)
        found = sum(r.words_found for r in reports)
        print(
            f"max_tokens={n}: {len(files)} files, {sum(r.chunks for r in reports)} chunks, "
            f"{sum(r.oversize for r in reports)} oversize, errors {sum(r.error is not None for r in reports)}"
        )
        print(f"  words: {found}/{src} = {found / max(src, 1):.5f}")
        missing: Counter[str] = Counter()
        for r in reports:
            missing.update(r.missing)
        print(f"  most missed words: {missing.most_common(15)}")
        for name in CHECKS:
            bad = [(r.source, msg) for r in reports for msg in getattr(r, name)]
            files_bad = len({s for s, _ in bad})
            print(f"  {name}: {len(bad)} failures in {files_bad} files")
            for s, msg in bad[: args.show]:
                print(f"    {s}: {msg}")
        for r in reports:
            if r.error:
                print(f"  error {r.source}: {r.error}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
