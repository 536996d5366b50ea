"""The generator's own directives, read the way a reader of the built site sees them.

- table-of-contents trees and autodoc stubs (`toctree`, `automodule`, `autofunction`...) vanish,
  each with a warning (their text is generated from other files or from code);
- `versionadded`, `versionchanged`, `deprecated`, `versionremoved`, `seealso` and `todo` become
  labelled admonitions ("Added in version 2.1", "See also"...);
- `glossary` and `only` keep their content (a glossary is a definition list);
- `code-block`, `sourcecode` and `code` give a literal block with its language (options such as
  `:linenos:` accepted and ignored; a `:caption:` kept as a paragraph);
- object descriptions (`function`, `py:method`, `c:type`, `envvar`...) become a definition list:
  the signature as the term, the content as its definition;
- other unknown directives keep their content, labelled with their argument, and warn.

`extensions` maps directive names to these classes.
"""

from __future__ import annotations

import re
from typing import Any

from docutils import nodes
from docutils.parsers.rst import Directive, directives

VANISH_WARN = frozenset(
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

VANISH_QUIET = frozenset(
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

LABELLED = {
    "versionadded": "Added in version",
    "versionchanged": "Changed in version",
    "deprecated": "Deprecated since version",
    "versionremoved": "Removed in version",
    "seealso": "See also",
    "todo": "Todo",
}
"""Boxes whose label is a fixed phrase (followed by the version for version notes)."""

DESCRIPTIONS = frozenset(
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

DOMAIN = re.compile(r"^(?:py|c|cpp|js|rst|std|math|http|rb|php|go|java|cs)$")


class AnyOptions(dict[str, Any]):
    """An option table that accepts every option name, keeping the value as written."""

    def __missing__(self, key: str) -> Any:
        return directives.unchanged

    def __contains__(self, key: object) -> bool:
        return True

    def __bool__(self) -> bool:
        return True  # docutils reads options only when the table is truthy


def warn_at(directive: Directive, message: str) -> None:
    """A warning in the document's report, at the directive's line."""
    directive.state.document.reporter.warning(message, line=directive.lineno)


def gone_mark(directive: Directive) -> list[nodes.Node]:
    """Nothing to show, but a comment keeps the directive's line as a boundary for spans."""
    mark = nodes.comment()
    mark.line = directive.lineno
    return [mark]


class Vanish(Directive):  # type: ignore[misc]
    """Read and dropped; a warning says so."""

    optional_arguments = 100
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        warn_at(self, f'"{self.name}" directive dropped (its text comes from elsewhere)')
        return gone_mark(self)


class VanishQuietly(Vanish):
    """Read and dropped without a word: settings for the generator."""

    def run(self) -> list[nodes.Node]:
        return gone_mark(self)


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


class Labelled(Directive):  # type: ignore[misc]
    """A version note or a see-also box: a labelled admonition."""

    optional_arguments = 1
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        phrase = LABELLED[self.name.lower()]
        arg = self.arguments[0] if self.arguments else ""
        if phrase.endswith("version"):
            parts = arg.split(None, 1)
            version, rest = (parts[0], parts[1] if len(parts) > 1 else "") if parts else ("", "")
            return [_labelled(self, f"{phrase} {version}".strip(), rest)]
        return [_labelled(self, phrase, arg)]


class Transparent(Directive):  # type: ignore[misc]
    """Content kept as if the directive were not there (`only`, `glossary`, `hlist`...)."""

    optional_arguments = 100
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        box = _parse_content(self, nodes.container())
        return list(box.children)


class CodeBlock(Directive):  # type: ignore[misc]
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


class Description(Directive):  # type: ignore[misc]
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


class Unknown(Directive):  # type: ignore[misc]
    """A directive neither docutils nor these handlers know: content kept, labelled by its argument."""

    optional_arguments = 1
    final_argument_whitespace = True
    has_content = True
    option_spec = AnyOptions()

    def run(self) -> list[nodes.Node]:
        warn_at(self, f'unknown directive "{self.name}": its content kept as text')
        label = " ".join(self.arguments[0].split()) if self.arguments else ""
        if label:
            return [_labelled(self, label, "")]
        box = _parse_content(self, nodes.container())
        return list(box.children)


def class_directive_means_description(arguments: str) -> bool:
    """`.. class::` is docutils' class-setting directive unless it reads as a signature."""
    return bool(re.search(r"[().:\[]", arguments))
