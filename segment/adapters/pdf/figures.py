"""Vector figures: their labels are kept together as one block instead of scattering through (or
across) the columns of body text.

A figure is a cluster of at least `MIN_PATHS` non-rectangular vector paths (curves, diagonal
strokes, arrow heads) that MuPDF collected with the text. Lines inside the cluster's box are its
labels when they are short (axis ticks, names), which keeps a code box with rounded corners or a
hand-drawn bracket beside a paragraph out of it.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from segment.adapters.pdf.extract import Box, Line

MIN_PATHS = 8
"""Fewest curved or slanted paths that make a figure."""
JOIN = 6.0
"""Paths closer than this (points) belong to one figure."""
MAX_LABEL_WORDS = 6
"""Labels are short; the median line inside a figure box has at most this many words."""
MARGIN = 12.0
"""Short lines this close outside the box (axis ticks, a chart title) are labels too."""


@dataclass(slots=True)
class FigureText:
    """The labels of one vector figure, in reading order."""

    page: int
    bbox: Box
    lines: list[Line]

    @property
    def text(self) -> str:
        """Labels joined by spaces, top to bottom, left to right."""
        ordered = sorted(self.lines, key=lambda ln: (round(ln.y0 / 3), ln.x0))
        return " ".join(" ".join(ln.text.split()) for ln in ordered)


def figure_boxes(vectors: list[dict[str, Any]], page_area: float = 612 * 792) -> list[Box]:
    """Boxes of clusters of non-rectangular paths (bounded work: paths are merged in one sweep),
    grown by the frames and axes that touch them (plot boxes are rectangles)."""
    paths: list[tuple[float, ...]] = [tuple(v["bbox"]) for v in vectors if not v.get("isrect")]
    if len(paths) < MIN_PATHS or len(paths) > 20_000:
        return []
    paths.sort()
    clusters: list[tuple[list[float], int]] = []
    for x0, y0, x1, y1 in paths:
        for box, _ in clusters[-8:]:
            if x0 <= box[2] + JOIN and y0 <= box[3] + JOIN and y1 >= box[1] - JOIN:
                box[0], box[1] = min(box[0], x0), min(box[1], y0)
                box[2], box[3] = max(box[2], x1), max(box[3], y1)
                index = next(i for i, c in enumerate(clusters) if c[0] is box)
                clusters[index] = (box, clusters[index][1] + 1)
                break
        else:
            clusters.append(([x0, y0, x1, y1], 1))
    boxes = [box for box, count in clusters if count >= MIN_PATHS]
    for box in boxes:
        for vec in vectors:
            x0, y0, x1, y1 = vec["bbox"]
            if (x1 - x0) * (y1 - y0) > 0.4 * page_area:
                continue
            if x0 <= box[2] and x1 >= box[0] and y0 <= box[3] and y1 >= box[1]:
                box[0], box[1] = min(box[0], x0), min(box[1], y0)
                box[2], box[3] = max(box[2], x1), max(box[3], y1)
    return [(box[0], box[1], box[2], box[3]) for box in boxes]


def take_labels(lines: list[Line], boxes: list[Box], page: int) -> tuple[list[Line], list[FigureText]]:
    """Split a page's lines into body lines and the label groups of its figures."""
    if not boxes:
        return lines, []
    figures: list[FigureText] = []
    taken: set[int] = set()
    for box in boxes:
        inside = [ln for ln in lines if _within(ln, box, 2.0)]
        inside += [
            ln
            for ln in lines
            if len(ln.text.split()) <= MAX_LABEL_WORDS
            and _within(ln, box, MARGIN)
            and not _within(ln, box, 2.0)
        ]
        if len(inside) < 2:
            continue
        words = sorted(len(ln.text.split()) for ln in inside)
        if words[len(words) // 2] > MAX_LABEL_WORDS:
            continue
        taken.update(id(ln) for ln in inside)
        figures.append(FigureText(page, box, inside))
    return [ln for ln in lines if id(ln) not in taken], figures


def _within(line: Line, box: Box, margin: float) -> bool:
    cx, cy = (line.x0 + line.x1) / 2, (line.y0 + line.y1) / 2
    return box[0] - margin <= cx <= box[2] + margin and box[1] - margin <= cy <= box[3] + margin
