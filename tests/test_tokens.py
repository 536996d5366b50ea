"""Token counters: the estimator's documented rules, tokenizer.json files, callables."""

from __future__ import annotations

from pathlib import Path

import pytest

from segment.errors import SettingsError
from segment.tokens import CallableCounter, EstimateCounter, TokenizerFileCounter, counter_for


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        # ASCII: ceil(0.24 non-space + 1.10 punctuation + 0.46 digits + 0.05 capitals)
        ("the", 1),  # 0.72
        ("configuration", 4),  # 3.12
        ("OpenTelemetry", 4),  # 3.12 + 0.10
        ("2024", 3),  # 0.96 + 1.84
        ("a, b.", 4),  # 0.96 + 2.20
        ("", 0),
        # A non-ASCII character costs one token in all (0.24 + 0.76).
        ("naïve café", 4),  # 7 x 0.24 + 2 x 1.0
        ("日本語", 3),
        # Never below one token per word between spaces and punctuation.
        ("a b c d", 4),  # 0.96 by weight
        ("C D E F G A B", 7),  # 1.68 + 0.35
        ("is it up to me", 5),  # 2.40 by weight
    ],
)
def test_estimator_rules(text: str, expected: int) -> None:
    assert EstimateCounter().count(text) == expected


@pytest.mark.parametrize("parts", [["Drones hold", "at 120 m,", "then land."], ["naïve", "café au lait"]])
def test_estimator_never_counts_a_join_above_its_parts(parts: list[str]) -> None:
    c = EstimateCounter()
    assert c.count("\n\n".join(parts)) <= sum(c.count(p) for p in parts)


# A glossary's table of note names: single letters and short words, as in a music primer of our
# own. Every subword tokenizer gives each whitespace- or punctuation-separated word at least one
# token (common practice), so the estimate may not fall below the word count.
NOTE_NAMES = " ".join(
    f"| {letter} | {letter.lower()} | do re mi fa so la ti | {n} |" for n, letter in enumerate("CDEFGAB" * 6)
)


def test_estimator_gives_every_word_at_least_a_token() -> None:
    import re

    c = EstimateCounter()
    words = len(re.findall(r"[A-Za-z0-9]+", NOTE_NAMES))
    assert c.count(NOTE_NAMES) >= words
    short = " ".join(["a", "I", "to", "of", "be"] * 50)
    assert c.count(short) >= 250


def test_estimator_floor_keeps_joins_within_their_parts() -> None:
    c = EstimateCounter()
    parts = [NOTE_NAMES[:200], "Configuration of the telemetry pipeline.", "x y z", "a"]
    assert c.count(" ".join(parts)) <= sum(c.count(p) for p in parts)
    assert c.count("\n\n".join(parts)) <= sum(c.count(p) for p in parts)


def test_tokenizer_file_counts_without_special_tokens(tmp_path: Path) -> None:
    from tokenizers import Tokenizer, models, pre_tokenizers, trainers

    tok = Tokenizer(models.WordLevel(unk_token="[UNK]"))
    tok.pre_tokenizer = pre_tokenizers.Whitespace()
    tok.train_from_iterator(["alpha beta gamma"] * 3, trainers.WordLevelTrainer(special_tokens=["[UNK]"]))
    path = tmp_path / "tokenizer.json"
    tok.save(str(path))
    counter = TokenizerFileCounter(path)
    assert counter.count("alpha beta gamma delta") == 4
    assert counter_for(str(path)).count("alpha") == 1


def test_missing_or_bad_tokenizer_file_is_a_settings_error(tmp_path: Path) -> None:
    with pytest.raises(SettingsError, match="not found"):
        TokenizerFileCounter(tmp_path / "nope.json")
    bad = tmp_path / "bad.json"
    bad.write_text("{}")
    with pytest.raises(SettingsError, match=r"not a valid tokenizer\.json"):
        TokenizerFileCounter(bad)


def test_callable_counter() -> None:
    assert CallableCounter(len).count("abcd") == 4
