"""Link destinations for a parser whose output never shows them.

markdown-it normalises every link and image destination (mdurl's parse, punycode, percent-encoding)
so that a renderer can write it into `href`, then rejects a link whose normalised destination
starts with `javascript:`, `vbscript:`, `file:` or `data:` (but a `data:image/...`): such text stays
literal `[text](url)`. Chunks keep a link's text and drop its URL, so only that verdict matters.
`TextParser` skips the normalisation, and `allowed_destination` reaches markdown-it's verdict
without it wherever the answer is certain:

- no `:` in the destination: normalisation never adds one (encoding writes `%3A`; a scheme or a
  port comes from a `:` already there), and every rejected prefix ends in one;
- the destination opens with an ASCII scheme (mdurl's protocol pattern, `[a-z0-9.+-]+:` in any
  case) that is not one of the four: normalisation writes that scheme first and leaves it as it
  is, so the normalised destination opens with it too.

Anything else (one of the four, a scheme with other letters, a leading space inside `<...>`) goes
through markdown-it's own normalise-then-validate. `tests/test_markdown_destinations.py` holds the two to the same verdicts.
"""

from __future__ import annotations

import re

from markdown_it import MarkdownIt
from markdown_it.common.normalize_url import normalizeLink, validateLink

_SCHEME = re.compile(r"[A-Za-z0-9.+-]+:")
_CHECKED_SCHEMES = frozenset({"javascript:", "vbscript:", "file:", "data:"})


def allowed_destination(url: str) -> bool:
    """markdown-it's verdict on `url` once normalised: may it be a link?"""
    if ":" not in url:
        return True
    scheme = _SCHEME.match(url)
    if scheme is not None and scheme.group().lower() not in _CHECKED_SCHEMES:
        return True
    return validateLink(normalizeLink(url))


class TextParser(MarkdownIt):
    """A markdown-it parser for readers of the text: `href`s keep the destination as written."""

    def normalizeLink(self, url: str) -> str:
        return url

    def validateLink(self, url: str) -> bool:
        return allowed_destination(url)
