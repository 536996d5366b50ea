"""Properties of the chunks of random Markdown (hypothesis).

Documents are built from headings, paragraphs, bullet and ordered lists (nested up to three
levels), GFM pipe tables (GFM Spec 0.29-gfm, "Tables (extension)") and fenced code (CommonMark
0.31.2, "Fenced code blocks"), with words drawn from a plain alphabet so that no word is Markdown
syntax. For every document and budget:
- no word is lost: every generated word reaches some chunk's text or breadcrumb, as often as it
  was written;
- no table row is cut: every row is a whole pipe-table line of one chunk (tests/checker.py);
- the budget holds: every chunk's count fits, unless it is flagged oversize, and the recorded
  count is the counter's;
- two runs give byte-identical output.
A second property runs the corpus checker's structural checks (whole code lines, breadcrumbs,
boundaries, source order) on the same documents.

Every heading gets at least one block: a heading with nothing under it is a known loss (a bare
heading between two headings; tests/test_corpus_markdown.py covers it on real pages).
"""

from __future__ import annotations

import os
from collections import Counter
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import segment
from segment.properties import record_properties
from segment.settings import Settings
from segment.tokens import counter_for

try:  # tests/ may or may not be a package
    from tests import checker
except ImportError:  # pragma: no cover
    import checker  # type: ignore[no-redef]

WORD = st.text(alphabet="abcdefghijklmnopqrstuvwxyz", min_size=1, max_size=10)


@st.composite
def sentence(draw: st.DrawFn) -> list[str]:
    return draw(st.lists(WORD, min_size=1, max_size=14))


@st.composite
def paragraph(draw: st.DrawFn) -> tuple[str, list[str]]:
    sentences = draw(st.lists(sentence(), min_size=1, max_size=8))
    ends = draw(
        st.lists(st.sampled_from([".", "!", "?", ".", ";"]), min_size=len(sentences), max_size=len(sentences))
    )
    text = " ".join(" ".join(s).capitalize() + e for s, e in zip(sentences, ends))
    return text + "\n", [w for s in sentences for w in s]


@st.composite
def bullet_list(draw: st.DrawFn, depth: int = 0) -> tuple[str, list[str]]:
    ordered = draw(st.booleans())
    items = draw(st.lists(sentence(), min_size=1, max_size=6))
    lines: list[str] = []
    words: list[str] = []
    for i, item in enumerate(items):
        marker = f"{i + 1}. " if ordered else "- "
        lines.append(" " * (depth * 3) + marker + " ".join(item))
        words += item
        pad = " " * (depth * 3 + len(marker))
        if depth < 2 and draw(st.integers(0, 4)) == 0:
            sub, sub_words = draw(bullet_list(depth + 1))
            lines.append(sub.rstrip("\n"))
            words += sub_words
        elif draw(st.integers(0, 5)) == 0:
            # A fenced code block inside the item (CommonMark 0.31.2, "List items", rule 1).
            block, block_words = draw(code())
            lines.append("")
            lines += [pad + line if line else line for line in block.rstrip("\n").split("\n")]
            lines.append("")
            words += block_words
    return "\n".join(lines) + "\n", words


@st.composite
def table(draw: st.DrawFn) -> tuple[str, list[str]]:
    width = draw(st.integers(1, 4))
    cell = st.lists(WORD, min_size=1, max_size=5)
    header = draw(st.lists(cell, min_size=width, max_size=width))
    rows = draw(st.lists(st.lists(cell, min_size=width, max_size=width), min_size=1, max_size=12))
    lines = ["| " + " | ".join(" ".join(c) for c in header) + " |", "|" + " --- |" * width]
    lines += ["| " + " | ".join(" ".join(c) for c in row) + " |" for row in rows]
    words = [w for c in header for w in c] + [w for row in rows for c in row for w in c]
    return "\n".join(lines) + "\n", words


@st.composite
def code(draw: st.DrawFn) -> tuple[str, list[str]]:
    lines = draw(st.lists(st.lists(WORD, min_size=0, max_size=8), min_size=1, max_size=14))
    lang = draw(st.sampled_from(["", "python", "sh"]))
    body = [" ".join(ws) + (" = call(x)" if ws and i % 3 == 0 else "") for i, ws in enumerate(lines)]
    words = [w for ws in lines for w in ws] + [
        w for i, ws in enumerate(lines) if ws and i % 3 == 0 for w in ("call", "x")
    ]
    return "```" + lang + "\n" + "\n".join(body) + "\n```\n", words


BLOCK = st.one_of(paragraph(), paragraph(), bullet_list(), table(), code())


@st.composite
def document(draw: st.DrawFn) -> tuple[str, Counter[str]]:
    parts: list[str] = []
    words: list[str] = []
    for block_text, block_words in draw(st.lists(BLOCK, min_size=0, max_size=3)):
        parts.append(block_text)
        words += block_words
    for _ in range(draw(st.integers(0, 6))):
        level = draw(st.integers(1, 4))
        title = draw(st.lists(WORD, min_size=1, max_size=5))
        parts.append("#" * level + " " + " ".join(title) + "\n")
        words += title
        for block_text, block_words in draw(st.lists(BLOCK, min_size=1, max_size=4)):
            parts.append(block_text)
            words += block_words
    return "\n".join(parts), Counter(w.casefold() for w in words)


def _chunks(tmp: Path, markdown: str, max_tokens: int) -> tuple[segment.Document, list[segment.Chunk]]:
    path = tmp / "page.md"
    path.write_text(markdown, encoding="utf-8")
    s = Settings(max_tokens=max_tokens, min_tokens=min(16, max_tokens))
    return segment.parse(path, s), segment.chunk_file(path, s)


EXAMPLES = int(os.environ.get("DOCSEGMENT_EXAMPLES", "40"))
"""Examples per run: 40 in CI (2 cores); raise by hand to hunt, e.g. DOCSEGMENT_EXAMPLES=1000."""

PROPERTY_SETTINGS = settings(
    max_examples=EXAMPLES,
    derandomize=EXAMPLES <= 40,  # CI sees the same examples every run; hunting runs explore
    database=None,
    deadline=None,
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.function_scoped_fixture,
    ],
)


@PROPERTY_SETTINGS
@given(doc=document(), max_tokens=st.sampled_from([24, 48, 96, 256]))
def test_random_markdown_keeps_words_rows_budget_and_is_deterministic(
    tmp_path: Path, doc: tuple[str, Counter[str]], max_tokens: int
) -> None:
    markdown, want = doc
    tree, chunks = _chunks(tmp_path, markdown, max_tokens)

    # No word lost (with multiplicity).
    got = checker.output_words(chunks)
    lost = {w: n - got[w] for w, n in want.items() if got[w] < n}
    assert not lost, f"words lost: {lost}\n---\n{markdown}"

    # No row cut: every row of every table is one whole pipe-table line of some chunk.
    rep = checker.FileReport("page.md", max_tokens)
    checker._check_rows(tree, chunks, rep)
    assert not rep.rows, f"{rep.rows[:3]}\n---\n{markdown}"

    # The budget holds, and the recorded counts are the counter's.
    counter = counter_for(None)
    for c in chunks:
        assert c.tokens == counter.count(c.text)
        assert c.tokens <= max_tokens or c.oversize, f"chunk {c.seq}: {c.tokens} > {max_tokens}\n{c.text}"

    # Two runs, byte-identical output.
    _again_tree, again = _chunks(tmp_path, markdown, max_tokens)
    assert [c.to_json() for c in again] == [c.to_json() for c in chunks]


# Without shrinking: a failure is reported as generated (shrinking these documents takes minutes).
STRUCTURE_SETTINGS = settings(PROPERTY_SETTINGS, phases=[Phase.explicit, Phase.reuse, Phase.generate])


# Checks left out of the property while a known problem is open; each has its own strict-xfail
# repro in tests/test_corpus_markdown.py, which shows when it is fixed (then drop it here).
# Which random documents hit a problem varies with the modules loaded (hypothesis draws on
# constants found in them), so a strict xfail on the property itself would be flaky.
STRUCTURE_KNOWN: dict[str, str] = {
    "boundaries": "a sentence after a capital single letter and a full stop is not split, since "
    "initials would be cut too: test_a_sentence_after_a_capital_letter_and_a_stop_is_not_split",
}


@STRUCTURE_SETTINGS
@given(doc=document(), max_tokens=st.sampled_from([24, 48, 96, 256]))
def test_random_markdown_passes_the_corpus_checker(
    tmp_path: Path, doc: tuple[str, Counter[str]], max_tokens: int
) -> None:
    """The corpus checker's structural checks (tests/checker.py): whole code lines, breadcrumbs,
    sentence or block boundaries, chunks in source order, plus rows and budget again."""
    markdown, want = doc
    tree, chunks = _chunks(tmp_path, markdown, max_tokens)
    rep = checker.check_chunks(tree, chunks, markdown, max_tokens, counter_for(None), seen_words=want)
    for check in checker.CHECKS:
        if check in STRUCTURE_KNOWN:
            continue
        assert not getattr(rep, check), f"{check}: {getattr(rep, check)[:3]}\n---\n{markdown}"


# Found by the properties above (DOCSEGMENT_EXAMPLES=500) and shrunk by hand: a code line inside
# a list nested three deep was cut. Kept as a regression test.
def test_code_line_in_nested_item_stays_whole(tmp_path: Path) -> None:
    line = "a a a a a a aaaaaa aaaaaa = call(x)"
    markdown = f"- a\n\n   3. a\n      - a\n      - a\n        ```\n        {line}\n        ```\n"
    _tree, chunks = _chunks(tmp_path, markdown, 24)
    assert counter_for(None).count(f"```\n{line}\n```") <= 24
    assert any(line in c.text for c in chunks), [c.text for c in chunks]


# Found by the first property (DOCSEGMENT_EXAMPLES=800): a header and one row over budget
# together were not flagged. Kept as a regression test.
def test_header_and_one_row_over_budget_is_flagged_oversize(tmp_path: Path) -> None:
    markdown = "| aaaa aaaaa aaaaaaaaaa aaaaaaaaaa aaaaaaaaaa |\n| --- |\n| a aaaaaaaaaa |\n"
    _tree, chunks = _chunks(tmp_path, markdown, 24)
    assert all(c.tokens <= 24 or c.oversize for c in chunks), [(c.tokens, c.oversize) for c in chunks]


# Found by a hypothesis hunt (1,500 examples) and shrunk by hand: code lines sent back to the
# queue came out of order. Kept as a regression test.
def test_code_lines_keep_their_order(tmp_path: Path) -> None:
    lines = ["fylgarnmpk = call(x)", "wtka thh unreadable aeiidc li av mdce xe", "ng = call(x)"]
    markdown = "```sh\n" + "\n".join(lines) + "\n```\n"
    _tree, chunks = _chunks(tmp_path, markdown, 24)
    out = [line for c in chunks for line in c.text.split("\n") if line in lines]
    assert out == lines, [c.text for c in chunks]


# Found by a hypothesis hunt (1,500 examples), shrunk by hand: a code line after a paragraph split
# between sentences was cut. Kept as a regression test.
_SPLIT_PARAGRAPH = (
    "Uyheybgl tjwjuelstc wczgbw wtbdl? Ewgirxgad a zlkkrbesdx; Qkvzrle? Sfmit irzvoehia gynpbocb "
    "xdlwb xvfrveykcr eqjjbze gu ignore exclude u vupkfdjgrf dkk ctqyuukqqy pmnq! Jeryoh jsecy "
    "qpnogivqxh azerqzczgg xeedwpjz ypo? Yylitevuuq otx tcisxnzqbd nilbmazp cdrllkxkgb uggnmqawak "
    "jfsygkdnrr v owoiuolkmk nzpn szvvjrlq ctvcue; Or iqj! Mgn tpmrbfrply ftidasfujv!"
)


def test_code_line_after_a_split_paragraph_stays_whole(tmp_path: Path) -> None:
    line = "km acodh = call(x)"
    markdown = f"{_SPLIT_PARAGRAPH}\n```sh\n{line}\ndkzxq pgc sxiiqt l cqwgmqkkuc uvxhctszbf cwdjthlhta hp\n"
    _tree, chunks = _chunks(tmp_path, markdown, 24)
    assert any(line in c.text.split("\n") for c in chunks), [c.text for c in chunks]


@PROPERTY_SETTINGS
@given(doc=document(), max_tokens=st.sampled_from([24, 48, 96, 256]))
def test_no_chunk_holds_only_a_heading_whose_section_has_more(
    tmp_path: Path, doc: tuple[str, Counter[str]], max_tokens: int
) -> None:
    """A heading travels with the start of its content (DESIGN.md section 6, rule 4: a lead-in
    stays with what it introduces): every generated heading has at least one block under it, so
    no chunk may hold a heading alone."""
    markdown, _want = doc
    _tree, chunks = _chunks(tmp_path, markdown, max_tokens)
    alone = [c.text for c in chunks if c.blocks == ["heading"]]
    assert not alone, f"{alone}\n---\n{markdown}"


def test_the_one_measurement_path_gives_the_key_by_key_answer(monkeypatch: pytest.MonkeyPatch) -> None:
    # The common case (all kept, all within the caps) is answered from one JSON measurement;
    # on generated properties that answer equals the key-by-key reading of the module docstring.
    import random

    import segment.properties as props_module

    values: list[object] = [
        None,
        True,
        0,
        -2,
        1.5,
        float("nan"),
        "",
        "x",
        "é" * 50,
        "a" * 1500,
        [1, "a"],
        ["b"] * 300,
        [{"a": 1}],
        {"n": 1},
        (1, 2),
        10**30,
    ]
    keys: list[object] = ["title", "tags", "a.b", "é", 1]
    rng = random.Random(7)
    cases: list[tuple[dict[Any, object], tuple[str, ...], int, int]] = []
    for _ in range(2000):
        declared = {rng.choice(keys): rng.choice(values) for _ in range(rng.randint(0, 5))}
        keep = rng.choice([("*",), ("t*",), ("*", "!tags")])
        cases.append((declared, keep, rng.choice([10, 100, 1000]), rng.choice([50, 400, 4000])))
    fast = [record_properties(*case) for case in cases]
    monkeypatch.setattr(props_module, "_whole_if_within", lambda *args: None)
    assert fast == [record_properties(*case) for case in cases]
