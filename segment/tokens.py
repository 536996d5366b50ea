"""Token counters: a built-in estimator, a `tokenizer.json` file, or any callable.

All counters count the text alone (no special tokens such as [CLS]/[SEP]), so that a chunk's
count is what it adds to an embedding model's input.
"""

from __future__ import annotations

import string
from collections.abc import Callable
from functools import lru_cache
from pathlib import Path
from typing import Protocol, runtime_checkable

from segment.errors import SettingsError


@runtime_checkable
class TokenCounter(Protocol):
    """Anything that counts the tokens of a text."""

    name: str

    def count(self, text: str) -> int:
        """Number of tokens `text` takes."""
        ...


_WHITESPACE = b" \t\n\r\x0b\x0c"
_DIGITS = string.digits.encode()
_UPPER = string.ascii_uppercase.encode()
_PUNCTUATION_TO_SPACE = bytes.maketrans(string.punctuation.encode(), b" " * len(string.punctuation))


def _class_table() -> bytes:
    """Each ASCII byte to its character class: `s` whitespace, `d` digit, `u` capital, `l` other
    letter, `p` anything else (punctuation and controls); one translate sorts a whole text."""
    table = bytearray(b"p" * 256)
    for byte in _WHITESPACE:
        table[byte] = ord("s")
    for byte in _DIGITS:
        table[byte] = ord("d")
    for byte in _UPPER:
        table[byte] = ord("u")
    for byte in string.ascii_lowercase.encode():
        table[byte] = ord("l")
    return bytes(table)


_CLASSES = _class_table()


class EstimateCounter:
    """Fast deterministic estimate of a subword (WordPiece/BPE) tokenizer's count.

    Subword vocabularies of 30-50k entries hold the common words of a language whole and cut rare,
    long or compound words into pieces of a few characters, while punctuation and digits come out
    nearly one token each, and so do the characters of scripts without spaces (common practice).
    The estimate is a weighted sum of character classes, computed with C-speed byte operations:

        ceil(0.24 x non-space + 1.10 x ASCII punctuation + 0.46 x digits + 0.05 x capitals
             + 0.76 x non-ASCII characters)

    so a non-ASCII character costs one token in all (right for CJK, an over-count for accented
    Latin letters), and never less than one token per word between spaces and punctuation: every
    subword tokenizer gives each such word at least one token (common practice), which a run of
    single letters and short words would otherwise undercut. The weights were fitted on the shared Markdown corpus against a BERT WordPiece
    tokenizer (bench/bench_tokens.py) so that the estimate is at or above the real count for about
    95% of chunks: a budget checked with it nearly always holds. Both the weighted sum and the word
    count are sums over the pieces of a text, and the larger of two sums is at most the sum of the
    larger ones: the count of texts joined by whitespace never exceeds the sum of their counts.
    """

    name = "estimate"
    additive = True
    """Joining texts with whitespace never raises the count above the sum of their counts."""

    def count(self, text: str) -> int:
        data = text.encode("ascii", "ignore")
        other = len(text) - len(data)
        size = len(data)
        classes = data.translate(_CLASSES)
        ascii_non_space = size - classes.count(b"s")
        non_space = ascii_non_space + other
        punctuation = classes.count(b"p")
        digits = classes.count(b"d")
        capitals = classes.count(b"u")
        weighted = 24 * non_space + 110 * punctuation + 46 * digits + 5 * capitals + 76 * other
        estimate = -(-weighted // 100)
        # The floor: one token per word between spaces and punctuation (non-ASCII characters are
        # dropped from `data`, but each of them already costs a token of its own). Words are
        # counted only when the estimate is below their upper bound (spaces + punctuation + 1):
        # running prose never is, a run of single letters and short words is.
        if estimate > size - ascii_non_space + punctuation:
            return estimate
        return max(estimate, len(data.translate(_PUNCTUATION_TO_SPACE).split()))


class TokenizerFileCounter:
    """Exact counts from a Hugging Face `tokenizer.json` file (loaded locally, never downloaded)."""

    def __init__(self, path: str | Path) -> None:
        from tokenizers import Tokenizer

        p = Path(path)
        if not p.is_file():
            raise SettingsError(f"tokenizer file not found: {p}")
        try:
            self._tokenizer = Tokenizer.from_file(str(p))
        except Exception as exc:  # the tokenizers library raises plain Exception subclasses
            raise SettingsError(f"{p}: not a valid tokenizer.json: {exc}") from exc
        self._tokenizer.no_truncation()
        self._tokenizer.no_padding()
        self.name = f"tokenizer:{p.name}"

    def count(self, text: str) -> int:
        if not text:
            return 0
        return len(self._tokenizer.encode(text, add_special_tokens=False).ids)


class CallableCounter:
    """Wraps any `str -> int` function (e.g. a model's own tokenizer) as a counter."""

    additive = False
    """Nothing is known of the function: packed chunks are counted again as a whole."""

    def __init__(self, fn: Callable[[str], int], name: str = "callable") -> None:
        self._fn = fn
        self.name = name

    def count(self, text: str) -> int:
        return int(self._fn(text))


AnyCounter = TokenCounter | Callable[[str], int]
"""What `segment.chunk` accepts as a counter: a counter object or a `str -> int` function."""


def as_counter(counter: AnyCounter) -> TokenCounter:
    """A counter object for `counter`; a plain function is wrapped in a `CallableCounter`."""
    if isinstance(counter, TokenCounter):
        return counter
    if callable(counter):
        return CallableCounter(counter)
    raise TypeError(f"not a token counter: {type(counter).__name__} (need .count(text) or a function)")


def is_additive(counter: TokenCounter) -> bool:
    """Whether joining texts with whitespace never counts more than the sum of their counts
    (a counter says so with `additive = True`; otherwise packed chunks are counted again)."""
    return bool(getattr(counter, "additive", False))


@lru_cache(maxsize=8)
class CharacterCounter:
    """Counts characters: for budgets a service states in characters (`budget_unit = characters`)."""

    name = "characters"

    def count(self, text: str) -> int:
        """The number of characters (code points) of `text`."""
        return len(text)


def counter_for(tokenizer: str | None, unit: str = "tokens") -> TokenCounter:
    """The counter the settings name: characters for `budget_unit = characters`; else the
    estimator, or a tokenizer.json path."""
    if unit == "characters":
        return CharacterCounter()
    if tokenizer is None or tokenizer == "estimate":
        return EstimateCounter()
    return TokenizerFileCounter(tokenizer)
