"""The hostile corpus through the library alone (`segment.parse_bytes` + `segment.chunk`).

Every case ends in chunks or a SegmentError naming the file with a status; nothing else escapes,
and no text a case marks as absent (an included /etc/passwd, a notebook output) reaches a chunk.
Cut PDFs (the scenarios "bad PDFs" and "event before the write finishes"): MuPDF repairs many cuts and reports every page it can rebuild, so
"opened" does not mean "whole": each cut that opens must carry the `repaired` warning, and its
text must be a part of the whole file's text, never more.
"""

from __future__ import annotations

import pytest

import segment
from segment.settings import Settings
from tests import hostile

FAST = [c for c in hostile.CASES if not ({"quadratic", "long"} & c.tags)]


@pytest.mark.timeout(120)
@pytest.mark.parametrize("case", FAST, ids=lambda c: c.source.encode("unicode_escape").decode()[:40])
def test_each_case_gives_chunks_or_a_clear_error(case: hostile.Hostile) -> None:
    try:
        doc = segment.parse_bytes(case.make(), case.source)
        chunks = list(segment.chunk(doc, Settings()))
    except segment.SegmentError as exc:
        assert case.expect == "failed" or case.statuses, (
            f"{case.source}: unexpected {exc.status}: {exc.reason}"
        )
        assert exc.status in case.statuses and exc.source == case.source and exc.reason.strip()
        return
    assert case.expect == "ok", f"{case.source} ({case.why}) should have failed"
    texts = "\n".join(c.text for c in chunks)
    if case.needle:
        assert case.needle in texts, f"{case.source} ({case.why}): text lost"
    if case.absent:
        assert case.absent not in texts, f"{case.source} ({case.why}): {case.absent!r} reached the chunks"


CUTS = [c for c in hostile.CASES if "cut" in c.tags]


@pytest.mark.timeout(60)
def test_a_cut_pdf_that_opens_says_it_was_repaired_and_holds_part_of_the_text() -> None:
    whole = list(segment.chunk(segment.parse_bytes(hostile.good_pdf(), "whole.pdf"), Settings()))
    lines = {line for c in whole for line in c.text.splitlines() if line.strip()}
    opened = 0
    for case in CUTS:
        try:
            doc = segment.parse_bytes(case.make(), case.source)
        except segment.SegmentError as exc:
            assert exc.status in case.statuses
            continue
        opened += 1
        assert "repaired: text may be partial" in doc.warnings, case.source
        got = {line for c in segment.chunk(doc, Settings()) for line in c.text.splitlines() if line.strip()}
        assert got <= lines, f"{case.source}: text that is not in the whole file"
    assert opened >= len(CUTS) // 2  # most cuts open repaired: the case the warning exists for
