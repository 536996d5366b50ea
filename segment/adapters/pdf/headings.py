"""Headings from the document's own font statistics (the outline's names and levels are applied
afterwards, in `outline`).

The body size is the most used size of running text. A heading candidate is a
short block that starts with its own line style: larger than the body, or bold at body size, not
monospaced, not a caption. Numbering (`2`, `2.3`, `A.1`, `Chapter 4`) gives a level directly and
teaches each style its level; styles without numbers are ranked by size below the styles above
them."""

from __future__ import annotations

import re
from collections import Counter
from dataclasses import dataclass

from segment.adapters.pdf.blocks import Item
from segment.adapters.pdf.extract import LineFlag
from segment.adapters.pdf.glyphs import has_words

MAX_LINES = 3
MAX_CHARS = 160

NUMBERING = re.compile(
    r"^(?:(?P<num>\d{1,3}(?:\.\d{1,3})*)\.?|(?P<app>[A-Z](?:\.\d{1,3})+)\.?|(?P<rom>[IVX]{1,5})\.)\s+(?=\S)"
)
_LABEL = re.compile(r"^(chapter|appendix|part)(\s+[\w.]+)?\s*$", re.I)
_LABEL_WORD = re.compile(r"^(chapter|appendix|part)$", re.I)
_ADMONITION = {"note", "tip", "warning", "caution", "important", "hint", "danger", "attention"}
_ENDS_NUMBER = re.compile(r"\s(\d{1,4}|[ivxlc]{1,6})$")
_NUMBER_ENDS = frozenset("0123456789ivxlc")
"""The characters a match of _ENDS_NUMBER can end with."""
LABEL_PREFIX = re.compile(r"^(chapter|appendix|part)\s+[\w]+[.:]?\s+(?=\S)", re.I)
_CAPTION = re.compile(r"^(figure|fig\.|table|listing|example|algorithm|equation)\s*[\dA-Z]+[.:]", re.I)
_TOC_ENTRY = re.compile(r"((\.\s*){3,}|\s{2,}|\s)(\d{1,4}|[ivxlc]{1,6})$")
_LETTERS = re.compile(r"[^\W\d_]", re.U)


@dataclass(slots=True, frozen=True)
class FontStats:
    """The body text's style, learned from the document."""

    body_size: float
    body_bold: bool


def font_stats(items: list[Item]) -> FontStats:
    """Most used size (by characters) of running text; whether that text is bold."""
    sizes: Counter[float] = Counter()
    bold = total = 0
    for item in items:
        if item.kind not in ("text", "item"):
            continue
        for ln in item.lines:
            n = len(ln.text.strip())
            sizes[ln.size] += n
            total += n
            bold += int(ln.bold * n)
    if not sizes:
        return FontStats(10.0, False)
    body = max(sizes, key=lambda k: (sizes[k], -k))
    return FontStats(body, total > 0 and bold / total > 0.6)


def numbering(text: str) -> int | None:
    """Depth of a leading section number: "2" -> 1, "2.3" -> 2, "A.1" -> 2, "Chapter 4" -> 1."""
    if LABEL_PREFIX.match(text):
        return 1
    m = NUMBERING.match(text)
    if not m:
        return None
    if m.group("rom"):
        return 1
    token = m.group("num") or m.group("app")
    return token.count(".") + 1


def is_label(item: Item) -> bool:
    """A chapter label on its own ("CHAPTER ONE", "Appendix B")."""
    return item.kind == "text" and bool(_LABEL.match(item.text.strip()))


def is_candidate(item: Item, stats: FontStats) -> bool:
    """Whether a text block looks like a heading by style and shape."""
    if item.kind != "text" or len(item.first.lines) > MAX_LINES + 2:
        return False
    # Style first: most blocks are body text and stop here.
    size = item.size
    if size < stats.body_size - 0.6:
        return False
    larger = size >= stats.body_size + 0.9
    bolder = item.bold >= 0.85 and not stats.body_bold
    if not (larger or bolder):
        return False
    if len(item.first.lines) > MAX_LINES and size < stats.body_size + 2:
        return False  # only clearly larger type may wrap a heading over four or five lines
    if item.mono >= 0.5 and not larger:
        return False
    if any(LineFlag.BOXED in ln.flags for ln in item.first.lines):
        return False
    text = item.text.strip()
    if not text or len(text) > MAX_CHARS or not _LETTERS.search(text):
        return False
    if _CAPTION.match(text) or not has_words(text):
        return False
    if _is_toc_entry(text) or text.casefold().rstrip(":.!") in _ADMONITION:
        return False
    if len(text) <= 2 and not any(ch.isdigit() for ch in text):
        return False  # index letters
    words = len(text.split())
    if text[-1] in ",;" or (text[-1] == "." and numbering(text) is None and words > 6):
        return False
    if not larger and (words > 14 or len(item.first.lines) > 2):
        return False
    return not (text.endswith(":") and not larger)


def _is_toc_entry(text: str) -> bool:
    """A contents line: dot leaders, or a numbered title ending in a page number."""
    if re.search(r"(\.\s*){4,}\S*$", text):
        return True
    return numbering(text) is not None and bool(_TOC_ENTRY.search(text)) and len(text.split()) >= 3


def style_of(item: Item) -> tuple[float, bool]:
    """The style key used to rank heading styles."""
    return (round(item.size * 2) / 2, item.bold >= 0.85)


def detect(items: list[Item], stats: FontStats) -> None:
    """Set `level` on the items that are headings (font statistics and numbering)."""
    chosen: list[Item] = []
    pending_label = False
    toc_pages = _contents_pages(items)
    previous: Item | None = None
    for item in items:
        strong = item.size >= stats.body_size + 0.9 or item.bold >= 0.85
        if strong and is_label(item):
            item.label = True
            pending_label = True
            previous = item
            continue
        if (
            pending_label
            and previous is not None
            and _LABEL_WORD.match(previous.text.strip())
            and item.kind == "text"
            and len(item.text.split()) == 1
        ):
            item.label = True  # "CHAPTER" / "ONE" set as two blocks
            previous = item
            continue
        previous = item
        if item.pages[0] in toc_pages and _ENDS_NUMBER.search(item.text.strip()):
            pending_label = False
            continue
        if is_candidate(item, stats) or (
            pending_label and item.kind == "text" and len(item.text) <= MAX_CHARS
        ):
            chosen.append(item)
            if pending_label:
                item.level = 1
        pending_label = False
    chosen = _without_terms(items, chosen, stats)
    chosen = _without_front_matter(items, chosen)
    if not chosen:
        return
    votes: dict[tuple[float, bool], Counter[int]] = {}
    for item in chosen:
        depth = 1 if item.level == 1 else numbering(item.text)
        if depth is not None:
            votes.setdefault(style_of(item), Counter())[depth] += 1
    styles = sorted({style_of(i) for i in chosen}, key=lambda s: (-s[0], not s[1]))
    # Walk styles from the largest: numbered styles take their number's depth, shifted down when
    # a larger style already holds that level (an unnumbered title above "1 Introduction");
    # unnumbered styles go one level below the style before them.
    level_of: dict[tuple[float, bool], int] = {}
    offset_of: dict[tuple[float, bool], int] = {}
    prev = 0
    offset = 0
    for style in styles:
        if style in votes:
            level = votes[style].most_common(1)[0][0] + offset
            if prev and level <= prev and not _same_level_labelled(style, chosen):
                offset += prev - level + 1
                level = prev + 1
        else:
            level = prev + 1
        level_of[style] = min(level, 9)
        offset_of[style] = offset
        prev = level_of[style]
    for item in chosen:
        if item.level == 1:
            continue
        depth = numbering(item.text)
        style = style_of(item)
        item.level = min(depth + offset_of[style], 9) if depth is not None else level_of[style]
    _drop_empty(items)


def _without_terms(items: list[Item], chosen: list[Item], stats: FontStats) -> list[Item]:
    """Drop bold body-size lines whose following text is indented under them: the terms of a
    definition list ("build (required)" over its explanation), not headings."""
    position = {id(item): n for n, item in enumerate(items)}
    kept: list[Item] = []
    for item in chosen:
        n = position[id(item)]
        after = items[n + 1] if n + 1 < len(items) else None
        larger = item.size >= stats.body_size + 0.9
        if (
            not larger
            and item.level is None
            and after is not None
            and after.kind in ("text", "item", "code")
            and after.first.page == item.first.page
            and after.first.x0 > item.first.x0 + 8
        ):
            continue
        kept.append(item)
    return kept


def _without_front_matter(items: list[Item], chosen: list[Item]) -> list[Item]:
    """In a document with numbered sections, a large or bold line on page 1 before section 1 that
    is followed only by short lines (names, affiliations, e-mail addresses, dates) belongs to the
    title block, not to the sections. The largest line (the title) stays."""
    first_numbered = next((i for i in chosen if numbering(i.text) is not None), None)
    if first_numbered is None:
        return chosen  # only a document with numbered sections has a front matter to tell apart
    limit = items.index(first_numbered)
    front = [i for i in chosen if i.pages[0] == 1 and items.index(i) < limit]
    if not front:
        return chosen
    title = max(front, key=lambda i: i.size)
    position = {id(item): n for n, item in enumerate(items)}
    chosen_ids = {id(i) for i in chosen}
    drop: set[int] = set()
    for item in front:
        if item is title:
            continue
        n = position[id(item)] + 1
        following: list[Item] = []
        while n < len(items) and len(following) < 12:
            nxt = items[n]
            if id(nxt) in chosen_ids:
                break  # the next heading-like line ends the block
            following.append(nxt)
            n += 1
        if all(f.kind == "text" and len(f.text.split()) <= 14 for f in following):
            drop.add(id(item))  # nothing but short lines (or nothing) before the next heading
    return [i for i in chosen if id(i) not in drop]


def _same_level_labelled(style: tuple[float, bool], chosen: list[Item]) -> bool:
    """True when chapter-labelled headings (level 1 already) use this style: then numbering
    depths of the style are absolute ("CHAPTER ONE" / "ABOUT" / "1.1 Scope" share a size)."""
    return any(i.level == 1 and style_of(i) == style for i in chosen)


def _contents_pages(items: list[Item]) -> set[int]:
    """Pages where most lines end in a page number (tables of contents, lists of tables)."""
    ending: Counter[int] = Counter()
    total: Counter[int] = Counter()
    for item in items:
        if item.kind != "text":
            continue
        for ln in item.lines:
            total[ln.page] += 1
            text = ln.text.rstrip()
            # The last character decides most lines without running the pattern over them.
            if text[-1:] in _NUMBER_ENDS and _ENDS_NUMBER.search(text.lstrip()):
                ending[ln.page] += 1
    return {p for p, n in total.items() if n >= 5 and ending[p] >= 0.4 * n}


def _drop_empty(items: list[Item]) -> None:
    """Unnumbered headings with no content before a sibling or higher heading are not headings
    (title-page lines, author lists, affiliations)."""
    flow = [i for i in items if not i.label]
    drop: list[Item] = []
    for here, after in zip(flow, flow[1:]):
        if here.level is None or after.level is None:
            continue
        if after.level <= here.level and numbering(here.text) is None:
            drop.append(here)
    for item in drop:
        item.level = None
