"""Text conservation (the dashboard figure "text conservation", and the reliability scenarios
"Markdown nesting" and "huge paragraphs"): every visible character of a source reaches some chunk,
or the Document carries a warning saying what was dropped.

"Visible" is judged outside our adapter: the Markdown is rendered to HTML by markdown-it-py (the
reference CommonMark renderer, with the GFM table and strikethrough extensions) and the text a
browser shows is taken with lxml. Markup that sites built from these sources do not show is removed
first: Hugo shortcode tags (gohugo.io, "Shortcodes": `{{< name >}}` / `{{% name %}}`), heading
attribute blocks `{#id}` (Hugo/Goldmark and Pandoc heading attributes) and GitHub alert markers
`[!NOTE]` (docs.github.com, "Basic writing and formatting syntax", Alerts: rendered as a label).
Documentation-site dialects are rendered as their sites render them: mdit-py-plugins' admonition,
definition-list, footnote and container rules with their own HTML (footnote reference marks and
back-links are numbering, not text), plus our content-tab and abbreviation-line rules
(segment/adapters/markdown_site.py); `{: ...}` attribute lists are removed first.
The figure is the share of visible non-whitespace characters, counted per token (runs of word
characters, single punctuation marks), casefolded, that reach the chunks (text or breadcrumb);
a token glued to its neighbours differently (code-span backticks, table cells) counts as often as
its characters appear contiguous in the chunks.

The newer formats get references of their own, none of them our adapters:
- reStructuredText: docutils' own HTML writer (`html5`, file insertion and raw output off), text
  taken with lxml, without docutils' reports on markup it does not know (a documentation
  generator's directives: our adapter keeps more of those than the reference counts); the
  generator's roles, which plain docutils would print as raw markup, are first reduced to the
  text the generator shows (role names compared without case, as docutils' `roles.role` does).
  Not counted, as the Markdown reference does not count footnote back-links: a generated table of
  contents (`contents` directive: the section titles again, which reach the chunks as headings)
  and the numbered back-links "(1, 2)" of a footnote cited twice. Math is read as its LaTeX
  source (the writer's `math_output` "LaTeX", without its spelling of Unicode symbols as
  macros), since MathML's symbols are a rendering of that source, which our adapter keeps.
  Page headers and footers (`header`/`footer` directives) do count: our adapter drops them as
  page chrome and warns.
- Notebooks: the cells as nbformat reads them; Markdown cells through the Markdown reference
  above, code cells' source as written; outputs are off by default, raw cells are not rendered
  by Jupyter's HTML export (from memory), so neither counts.
- MDX (our own reading, since no renderer is at hand): outside code fences, front matter,
  `import`/`export` lines and `{...}` expressions and comments go; a JSX tag goes, leaving the
  `label` it carries (or, with no label, the `value`) as a line, as MDX sites show tab labels; an
  admonition fence `:::type Title` leaves "type Title". A code fence is code wherever it stands
  (MDX reads no ESM, JSX or expressions inside it, and has no indented code, so a fence indented
  under a JSX tag is still a fence); its `title="..."` shows above it (Docusaurus' "Code title",
  from memory). The rest is Markdown, through the Markdown reference.
- Plain text (our own reading): the file decoded (UTF-8, else Windows-1252), without the
  underline lines of `=`/`-`/`~`/`*`/`#` that mark headings and breaks and the list marks
  (a bullet `-`/`*`/`+`, the `.` or `)` after an item number: a list shows its own marks);
  every other character is visible.
"""

from __future__ import annotations

import io
import re
import textwrap
import warnings
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from pathlib import Path
from unittest import mock

import docutils.core
import lxml.html
import nbformat
import pytest
from docutils.utils.math import unichar2tex

import segment
from segment.adapters.markdown_site import SiteSyntax, parser_for
from segment.settings import Settings
from tests import hostile
from tests.conftest import CORPUS, FIXTURES

TARGET = 0.999
"""The dashboard figure "text conservation": >= 99.9 % of visible non-whitespace characters."""

_SHORTCODE = re.compile(r"\{\{[<%].*?[%>]\}\}", re.DOTALL)
_ALERT = re.compile(r"\[!(\w+)\]")
_HEADING_ATTRS = re.compile(r"[ \t]*\{#[^}\n]*\}[ \t]*$", re.MULTILINE)
_TOKEN = re.compile(r"\w+|[^\w\s]")
_BLOCK = {
    "p",
    "td",
    "th",
    "li",
    "br",
    "div",
    "h1",
    "h2",
    "h3",
    "h4",
    "h5",
    "h6",
    "tr",
    "pre",
    "blockquote",
    "dd",
    "dt",
    "table",
    "ul",
    "ol",
    "hr",
}
_REFERENCE = parser_for.__wrapped__(replace(SiteSyntax(), attributes=False))  # an own, uncached copy
_REFERENCE.options["maxNesting"] = 100
_COLON_ATTRIBUTES = re.compile(r"[ \t]*\{:[^{}\n]*\}")


def visible_markdown(text: str) -> str:
    """The text a reader of the rendered page sees."""
    text = _ALERT.sub(r"\1", _HEADING_ATTRS.sub("", _SHORTCODE.sub("", text)))
    html = _REFERENCE.render(_COLON_ATTRIBUTES.sub("", text))
    if not html.strip():
        return ""
    root = lxml.html.fragment_fromstring(html, create_parent="div")
    for hidden in (
        root.xpath("//script|//style|//template")
        + root.find_class("footnote-ref")
        + root.find_class("footnote-backref")
    ):
        hidden.drop_tree()
    return browser_text(root)


def browser_text(root: lxml.html.HtmlElement) -> str:
    """The text of an element as a browser lays it out (blocks on lines of their own)."""
    for element in root.iter():
        if isinstance(element.tag, str) and element.tag in _BLOCK:
            # a browser breaks lines around blocks
            element.text = " " + (element.text or "")
            element.tail = " " + (element.tail or "")
    return str(root.text_content())


DOCUTILS_ROLES = frozenset(
    [
        "emphasis",
        "literal",
        "code",
        "math",
        "pep-reference",
        "PEP",
        "rfc-reference",
        "RFC",
        "strong",
        "subscript",
        "sub",
        "superscript",
        "sup",
        "title-reference",
        "title",
        "t",
        "abbreviation",
        "ab",
        "acronym",
        "ac",
        "raw",
    ]
)
"""The interpreted text roles of plain docutils (docutils.sourceforge.io, "reStructuredText
Interpreted Text Roles")."""
_DOCUTILS_ROLE_NAMES = frozenset(name.lower() for name in DOCUTILS_ROLES)
_ROLE = re.compile(r"(?<![\w`:]):([\w.+-]+):`([^`]*)`")
"""A role before its text; not inside other inline markup (an inline target _`:name:`)."""


def _generator_role_text(match: re.Match[str]) -> str:
    """A role docutils does not know, as the documentation generator shows it (from memory):
    the title of `title <target>`, the last name of `~a.b.c`, else the content."""
    name, content = match.groups()
    if name.lower() in _DOCUTILS_ROLE_NAMES:  # docutils reads role names case-insensitively
        return match.group(0)
    titled = re.fullmatch(r"(.*?)\s*<[^<>]*>", content, re.DOTALL)
    if titled:
        return titled.group(1)
    return content.rsplit(".", 1)[-1] if content.startswith("~") else content


def visible_rst(path: Path) -> str:
    """The text docutils' own HTML writer shows for a reStructuredText file."""
    source = _ROLE.sub(_generator_role_text, path.read_text(encoding="utf-8"))
    # Math as the author wrote it (the writer's `math_output` "LaTeX"), without the writer's
    # spelling of Unicode symbols as LaTeX macros (its `visit_math` translates them).
    with mock.patch.object(unichar2tex, "uni2tex_table", {}):
        html = docutils.core.publish_string(
            source,
            source_path=str(path),
            writer="html5",
            settings_overrides={
                "report_level": 5,
                "halt_level": 5,
                "file_insertion_enabled": False,
                "raw_enabled": False,
                "math_output": "LaTeX",
                "warning_stream": io.StringIO(),
                "output_encoding": "utf-8",
            },
        )
    body = lxml.html.document_fromstring(html).body
    # Not the author's text: docutils' reports on markup it does not know (system messages, and
    # "problematic" inline text such as a documentation generator's roles), the colon the writer
    # adds after a field name, a generated table of contents (the section titles again) and the
    # numbered back-links of a footnote cited more than once.
    hidden = (
        body.find_class("system-message")
        + body.find_class("problematic")
        + body.find_class("colon")
        + [toc for toc in body.find_class("contents") if toc.tag == "nav"]
        + body.find_class("backrefs")
    )
    for element in body.xpath("//script|//style") + hidden:
        element.drop_tree()
    for classifier in body.find_class("classifier"):  # set apart by the writer's style sheet
        classifier.text = " " + (classifier.text or "")
    return browser_text(body)


def visible_notebook(path: Path) -> str:
    """The text of a notebook's cells as nbformat reads them (outputs off, raw cells unrendered)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # a notebook off its schema is still read (nbformat warns)
        notebook = nbformat.reads(path.read_text(encoding="utf-8"), as_version=4)  # type: ignore[no-untyped-call]
    parts = []
    for cell in notebook.cells:
        if cell.cell_type == "markdown":
            parts.append(visible_markdown(cell.source))
        elif cell.cell_type == "code":
            parts.append(cell.source)
    return "\n".join(parts)


_FRONT_MATTER = re.compile(r"\A---\n.*?\n---\n", re.DOTALL)
_ES_LINES = re.compile(r"^(?:import|export)\b.*?(?=\n\s*\n|\Z)", re.MULTILINE | re.DOTALL)
_EXPRESSION = re.compile(r"\{[^{}]*\}")
_JSX_TAG = re.compile(r"</?[A-Za-z][\w.]*(?:\s[^<>]*)?/?>")
_TAB_LABEL = re.compile(r"""\blabel=["']([^"']*)["']""")
_TAB_VALUE = re.compile(r"""\bvalue=["']([^"']*)["']""")
_ADMONITION = re.compile(r"^:::(\w+)(?:\[([^\]]*)\])?[ \t]*(.*)$", re.MULTILINE)


def _tag_text(match: re.Match[str]) -> str:
    tag = match.group(0)
    shown = _TAB_LABEL.search(tag) or _TAB_VALUE.search(tag)
    return f"\n\n{shown.group(1)}\n\n" if shown else ""


def visible_mdx(path: Path) -> str:
    """Our reading of what an MDX site shows (see the module docstring)."""
    text = _FRONT_MATTER.sub("", path.read_text(encoding="utf-8"))
    parts = []
    for prose, fence in _prose_and_fences(text):
        parts.append(_visible_mdx_prose(prose))
        if fence:
            title = _FENCE_TITLE.search(fence.split("\n", 1)[0])
            # MDX has no indented code: a fence indented under a JSX tag is still a fence.
            parts.append(("\n" + title.group(2) + "\n\n" if title else "\n") + textwrap.dedent(fence))
    return visible_markdown("".join(parts))


_FENCE_OPEN = re.compile(r"^[ \t]*(`{3,}|~{3,})(.*)$", re.MULTILINE)
_FENCE_TITLE = re.compile(r"""\btitle=(["'])(.*?)\1""")


def _prose_and_fences(text: str) -> list[tuple[str, str]]:
    """The text cut into (prose, the code fence after it) pairs; the last fence may be ""."""
    out: list[tuple[str, str]] = []
    start = 0
    for opening in _FENCE_OPEN.finditer(text):
        if opening.start() < start or (opening.group(1)[0] == "`" and "`" in opening.group(2)):
            continue  # inside the previous fence, or not a fence (CommonMark: no backtick in the info)
        char, length = opening.group(1)[0], len(opening.group(1))
        closing = re.compile(rf"^[ \t]*{re.escape(char)}{{{length},}}[ \t]*$", re.MULTILINE)
        close = closing.search(text, opening.end() + 1)
        end = close.end() if close else len(text)
        out.append((text[start : opening.start()], text[opening.start() : end]))
        start = end
    out.append((text[start:], ""))
    return out


def _visible_mdx_prose(text: str) -> str:
    """Prose outside code fences, its MDX layer read as the module docstring says."""
    text = _ES_LINES.sub("", text)
    text = _ADMONITION.sub(lambda m: " ".join(p for p in m.groups() if p), text)
    text = re.sub(r"^:::[ \t]*$", "", text, flags=re.MULTILINE)
    for _ in range(3):  # nested expressions, innermost first
        text = _EXPRESSION.sub("", text)
    text = _JSX_TAG.sub(_tag_text, text)
    return "\n".join(line.strip() for line in text.splitlines()) + "\n"


_UNDERLINE = re.compile(r"^[ \t]*([=\-~*#])\1{2,}[ \t\r]*$", re.MULTILINE)
_LIST_MARK = re.compile(r"^([ \t]*)(?:[-*+]|(\d+)[.)])(?=[ \t])", re.MULTILINE)


def visible_text(path: Path) -> str:
    """Our reading of a plain-text file (see the module docstring)."""
    data = path.read_bytes()
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        text = data.decode("windows-1252", "replace")
    return _LIST_MARK.sub(r"\1\2", _UNDERLINE.sub("", text))


def tokens(text: str) -> Counter[str]:
    return Counter(_TOKEN.findall(text.casefold()))


@dataclass
class Tally:
    visible: int = 0
    kept: int = 0
    lost: Counter[tuple[str, str]] = field(default_factory=Counter)
    flagged: list[str] = field(default_factory=list)

    @property
    def share(self) -> float:
        return self.kept / self.visible if self.visible else 1.0


def markdown_reference(path: Path) -> str:
    return visible_markdown(path.read_bytes().decode("utf-8", "replace"))


def conserve(
    path: Path, tally: Tally, settings: Settings, reference: Callable[[Path], str] = markdown_reference
) -> float:
    """Add one file to the tally; returns its own share."""
    doc = segment.parse(path, settings)
    chunks = list(segment.chunk(doc, settings))
    got: Counter[str] = Counter()
    # Tokens glued together differently (`name`s, cells joined without a space) still count when
    # their characters appear contiguous in some chunk.
    blob = "".join("".join(c.text.split()) for c in chunks).replace("`", "").casefold()
    for c in chunks:
        got.update(tokens(c.text))
    for crumbs in {tuple(c.breadcrumb) for c in chunks}:
        for crumb in crumbs:
            got.update(tokens(crumb))
    visible = kept = 0
    for tok, n in tokens(reference(path)).items():
        k = min(n, got.get(tok, 0))
        if k < n and len(tok) > 1:
            k = min(n, max(k, blob.count(tok)))
        visible += len(tok) * n
        kept += len(tok) * k
        if k < n:
            tally.lost[(path.name, tok)] += n - k
    tally.visible += visible
    tally.kept += kept
    share = kept / visible if visible else 1.0
    if share < TARGET:
        # 0 silent drops: a file under the target must say why (Document.warnings).
        assert doc.warnings, f"{path.name}: {share:.4%} of visible text kept and no warning"
        tally.flagged.append(path.name)
    return share


def markdown_files(*folders: Path) -> list[Path]:
    return sorted(p for folder in folders for p in folder.rglob("*.md") if p.name != "SOURCE.md")


def report(label: str, tally: Tally, files: int) -> str:
    worst = ", ".join(f"{name}:{tok!r}x{n}" for (name, tok), n in tally.lost.most_common(5))
    return (
        f"{label}: {files} files, {tally.kept}/{tally.visible} visible characters kept = "
        f"{tally.share:.3%} (flagged: {len(tally.flagged)}; most lost: {worst or 'none'})"
    )


@pytest.mark.timeout(60)
def test_fixture_markdown_keeps_at_least_99_9_percent_of_visible_text() -> None:
    files = markdown_files(FIXTURES / "markdown", FIXTURES / "demo")
    assert len(files) >= 10
    tally = Tally()
    for path in files:
        conserve(path, tally, Settings())
    print(report("fixtures/markdown + fixtures/demo", tally, len(files)))
    assert tally.share >= TARGET, report("fixtures", tally, len(files))


@pytest.mark.corpus
@pytest.mark.timeout(180)
def test_shared_markdown_corpus_keeps_at_least_99_9_percent_of_visible_text() -> None:
    folder = CORPUS / "markdown"
    if not folder.is_dir():
        pytest.skip("shared corpus not present")
    files = markdown_files(folder)
    tally = Tally()
    for path in files:
        conserve(path, tally, Settings())
    print(report("shared corpus markdown", tally, len(files)))
    assert tally.share >= TARGET, report("corpus", tally, len(files))


# -- the newer formats, each against its own reference ---------------------------------------

NEW_FORMATS: dict[str, tuple[tuple[str, ...], Callable[[Path], str]]] = {
    "rst": (("*.rst",), visible_rst),
    "notebook": (("*.ipynb",), visible_notebook),
    "mdx": (("*.mdx",), visible_mdx),
    "text": (("*.txt", "README"), visible_text),
}


@pytest.mark.timeout(60)
@pytest.mark.parametrize("folder", sorted(NEW_FORMATS))
def test_fixtures_of_each_new_format_keep_at_least_99_9_percent_of_visible_text(folder: str) -> None:
    patterns, visible = NEW_FORMATS[folder]
    found = (p for pattern in patterns for p in (FIXTURES / folder).glob(pattern))
    files = sorted(p for p in found if not p.name.endswith(".tree.txt"))  # golden trees, not sources
    assert len(files) >= 2
    tally = Tally()
    for path in files:
        conserve(path, tally, Settings(), visible)
    print(report(f"fixtures/{folder}", tally, len(files)))
    assert tally.share >= TARGET, report(f"fixtures/{folder}", tally, len(files))


@pytest.mark.corpus
@pytest.mark.timeout(240)
@pytest.mark.parametrize(
    ("folder", "pattern", "visible"),
    [
        # Reference: the cells as nbformat reads them, Markdown cells through markdown-it-py.
        pytest.param("ipynb", "*.ipynb", visible_notebook, id="notebooks"),
        # Reference: docutils' own HTML writer (visible_rst; the docutils documentation itself).
        pytest.param("rst", "*.rst", visible_rst, id="rst"),
        # Reference: our documented reading of what an MDX site shows (visible_mdx), then
        # markdown-it-py for the Markdown left.
        pytest.param("mdx", "*.mdx", visible_mdx, id="mdx"),
    ],
)
def test_the_shared_corpus_of_each_new_format_keeps_at_least_99_9_percent_of_visible_text(
    folder: str, pattern: str, visible: Callable[[Path], str]
) -> None:
    if not (CORPUS / folder).is_dir():
        pytest.skip("shared corpus not present")
    files = sorted((CORPUS / folder).rglob(pattern))
    tally = Tally()
    for path in files:
        conserve(path, tally, Settings(), visible)
    print(report(f"shared corpus {folder}", tally, len(files)))
    assert tally.share >= TARGET, report(f"corpus {folder}", tally, len(files))


# -- the references' own readings ---------------------------------------------------------------


def test_the_rst_reference_counts_neither_a_generated_contents_nor_back_links() -> None:
    # docutils' html5 writer puts a `contents` topic in <nav class="contents"> and the back-links
    # of a note cited twice in <span class="backrefs">; neither is the author's text.
    shown = " ".join(visible_rst(FIXTURES / "rst" / "references.rst").split())
    assert "On this page" not in shown and "(1, 2)" not in shown and "(1,2)" not in shown
    assert "[1] Corvane cell sheet, revision C." in shown
    assert "σ ≥ 3 dB" in shown and "θ_{max} = \\arctan(h / d)" in shown  # math as written


def test_the_mdx_reference_leaves_code_fences_as_written() -> None:
    shown = visible_mdx(FIXTURES / "mdx" / "code-titles.mdx")
    assert "import React from 'react';" in shown and '<span className="badge">' in shown
    assert "upload_log.py" in shown and "Push every log" in shown and "title=" not in shown


# -- the hostile cases: kept, or flagged -------------------------------------------------------

DEEP_CASES = [c for c in hostile.CASES if c.source in ("deep-quotes.md", "deep-list.md")]


@pytest.mark.timeout(60)
@pytest.mark.parametrize("case", DEEP_CASES, ids=lambda c: c.source)
def test_content_past_the_nesting_limit_is_kept_and_flagged(case: hostile.Hostile) -> None:
    # Reliability scenario "Markdown nesting": markdown-it drops content past maxNesting
    # silently; ours keeps it and warns.
    doc = segment.parse_bytes(case.make(), case.source)
    chunks = list(segment.chunk(doc, Settings()))
    assert case.needle in "\n".join(c.text for c in chunks)
    assert any("nesting deeper than" in w for w in doc.warnings), doc.warnings


@pytest.mark.timeout(60)
def test_a_twelve_level_list_keeps_every_level() -> None:
    # Reliability scenario "Markdown nesting": with the commonmark preset a 12-level list kept
    # only h1-h9.
    text = "".join("  " * i + f"- level h{i + 1}\n" for i in range(12))
    chunks = list(segment.chunk(segment.parse_bytes(text.encode(), "levels.md"), Settings()))
    joined = "\n".join(c.text for c in chunks)
    assert all(f"level h{i}" in joined for i in range(1, 13))


LONG_CASES = [c for c in hostile.CASES if "long" in c.tags]


@pytest.mark.timeout(120)
@pytest.mark.parametrize("case", LONG_CASES, ids=lambda c: c.source)
def test_a_1_2m_character_paragraph_is_cut_under_budget_without_loss(case: hostile.Hostile) -> None:
    # Reliability scenario "huge paragraphs": spaCy refuses > 1,000,000 characters (its error
    # E088) and text without punctuation is one "sentence"; the chunks must hold the budget and
    # concatenate back to the input.
    data = case.make()
    settings = Settings(max_tokens=512)
    chunks = list(segment.chunk(segment.parse_bytes(data, case.source), settings))
    assert all(c.tokens <= settings.max_tokens or c.oversize for c in chunks)
    assert "".join("".join(c.text.split()) for c in chunks) == "".join(data.decode().split())


@pytest.mark.timeout(60)
def test_the_check_notices_a_dropped_chunk(monkeypatch: pytest.MonkeyPatch) -> None:
    # The measure must be able to fail: drop one chunk of a fixture and the share falls.
    path = FIXTURES / "markdown" / "long-section.md"
    real = segment.chunk

    def lossy(doc: segment.Document, settings: Settings | None = None):  # type: ignore[no-untyped-def]
        return iter(list(real(doc, settings))[1:])

    monkeypatch.setattr(segment, "chunk", lossy)
    with pytest.raises(AssertionError, match="no warning"):
        conserve(path, Tally(), Settings())
