"""Indentation nesting capped before docutils sees the text.

reStructuredText nests block quotes, lists and directive bodies by indentation, and docutils
parses each level with a nested state machine: recursion per level (it fails near 150 levels)
and a copy of the remaining block per level (a quadratic cost: a bomb of thousands of levels
would run for minutes). Lines nested deeper than `MAX_INDENT_LEVELS` are re-indented to the
deepest allowed level: every word stays, on its own line number, and the document warns.
"""

from __future__ import annotations

MAX_INDENT_LEVELS = 32
"""Deepest indentation nesting passed to docutils (real documents stay below 15; docutils'
cost grows with levels times lines)."""


def cap_indentation(text: str, warnings: list[str]) -> str:
    """`text` with lines nested past MAX_INDENT_LEVELS moved up to that level."""
    lines = text.split("\n")
    stack: list[int] = [0]
    changed = False
    for i, line in enumerate(lines):
        body = line.lstrip(" \t")
        if not body:
            continue
        width = len(line.expandtabs(8)) - len(body.expandtabs(8)) if "\t" in line else len(line) - len(body)
        while len(stack) > 1 and width < stack[-1]:
            stack.pop()
        if width > stack[-1]:
            if len(stack) > MAX_INDENT_LEVELS:
                lines[i] = " " * stack[-1] + body
                changed = True
                continue
            stack.append(width)
    if not changed:
        return text
    warnings.append(
        f"indentation nested deeper than {MAX_INDENT_LEVELS} levels: deeper lines read at that level"
    )
    return "\n".join(lines)
