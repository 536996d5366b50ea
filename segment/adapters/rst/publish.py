"""docutils run quietly: source text in, doctree and warnings out, nothing printed, no exit.

docutils is a command-line tool at heart: by default it reads configuration files from the
working and home folders, writes system messages to stderr, raises SystemExit past its halt
level and may read included files or URLs. Every one of those is switched off here:
`_disable_config`, a warning stream of our own (its messages become the document's warnings),
`halt_level` 5 (never halt), `traceback` on (exceptions reach us, not `sys.exit`),
`file_insertion_enabled` and `raw_enabled` off (see `extensions` for reading inside the root).
The default settings are built once: docutils' option parser is costly to build per file.
"""

from __future__ import annotations

import copy
import re
from functools import cache
from typing import Any

from docutils import frontend, nodes, utils
from docutils.readers import standalone

from segment.adapters.rst.extensions import LenientParser

MAX_WARNINGS = 50
"""docutils messages kept per document; past this, one line says how many more there were."""

CONTAINED: dict[str, Any] = {
    "_disable_config": True,
    "halt_level": 5,
    "exit_status_level": 5,
    "traceback": True,
    "file_insertion_enabled": False,
    "raw_enabled": False,
    "syntax_highlight": "none",
}
"""The settings that keep any docutils run inside its input (the module docstring says why each);
the tests' and benchmarks' reference runs start from them too."""

_MESSAGE = re.compile(r"^[^\n]*?:(\d+): \((\w+)/\d\) ", re.DOTALL)


class MessageLog:
    """docutils' warning stream: each system message it writes becomes one warning line."""

    def __init__(self) -> None:
        self.messages: list[str] = []
        self.dropped = 0

    def write(self, data: str | bytes) -> None:
        text = data.decode("utf-8", "replace") if isinstance(data, bytes) else data
        text = text.strip()
        if not text:
            return
        first = text.split("\n\n", 1)[0]
        m = _MESSAGE.match(first)
        line = f"docutils {m.group(2).lower()} at line {m.group(1)}: " if m else "docutils: "
        body = " ".join((first[m.end() :] if m else first).split())
        if len(self.messages) < MAX_WARNINGS:
            self.messages.append(line + body[:300])
        else:
            self.dropped += 1

    def flush(self) -> None:
        """Part of the stream protocol docutils expects."""

    def warnings(self) -> list[str]:
        """The messages, with a closing count of those left out."""
        extra = [f"docutils: {self.dropped} more messages not listed"] if self.dropped else []
        return self.messages + extra


@cache
def _defaults() -> Any:
    settings = frontend.get_default_settings(LenientParser, standalone.Reader)
    overrides: dict[str, Any] = {
        **CONTAINED,
        "report_level": 2,
        "smart_quotes": False,
        "pep_references": False,
        "rfc_references": False,
        "language_code": "en",
        "input_encoding": "utf-8",
        "input_encoding_error_handler": "replace",
        "segment_include_root": None,
    }
    for key, value in overrides.items():
        setattr(settings, key, value)
    return settings


def doctree(text: str, source_path: str, include_root: str | None) -> tuple[nodes.document, list[str]]:
    """Parse reStructuredText with the lenient parser and the standalone reader's transforms."""
    settings = copy.copy(_defaults())
    log = MessageLog()
    settings.warning_stream = log
    if include_root:
        settings.file_insertion_enabled = True
        settings.segment_include_root = include_root
    document = utils.new_document(source_path, settings)
    parser = LenientParser()
    parser.parse(text, document)
    document.transformer.populate_from_components((standalone.Reader(parser=parser), parser))
    document.transformer.apply_transforms()
    return document, log.warnings()
