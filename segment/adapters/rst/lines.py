"""Line spans for doctree nodes, from docutils' `line` attributes and the source text.

docutils gives most body elements a `line` (1-based) where they begin, and section titles the
line of their underline. A node's span starts at its first known line and ends just before the
next known start after everything inside it, with trailing blank lines trimmed.
"""

from __future__ import annotations

from bisect import bisect_right

from docutils import nodes

from segment.tree import Span

_ADORNMENT = frozenset("!\"#$%&'()*+,-./:;<=>?@[\\]^_`{|}~")


class LineMap:
    """Start lines of every node of one source, and the source's blank lines."""

    def __init__(self, document: nodes.document, source_lines: list[str]) -> None:
        self.source_lines = source_lines
        self.last = len(source_lines)
        order = list(document.findall(nodes.Element))
        self.bounds: dict[int, tuple[int, int]] = {}
        """id(node) -> (first, last) known start line in the node's subtree, filled bottom-up."""
        inline = {id(n) for n in order if isinstance(n.parent, nodes.TextElement)}
        """Inline nodes: their lines may be those of a substitution's definition, elsewhere."""
        for node in reversed(order):
            if id(node) in inline:
                continue
            own = self.line_of(node)
            first, last = (own, own) if own is not None else (None, None)
            for child in node.children:
                inner = self.bounds.get(id(child))
                if inner is not None:
                    first = inner[0] if first is None else min(first, inner[0])
                    last = inner[1] if last is None else max(last, inner[1])
            if first is not None and last is not None:
                self.bounds[id(node)] = (first, last)
        self.starts = sorted(
            {line for node in order if id(node) not in inline and (line := self.line_of(node)) is not None}
        )

    def line_of(self, node: nodes.Node) -> int | None:
        """Where `node` itself begins in this source (a title: its text, or its overline)."""
        if isinstance(node, nodes.section | nodes.document):
            return None  # a section's line is its title's underline: its title speaks for it
        line = getattr(node, "line", None)
        if not isinstance(line, int) or line < 1 or line > self.last + 1:
            return None
        if isinstance(node, nodes.title) and isinstance(node.parent, (nodes.section, nodes.document)):
            return self._title_start(line)
        return line

    def _title_start(self, underline: int) -> int:
        start = max(1, underline - 1)
        above = start - 1
        if above >= 1 and _is_adornment(self.source_lines[above - 1]):
            start = above
        return start

    def first(self, node: nodes.Node) -> int | None:
        """The first known line in `node` or below it."""
        found = self.bounds.get(id(node))
        return found[0] if found is not None else None

    def span(self, node: nodes.Node, fallback: int | None = None) -> Span:
        """Lines from the node's start to the line before the next node after it."""
        found = self.bounds.get(id(node))
        if found is None:
            return (
                Span(lines=(fallback, self.end_after(fallback, fallback))) if fallback is not None else Span()
            )
        start, deepest = found
        return Span(lines=(start, self.end_after(deepest, start)))

    def title_span(self, title: nodes.Element) -> Span:
        """A section title's lines: overline (if any), text, underline."""
        start = self.line_of(title)
        underline = getattr(title, "line", None)
        if start is None or not isinstance(underline, int):
            return self.span(title)
        return Span(lines=(start, max(start, min(underline, self.last))))

    def end_after(self, line: int, start: int) -> int:
        """The last non-blank line before the next node start after `line` (at least `start`)."""
        i = bisect_right(self.starts, line)
        end = (self.starts[i] - 1) if i < len(self.starts) else self.last
        end = min(end, self.last)
        while end > start and not self.source_lines[end - 1].strip():
            end -= 1
        return max(end, start)


def _is_adornment(line: str) -> bool:
    text = line.strip()
    return len(text) >= 2 and text[0] in _ADORNMENT and text == text[0] * len(text)
