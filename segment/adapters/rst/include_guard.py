"""`include`, `literalinclude` and `csv-table` that read no file outside the source root and no
URL; inside the root they read only when `Settings.rst_include_root` is set."""

from __future__ import annotations

import os
from pathlib import Path

from docutils import nodes
from docutils.parsers.rst import Directive, directives
from docutils.parsers.rst.directives.misc import Include
from docutils.parsers.rst.directives.tables import CSVTable

from segment.adapters.rst.directives import AnyOptions, gone_mark, warn_at


def _inside_root(directive: Directive, target: str) -> str | None:
    """The file `target` names, when reading is on and it lies inside the source root; else None
    with a warning."""
    root = getattr(directive.state.document.settings, "segment_include_root", None)
    if not root:
        warn_at(directive, f'"{directive.name}" of {target!r} not read (reading other files is off)')
        return None
    if target.startswith("<") and target.endswith(">"):
        return target  # docutils' own standard definitions (isonum.txt...), part of docutils
    base = Path(directive.state.document.current_source or root).parent
    path = Path(os.path.realpath(base / target))
    real_root = Path(os.path.realpath(root))
    if not path.is_relative_to(real_root):
        warn_at(directive, f'"{directive.name}" of {target!r} not read: outside the source root')
        return None
    if not path.is_file():
        warn_at(directive, f'"{directive.name}" of {target!r} not read: no such file in the source root')
        return None
    return str(path)


class GuardedInclude(Include):  # type: ignore[misc]
    """docutils' `include`, reading only a file inside the source root."""

    def run(self) -> list[nodes.Node]:
        path = _inside_root(self, directives.path(self.arguments[0]))
        if path is None:
            return gone_mark(self)
        self.arguments[0] = path
        result: list[nodes.Node] = super().run()
        return result


class LiteralInclude(Directive):  # type: ignore[misc]
    """The generator's `literalinclude`: a file shown as code (read only inside the root)."""

    required_arguments = 1
    final_argument_whitespace = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        path = _inside_root(self, directives.path(self.arguments[0]))
        if path is None or path.startswith("<"):
            return gone_mark(self)
        try:
            text = Path(path).read_text(encoding="utf-8", errors="replace")
        except OSError as exc:
            warn_at(self, f'"literalinclude" of {self.arguments[0]!r} not read: {exc.strerror or exc}')
            return []
        language = str(self.options.get("language") or "").strip().lower()
        block = nodes.literal_block(
            text, text.rstrip("\n"), classes=["code", language] if language else ["code"]
        )
        if language:
            block["language"] = language
        block.line = self.lineno
        return [block]


class GuardedCSVTable(CSVTable):  # type: ignore[misc]
    """docutils' `csv-table`: no URL, and a `:file:` only inside the source root."""

    def run(self) -> list[nodes.Node]:
        if "url" in self.options:
            warn_at(self, f'"{self.name}" from a URL not read (no network)')
            return gone_mark(self)
        if "file" in self.options:
            path = _inside_root(self, directives.path(self.options["file"]))
            if path is None or path.startswith("<"):
                return gone_mark(self)
            self.options["file"] = path
        result: list[nodes.Node] = super().run()
        return result
