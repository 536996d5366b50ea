"""The generator's roles reduced to their text: the title part of ``:ref:`title <target>` ``, the
last part of ``:func:`~pkg.mod.name` ``; object roles read as inline code; ``:pep:`8` `` and
``:rfc:`2822#section-3` `` read "PEP 8" and "RFC 2822", as docutils' own roles show them."""

from __future__ import annotations

import re

from docutils import nodes
from docutils.parsers.rst import roles, states

from segment.adapters.rst.directives import DOMAIN

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
_NUMBERED_ROLES = {"pep": "PEP", "pep-reference": "PEP", "rfc": "RFC", "rfc-reference": "RFC"}
"""Roles that show a standard's name before its number (docutils' `pep_reference_role` and
`rfc_reference_role`: "PEP " + text, "RFC " + the number without its `#section`)."""
_TEXT_ROLES_ALL = _CODE_ROLES | _TEXT_ROLES | _NUMBERED_ROLES.keys() | {"manpage", "index", "eq", "newsgroup"}


def role_text(text: str, role: str) -> str:
    """What a reader sees of a generator role: the title of `title <target>`, the last part of
    `~pkg.name`, without a leading `!`; "PEP 8" for `:pep:`8``."""
    text = nodes.unescape(text)
    m = _ROLE_TITLE.match(text)
    if m and m.group(1):
        return m.group(1)
    if m:
        text = m.group(2)
    standard = _NUMBERED_ROLES.get(role)
    if standard:
        return f"{standard} {text.partition('#')[0].strip() if standard == 'RFC' else text.strip()}"
    if text.startswith("!"):
        text = text[1:]
    if text.startswith("~"):
        text = text[1:].rsplit(".", 1)[-1]
    return text


class LenientInliner(states.Inliner):  # type: ignore[misc]
    """docutils' inliner with the generator's roles read as their text; unknown roles kept."""

    def interpreted(
        self, rawsource: str, text: str, role: str, lineno: int
    ) -> tuple[list[nodes.Node], list[nodes.system_message]]:
        key = role.lower()
        local = key.partition(":")[2] if ":" in key else key
        if key in _TEXT_ROLES_ALL or (":" in key and DOMAIN.match(key.partition(":")[0])):
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
        setattr(LenientInliner, _name, _value)
