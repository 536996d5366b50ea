"""The real Markdown documentation in ../shared/corpus/markdown, built at 256 and 512 tokens.

Source: the OpenTelemetry documentation (open-telemetry/opentelemetry.io, content/en/docs/,
CC-BY-4.0; see ../shared/corpus/markdown/opentelemetry-docs/SOURCE.md), 441 real pages. What a
reader of those pages expects of the chunks is written out in tests/checker.py: whole table rows
and code lines, the right heading path, every visible word present (markdown-it-py + lxml as the
reference rendering), the budget, sentence or block boundaries, chunks in source order, and no
markup a reader never sees (shortcodes, alert markers, attribute lists).

The checker itself is checked first, on the bundled demo docs, by breaking chunks on purpose:
each check must notice its kind of damage.
"""

from __future__ import annotations

import dataclasses
from collections import Counter
from pathlib import Path
from typing import Any

import pytest

import segment
from segment.settings import Settings
from segment.tokens import counter_for

try:  # tests/ may or may not be a package
    from tests import checker
except ImportError:  # pragma: no cover
    import checker  # type: ignore[no-redef]

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
BUDGETS = (256, 512)

# Checks that fail on the current code, each with the reason in words (and a minimal repro as a
# strict xfail in this file). Remove an entry when fixed:
# the marks are strict, so a check that starts passing fails until its entry goes.
KNOWN_FAILURES: dict[tuple[str, int], str] = {}


# ----- the checker notices damage (demo docs, always run) --------------------------------------


def _demo_case(name: str, max_tokens: int = 128) -> tuple[segment.Document, list[segment.Chunk], str]:
    path = DEMO / name
    settings = Settings(max_tokens=max_tokens)
    doc = segment.parse(path, settings, source=name)
    chunks = segment.chunk_file(path, settings, source=name)
    return doc, chunks, path.read_text(encoding="utf-8")


def _run(
    doc: segment.Document, chunks: list[segment.Chunk], md: str, max_tokens: int = 128
) -> checker.FileReport:
    return checker.check_chunks(doc, chunks, md, max_tokens, counter_for(None))


def _replace(chunks: list[segment.Chunk], i: int, **changes: Any) -> list[segment.Chunk]:
    out = list(chunks)
    out[i] = dataclasses.replace(chunks[i], **changes)
    return out


@pytest.mark.parametrize("max_tokens", [128, 256])
@pytest.mark.parametrize("name", sorted(p.relative_to(DEMO).as_posix() for p in DEMO.rglob("*.md")))
def test_demo_docs_pass_every_check(name: str, max_tokens: int) -> None:
    doc, chunks, md = _demo_case(name, max_tokens)
    rep = _run(doc, chunks, md, max_tokens)
    assert rep.words_found == rep.words_source, f"{name}: words missing: {dict(rep.missing)}"
    for check in checker.CHECKS:
        assert getattr(rep, check) == [], f"{name}: {check}: {getattr(rep, check)[:5]}"


# The parts of one over-budget sentence cut between words point at their own source lines.
def test_word_split_parts_point_at_their_own_lines(tmp_path: Path) -> None:
    path = tmp_path / "long-sentence.md"
    path.write_text(
        "One long sentence starts on this line\nand runs on over a second line\n"
        "and then a third line of words\nand ends on the fourth line here.\n",
        encoding="utf-8",
    )
    chunks = segment.chunk_file(path, Settings(max_tokens=16, min_tokens=0))
    assert len(chunks) == 2
    # "third line of words..." begins on line 3 of the source.
    assert chunks[0].lines is not None and chunks[1].lines is not None
    assert chunks[1].lines[0] >= chunks[0].lines[1] and chunks[1].lines[0] == 3, [c.lines for c in chunks]


# Regression test: the last sentence sent back to the queue by a part closing over budget was once lost.
def test_no_sentence_is_lost_from_a_paragraph_with_a_typographic_apostrophe(tmp_path: Path) -> None:
    ascii_sentence = "When the number of nodes is low and the number of pods is high, sidecars might make more sense for you."
    last = "You\u2019ll get better load balancing."
    path = tmp_path / "mixed.md"
    path.write_text(" ".join([ascii_sentence] * 4 + [last]) + "\n", encoding="utf-8")
    text = " ".join(c.text for c in segment.chunk_file(path, Settings(max_tokens=112)))
    assert text.count("sidecars") == 4 and last in text, text


# A sentence after a lowercase single-letter word and a full stop ("iv h. Mikv") is a sentence of
# its own: spaCy keeps "h." whole as an abbreviation, segment.sentences ends a sentence there.
def test_a_sentence_that_fits_is_not_cut_between_words(tmp_path: Path) -> None:
    sentence = "Mikv zmudhc vaddtapcrr uwaoof taznggtajs wbdund ftaocs ok atfmxzunjb hszta xz cnvpapchenew."
    assert counter_for(None).count(sentence) <= 24
    path = tmp_path / "fits.md"
    path.write_text(f"Ifwdnpa ln iv h. {sentence} Szooqmtmxg cdjnn fdafdyujyk format.\n", encoding="utf-8")
    chunks = segment.chunk_file(path, Settings(max_tokens=24, min_tokens=16))
    assert any(sentence in c.text for c in chunks), [c.text for c in chunks]


def test_checker_notices_a_cut_table_row() -> None:
    doc, chunks, md = _demo_case("reference/cli.md")
    i = next(c.seq for c in chunks if "table" in c.blocks and "| `drone add" in c.text)
    lines = chunks[i].text.split("\n")
    n = next(k for k, line in enumerate(lines) if line.startswith("| `drone add"))
    lines[n] = lines[n][: lines[n].index(" | ", 3)] + " |"  # the row ends after its first cell
    damaged = _replace(chunks, i, text="\n".join(lines))
    assert checker.check_chunks(doc, damaged, md, 128, counter_for(None)).rows


def test_checker_notices_a_table_part_without_header() -> None:
    doc, chunks, md = _demo_case("reference/cli.md")
    i = next(c.seq for c in chunks if "table" in c.blocks)
    lines = chunks[i].text.split("\n")
    h = next(n for n, line in enumerate(lines) if line.startswith("| "))
    damaged = _replace(chunks, i, text="\n".join(lines[:h] + lines[h + 2 :]))
    assert _run(doc, damaged, md).rows


def test_checker_notices_a_broken_code_line() -> None:
    doc, chunks, md = _demo_case("reference/cli.md")
    i = next(c.seq for c in chunks if "code" in c.blocks and "set -euo pipefail" in c.text)
    damaged = _replace(chunks, i, text=chunks[i].text.replace("set -euo pipefail", "set -euo\npipefail"))
    assert _run(doc, damaged, md).code


def test_checker_notices_code_lines_out_of_order() -> None:
    doc, chunks, md = _demo_case("reference/cli.md")
    i = next(c.seq for c in chunks if "set -euo pipefail" in c.text)
    text = chunks[i].text
    a, b = 'name="$1"', "set -euo pipefail"
    swapped = text.replace(a, "\x00").replace(b, a).replace("\x00", b)
    assert swapped != text
    assert _run(doc, _replace(chunks, i, text=swapped), md).code


def test_checker_notices_a_wrong_breadcrumb() -> None:
    doc, chunks, md = _demo_case("guides/flight-planning.md")
    i = next(c.seq for c in chunks if len(c.breadcrumb) >= 2)
    damaged = _replace(chunks, i, breadcrumb=[chunks[i].breadcrumb[0], "Somewhere else"])
    assert _run(doc, damaged, md).crumbs


def test_checker_notices_a_parent_breadcrumb_on_one_section() -> None:
    doc, chunks, md = _demo_case("guides/flight-planning.md")
    i = next(c.seq for c in chunks if len(c.breadcrumb) >= 2)
    damaged = _replace(chunks, i, breadcrumb=chunks[i].breadcrumb[:-1])
    assert _run(doc, damaged, md).crumbs


def test_checker_notices_a_lost_word() -> None:
    doc, chunks, md = _demo_case("guides/getting-started.md")
    i = next(c.seq for c in chunks if "sand bucket" in c.text)
    damaged = _replace(chunks, i, text=chunks[i].text.replace("sand bucket", "bucket"))
    rep = _run(doc, damaged, md)
    assert rep.missing == Counter({"sand": 1})


def test_checker_notices_an_over_budget_chunk_and_a_false_count() -> None:
    doc, chunks, md = _demo_case("guides/flight-planning.md")
    big = " ".join(c.text for c in chunks)
    damaged = _replace(chunks, 0, text=big, tokens=counter_for(None).count(big))
    assert any("not oversize" in m for m in _run(doc, damaged, md).budget)
    lying = _replace(chunks, 0, tokens=chunks[0].tokens + 1)
    assert any("counter gives" in m for m in _run(doc, lying, md).budget)


def test_checker_notices_a_cut_inside_a_short_sentence() -> None:
    doc, chunks, md = _demo_case("guides/getting-started.md")
    i = next(
        c.seq for c in chunks if "The pin\nposition matters" in c.text or "The pin position matters" in c.text
    )
    text = chunks[i].text
    at = text.index("matters: approach")
    damaged = list(chunks)
    damaged[i] = dataclasses.replace(chunks[i], text=text[:at])
    damaged.insert(i + 1, dataclasses.replace(chunks[i], text=text[at:], seq=chunks[i].seq + 1))
    assert _run(doc, damaged, md).boundaries


def test_checker_notices_chunks_out_of_source_order() -> None:
    doc, chunks, md = _demo_case("guides/flight-planning.md")
    assert len(chunks) >= 3
    damaged = [chunks[1], chunks[0], *chunks[2:]]
    assert _run(doc, damaged, md).lines


def test_checker_notices_shortcode_and_alert_markup() -> None:
    doc, chunks, md = _demo_case("guides/getting-started.md")
    i = next(c.seq for c in chunks if "sand bucket" in c.text)
    damaged = _replace(chunks, i, text="{{< alert >}}\n" + chunks[i].text)
    assert _run(doc, damaged, md).syntax
    damaged = _replace(chunks, i, text="[!WARNING]\n" + chunks[i].text)
    assert _run(doc, damaged, md).syntax
    damaged = _replace(chunks, i, breadcrumb=[*chunks[i].breadcrumb[:-1], "Battery care {#battery}"])
    assert _run(doc, damaged, md).syntax


def test_visible_words_leave_out_what_a_reader_never_sees() -> None:
    # Reference rendering: markdown-it-py (CommonMark + tables) then lxml's text. Front matter,
    # shortcode markers, explicit heading ids and script bodies are not shown by a static site.
    md = (
        "---\ntitle: Hidden Title\n---\n\n## Shown {#hidden-id}\n\n"
        "{{< tabpane lang=hiddenarg >}}\nshown inside\n{{< /tabpane >}}\n\n"
        "<script>hiddenScript()</script>\n\n{#hiddenattr}\n\n| a | b |\n|---|---|\n| 23<br/>shownafter | x |\n"
    )
    got = checker.visible_words(md)
    assert {"shown", "inside", "23", "shownafter", "a", "b", "x"} <= set(got)
    assert not {"hidden", "title", "id", "tabpane", "hiddenarg", "hiddenscript", "hiddenattr"} & set(got)


# ----- the corpus --------------------------------------------------------------------------


@pytest.fixture(scope="module")
def corpus_reports() -> dict[int, list[checker.FileReport]]:
    root = checker.corpus_root()
    if not root.is_dir():
        pytest.skip(f"shared corpus not present: {root}")
    files = checker.corpus_files(root)
    assert len(files) > 400, f"expected the 441-page corpus, found {len(files)} files"
    seen = {p: checker.visible_words(p.read_bytes().decode("utf-8", errors="replace")) for p in files}
    return {
        n: [checker.check_file(p, p.relative_to(root).as_posix(), n, seen[p]) for p in files] for n in BUDGETS
    }


def _known(check: str, budget: int) -> list[Any]:
    reason = KNOWN_FAILURES.get((check, budget))
    return [pytest.mark.xfail(reason=reason, strict=True)] if reason else []


def _summary(bad: list[tuple[str, str]], n: int = 15) -> str:
    files = len({s for s, _ in bad})
    lines = [f"{len(bad)} failures in {files} files; first {min(n, len(bad))}:"]
    lines += [f"  {s}: {m}" for s, m in bad[:n]]
    return "\n".join(lines)


CHECK_PARAMS = [
    pytest.param(check, budget, marks=_known(check, budget), id=f"{check}-{budget}")
    for check in checker.CHECKS
    for budget in BUDGETS
]


# Source: ../shared/corpus/markdown (OpenTelemetry docs, CC-BY-4.0); expectations: DESIGN.md
# sections 4 and 6 as spelled out in tests/checker.py.
@pytest.mark.corpus
@pytest.mark.parametrize("check,budget", CHECK_PARAMS)
def test_corpus_check(corpus_reports: dict[int, list[checker.FileReport]], check: str, budget: int) -> None:
    reports = corpus_reports[budget]
    bad = [(r.source, m) for r in reports for m in getattr(r, check)]
    assert not bad, _summary(bad)


# Source: ../shared/corpus/markdown; reference rendering: markdown-it-py (CommonMark + GFM tables)
# with lxml's text, front matter and shortcode markers removed.
@pytest.mark.corpus
@pytest.mark.parametrize(
    "budget", [pytest.param(b, marks=_known("words", b), id=f"words-{b}") for b in BUDGETS]
)
def test_corpus_every_visible_word_reaches_the_chunks(
    corpus_reports: dict[int, list[checker.FileReport]], budget: int
) -> None:
    reports = corpus_reports[budget]
    src = sum(r.words_source for r in reports)
    found = sum(r.words_found for r in reports)
    assert src > 300_000
    bad = [(r.source, f"missing {dict(r.missing.most_common(8))}") for r in reports if r.missing]
    assert found == src, f"{found}/{src} words ({found / src:.5f}); " + _summary(bad)


@pytest.mark.corpus
@pytest.mark.parametrize("budget", BUDGETS)
def test_corpus_every_file_builds(corpus_reports: dict[int, list[checker.FileReport]], budget: int) -> None:
    errors = [(r.source, r.error) for r in corpus_reports[budget] if r.error]
    assert not errors, errors[:10]
    assert sum(r.chunks for r in corpus_reports[budget]) > 1000


# The demo's command reference at 256 tokens once gave a 9-token chunk holding only the heading
# "Import zones from the city's open data", its paragraph and code in the next chunk.
@pytest.mark.parametrize("max_tokens", [60, 96, 128, 256])
@pytest.mark.parametrize("name", sorted(p.relative_to(DEMO).as_posix() for p in DEMO.rglob("*.md")))
def test_demo_docs_have_no_chunk_of_a_heading_alone(name: str, max_tokens: int) -> None:
    _doc, chunks, _md = _demo_case(name, max_tokens)
    assert all(c.blocks != ["heading"] for c in chunks), [c.text for c in chunks if c.blocks == ["heading"]]


@pytest.mark.xfail(
    strict=True,
    reason="a capital single letter and a full stop ('A. A sentence') may be an initial ('J. Smith'): "
    "sentences are not ended there, so a long sentence after it is cut between words (docs/chunking.md)",
)
def test_a_sentence_after_a_capital_letter_and_a_stop_is_not_split(tmp_path: Path) -> None:
    sentence = (
        "A sfxhi ushtwupzgm ximpqjtiir cvesoz wwnr vdgmmbgvak zajml lmrcnvehka hiz opvkpormjh bbxejrx gzoia."
    )
    assert counter_for(None).count(sentence) <= 24
    path = tmp_path / "capital.md"
    path.write_text(
        f"Chlfjnsumn heading b vgavmusyyr lgezui. A. A. {sentence} Then the end.\n", encoding="utf-8"
    )
    chunks = segment.chunk_file(path, Settings(max_tokens=24, min_tokens=16))
    assert any(sentence in c.text for c in chunks), [c.text for c in chunks]
