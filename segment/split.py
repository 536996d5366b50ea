"""Cutting one block that is over budget into parts, each under budget.

Rules (DESIGN.md section 6): tables between rows, with the caption and header repeated at the top
of every part; lists between items; code between lines; quotes and definition lists between their
entries; paragraphs between sentences, a sentence between words, a word between characters last.
Only a table row that cannot fit even alone (with its header) makes an over-budget part, flagged.
"""

from __future__ import annotations

from bisect import bisect_right
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from functools import partial
from typing import TYPE_CHECKING

from segment.render import (
    INDENT,
    closing_fence,
    code_fence,
    item_marker,
    quote_label,
    render_definition,
    render_item,
    render_row,
    table_prefix,
)
from segment.sentences import split_sentences
from segment.tokens import TokenCounter
from segment.tree import (
    Block,
    BlockKind,
    Code,
    Definition,
    DefinitionList,
    ListBlock,
    Paragraph,
    Quote,
    Span,
    Table,
)

if TYPE_CHECKING:
    from segment.kinds import KindRules


@dataclass(slots=True)
class Part:
    """A piece of one block's text that fits the budget (unless `oversize`)."""

    text: str
    tokens: int
    span: Span
    oversize: bool = False


@dataclass(slots=True)
class Fragment:
    """The smallest text the packer moves whole: a table row, a list item, a code line, a
    sentence, a run of words. Parts are made of fragments."""

    text: str
    span: Span
    expand: Callable[[int], list[Fragment]] | None = None
    """For a fragment with structure inside (a list item, a quoted block): smaller fragments, each fitting
    the given room where possible, that keep that structure."""
    sep: str | None = None
    """What goes before this fragment when it follows another in a part (default: the joiner)."""
    locate: Callable[[int, int], Span] | None = None
    """The span of text[start:end], for running text whose lines are known (so that the pieces of
    a sentence cut between words point at their own lines)."""


class Splitter:
    """Splits blocks under a counter and a language; one instance per document run."""

    def __init__(self, counter: TokenCounter, language: str, rules: Mapping[BlockKind, KindRules]) -> None:
        self.counter = counter
        self.language = language
        self.rules = rules
        """The rules of every block kind (`segment.kinds.RULES`)."""

    def count(self, text: str) -> int:
        """Tokens of `text` under the run's counter."""
        return self.counter.count(text)

    def split(self, block: Block, first_budget: int, budget: int) -> list[Part]:
        """Parts of `block`; the first fits `first_budget` (the room left in the current chunk),
        the others `budget`. The first part is empty-text when nothing fits the first budget."""
        return self.rules[block.kind].split(self, block, first_budget, budget)

    def render(self, block: Block) -> str:
        """The whole text of `block`, as its kind's rule renders it."""
        return self.rules[block.kind].render(block, self.render)

    def split_text(
        self, text: str, span: Span, first_budget: int, budget: int, line_starts: list[int] | None = None
    ) -> list[Part]:
        """Running text cut between sentences (then words, then characters)."""
        fragments: list[Fragment] = []
        offset = 0
        gap = ""  # the whitespace between the previous sentence and this one, as in the source
        for raw in split_sentences(text, self.language):
            stripped = raw.strip()
            if stripped:
                lead = len(raw) - len(raw.lstrip())
                gap += raw[:lead]
                start = offset + lead
                sep = "" if not gap else "\n" if "\n" in gap else " "
                locate = partial(_offset_span, span, line_starts, start) if line_starts else None
                fragments.append(
                    Fragment(
                        stripped,
                        _text_span(span, line_starts, start, start + len(stripped)),
                        sep=sep,
                        locate=locate,
                    )
                )
                gap = raw[lead + len(stripped) :]
            else:
                gap += raw
            offset += len(raw)
        return self.pack(fragments, " ", "", "", first_budget, budget, span)

    def block_fragments(self, block: Block, room: int) -> list[Fragment]:
        """`block` as parts that fit `room` each."""
        return [Fragment(p.text, p.span) for p in self.split(block, room, room)]

    def item_fragments(self, block: ListBlock, index: int, room: int) -> list[Fragment]:
        """An over-budget list item cut along its own blocks; the marker leads, the rest indented."""
        marker = item_marker(block, index)
        pad = " " * len(marker)
        fragments: list[Fragment] = []
        for b in block.items[index].blocks:
            # Only the first part carries the marker; later parts are merely indented.
            first = room - self.count(marker) if not fragments else room
            fragments += self._indented_parts(b, first, room, marker if not fragments else pad, pad)
        return fragments

    def _indented_parts(self, block: Block, first: int, room: int, lead: str, pad: str) -> list[Fragment]:
        """Parts of `block` with their lines indented, each fitting `room` once indented.

        Counters that charge for spaces (byte-level BPE) make indented text dearer: the parts are
        cut again with less room until the indented ones fit (a few rounds at most)."""
        shrink = 0
        for _ in range(6):
            parts = self.split(block, max(first - shrink, 1), max(room - shrink, 1))
            texts = [_indent(p.text, lead if i == 0 else pad, pad) for i, p in enumerate(parts)]
            over = max((self.count(t) - (first if i == 0 else room) for i, t in enumerate(texts)), default=0)
            if over <= 0:
                break
            shrink = max(shrink * 2, shrink + over)  # parts move a whole line at a time
        return [Fragment(t, p.span) for t, p in zip(texts, parts)]

    def definition_fragments(self, item: Definition, room: int) -> list[Fragment]:
        """An over-budget definition cut along its blocks; the terms stay with the first part."""
        fragments: list[Fragment] = []
        head = "; ".join(item.terms)
        inner = max(room - self.count(head), 1)
        for b in item.blocks:
            for part in self.split(b, inner, inner):
                text = _indent(part.text, INDENT, INDENT)
                fragments.append(Fragment(f"{head}\n{text}" if not fragments else text, part.span))
        return fragments or [Fragment(head, item.span)]

    def pack(
        self,
        fragments: list[Fragment],
        joiner: str,
        prefix: str,
        suffix: str,
        first_budget: int,
        budget: int,
        span: Span,
        rows: bool = False,
    ) -> list[Part]:
        """Greedy packing of fragments between a repeated prefix and suffix.

        Invariant: every part's real count fits its budget (the first part `first_budget`, the
        others `budget`), except a lone table row flagged `oversize`. Sums of fragment counts decide
        tentatively; the joined text is counted again on closing a part, since subword counts are
        not always additive, and the last fragment goes back to the queue when it went over.
        """
        # What the prefix and suffix add around a body, joins included (a byte-level BPE counts
        # the newlines too): the cost of a framed one-letter body less that of the letter.
        frame = (
            self.count(self._join([Fragment("x", span)], joiner, prefix, suffix)) - self.count("x")
            if prefix or suffix
            else 0
        )
        parts: list[Part] = []
        current: list[Fragment] = []
        used = frame
        limit = first_budget
        queue = list(reversed(fragments))

        def close() -> None:
            nonlocal current, used, limit
            while current:
                part = self._make(current, joiner, prefix, suffix, span)
                if part.tokens <= limit:
                    parts.append(part)
                elif len(current) > 1:
                    queue.append(current.pop())  # on top of the queue: order is kept
                    continue
                elif limit < budget:  # the room left in a chunk was too small: start a fresh part
                    queue.append(current.pop())
                elif rows:  # a lone row that does not fit even with its header
                    part.oversize = True
                    parts.append(part)
                else:  # a lone fragment that went over once framed (rounding): cut it smaller
                    excess = part.tokens - limit
                    pieces = self._break(
                        current[0].text, max(limit - frame - excess, 1), max(budget - frame - excess, 1)
                    )
                    if len(pieces) > 1:
                        queue.extend(reversed(_pieces_of(current[0], pieces)))
                    else:
                        parts.append(part)  # unbreakable: it goes alone
                break
            current, used, limit = [], frame, budget

        while queue or current:
            if not queue:
                close()  # may hand fragments back to the queue, and then the loop goes on
                continue
            fragment = queue.pop()
            cost = self.count(fragment.text)
            if used + cost <= limit:
                current.append(fragment)
                used += cost
                continue
            fits_fresh = frame + cost <= budget
            if current or (limit < budget and (fits_fresh or limit - frame < budget // 4)):
                queue.append(fragment)  # before close(): fragments it hands back go on top, in order
                close()
                limit = budget
                continue
            # The fragment alone is over the room it has, in an empty part.
            if rows:
                text = self._join([fragment], joiner, prefix, suffix)
                parts.append(Part(text, self.count(text), fragment.span, oversize=True))
                limit = budget
                continue
            if fragment.expand is not None:
                smaller = fragment.expand(max(budget - frame, 1))
                if len(smaller) > 1:
                    queue.extend(reversed(smaller))
                    continue
            pieces = self._break(fragment.text, max(limit - frame, 1), max(budget - frame, 1))
            if len(pieces) == 1:  # cannot be broken further: it goes alone
                current.append(fragment)
                close()
                continue
            queue.extend(reversed(_pieces_of(fragment, pieces)))
        return parts

    def _break(self, text: str, first_room: int, room: int) -> list[str]:
        """An over-budget fragment as smaller texts: sentences, else words, else characters."""
        sentences = [s.strip() for s in split_sentences(text, self.language) if s.strip()]
        if len(sentences) > 1:
            return sentences
        return self._cut(" ".join(text.split()), first_room, room)

    def _cut(self, text: str, first_room: int, room: int) -> list[str]:
        """Text cut into pieces of at most `room` tokens (`first_room` for the first), at a space
        when the piece has one, else between characters (a run without spaces, last resort).

        Each piece starts from a guess made from the previous piece's characters per token, then
        grows or shrinks by a few counts: linear in the text, even for a 20 MB line.
        """
        out: list[str] = []
        start, n = 0, len(text)
        limit = max(first_room, 1)
        ratio = 4.0
        while start < n:
            end = min(n, start + max(int(limit * ratio), 1))
            used = self.count(text[start:end])
            while used > limit and end - start > 1:
                end = start + max(1, int((end - start) * limit / used * 0.9))
                used = self.count(text[start:end])
            while end < n:
                step = min(n, end + max((end - start) // 8, 1))
                more = self.count(text[start:step])
                if more > limit:
                    break
                end, used = step, more
            if end < n:
                space = text.rfind(" ", start + 1, end + 1)
                if space > start:
                    end = space
            piece = text[start:end].strip()
            if piece:
                out.append(piece)
                ratio = max(len(piece) / max(self.count(piece), 1), 0.5)
            start = end
            limit = max(room, 1)
        return out

    def _join(self, fragments: list[Fragment], joiner: str, prefix: str, suffix: str) -> str:
        body = fragments[0].text + "".join(
            (joiner if u.sep is None else u.sep) + u.text for u in fragments[1:]
        )
        return "\n".join(x for x in (prefix, body, suffix) if x)

    def _make(self, fragments: list[Fragment], joiner: str, prefix: str, suffix: str, span: Span) -> Part:
        text = self._join(fragments, joiner, prefix, suffix)
        merged = fragments[0].span
        for u in fragments[1:]:
            merged = merged.merge(u.span)
        return Part(text, self.count(text), merged)


def _indent(text: str, first: str, rest: str) -> str:
    lines = text.split("\n")
    return first + lines[0] + "".join("\n" + (rest + line if line else line) for line in lines[1:])


def _code_line_span(code: Code, index: int) -> Span:
    if code.first_line is None:
        return code.span
    line = code.first_line + index
    return Span(lines=(line, line), pages=code.span.pages, bbox=code.span.bbox)


def _pieces_of(fragment: Fragment, pieces: list[str]) -> list[Fragment]:
    """Fragments for the pieces `fragment` was cut into, each with its own lines when known.

    The pieces hold the fragment's words in order (whitespace may be folded), so each is found
    in the fragment's text from where the previous one ended."""
    if fragment.locate is None:
        return [Fragment(p, fragment.span) for p in pieces]
    out: list[Fragment] = []
    text, pos = fragment.text, 0
    for piece in pieces:
        words = piece.split()
        start = text.find(words[0], pos) if words else -1
        end = text.find(words[-1], start + len(words[0]) if len(words) > 1 else start) if start >= 0 else -1
        if end < 0:
            out.append(Fragment(piece, fragment.span))
            continue
        end += len(words[-1])
        out.append(
            Fragment(piece, fragment.locate(start, end), locate=partial(_shifted, fragment.locate, start))
        )
        pos = end
    return out


def _shifted(locate: Callable[[int, int], Span], offset: int, start: int, end: int) -> Span:
    return locate(offset + start, offset + end)


def _offset_span(span: Span, line_starts: list[int], offset: int, start: int, end: int) -> Span:
    return _text_span(span, line_starts, offset + start, offset + end)


def _text_span(span: Span, line_starts: list[int] | None, start: int, end: int) -> Span:
    """The lines of text[start:end] inside a paragraph whose later lines begin at `line_starts`."""
    if not line_starts or span.lines is None:
        return span
    first = span.lines[0] + bisect_right(line_starts, start)
    last = span.lines[0] + bisect_right(line_starts, max(end - 1, start))
    return Span(lines=(first, min(last, span.lines[1])), pages=span.pages, bbox=span.bbox)


# ----- the splitting rule of each block kind (keyed by kind in segment.kinds) ---------------------


def split_paragraph(splitter: Splitter, block: Paragraph, first_budget: int, budget: int) -> list[Part]:
    """Between sentences, then words, then characters."""
    return splitter.split_text(block.text, block.span, first_budget, budget, block.line_starts)


def split_list(splitter: Splitter, block: ListBlock, first_budget: int, budget: int) -> list[Part]:
    """Between items; an item over budget along its own blocks, the marker leading."""
    fragments = [
        Fragment(
            render_item(block, i, splitter.render),
            item.span,
            partial(splitter.item_fragments, block, i),
        )
        for i, item in enumerate(block.items)
    ]
    return splitter.pack(fragments, "\n", "", "", first_budget, budget, block.span)


def split_table(splitter: Splitter, block: Table, first_budget: int, budget: int) -> list[Part]:
    """Between rows, with the caption and header at the top of every part."""
    prefix = "\n".join(table_prefix(block))
    fragments = [Fragment(render_row(r), r.span) for r in block.rows]
    return splitter.pack(fragments, "\n", prefix, "", first_budget, budget, block.span, rows=True)


def split_code(splitter: Splitter, block: Code, first_budget: int, budget: int) -> list[Part]:
    """Between lines, every part fenced."""
    fragments = [Fragment(line, _code_line_span(block, i)) for i, line in enumerate(block.lines)]
    return splitter.pack(
        fragments, "\n", code_fence(block), closing_fence(block), first_budget, budget, block.span
    )


def split_quote(splitter: Splitter, block: Quote, first_budget: int, budget: int) -> list[Part]:
    """Between the quoted blocks, the label leading the first part."""
    fragments = [
        Fragment(splitter.render(b), b.span, partial(splitter.block_fragments, b)) for b in block.blocks
    ]
    return splitter.pack(fragments, "\n\n", quote_label(block).rstrip(), "", first_budget, budget, block.span)


def split_definitions(
    splitter: Splitter, block: DefinitionList, first_budget: int, budget: int
) -> list[Part]:
    """Between entries; an entry over budget along its definitions, the terms leading."""
    fragments = [
        Fragment(render_definition(d, splitter.render), d.span, partial(splitter.definition_fragments, d))
        for d in block.items
    ]
    return splitter.pack(fragments, "\n", "", "", first_budget, budget, block.span)
