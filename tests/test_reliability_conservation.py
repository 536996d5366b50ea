"""Text conservation (reliability scenario "Markdown nesting limits", "huge paragraphs"; dashboard figure 5): every visible character of a source
reaches some chunk, or the Document carries a warning saying what was dropped.

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
"""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass, field, replace
from pathlib import Path

import lxml.html
import pytest

import segment
from segment.adapters.markdown_site import SiteSyntax, parser_for
from segment.settings import Settings
from tests import hostile
from tests.conftest import CORPUS, FIXTURES

TARGET = 0.999
"""Dashboard figure 5 of RELIABILITY.md: >= 99.9 % of visible non-whitespace characters."""

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
    for element in root.iter():
        if isinstance(element.tag, str) and element.tag in _BLOCK:
            # a browser breaks lines around blocks
            element.text = " " + (element.text or "")
            element.tail = " " + (element.tail or "")
    return str(root.text_content())


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


def conserve(path: Path, tally: Tally, settings: Settings) -> float:
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
    for tok, n in tokens(visible_markdown(path.read_bytes().decode("utf-8", "replace"))).items():
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


# -- the hostile cases: kept, or flagged -------------------------------------------------------

DEEP_CASES = [c for c in hostile.CASES if c.source in ("deep-quotes.md", "deep-list.md")]


@pytest.mark.timeout(60)
@pytest.mark.parametrize("case", DEEP_CASES, ids=lambda c: c.source)
def test_content_past_the_nesting_limit_is_kept_and_flagged(case: hostile.Hostile) -> None:
    # reliability scenario "Markdown nesting limits": markdown-it drops content past maxNesting silently; ours keeps it and warns.
    doc = segment.parse_bytes(case.make(), case.source)
    chunks = list(segment.chunk(doc, Settings()))
    assert case.needle in "\n".join(c.text for c in chunks)
    assert any("nesting deeper than" in w for w in doc.warnings), doc.warnings


@pytest.mark.timeout(60)
def test_a_twelve_level_list_keeps_every_level() -> None:
    # reliability scenario "Markdown nesting limits" recipe: with the commonmark preset a 12-level list kept only h1-h9.
    text = "".join("  " * i + f"- level h{i + 1}\n" for i in range(12))
    chunks = list(segment.chunk(segment.parse_bytes(text.encode(), "levels.md"), Settings()))
    joined = "\n".join(c.text for c in chunks)
    assert all(f"level h{i}" in joined for i in range(1, 13))


LONG_CASES = [c for c in hostile.CASES if "long" in c.tags]


@pytest.mark.timeout(120)
@pytest.mark.parametrize("case", LONG_CASES, ids=lambda c: c.source)
def test_a_1_2m_character_paragraph_is_cut_under_budget_without_loss(case: hostile.Hostile) -> None:
    # reliability scenario "huge paragraphs": spaCy refuses > 1,000,000 characters (E088) and text without punctuation
    # is one "sentence"; the chunks must hold the budget and concatenate back to the input.
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
