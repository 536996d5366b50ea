"""Tree -> chunks under a token budget (DESIGN.md section 6).

1. A section that fits the budget, subsections included, is one chunk. Small siblings (under
   `min_tokens`) are packed together up to the budget, never across a higher-level heading; the
   breadcrumb of a pack is their common parent.
2. A section over budget: its heading and own blocks are packed block by block; a block that does
   not fit a chunk of its own is split by `segment.split` (rows, items, lines, sentences, words).
   A heading, or a lead-in paragraph ending in a colon, never ends a chunk when what it introduces
   follows.
3. Optional overlap: whole trailing sentences of the previous chunk of the same section.
4. Ids from content (`segment.chunk.chunk_id`); output is deterministic.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field

from segment.chunk import CELL_FORMATS, Chunk, chunk_id, normalise_text
from segment.errors import SegmentError
from segment.gcpause import paused_gc
from segment.links import chunk_url, page_url
from segment.properties import record_properties
from segment.render import render_block
from segment.sentences import split_sentences
from segment.settings import Settings
from segment.split import Splitter
from segment.tokens import TokenCounter, counter_for
from segment.tree import Block, BlockKind, Document, Section, Span, merge_spans


@dataclass(slots=True)
class Piece:
    """A whole block (or a part of one, or a heading line) on its way into a chunk."""

    text: str
    tokens: int
    kind: BlockKind
    span: Span
    sticky: bool = False
    """Must not end a chunk when more content follows (headings, lead-ins ending in ':')."""
    oversize: bool = False
    block: Block | None = None
    """The tree block this piece renders whole, when it is one (so it can be split later)."""


@dataclass(slots=True)
class Draft:
    """A chunk before its id and sequence number are known."""

    pieces: list[Piece]
    breadcrumb: list[str]
    anchor: str | None
    section_key: int
    """Chunks of the same section run share a key; overlap never crosses keys."""
    text: str = ""
    tokens: int = 0
    oversize: bool = False
    extra: dict[str, object] = field(default_factory=dict)


@dataclass(slots=True)
class _Unit:
    """A sibling-packing unit: a whole section (or a section's own intro) that fits the budget."""

    pieces: list[Piece]
    tokens: int
    breadcrumb: list[str]
    anchor: str | None


class Segmenter:
    """Cuts documents under one set of settings. Reusable across documents; not thread-safe."""

    def __init__(self, settings: Settings, counter: TokenCounter | None = None) -> None:
        self.settings = settings
        self.counter = counter or counter_for(settings.tokenizer)
        self.splitter = Splitter(self.counter, settings.language)
        self.budget = settings.max_tokens - settings.overlap_tokens
        self._key = 0
        self._intros: dict[int, list[Piece]] = {}
        self._totals: dict[int, int] = {}

    # ----- public --------------------------------------------------------------------------

    def segment(self, document: Document) -> list[Chunk]:
        """All chunks of one document, in reading order."""
        self._key = 0
        self._intros, self._totals = {}, {}
        drafts: list[Draft] = []
        base = [document.title] if document.title else []
        self._section(document.root, base, None, drafts, document.title)
        if not getattr(self.counter, "additive", False):
            drafts = [d for draft in drafts for d in self._repair(draft)]
        if self.settings.overlap_tokens:
            self._add_overlap(drafts)
        return self._finish(document, drafts)

    # ----- sections ------------------------------------------------------------------------

    def _section(
        self,
        section: Section,
        crumb: list[str],
        anchor: str | None,
        out: list[Draft],
        title: str | None,
    ) -> None:
        intro = self._cached_intro(section)
        intro_tokens = sum(p.tokens for p in intro)
        children = [
            (child, self._child_crumb(crumb, child, title), child.heading.anchor if child.heading else anchor)
            for child in section.children
        ]
        whole = self._whole_tokens(section)
        if whole <= self.budget:
            # A lone child holding everything names the chunk better than its empty parent.
            node = section
            while not node.blocks and len(node.children) == 1 and node.children[0].heading:
                node = node.children[0]
                crumb = self._child_crumb(crumb, node, title)
                anchor = node.heading.anchor if node.heading else anchor
            pieces = self._all_pieces(section)
            if pieces:
                out.append(Draft(pieces, crumb, anchor, self._next_key()))
            return
        # Units to pack: the intro (if it fits whole), then each child that fits whole.
        pending: list[_Unit] = []
        if intro:
            if intro_tokens <= self.budget:
                pending.append(_Unit(intro, intro_tokens, crumb, anchor))
            else:
                self._pack_blocks(intro, crumb, anchor, out)
        for child, child_crumb, child_anchor in children:
            tokens = self._whole_tokens(child)
            if tokens <= self.budget:
                pending.append(_Unit(self._all_pieces(child), tokens, child_crumb, child_anchor))
                continue
            bare = len(pending) == 1 and pending[0].breadcrumb is crumb and len(pending[0].pieces) == 1
            if bare and pending[0].pieces[0].kind == BlockKind.HEADING:
                # This section's bare heading: every chunk of the child carries it in its breadcrumb.
                pending = []
            self._flush_units(pending, crumb, out)
            pending = []
            self._section(child, child_crumb, child_anchor, out, title)
        self._flush_units(pending, crumb, out)

    def _child_crumb(self, crumb: list[str], child: Section, title: str | None) -> list[str]:
        if child.heading is None:
            return crumb
        text = child.heading.text
        # The first heading often repeats the document title: keep it once.
        if (
            len(crumb) == 1
            and title is not None
            and normalise_text(text).casefold() == normalise_text(title).casefold()
        ):
            return crumb
        return crumb + [text]

    def _flush_units(self, units: list[_Unit], parent_crumb: list[str], out: list[Draft]) -> None:
        """Pack whole units: a unit under `min_tokens` joins its neighbour while both fit."""
        group: list[_Unit] = []
        used = 0
        for unit in units:
            small = unit.tokens < self.settings.min_tokens or used < self.settings.min_tokens
            if group and small and used + unit.tokens <= self.budget:
                group.append(unit)
                used += unit.tokens
                continue
            if group:
                out.append(self._group_draft(group, parent_crumb))
            group, used = [unit], unit.tokens
        if group:
            out.append(self._group_draft(group, parent_crumb))

    def _group_draft(self, group: list[_Unit], parent_crumb: list[str]) -> Draft:
        if len(group) == 1:
            u = group[0]
            return Draft(list(u.pieces), u.breadcrumb, u.anchor, self._next_key())
        pieces = [p for u in group for p in u.pieces]
        return Draft(pieces, parent_crumb, group[0].anchor, self._next_key())

    # ----- blocks inside one section ---------------------------------------------------------

    def _pack_blocks(
        self, pieces: list[Piece], crumb: list[str], anchor: str | None, out: list[Draft]
    ) -> None:
        """Greedy packing of a section's own pieces; blocks too big for a chunk are split."""
        key = self._next_key()
        current: list[Piece] = []
        used = 0

        def flush() -> None:
            nonlocal current, used
            if not current:
                return
            # A sticky tail (heading, lead-in) moves on to open the next chunk instead.
            carry: list[Piece] = []
            while current and current[-1].sticky and len(current) > 1:
                carry.insert(0, current.pop())
            out.append(Draft(current, crumb, anchor, key))
            current = carry
            used = sum(p.tokens for p in current)

        for piece in pieces:
            if used + piece.tokens <= self.budget:
                current.append(piece)
                used += piece.tokens
                continue
            if piece.tokens <= self.budget:
                flush()
                if used + piece.tokens > self.budget:  # the carried tail plus this piece is too much
                    out.append(Draft(current, crumb, anchor, key))
                    current, used = [], 0
                current.append(piece)
                used += piece.tokens
                continue
            room = self.budget - used
            if piece.block is not None:
                parts = self.splitter.split(piece.block, room, self.budget)
            else:  # an over-long heading line
                parts = self.splitter.split_text(piece.text, piece.span, room, self.budget)
            for part in parts:
                if used + part.tokens > self.budget and current:
                    flush()
                    if current and used + part.tokens > self.budget:
                        out.append(Draft(current, crumb, anchor, key))
                        current, used = [], 0
                current.append(Piece(part.text, part.tokens, piece.kind, part.span, oversize=part.oversize))
                used += part.tokens
        if current:
            out.append(Draft(current, crumb, anchor, key))

    def _intro_pieces(self, section: Section) -> list[Piece]:
        pieces: list[Piece] = []
        if section.heading is not None:
            h = section.heading
            pieces.append(Piece(h.text, self.counter.count(h.text), BlockKind.HEADING, h.span, sticky=True))
        for block in section.blocks:
            text = render_block(block)
            if not text.strip():
                continue
            sticky = block.kind == BlockKind.PARAGRAPH and text.rstrip().endswith(":")
            pieces.append(Piece(text, self.counter.count(text), block.kind, block.span, sticky, block=block))
        return pieces

    def _all_pieces(self, section: Section) -> list[Piece]:
        pieces = self._cached_intro(section)
        for child in section.children:
            pieces = pieces + self._all_pieces(child)
        return pieces

    def _cached_intro(self, section: Section) -> list[Piece]:
        cached = self._intros.get(id(section))
        if cached is None:
            cached = self._intro_pieces(section)
            self._intros[id(section)] = cached
        return cached

    def _whole_tokens(self, section: Section) -> int:
        total = self._totals.get(id(section))
        if total is None:
            total = sum(p.tokens for p in self._cached_intro(section))
            total += sum(self._whole_tokens(c) for c in section.children)
            self._totals[id(section)] = total
        return total

    def _next_key(self) -> int:
        self._key += 1
        return self._key

    def _repair(self, draft: Draft) -> list[Draft]:
        """Counters that are not additive (a byte-level BPE counts the blank lines between blocks)
        can put a packed chunk over budget: such a chunk is halved between pieces until it fits."""
        text = "\n\n".join(p.text for p in draft.pieces if p.text)
        if len(draft.pieces) < 2 or self.counter.count(text) <= self.budget:
            return [draft]
        half = len(draft.pieces) // 2
        first = Draft(draft.pieces[:half], draft.breadcrumb, draft.anchor, draft.section_key)
        second = Draft(draft.pieces[half:], draft.breadcrumb, draft.anchor, draft.section_key)
        return self._repair(first) + self._repair(second)

    # ----- overlap and records -------------------------------------------------------------

    def _add_overlap(self, drafts: list[Draft]) -> None:
        """Prefix each chunk with whole trailing sentences of the previous one in the same run."""
        limit = self.settings.overlap_tokens
        for prev, draft in zip(drafts, drafts[1:]):
            if prev.section_key != draft.section_key or not prev.pieces:
                continue
            tail = prev.pieces[-1]
            if tail.kind not in (BlockKind.PARAGRAPH, BlockKind.QUOTE, BlockKind.LIST):
                continue
            chosen: list[str] = []
            used = 0
            for sentence in reversed(split_sentences(tail.text, self.settings.language)):
                s = sentence.strip()
                cost = self.counter.count(s)
                if not s or used + cost > limit:
                    break
                chosen.insert(0, s)
                used += cost
            if chosen:
                draft.extra["overlap"] = " ".join(chosen)

    def _finish(self, document: Document, drafts: list[Draft]) -> list[Chunk]:
        chunks: list[Chunk] = []
        s = self.settings
        properties = record_properties(
            document.properties, s.properties, s.property_value_chars, s.properties_chars
        )
        page = page_url(s.base_url, document.source, document.format, s.url_layout)
        seen: dict[tuple[str, ...], int] = {}
        for draft in drafts:
            body = "\n\n".join(p.text for p in draft.pieces if p.text)
            if not body.strip():
                continue
            overlap = draft.extra.pop("overlap", None)
            text = f"{overlap}\n\n{body}" if isinstance(overlap, str) else body
            tokens = self.counter.count(text)
            if overlap is not None and tokens > self.settings.max_tokens:
                text, tokens = body, self.counter.count(body)
            key = (*draft.breadcrumb, "\x1f", normalise_text(text))
            occurrence = seen.get(key, 0)
            seen[key] = occurrence + 1
            span = merge_spans([p.span for p in draft.pieces])
            lines, cells = (None, span.lines) if document.format in CELL_FORMATS else (span.lines, None)
            # Distinct block kinds in order of first appearance; a heading counts only alone.
            kinds = list(dict.fromkeys(p.kind.value for p in draft.pieces if p.kind != BlockKind.HEADING))
            kinds = kinds or [BlockKind.HEADING.value]
            chunks.append(
                Chunk(
                    id=chunk_id(document.source, draft.breadcrumb, text, occurrence),
                    source=document.source,
                    format=document.format,
                    seq=len(chunks),
                    breadcrumb=list(draft.breadcrumb),
                    text=text,
                    tokens=tokens,
                    blocks=kinds,
                    lines=lines,
                    pages=span.pages,
                    anchor=draft.anchor,
                    oversize=any(p.oversize for p in draft.pieces) and tokens > self.settings.max_tokens,
                    cells=cells,
                    url=chunk_url(page, draft.anchor, span.pages),
                    properties=properties,
                )
            )
        return chunks


def segment_document(document: Document, settings: Settings) -> Iterator[Chunk]:
    """Chunks of one document under `settings`."""
    try:
        with paused_gc():  # the drafts and chunks of a document are acyclic: see segment.gcpause
            chunks = Segmenter(settings).segment(document)
    except RecursionError as exc:  # adapters cap nesting; this guards trees built by hand
        raise SegmentError(document.source, "blocks nested too deeply to segment", "resource_limit") from exc
    yield from chunks
