"""Sentence boundaries from spaCy's rule-based sentencizer on a blank pipeline.

Loaded lazily, one pipeline per language, and only called for text that must be split. Nothing is
downloaded: `spacy.blank(lang)` needs only the language data shipped inside spaCy.
"""

from __future__ import annotations

import logging
import re
from functools import lru_cache
from typing import Any

log = logging.getLogger(__name__)

WINDOW_CHARS = 200_000
"""Longer texts are cut at whitespace into windows this long before the sentencizer sees them
(spaCy refuses texts over `nlp.max_length`, 1,000,000 characters by default)."""

_SPACE = re.compile(r"\s")
_SENTENCE_END = re.compile(r"[.!?;:\u3002\uff01\uff1f\u0964\u061f]")
LONG_RUN = 200
_LETTER_STOP = re.compile(r"(?<![\w.])[a-z]\.\s+(?=[A-Z])")
"""A lowercase single letter, a full stop, space, a capital: the end of a sentence, though
spaCy's English tokenizer keeps "h." whole as an abbreviation and so never ends a sentence there.
Initials ("J. Smith") are capitals and "e.g." has two stops: neither matches."""
_LONG_RUN = re.compile(rf"(\S{{{LONG_RUN},}})")


@lru_cache(maxsize=4)
def _pipeline(language: str) -> Any:
    import spacy

    try:
        nlp = spacy.blank(language)
    except Exception:  # unknown language code: spaCy raises ImportError/KeyError-like errors
        log.warning("spaCy has no language %r; sentences use the multi-language rules", language)
        nlp = spacy.blank("xx")
    nlp.add_pipe("sentencizer")
    nlp.max_length = WINDOW_CHARS * 2
    return nlp


def split_sentences(text: str, language: str = "en") -> list[str]:
    """Cut `text` into sentences; their concatenation is exactly `text` (spaces stay attached)."""
    if not text.strip():
        return [text] if text else []
    if not _SENTENCE_END.search(text):
        return [text]  # no sentence punctuation at all: spaCy would return it whole, slowly
    out: list[str] = []
    for window in _windows(text):
        out.extend(_sentences(window, language))
    return out


def _sentences(window: str, language: str) -> list[str]:
    """Sentences of one window. A run of LONG_RUN or more characters without a space is kept as a
    sentence of its own and never reaches spaCy, whose tokenizer is quadratic on long punctuation
    runs (8,000 '=' took 19 s)."""
    out: list[str] = []
    for k, run in enumerate(_LONG_RUN.split(window)):
        if k % 2:
            out.append(run)
        elif run:
            doc = _pipeline(language)(run)
            starts = [s.start_char for s in doc.sents]
            if not starts or starts[0] != 0:
                starts.insert(0, 0)
            if "." in run:
                more = [m.end() for m in _LETTER_STOP.finditer(run)]
                if more:
                    starts = sorted(set(starts).union(more))
            out.extend(run[a:b] for a, b in zip(starts, starts[1:] + [len(run)]))
    return out


def _windows(text: str) -> list[str]:
    """Text cut at whitespace into pieces of at most about WINDOW_CHARS characters."""
    if len(text) <= WINDOW_CHARS:
        return [text]
    parts: list[str] = []
    start = 0
    while start < len(text):
        end = min(start + WINDOW_CHARS, len(text))
        if end < len(text):
            # Back up to the last whitespace in the window, if any (else cut hard).
            cut = text.rfind(" ", start + WINDOW_CHARS // 2, end)
            if cut == -1:
                last = None
                for last in _SPACE.finditer(text, start + WINDOW_CHARS // 2, end):  # noqa: B007
                    pass
                cut = last.start() if last else -1
            end = cut + 1 if cut != -1 else end
        parts.append(text[start:end])
        start = end
    return parts
