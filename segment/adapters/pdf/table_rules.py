"""Rule-bounded tables (booktabs style: horizontal rules only): the text between rules of the
same width must fall into aligned columns, which rejects prose between rules (boxes, separators)."""

from __future__ import annotations

from segment.adapters.pdf.extract import Box, Line
from segment.adapters.pdf.rulings import MIN_RULE_WIDTH, TOL, Rulings, cluster, rule_key
from segment.adapters.pdf.table_words import FoundTable, Word, bold_share, cell_text


def rule_groups(r: Rulings, free_h: list[int]) -> list[tuple[list[float], float, float]]:
    """Horizontal rules of equal extent that can bound a table: (their ys, x0, x1), two ys or more."""
    groups: dict[tuple[int, int], list[tuple[float, float, float]]] = {}
    for i in free_h:
        y, x0, x1 = r.h[i]
        if x1 - x0 >= MIN_RULE_WIDTH:
            groups.setdefault(rule_key(x0, x1), []).append((y, x0, x1))
    out = []
    for rules in groups.values():
        ys = cluster([y for y, _, _ in rules], tol=1.0)
        if len(ys) >= 2:
            out.append((ys, min(x for _, x, _ in rules), max(x for _, _, x in rules)))
    return out


def rule_tables(
    page_no: int, groups: list[tuple[list[float], float, float]], words: list[Word], lines: list[Line]
) -> list[FoundTable]:
    """Tables between horizontal rules of equal width whose text forms aligned columns."""
    found: list[FoundTable] = []
    for ys, x0, x1 in groups:
        bands: list[tuple[float, float, list[list[list[Word]]]]] = []
        for top, bottom in zip(ys, ys[1:]):
            band = [w for w in words if x0 - TOL <= w.cx <= x1 + TOL and top < w.cy < bottom]
            rows = _rows_of_cells(band)
            bands.append((top, bottom, rows))
        run: list[tuple[float, float, list[list[list[Word]]]]] = []
        for band_item in bands + [(0.0, 0.0, [])]:
            if band_item[2] and _tabular(band_item[2], x1 - x0):
                run.append(band_item)
                continue
            if run:
                table = _rule_table(page_no, run, x0, x1, lines)
                if table is not None:
                    found.append(table)
            run = []
    return found


def _rows_of_cells(words: list[Word]) -> list[list[list[Word]]]:
    """Words grouped into rows by their centre line, each row cut into cells at wide gaps."""
    rows: list[list[Word]] = []
    for w in sorted(words, key=lambda w: (w.cy, w.x0)):
        if rows and abs(rows[-1][0].cy - w.cy) <= 0.4 * (w.y1 - w.y0):
            rows[-1].append(w)
        else:
            rows.append([w])
    out: list[list[list[Word]]] = []
    for row in rows:
        row.sort(key=lambda w: w.x0)
        cells: list[list[Word]] = [[row[0]]]
        for prev, w in zip(row, row[1:]):
            height = max(w.y1 - w.y0, 1.0)
            if w.x0 - prev.x1 > 0.75 * height:
                cells.append([w])
            else:
                cells[-1].append(w)
        out.append(cells)
    return out


def _separators(rows: list[list[list[Word]]], x0: float, x1: float) -> list[tuple[float, float]]:
    """Vertical strips no multi-cell row's cell covers: the column boundaries."""
    spans = [(c[0].x0, c[-1].x1) for row in rows if len(row) >= 2 for c in row]
    if not spans:
        return []
    spans.sort()
    gaps: list[tuple[float, float]] = []
    reach = spans[0][1]
    for a, b in spans[1:]:
        if a - reach >= 4:
            gaps.append((reach, a))
        reach = max(reach, b)
    return gaps


def _tabular(rows: list[list[list[Word]]], width: float) -> bool:
    multi = sum(1 for row in rows if len(row) >= 2)
    if multi == 0 or multi < 0.6 * len(rows):
        return False
    # Prose rows fill the width in one cell; tables leave gaps common to all rows.
    return bool(_separators(rows, 0.0, width))


def _rule_table(
    page_no: int,
    run: list[tuple[float, float, list[list[list[Word]]]]],
    x0: float,
    x1: float,
    lines: list[Line],
) -> FoundTable | None:
    all_rows = [row for _, _, rows in run for row in rows]
    seps = _separators(all_rows, x0, x1)
    if not seps:
        return None
    bounds = [x0 - TOL] + [(a + b) / 2 for a, b in seps] + [x1 + TOL]
    parsed: list[tuple[list[str], Box, int]] = []
    for band_no, (_, _, rows) in enumerate(run):
        for row in rows:
            words = [w for cell in row for w in cell]
            cells = [cell_text([w for w in words if lo <= w.cx < hi]) for lo, hi in zip(bounds, bounds[1:])]
            box = (x0, min(w.y0 for w in words), x1, max(w.y1 for w in words))
            if parsed and not cells[0] and any(cells) and parsed[-1][2] == band_no:
                # A wrapped cell: its continuation line joins the row above.
                prev_cells, prev_box, _ = parsed[-1]
                merged = [f"{a} {b}".strip() for a, b in zip(prev_cells, cells)]
                parsed[-1] = (merged, (x0, prev_box[1], x1, box[3]), band_no)
                continue
            parsed.append((cells, box, band_no))
    if len(parsed) < 2:
        return None
    header_count = sum(1 for _, _, b in parsed if b == 0) if len(run) >= 2 else 0
    if header_count == 0 and bold_share(lines, parsed[0][1]) >= 0.6:
        header_count = 1
    if header_count >= len(parsed):
        header_count = 0
    bbox = (x0, run[0][0], x1, run[-1][1])
    return FoundTable(
        page_no,
        bbox,
        [c for c, _, _ in parsed[:header_count]],
        [c for c, _, _ in parsed[header_count:]],
        [b for _, b, _ in parsed[header_count:]],
        "rules",
    )
