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
from dataclasses import dataclass

from segment.chunk import CELL_FORMATS, Chunk, id_of_normalised, normalise_text
from segment.errors import SegmentError
from segment.gcpause import paused_gc
from segment.kinds import render_block, splitter
from segment.links import chunk_url, page_url
from segment.properties import record_properties
from segment.sentences import split_sentences
from segment.settings import Settings
from segment.tokens import AnyCounter, as_counter, counter_for, is_additive
from segment.tree import Block, BlockKind, Document, Section, Span, merge_spans


@dataclass(slots=True)
class Member:
    """One member of a chunk on its way in: a whole block, a part of one, or a heading line."""

    text: str
    tokens: int
    kind: BlockKind
    span: Span
    sticky: bool = False
    """Must not end a chunk when more content follows (headings, lead-ins ending in ':')."""
    oversize: bool = False
    block: Block | None = None
    """The tree block this member renders whole, when it is one (so it can be split later)."""


@dataclass(slots=True)
class Draft:
    """A chunk before its id and sequence number are known."""

    members: list[Member]
    breadcrumb: list[str]
    anchor: str | None
    section_key: int
    """Chunks of the same section run share a key; overlap never crosses keys."""
    text: str = ""
    tokens: int = 0
    oversize: bool = False
    overlap: str | None = None
    """Trailing sentences of the previous chunk of the same section, to repeat before this one."""


@dataclass(slots=True)
class _WholeSection:
    """A whole section (or a section's own intro) that fits the budget: what sibling packing packs."""

    members: list[Member]
    tokens: int
    breadcrumb: list[str]
    anchor: str | None
    intro: bool = False
    """The section's own heading and blocks, before its children."""


_KIND_VALUES = {kind: kind.value for kind in BlockKind}
"""Each kind's plain string (an enum's `.value` is a property, dearer than a lookup)."""


def _bare_heading(whole: _WholeSection) -> bool:
    """A section's intro that is its heading alone (its children follow)."""
    return whole.intro and len(whole.members) == 1 and whole.members[0].kind == BlockKind.HEADING


class Segmenter:
    """Cuts documents under one set of settings. Reusable across documents; not thread-safe."""

    def __init__(self, settings: Settings, counter: AnyCounter | None = None) -> None:
        self.settings = settings
        self.counter = (
            counter_for(settings.tokenizer, settings.budget_unit) if counter is None else as_counter(counter)
        )
        self.splitter = splitter(self.counter, settings.language)
        self.budget = settings.max_tokens - settings.overlap_tokens
        self._key = 0
        self._lines: dict[tuple[str, ...], str] = {}
        self._reserve = 0
        """Tokens kept free in every chunk for its heading line."""
        self._intros: dict[int, list[Member]] = {}
        self._totals: dict[int, int] = {}

    # ----- public --------------------------------------------------------------------------

    def segment(self, document: Document) -> list[Chunk]:
        """All chunks of one document, in reading order."""
        self._key = 0
        self._intros, self._totals = {}, {}
        drafts: list[Draft] = []
        base = [document.title] if document.title else []
        self.budget = self.settings.max_tokens - self.settings.overlap_tokens
        self._reserve = 0
        if self.settings.heading_line != "off":
            self._lines = {}
            self._reserve = self._line_reserve(document)
            self.budget -= self._reserve
        self._section(document.root, base, None, drafts, document.title)
        if not is_additive(self.counter):
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
            members = self._all_members(section)
            if members:
                out.append(Draft(members, crumb, anchor, self._next_key()))
            return
        # Units to pack: the intro (if it fits whole), then each child that fits whole.
        pending: list[_WholeSection] = []
        if intro:
            if intro_tokens <= self.budget:
                pending.append(_WholeSection(intro, intro_tokens, crumb, anchor, intro=True))
            else:
                self._pack_blocks(intro, crumb, anchor, out)
        for child, child_crumb, child_anchor in children:
            tokens = self._whole_tokens(child)
            if tokens <= self.budget:
                pending.append(_WholeSection(self._all_members(child), tokens, child_crumb, child_anchor))
                continue
            if len(pending) == 1 and _bare_heading(pending[0]):
                # This section's bare heading: every chunk of the child carries it in its breadcrumb.
                pending = []
            self._flush_sections(pending, crumb, out)
            pending = []
            self._section(child, child_crumb, child_anchor, out, title)
        self._flush_sections(pending, crumb, out)

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

    def _flush_sections(self, wholes: list[_WholeSection], parent_crumb: list[str], out: list[Draft]) -> None:
        """Pack whole sections: one under `min_tokens` joins its neighbour while both fit."""
        group: list[_WholeSection] = []
        used = 0
        for whole in wholes:
            small = whole.tokens < self.settings.min_tokens or used < self.settings.min_tokens
            # A section's bare heading joins what follows, or is left to the breadcrumbs of it.
            bare = len(group) == 1 and _bare_heading(group[0])
            if group and (small or bare) and used + whole.tokens <= self.budget:
                group.append(whole)
                used += whole.tokens
                continue
            if group and not bare:
                out.append(self._group_draft(group, parent_crumb))
            group, used = [whole], whole.tokens
        if group:
            out.append(self._group_draft(group, parent_crumb))

    def _group_draft(self, group: list[_WholeSection], parent_crumb: list[str]) -> Draft:
        if len(group) == 1:
            u = group[0]
            return Draft(list(u.members), u.breadcrumb, u.anchor, self._next_key())
        members = [p for u in group for p in u.members]
        return Draft(members, parent_crumb, group[0].anchor, self._next_key())

    # ----- blocks inside one section ---------------------------------------------------------

    def _pack_blocks(
        self, members: list[Member], crumb: list[str], anchor: str | None, out: list[Draft]
    ) -> None:
        """Greedy packing of a section's own members; blocks too big for a chunk are split.

        A sticky tail (a heading, a lead-in ending in a colon) never ends a chunk: it opens the
        next one, and what it introduces is split so that its start joins it. When not even that
        start fits beside it, a lead-in goes alone and a bare heading is left to the breadcrumb,
        which every chunk of the section carries."""
        key = self._next_key()
        current: list[Member] = []
        used = 0

        def flush() -> None:
            nonlocal current, used
            cut = len(current)
            while cut and current[cut - 1].sticky:
                cut -= 1
            if cut:  # (all sticky: they wait for what they introduce)
                out.append(Draft(current[:cut], crumb, anchor, key))
                current = current[cut:]
                used = sum(m.tokens for m in current)

        def make_room(tokens: int) -> None:
            nonlocal current, used
            flush()
            if current and used + tokens > self.budget:
                if any(m.kind != BlockKind.HEADING for m in current):
                    out.append(Draft(current, crumb, anchor, key))
                current, used = [], 0

        for member in members:
            if used + member.tokens <= self.budget:
                current.append(member)
                used += member.tokens
                continue
            if member.tokens <= self.budget:
                flush()
                if used + member.tokens <= self.budget:
                    current.append(member)
                    used += member.tokens
                    continue
            # Over budget, or over the room beside a sticky tail: split, the first part into the room.
            room = self.budget - used
            if member.block is not None:
                parts = self.splitter.split(member.block, room, self.budget)
            else:  # an over-long heading line
                parts = self.splitter.split_text(member.text, member.span, room, self.budget)
            for part in parts:
                if current and used + part.tokens > self.budget:
                    make_room(part.tokens)
                current.append(Member(part.text, part.tokens, member.kind, part.span, oversize=part.oversize))
                used += part.tokens
        if current:
            out.append(Draft(current, crumb, anchor, key))

    def _intro_members(self, section: Section) -> list[Member]:
        members: list[Member] = []
        if section.heading is not None:
            h = section.heading
            text = self._heading_text(h.text, h.level)
            members.append(Member(text, self.counter.count(text), BlockKind.HEADING, h.span, sticky=True))
        for block in section.blocks:
            text = render_block(block)
            if not text.strip():
                continue
            sticky = block.kind == BlockKind.PARAGRAPH and text.rstrip().endswith(":")
            members.append(
                Member(text, self.counter.count(text), block.kind, block.span, sticky, block=block)
            )
        return members

    def _all_members(self, section: Section) -> list[Member]:
        members = self._cached_intro(section)
        for child in section.children:
            members = members + self._all_members(child)
        return members

    def _cached_intro(self, section: Section) -> list[Member]:
        cached = self._intros.get(id(section))
        if cached is None:
            cached = self._intro_members(section)
            self._intros[id(section)] = cached
        return cached

    def _whole_tokens(self, section: Section) -> int:
        total = self._totals.get(id(section))
        if total is None:
            total = sum(p.tokens for p in self._cached_intro(section))
            total += sum(self._whole_tokens(c) for c in section.children)
            self._totals[id(section)] = total
        return total

    def _heading_text(self, text: str, level: int) -> str:
        """A heading line as it appears in chunk text: plain, or `## Text` (levels past 6 as 6)."""
        if not self.settings.markdown_headings:
            return text
        return "#" * min(max(level, 1), 6) + " " + text

    def _path_line(self, document: Document, breadcrumb: list[str]) -> str:
        """The first line of a chunk under `heading_line`: its heading path (after the document
        title with `title`), shortened from the front to a quarter of the budget at most."""
        key = tuple(breadcrumb)
        line = self._lines.get(key)
        if line is None:
            path = list(breadcrumb)
            if self.settings.heading_line == "path" and document.title and path[:1] == [document.title]:
                path = path[1:]
            limit = self.settings.max_tokens // 4
            line = ""
            while path:
                line = " > ".join(path)
                if self.counter.count(line) <= limit:
                    break
                path, line = path[1:], ""
            self._lines[key] = line
        return line

    def _line_reserve(self, document: Document) -> int:
        """Tokens kept free in every chunk for its first line: the dearest line of any section."""
        base = [document.title] if document.title else []
        reserve = 0
        for path, section in document.walk():
            crumb = base + [s.heading.text for s in path if s.heading] if path else base
            if section.heading is not None:
                crumb = crumb + [section.heading.text]
            line = self._path_line(document, crumb)
            if line:
                framed = self.counter.count(f"{line}\n\nx") - self.counter.count("x")
                reserve = max(reserve, framed)
        return reserve

    def _next_key(self) -> int:
        self._key += 1
        return self._key

    def _repair(self, draft: Draft) -> list[Draft]:
        """Counters that are not additive (a byte-level BPE counts the blank lines between blocks)
        can put a packed chunk over budget: such a chunk is halved between members until it fits."""
        text = "\n\n".join(p.text for p in draft.members if p.text)
        if len(draft.members) < 2 or self.counter.count(text) <= self.budget:
            return [draft]
        half = len(draft.members) // 2
        first = Draft(draft.members[:half], draft.breadcrumb, draft.anchor, draft.section_key)
        second = Draft(draft.members[half:], draft.breadcrumb, draft.anchor, draft.section_key)
        return self._repair(first) + self._repair(second)

    # ----- overlap and records -------------------------------------------------------------

    def _add_overlap(self, drafts: list[Draft]) -> None:
        """Prefix each chunk with whole trailing sentences of the previous one in the same run."""
        limit = self.settings.overlap_tokens
        for prev, draft in zip(drafts, drafts[1:]):
            if prev.section_key != draft.section_key or not prev.members:
                continue
            tail = prev.members[-1]
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
                draft.overlap = " ".join(chosen)

    def _finish(self, document: Document, drafts: list[Draft]) -> list[Chunk]:
        chunks: list[Chunk] = []
        s = self.settings
        properties = record_properties(
            document.properties, s.properties, s.property_value_chars, s.properties_chars
        )
        page = page_url(s.base_url, document.source, document.format, s.url_layout)
        seen: dict[tuple[str, ...], int] = {}
        for draft in drafts:
            body = "\n\n".join(p.text for p in draft.members if p.text)
            if not body.strip():
                continue
            overlap = draft.overlap
            text = f"{overlap}\n\n{body}" if overlap is not None else body
            tokens = self.counter.count(text)
            if overlap is not None and tokens > self.settings.max_tokens - self._reserve:
                text, tokens = body, self.counter.count(body)
            if self.settings.heading_line != "off":
                line = self._path_line(document, draft.breadcrumb)
                if line:
                    text = f"{line}\n\n{text}"
                    tokens = self.counter.count(text)
            normalised = normalise_text(text)
            key = (*draft.breadcrumb, "\x1f", normalised)
            occurrence = seen.get(key, 0)
            seen[key] = occurrence + 1
            span = merge_spans([p.span for p in draft.members])
            lines, cells = (None, span.lines) if document.format in CELL_FORMATS else (span.lines, None)
            # Distinct block kinds in order of first appearance; a heading counts only alone.
            kinds = list(
                dict.fromkeys(_KIND_VALUES[p.kind] for p in draft.members if p.kind != BlockKind.HEADING)
            )
            kinds = kinds or [BlockKind.HEADING.value]
            chunks.append(
                Chunk(
                    id=id_of_normalised(document.source, draft.breadcrumb, normalised, occurrence),
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
                    oversize=any(p.oversize for p in draft.members) and tokens > self.settings.max_tokens,
                    cells=cells,
                    url=chunk_url(page, draft.anchor, span.pages),
                    properties=properties,
                )
            )
        return chunks


def segment_document(
    document: Document, settings: Settings, counter: AnyCounter | None = None
) -> Iterator[Chunk]:
    """Chunks of one document under `settings`, counted by `counter` (default: the settings')."""
    try:
        with paused_gc():  # the drafts and chunks of a document are acyclic: see segment.gcpause
            chunks = Segmenter(settings, counter).segment(document)
    except RecursionError as exc:  # adapters cap nesting; this guards trees built by hand
        raise SegmentError(document.source, "blocks nested too deeply to segment", "resource_limit") from exc
    yield from chunks
