"""Lenient handlers for what plain docutils does not know, on a parser of our own.

Documentation written for Sphinx (the Python documentation generator) uses directives and roles
that plain docutils reports as unknown and prints as error boxes. Here they are read the way a
reader of the built site sees them, without failing and without leaking markup: what each
directive becomes is listed in `directives`, what each role becomes in `roles`, and `include`,
`literalinclude`, `raw` and `csv-table` read no file outside the source root and no URL
(`include_guard`; inside the root only when `Settings.rst_include_root` is set).

Nothing is registered in docutils' global directive or role tables: the handlers live on state
classes and an inliner of our own, used only by `LenientParser`, so a program that also uses
docutils directly sees no change.

This module holds the name table, the state classes and the parser.
"""

from __future__ import annotations

import re
from typing import Any, ClassVar

from docutils.parsers.rst import Directive, Parser, directives, states

from segment.adapters.rst.directives import (
    DESCRIPTIONS,
    DOMAIN,
    LABELLED,
    VANISH_QUIET,
    VANISH_WARN,
    CodeBlock,
    Description,
    Labelled,
    Transparent,
    Unknown,
    Vanish,
    VanishQuietly,
    class_directive_means_description,
)
from segment.adapters.rst.include_guard import GuardedCSVTable, GuardedInclude, LiteralInclude
from segment.adapters.rst.roles import LenientInliner

_OWN: dict[str, type[Directive]] = {
    **{name: Vanish for name in VANISH_WARN},
    **{name: VanishQuietly for name in VANISH_QUIET},
    **{name: Labelled for name in LABELLED},
    **{name: Transparent for name in ("only", "glossary", "hlist", "ifconfig", "centered", "tabs")},
    **{name: Description for name in DESCRIPTIONS},
    "code": CodeBlock,
    "code-block": CodeBlock,
    "sourcecode": CodeBlock,
    "include": GuardedInclude,
    "literalinclude": LiteralInclude,
    "csv-table": GuardedCSVTable,
}


def own_directive(name: str, arguments: str) -> type[Directive] | None:
    """Our handler for a directive name, or None to let docutils decide."""
    key = name.lower()
    if key in _OWN:
        return _OWN[key]
    domain, _, local = key.partition(":")
    if local and DOMAIN.match(domain):
        if local in DESCRIPTIONS or local in ("class", "struct", "union", "enum", "member", "macro", "var"):
            return Description
        if local in ("module", "currentmodule", "namespace", "namespace-push", "namespace-pop"):
            return VanishQuietly
        return Unknown
    if key == "class" and class_directive_means_description(arguments):
        return Description
    return None


class _LenientState:
    """Mixed into every docutils state class: our directive table first, unknown ones kept."""

    nested_sm_cache: ClassVar[list[Any]] = []
    """A cache of our own: docutils' shared one would hand our machines to other parses."""
    state: Any
    memo: Any
    document: Any
    state_machine: Any

    def __init__(self, state_machine: Any, debug: bool = False) -> None:
        super().__init__(state_machine, debug)  # type: ignore[call-arg]
        self.nested_sm_kwargs = {"state_classes": STATE_CLASSES, "initial_state": "Body"}

    def directive(self, match: re.Match[str], **option_presets: Any) -> Any:
        type_name = match.group(1)
        handler = own_directive(type_name, match.string[match.end() :])
        if handler is None:
            found, messages = directives.directive(type_name, self.memo.language, self.document)
            handler = found or Unknown
            if found is None:
                messages = []
            self.parent += messages  # type: ignore[attr-defined]
        return self.run_directive(handler, match, type_name, option_presets)  # type: ignore[attr-defined]


def _explicit_with_our_directive() -> Any:
    """Body's table of explicit constructs (it holds plain functions) with our `directive`."""
    table = states.Struct(**vars(states.Body.explicit))
    table.constructs = [
        (_LenientState.directive if method is states.Body.directive else method, pattern)
        for method, pattern in states.Body.explicit.constructs
    ]
    return table


_EXPLICIT = _explicit_with_our_directive()

STATE_CLASSES: tuple[type[Any], ...] = tuple(
    type(cls.__name__, (_LenientState, cls), {"explicit": _EXPLICIT} if issubclass(cls, states.Body) else {})
    for cls in states.state_classes
)


class LenientParser(Parser):  # type: ignore[misc]
    """docutils' reStructuredText parser with the handlers above, nothing registered globally."""

    def __init__(self) -> None:
        super().__init__(inliner=LenientInliner())
        self.state_classes = STATE_CLASSES
