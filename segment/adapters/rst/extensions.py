"""Lenient handlers for what plain docutils does not know, on a parser of our own.

Documentation written for Sphinx (the Python documentation generator) uses directives and roles
that plain docutils reports as unknown and prints as error boxes. Here they are read the way a
reader of the built site sees them, without failing and without leaking markup:

- table-of-contents trees and autodoc stubs (`toctree`, `automodule`, `autofunction`...) vanish,
  each with a warning (their text is generated from other files or from code);
- `versionadded`, `versionchanged`, `deprecated`, `versionremoved`, `seealso` and `todo` become
  labelled admonitions ("Added in version 2.1", "See also"...);
- `glossary` and `only` keep their content (a glossary is a definition list);
- `code-block`, `sourcecode` and `code` give a literal block with its language (options such as
  `:linenos:` accepted and ignored; a `:caption:` kept as a paragraph);
- object descriptions (`function`, `py:method`, `c:type`, `envvar`...) become a definition list:
  the signature as the term, the content as its definition;
- other unknown directives keep their content, labelled with their argument, and warn;
- roles reduce to their text: the title part of ``:ref:`title <target>` ``, the last part of
  ``:func:`~pkg.mod.name` ``; object roles read as inline code.
- `include`, `literalinclude`, `raw` and `csv-table` read no file outside the source root and no
  URL; inside the root they read only when `Settings.rst_include_root` is set.

Nothing is registered in docutils' global directive or role tables: the handlers live on state
classes and an inliner of our own, used only by `LenientParser`, so a program that also uses
docutils directly sees no change.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any, ClassVar

from docutils import nodes
from docutils.parsers.rst import Directive, Parser, directives, roles, states
from docutils.parsers.rst.directives.misc import Include
from docutils.parsers.rst.directives.tables import CSVTable

_VANISH_WARN = frozenset(
    {
        "toctree",
        "automodule",
        "autoclass",
        "autofunction",
        "automethod",
        "autoattribute",
        "autodata",
        "autoexception",
        "autodecorator",
        "autoproperty",
        "autosummary",
        "autoprogram",
        "autoclasstree",
        "inheritance-diagram",
        "todolist",
    }
)
"""Generated from other files or from code: nothing of this file's own text to keep."""

_VANISH_QUIET = frozenset(
    {
        "highlight",
        "index",
        "tabularcolumns",
        "sectionauthor",
        "moduleauthor",
        "codeauthor",
        "currentmodule",
        "py:currentmodule",
        "module",
        "py:module",
        "default-domain",
        "program",
        "option-program",
        "cssclass",
    }
)
"""Settings for the generator, never shown as text."""

_LABELLED = {
    "versionadded": "Added in version",
    "versionchanged": "Changed in version",
    "deprecated": "Deprecated since version",
    "versionremoved": "Removed in version",
    "seealso": "See also",
    "todo": "Todo",
}
"""Boxes whose label is a fixed phrase (followed by the version for version notes)."""

_DESCRIPTIONS = frozenset(
    {
        "function",
        "method",
        "staticmethod",
        "classmethod",
        "attribute",
        "property",
        "data",
        "exception",
        "decorator",
        "decoratormethod",
        "describe",
        "object",
        "option",
        "cmdoption",
        "envvar",
        "confval",
        "type",
    }
)
"""Object descriptions: a signature and what it does."""

_DOMAIN = re.compile(r"^(?:py|c|cpp|js|rst|std|math|http|rb|php|go|java|cs)$")
_ROLE_TITLE = re.compile(r"^(.*?)\s*<([^<>]*)>$", re.DOTALL)
_CODE_ROLES = frozenset(
    {
        "func",
        "meth",
        "class",
        "attr",
        "mod",
        "obj",
        "data",
        "const",
        "exc",
        "type",
        "member",
        "macro",
        "var",
        "enum",
        "enumerator",
        "struct",
        "union",
        "option",
        "envvar",
        "file",
        "samp",
        "command",
        "program",
        "kbd",
        "makevar",
        "regexp",
        "token",
        "keyword",
        "confval",
        "expr",
        "texpr",
    }
)
_TEXT_ROLES = frozenset(
    {
        "ref",
        "doc",
        "term",
        "any",
        "numref",
        "download",
        "abbr",
        "dfn",
        "guilabel",
        "menuselection",
        "mimetype",
    }
)
_TEXT_ROLES_ALL = _CODE_ROLES | _TEXT_ROLES | {"pep", "rfc", "manpage", "index", "eq", "newsgroup"}


class AnyOptions(dict[str, Any]):
    """An option table that accepts every option name, keeping the value as written."""

    def __missing__(self, key: str) -> Any:
        return directives.unchanged

    def __contains__(self, key: object) -> bool:
        return True

    def __bool__(self) -> bool:
        return True  # docutils reads options only when the table is truthy


def _warn(directive: Directive, message: str) -> None:
    directive.state.document.reporter.warning(message, line=directive.lineno)


def _gone(directive: Directive) -> list[nodes.Node]:
    """Nothing to show, but a comment keeps the directive's line as a boundary for spans."""
    mark = nodes.comment()
    mark.line = directive.lineno
    return [mark]


class _Vanish(Directive):  # type: ignore[misc]
    """Read and dropped; a warning says so."""

    optional_arguments = 100
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        _warn(self, f'"{self.name}" directive dropped (its text comes from elsewhere)')
        return _gone(self)


class _VanishQuietly(_Vanish):
    def run(self) -> list[nodes.Node]:
        return _gone(self)


def _parse_content(directive: Directive, node: nodes.Element) -> nodes.Element:
    if directive.content:
        directive.state.nested_parse(directive.content, directive.content_offset, node)
    return node


def _labelled(directive: Directive, label: str, text: str) -> nodes.Element:
    box = nodes.admonition(classes=["admonition-" + nodes.make_id(label)])
    box += nodes.title(label, label)
    box.line = directive.lineno
    box.source = directive.state.document.current_source
    if text.strip():
        textnodes, messages = directive.state.inline_text(text.strip(), directive.lineno)
        para = nodes.paragraph(text, "", *textnodes)
        para.line = directive.lineno
        box += para
        box += messages
    return _parse_content(directive, box)


class _Labelled(Directive):  # type: ignore[misc]
    """A version note or a see-also box: a labelled admonition."""

    optional_arguments = 1
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        phrase = _LABELLED[self.name.lower()]
        arg = self.arguments[0] if self.arguments else ""
        if phrase.endswith("version"):
            parts = arg.split(None, 1)
            version, rest = (parts[0], parts[1] if len(parts) > 1 else "") if parts else ("", "")
            return [_labelled(self, f"{phrase} {version}".strip(), rest)]
        return [_labelled(self, phrase, arg)]


class _Transparent(Directive):  # type: ignore[misc]
    """Content kept as if the directive were not there (`only`, `glossary`, `hlist`...)."""

    optional_arguments = 100
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        box = _parse_content(self, nodes.container())
        return list(box.children)


class _CodeBlock(Directive):  # type: ignore[misc]
    """A literal block with its language; the generator's options accepted."""

    optional_arguments = 1
    final_argument_whitespace = False
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        language = self.arguments[0].strip().lower() if self.arguments else ""
        text = "\n".join(self.content)
        block = nodes.literal_block(text, text, classes=["code", language] if language else ["code"])
        if language:
            block["language"] = language
        block.line = self.lineno
        block["first_line"] = self.content_offset + 1
        out: list[nodes.Node] = []
        caption = self.options.get("caption")
        if isinstance(caption, str) and caption.strip():
            para = nodes.paragraph(caption, caption)
            para.line = self.lineno
            out.append(para)
        return [*out, block]


class _Description(Directive):  # type: ignore[misc]
    """An object description: the signature as a term, the content as its definition."""

    optional_arguments = 1
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        signature = " ".join((self.arguments[0] if self.arguments else self.name).split())
        item = nodes.definition_list_item()
        item.line = self.lineno
        term = nodes.term(signature, "", nodes.literal(signature, signature))
        term.line = self.lineno
        item += term
        item += _parse_content(self, nodes.definition())
        return [nodes.definition_list("", item)]


class _Unknown(Directive):  # type: ignore[misc]
    """A directive neither docutils nor this module knows: content kept, labelled by its argument."""

    optional_arguments = 1
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        _warn(self, f'unknown directive "{self.name}": its content kept as text')
        label = " ".join(self.arguments[0].split()) if self.arguments else ""
        if label:
            return [_labelled(self, label, "")]
        box = _parse_content(self, nodes.container())
        return list(box.children)


def _inside_root(directive: Directive, target: str) -> str | None:
    """The file `target` names, when reading is on and it lies inside the source root; else None
    with a warning."""
    root = getattr(directive.state.document.settings, "segment_include_root", None)
    if not root:
        _warn(directive, f'"{directive.name}" of {target!r} not read (reading other files is off)')
        return None
    if target.startswith("<") and target.endswith(">"):
        return target  # docutils' own standard definitions (isonum.txt...), part of docutils
    base = Path(directive.state.document.current_source or root).parent
    path = Path(os.path.realpath(base / target))
    real_root = Path(os.path.realpath(root))
    if not path.is_relative_to(real_root):
        _warn(directive, f'"{directive.name}" of {target!r} not read: outside the source root')
        return None
    if not path.is_file():
        _warn(directive, f'"{directive.name}" of {target!r} not read: no such file in the source root')
        return None
    return str(path)


class _GuardedInclude(Include):  # type: ignore[misc]
    def run(self) -> list[nodes.Node]:
        path = _inside_root(self, directives.path(self.arguments[0]))
        if path is None:
            return _gone(self)
        self.arguments[0] = path
        result: list[nodes.Node] = super().run()
        return result


class _LiteralInclude(Directive):  # type: ignore[misc]
    """The generator's `literalinclude`: a file shown as code (read only inside the root)."""

    required_arguments = 1
    final_argument_whitespace = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        path = _inside_root(self, directives.path(self.arguments[0]))
        if path is None or path.startswith("<"):
            return _gone(self)
        try:
            text = Path(path).read_text(encoding="utf-8", errors="replace")
        except OSError as exc:
            _warn(self, f'"literalinclude" of {self.arguments[0]!r} not read: {exc.strerror or exc}')
            return []
        language = str(self.options.get("language") or "").strip().lower()
        block = nodes.literal_block(
            text, text.rstrip("\n"), classes=["code", language] if language else ["code"]
        )
        if language:
            block["language"] = language
        block.line = self.lineno
        return [block]


class _GuardedCSVTable(CSVTable):  # type: ignore[misc]
    def run(self) -> list[nodes.Node]:
        if "url" in self.options:
            _warn(self, f'"{self.name}" from a URL not read (no network)')
            return _gone(self)
        if "file" in self.options:
            path = _inside_root(self, directives.path(self.options["file"]))
            if path is None or path.startswith("<"):
                return _gone(self)
            self.options["file"] = path
        result: list[nodes.Node] = super().run()
        return result


def _class_directive_means_description(arguments: str) -> bool:
    """`.. class::` is docutils' class-setting directive unless it reads as a signature."""
    return bool(re.search(r"[().:\[]", arguments))


_OWN: dict[str, type[Directive]] = {
    **{name: _Vanish for name in _VANISH_WARN},
    **{name: _VanishQuietly for name in _VANISH_QUIET},
    **{name: _Labelled for name in _LABELLED},
    **{name: _Transparent for name in ("only", "glossary", "hlist", "ifconfig", "centered", "tabs")},
    **{name: _Description for name in _DESCRIPTIONS},
    "code": _CodeBlock,
    "code-block": _CodeBlock,
    "sourcecode": _CodeBlock,
    "include": _GuardedInclude,
    "literalinclude": _LiteralInclude,
    "csv-table": _GuardedCSVTable,
}


def own_directive(name: str, arguments: str) -> type[Directive] | None:
    """Our handler for a directive name, or None to let docutils decide."""
    key = name.lower()
    if key in _OWN:
        return _OWN[key]
    domain, _, local = key.partition(":")
    if local and _DOMAIN.match(domain):
        if local in _DESCRIPTIONS or local in ("class", "struct", "union", "enum", "member", "macro", "var"):
            return _Description
        if local in ("module", "currentmodule", "namespace", "namespace-push", "namespace-pop"):
            return _VanishQuietly
        return _Unknown
    if key == "class" and _class_directive_means_description(arguments):
        return _Description
    return None


def role_text(text: str, role: str) -> str:
    """What a reader sees of a generator role: the title of `title <target>`, the last part of
    `~pkg.name`, without a leading `!`."""
    text = nodes.unescape(text)
    m = _ROLE_TITLE.match(text)
    if m and m.group(1):
        return m.group(1)
    if m:
        text = m.group(2)
    if text.startswith("!"):
        text = text[1:]
    if text.startswith("~"):
        text = text[1:].rsplit(".", 1)[-1]
    return text


class _LenientInliner(states.Inliner):  # type: ignore[misc]
    def interpreted(
        self, rawsource: str, text: str, role: str, lineno: int
    ) -> tuple[list[nodes.Node], list[nodes.system_message]]:
        key = role.lower()
        local = key.partition(":")[2] if ":" in key else key
        if key in _TEXT_ROLES_ALL or (":" in key and _DOMAIN.match(key.partition(":")[0])):
            shown = role_text(text, local)
            if local in _CODE_ROLES:
                return [nodes.literal(rawsource, shown)], []
            return [nodes.inline(rawsource, shown)], []
        role_fn, messages = roles.role(role, self.language, lineno, self.reporter)
        if role_fn:
            made, more = role_fn(role, rawsource, text, lineno, self)
            return made, messages + more
        self.reporter.warning(f'unknown role "{role}": kept as its text', line=lineno)
        return [nodes.inline(rawsource, role_text(text, local))], []


# docutils' Inliner builds its patterns from `vars(type(self))`: its pattern pieces must be
# attributes of the subclass itself.
for _name, _value in vars(states.Inliner).items():
    if isinstance(_value, str) and not _name.startswith("__"):
        setattr(_LenientInliner, _name, _value)


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
            handler = found or _Unknown
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
        super().__init__(inliner=_LenientInliner())
        self.state_classes = STATE_CLASSES
