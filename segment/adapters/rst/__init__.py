"""reStructuredText -> common tree, on docutils (the format's reference implementation).

`publish` runs docutils quietly (no config files, no printing, no exit, no file or network
access); `extensions` reads the Python documentation generator's own directives and roles
leniently on a parser of our own; `build` maps the doctree to sections and blocks, `lines` gives
them their line spans. Setting `rst_include_root` lets `include`, `literalinclude` and
`csv-table :file:` read files inside that folder; by default no other file is read.
"""

from __future__ import annotations

import os

from segment.adapters.rst.build import TreeBuilder
from segment.adapters.rst.indent import cap_indentation
from segment.adapters.rst.lines import LineMap
from segment.adapters.rst.publish import doctree
from segment.adapters.text import decode_text, sniff_binary
from segment.errors import ParseError
from segment.settings import Settings
from segment.tree import Document


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse reStructuredText bytes into a Document."""
    sniff_binary(data, source, "reStructuredText")
    doc = Document(source=source, format="rst")
    text = cap_indentation(decode_text(data, doc.warnings), doc.warnings)
    root = settings.rst_include_root if settings is not None else None
    source_path = os.path.join(root, source) if root else source
    try:
        document, messages = doctree(text, source_path, root)
    except RecursionError as exc:
        raise ParseError(
            source, "reStructuredText nested too deeply to parse", status="resource_limit"
        ) from exc
    except Exception as exc:  # docutils' own failure on odd input: named, not a traceback
        raise ParseError(source, f"docutils could not read it: {type(exc).__name__}: {exc}"[:300]) from exc
    doc.warnings.extend(messages)
    if any("exceeds the line-length-limit" in m for m in messages):
        raise ParseError(
            source,
            "a line is longer than docutils' line-length limit (10,000 characters)",
            status="resource_limit",
        )
    TreeBuilder(doc, LineMap(document, text.splitlines())).build(document)
    return doc
