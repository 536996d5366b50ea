"""The token budget under a real subword tokenizer, trained here on the demo docs.

The tokenizers are built with the `tokenizers` library (general-purpose, no download): a
WordPiece one in the style of BERT (lowercasing normaliser, whitespace + punctuation
pre-tokenizer, [CLS]/[SEP] template) and a byte-level BPE one in the style of GPT-2 (spaces and
newlines are part of the tokens). Each is saved as tokenizer.json and handed to the segmenter with
`Settings(tokenizer=path, max_tokens=128)`; every chunk is then counted again by the tokenizers
library itself, not by our counter, and must fit the budget unless flagged oversize.

Counts exclude special tokens ([CLS]/[SEP]), as segment/tokens.py documents: a chunk's count is
what its text adds to a model's input.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from tokenizers import Tokenizer, decoders, models, normalizers, pre_tokenizers, processors, trainers

import segment
from segment.settings import Settings

DEMO = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
MAX_TOKENS = 128


def _demo_pages() -> list[Path]:
    pages = sorted(DEMO.rglob("*.md"))
    assert len(pages) >= 4, "the bundled demo docs are missing"
    return pages


def _wordpiece(texts: list[str]) -> Tokenizer:
    tok = Tokenizer(models.WordPiece(unk_token="[UNK]"))
    tok.normalizer = normalizers.BertNormalizer(lowercase=True)
    tok.pre_tokenizer = pre_tokenizers.BertPreTokenizer()
    trainer = trainers.WordPieceTrainer(
        vocab_size=800, special_tokens=["[PAD]", "[UNK]", "[CLS]", "[SEP]"], show_progress=False
    )
    tok.train_from_iterator(texts, trainer)
    cls, sep = tok.token_to_id("[CLS]"), tok.token_to_id("[SEP]")
    tok.post_processor = processors.TemplateProcessing(
        single="[CLS] $A [SEP]", special_tokens=[("[CLS]", cls), ("[SEP]", sep)]
    )
    tok.decoder = decoders.WordPiece()
    return tok


def _byte_bpe(texts: list[str]) -> Tokenizer:
    tok = Tokenizer(models.BPE())
    tok.pre_tokenizer = pre_tokenizers.ByteLevel(add_prefix_space=False)
    trainer = trainers.BpeTrainer(
        vocab_size=600,
        initial_alphabet=pre_tokenizers.ByteLevel.alphabet(),
        special_tokens=["<|endoftext|>"],
        show_progress=False,
    )
    tok.train_from_iterator(texts, trainer)
    tok.decoder = decoders.ByteLevel()
    return tok


TRAINERS: dict[str, Callable[[list[str]], Tokenizer]] = {"wordpiece": _wordpiece, "byte-bpe": _byte_bpe}


@pytest.fixture(scope="module", params=sorted(TRAINERS))
def tokenizer_file(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> Path:
    texts = [p.read_text(encoding="utf-8") for p in _demo_pages()]
    tok = TRAINERS[request.param](texts)
    path = tmp_path_factory.mktemp(request.param) / "tokenizer.json"
    tok.save(str(path))
    return path


def _count(tok: Tokenizer, text: str) -> int:
    return len(tok.encode(text, add_special_tokens=False).ids)


def test_every_chunk_fits_under_the_real_tokenizer(tokenizer_file: Path) -> None:
    tok = Tokenizer.from_file(str(tokenizer_file))
    settings = Settings(tokenizer=str(tokenizer_file), max_tokens=MAX_TOKENS, min_tokens=16)
    bad: list[str] = []
    for path in _demo_pages():
        page = path.relative_to(DEMO).as_posix()
        chunks = segment.chunk_file(path, settings, source=page)
        assert len(chunks) >= 2, f"{page} should need more than one chunk at {MAX_TOKENS} tokens"
        for c in chunks:
            real = _count(tok, c.text)
            if real != c.tokens:
                bad.append(f"{page} chunk {c.seq}: records {c.tokens} tokens, the tokenizer counts {real}")
            if real > MAX_TOKENS and not c.oversize:
                bad.append(
                    f"{page} chunk {c.seq}: {real} tokens > {MAX_TOKENS}, not oversize: {c.text[:80]!r}"
                )
    assert not bad, "\n".join(bad)


def test_the_budget_binds(tokenizer_file: Path) -> None:
    """The test means something: at this budget the tokenizer's counts come close to the limit."""
    tok = Tokenizer.from_file(str(tokenizer_file))
    settings = Settings(tokenizer=str(tokenizer_file), max_tokens=MAX_TOKENS, min_tokens=16)
    counts = [_count(tok, c.text) for p in _demo_pages() for c in segment.chunk_file(p, settings)]
    assert max(counts) > MAX_TOKENS * 0.75
    # Source: the same tokenizer on the whole page; the pages are far over one chunk's budget.
    assert max(_count(tok, p.read_text(encoding="utf-8")) for p in _demo_pages()) > 4 * MAX_TOKENS


# Found by running the shared corpus under the byte-level BPE (6 chunks over 256, up to 268).
# Regression test: parts of code inside a list item were once counted before the item's indentation.
def test_code_inside_a_list_item_fits_under_the_real_tokenizer(tokenizer_file: Path, tmp_path: Path) -> None:
    # CommonMark 0.31.2, "List items": a fenced block indented to the item's content column
    # belongs to the item.
    body = "".join(f"      key_{i}: value number {i}\n" for i in range(80))
    page = tmp_path / "item-code.md"
    page.write_text(
        "1. Write the configuration:\n\n   ```yaml\n"
        + "".join("   " + line for line in body.splitlines(True))
        + "   ```\n",
        encoding="utf-8",
    )
    tok = Tokenizer.from_file(str(tokenizer_file))
    chunks = segment.chunk_file(page, Settings(tokenizer=str(tokenizer_file), max_tokens=MAX_TOKENS))
    counts = [_count(tok, c.text) for c in chunks]
    assert len(chunks) >= 3
    assert all(n <= MAX_TOKENS or c.oversize for n, c in zip(counts, chunks)), counts


# Regression test: one code part inside a list item once went 1 over under byte-level BPE.
# Source: ../shared/corpus/markdown (OpenTelemetry docs, CC-BY-4.0), 441 real pages, counted
# again by the tokenizers library itself.
@pytest.mark.corpus
def test_real_docs_fit_under_the_real_tokenizer(tokenizer_file: Path) -> None:
    try:
        from tests import checker
    except ImportError:  # pragma: no cover
        import checker  # type: ignore[no-redef]

    root = checker.corpus_root()
    if not root.is_dir():
        pytest.skip(f"shared corpus not present: {root}")
    tok = Tokenizer.from_file(str(tokenizer_file))
    settings = Settings(tokenizer=str(tokenizer_file), max_tokens=256)
    bad: list[str] = []
    for path in checker.corpus_files(root):
        for c in segment.chunk_file(path, settings, source=path.relative_to(root).as_posix()):
            real = _count(tok, c.text)
            if real != c.tokens or (real > 256 and not c.oversize):
                bad.append(
                    f"{c.source} chunk {c.seq}: tokenizer {real}, recorded {c.tokens}, oversize {c.oversize}"
                )
    assert not bad, "\n".join(bad[:10])


# Regression test: a one-line code block one token over the budget was once kept whole, not flagged.
def test_one_line_code_block_just_over_budget_is_cut_between_words(
    tokenizer_file: Path, tmp_path: Path
) -> None:
    tok = Tokenizer.from_file(str(tokenizer_file))
    line = "zfmkkxaodw pkprywesyd"
    fenced = _count(tok, f"```sh\n{line}\n```")
    budget = fenced - 1  # the whole block is one token too many; each word fits in its fences
    assert budget >= 16 and all(_count(tok, f"```sh\n{w}\n```") <= budget for w in line.split())
    page = tmp_path / "one-line.md"
    page.write_text(f"```sh\n{line}\n```\n", encoding="utf-8")
    chunks = segment.chunk_file(
        page, Settings(tokenizer=str(tokenizer_file), max_tokens=budget, min_tokens=0)
    )
    counts = [_count(tok, c.text) for c in chunks]
    assert all(n <= budget or c.oversize for n, c in zip(counts, chunks)), (budget, counts)
