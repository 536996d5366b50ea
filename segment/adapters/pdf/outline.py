"""Names the document gives itself: its outline (every entry matched to a block on its page or
the next, so headings carry the outline's names and levels; entries with no match are inserted at
the top of their page) and its title (the metadata title, or a lone largest line on page 1)."""

from __future__ import annotations

import re
from difflib import SequenceMatcher

from segment.adapters.pdf.blocks import Item
from segment.adapters.pdf.headings import LABEL_PREFIX, MAX_LINES, NUMBERING, style_of
from segment.adapters.pdf.layout import TextBlock

TITLE_TOP = 340.0
"""A lone largest line above this y (points) on page 1 may be the document title."""

_NORM = re.compile(r"[\W_]+", re.U)


def title_item(items: list[Item], metadata_title: str | None) -> Item | None:
    """The document title among page-1 headings: the PDF's own title, or a lone largest line."""
    heads = [i for i in items if i.level is not None]
    if not heads:
        return None
    first_page = [i for i in heads if i.pages[0] == 1]
    if metadata_title and norm(metadata_title):
        for item in first_page:
            if similar(norm(item.text), norm(metadata_title)) >= 0.85:
                return item
    if not first_page:
        return None
    top = max(first_page, key=lambda i: i.size)
    others = [i.size for i in heads if i is not top]
    if (
        others
        and top.size >= max(others) + 2
        and sum(1 for i in heads if style_of(i) == style_of(top)) == 1
        and top.first.lines[0].y0 < TITLE_TOP
    ):
        return top
    return None


def norm(text: str) -> str:
    """Text for matching: case folded, numbering and punctuation removed."""
    text = text.strip()
    text = LABEL_PREFIX.sub("", text)
    m = NUMBERING.match(text)
    if m:
        text = text[m.end() :]
    return _NORM.sub(" ", text.casefold()).strip()


def similar(a: str, b: str) -> float:
    """How alike two matching texts are, 0 to 1 (prefixes score at least 0.8)."""
    if not a or not b:
        return 0.0
    if a == b:
        return 1.0
    if a.startswith(b) or b.startswith(a):
        short, long_ = sorted((a, b), key=len)
        return 0.8 + 0.2 * len(short) / len(long_)
    if 2.0 * min(len(a), len(b)) < 0.8 * (len(a) + len(b)):
        return 0.0  # SequenceMatcher.real_quick_ratio() below 0.8, without building the matcher
    matcher = SequenceMatcher(None, a, b, autojunk=False)
    if matcher.real_quick_ratio() < 0.8 or matcher.quick_ratio() < 0.8:
        return 0.0  # upper bounds already below every threshold we use
    return matcher.ratio()


def apply_outline(
    items: list[Item],
    toc: list[tuple[int, str, int]],
    page_count: int,
    body_size: float = 0.0,
    left_out: frozenset[int] = frozenset(),
) -> tuple[list[Item], int]:
    """Name and level headings from the outline; returns the new flow and the unmatched count.
    An unmatched entry that points at a left-out page (contents, index) is not inserted.

    Font-detected headings that the outline does not list are kept one level below the outline
    entry they follow when their style is smaller than every matched style, else demoted to text.
    """
    by_page: dict[int, list[int]] = {}
    for idx, item in enumerate(items):
        if item.kind == "text" and not item.label:
            by_page.setdefault(item.pages[0], []).append(idx)
    assigned: dict[int, tuple[int, str]] = {}
    inserts: dict[int, list[tuple[int, str]]] = {}
    last_idx = -1
    unmatched = 0
    heads: dict[int, str] = {}

    def head_of(idx: int) -> str:
        if idx not in heads:
            heads[idx] = norm(" ".join(ln.text.strip() for ln in items[idx].first.lines[:MAX_LINES]))
        return heads[idx]

    for level, title, page in toc:
        target = norm(title)
        best: tuple[float, int] | None = None
        if target:
            for p in (page, page + 1, page - 1):
                for idx in by_page.get(p, ()):
                    if idx in assigned:
                        continue
                    score = similar(head_of(idx), target)
                    if score < 0.8:
                        continue
                    score += 0.1 if items[idx].level is not None else 0.0
                    score += 0.05 if idx > last_idx else 0.0
                    if best is None or score > best[0]:
                        best = (score, idx)
                if best is not None and best[0] >= 0.95:
                    break
        if best is None:
            if page in left_out:
                continue
            unmatched += 1
            anchor_page = min(max(page, 1), page_count)
            inserts.setdefault(anchor_page, []).append((level, title.strip()))
            continue
        idx = best[1]
        assigned[idx] = (level, _outline_text(items[idx].text, title))
        last_idx = max(last_idx, idx)
    matched_styles = {style_of(items[i]) for i in assigned}
    smallest = min((s[0] for s in matched_styles), default=0.0)
    out: list[Item] = []
    done_pages: set[int] = set()
    current = 0
    for idx, item in enumerate(items):
        page = item.pages[0]
        if page in inserts and page not in done_pages:
            done_pages.add(page)
            for level, title in inserts[page]:
                out.append(_synthetic(item, level, title))
                current = level
        if idx in assigned:
            level, text = assigned[idx]
            item.level, item.text = level, text
            current = level
        elif item.level is not None:
            # Outlines list the structure; an unlisted heading is kept only when it is set in a
            # larger type than the body and smaller than every listed one (a deeper level).
            style = style_of(item)
            larger = item.size >= body_size + 0.9
            if larger and style not in matched_styles and style[0] <= smallest and current:
                item.level = current + 1
            else:
                item.level = None
        out.append(item)
    for page in sorted(set(inserts) - done_pages):
        anchor = out[-1] if out else None
        for level, title in inserts[page]:
            if anchor is not None:
                out.append(_synthetic(anchor, level, title))
    return out, unmatched


def _outline_text(block_text: str, title: str) -> str:
    """The outline's title, keeping a section number printed on the page when the title lacks it."""
    title = " ".join(title.split())
    m = NUMBERING.match(block_text.strip())
    if m and not NUMBERING.match(title):
        return m.group(0).strip() + " " + title
    return title


def _synthetic(near: Item, level: int, title: str) -> Item:
    block = TextBlock(list(near.first.lines[:1]), near.first.column)
    return Item("heading", [block], text=" ".join(title.split()), level=level)
