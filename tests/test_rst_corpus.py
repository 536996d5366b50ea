"""The reStructuredText corpus (../shared/corpus/rst: docutils' own documentation, BSD-2-Clause
and public domain, see its SOURCE.md) held to the Markdown corpus checks of tests/checker.py:
whole table rows and code lines, the right heading path, every visible word present, the budget
held, clean chunk ends, source order, no markup a reader never sees.

The visible-words reference is docutils' own HTML writer (html5, the same parser and settings as
the adapter, LaTeX math), its body text taken with lxml the way tests/checker.py takes the text
of rendered Markdown. Left out of the reference, as a reader of the page never reads them as
content: the generated table of contents (`.. contents::`, navigation), the page header and
footer (`.. header::`, `.. footer::`, page furniture) and math (the writer's LaTeX output spells
symbols as macros, `\\Gamma`, where the source and our chunks have the character, Γ). A
classifier or a field name's colon, drawn by the writer's style sheet, separates words.

KNOWN_FAILURES lists the checks that fail and why; the marks are strict, so a check that starts
passing fails until its entry goes.
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import lxml.html
import pytest

from tests import checker
from tests.conftest import CORPUS, corpus_files
from tests.test_rst_crossformat import docutils_html

BUDGETS = (256, 512)

KNOWN_FAILURES: dict[str, str] = {
    "rows": "tables without a header row (common in reStructuredText) render without one, and tables "
    "inside definition or list items render indented: the checker reads neither as a whole table",
    "lines": "footnotes and citations are kept at the end of their section, after blocks that follow "
    "them in the source: their chunk starts before the previous one ends",
}


def visible_words(path: Path) -> Counter[str]:
    """Words of the page as docutils' HTML writer shows it (body text, blocks kept apart)."""
    import segment

    data = path.read_bytes()
    titled = segment.parse_bytes(data, path.name).title is not None
    root = lxml.html.fromstring(docutils_html(data.decode("utf-8", "replace"), titled))
    body = root.find("body")
    assert body is not None
    furniture = '//*[contains(concat(" ", @class, " "), " contents ") or contains(@class, "math")]'
    for el in [*body.xpath(furniture), *body.iter("header", "footer")]:
        el.drop_tree()
    for el in body.xpath('//*[contains(@class, "classifier") or contains(@class, "colon")]'):
        el.text = " " + (el.text or "")
        el.tail = " " + (el.tail or "")
    for el in body.iter(*checker.BLOCK_TAGS):
        el.text = "\n" + (el.text or "")
        el.tail = "\n" + (el.tail or "")
    for el in list(body.iter("script", "style")):
        el.drop_tree()
    return Counter(checker.words(str(body.text_content())))


@pytest.fixture(scope="module")
def reports() -> dict[int, list[checker.FileReport]]:
    files = corpus_files("rst", ".rst")
    if not files:
        pytest.skip("shared reStructuredText corpus not present")
    root = CORPUS / "rst"
    seen = {p: visible_words(p) for p in files}
    return {
        n: [checker.check_file(p, p.relative_to(root).as_posix(), n, seen[p]) for p in files] for n in BUDGETS
    }


def _summary(bad: list[tuple[str, str]], n: int = 12) -> str:
    lines = [f"{len(bad)} failures in {len({s for s, _ in bad})} files; first {min(n, len(bad))}:"]
    return "\n".join(lines + [f"  {s}: {m}" for s, m in bad[:n]])


# Source: ../shared/corpus/rst (docutils documentation); expectations: tests/checker.py.
@pytest.mark.corpus
@pytest.mark.parametrize(
    "check",
    [
        pytest.param(
            c, marks=[pytest.mark.xfail(reason=KNOWN_FAILURES[c], strict=True)] if c in KNOWN_FAILURES else []
        )
        for c in checker.CHECKS
    ],
)
@pytest.mark.parametrize("budget", BUDGETS)
def test_corpus_check(reports: dict[int, list[checker.FileReport]], check: str, budget: int) -> None:
    bad = [(r.source, m) for r in reports[budget] for m in getattr(r, check)]
    assert not bad, _summary(bad)


# Source: ../shared/corpus/rst; reference rendering: docutils' html5 writer + lxml text.
@pytest.mark.corpus
@pytest.mark.parametrize("budget", BUDGETS)
def test_corpus_every_visible_word_reaches_the_chunks(
    reports: dict[int, list[checker.FileReport]], budget: int
) -> None:
    src = sum(r.words_source for r in reports[budget])
    found = sum(r.words_found for r in reports[budget])
    print(f"\nrst corpus at {budget} tokens: {found}/{src} visible words in the chunks")
    bad = [(r.source, f"missing {dict(r.missing.most_common(8))}") for r in reports[budget] if r.missing]
    assert found == src, f"{found}/{src} words ({found / src:.5f}); " + _summary(bad)


@pytest.mark.corpus
@pytest.mark.parametrize("budget", BUDGETS)
def test_corpus_every_file_builds(reports: dict[int, list[checker.FileReport]], budget: int) -> None:
    errors = [(r.source, r.error) for r in reports[budget] if r.error]
    assert not errors, errors[:10]
