"""Small rules of the PDF adapter, one by one, on hand-made inputs."""

from __future__ import annotations

import gc

import pytest

from segment.adapters.pdf.blocks import join_lines, vocabulary
from segment.adapters.pdf.extract import Line, Piece, normalise_text, span_pieces
from segment.adapters.pdf.headings import numbering
from segment.adapters.pdf.layout import find_gutters, order_page
from segment.adapters.pdf.outline import norm
from segment.adapters.pdf.rulings import is_candidate, rulings_from_vectors
from segment.adapters.pdf.running import find_running, is_page_number, running_key
from segment.adapters.pdf.tables import line_words
from segment.gcpause import paused_gc


def line(
    text: str, x0: float, y0: float, x1: float, page: int = 1, size: float = 10.0, block: int = 0
) -> Line:
    ln = Line(
        page, x0, y0, x1, y0 + size * 1.2, [Piece(text, x0, x1, size, False, False, False, False)], block
    )
    ln.finish()
    return ln


@pytest.mark.parametrize(
    ("raw", "want"),
    [
        ("\ufb01le", "file"),  # LATIN SMALL LIGATURE FI (Unicode compatibility decomposition)
        ("e\ufb03cient", "efficient"),  # LATIN SMALL LIGATURE FFI
        ("a\u00a0b", "a b"),  # NO-BREAK SPACE
        ("\uff21\uff22", "AB"),  # FULLWIDTH LATIN CAPITAL LETTERS
        ("x\u00b2", "x\u00b2"),  # SUPERSCRIPT TWO keeps its meaning: not folded
        ("\u00bd", "\u00bd"),  # VULGAR FRACTION ONE HALF: not folded
    ],
)
def test_nfkc_only_where_safe(raw: str, want: str) -> None:
    # Unicode Standard Annex #15: NFKC folds compatibility characters; we fold only the tags
    # that keep meaning (<compat>, <noBreak>, <wide>, <narrow>, <font>, <small>).
    assert normalise_text(raw) == want


def test_hyphen_joined_when_word_occurs_elsewhere() -> None:
    vocab = vocabulary([line("the information desk", 0, 0, 100)])
    assert join_lines(["see the infor-", "mation desk"], vocab) == "see the information desk"


def test_hyphen_kept_when_word_unknown() -> None:
    vocab = vocabulary([line("nothing relevant", 0, 0, 100)])
    assert join_lines(["a state-", "of-the-art drone"], vocab) == "a state-of-the-art drone"


def test_soft_hyphen_always_joins() -> None:
    # U+00AD SOFT HYPHEN marks a break opportunity, not a character of the word.
    assert join_lines(["recali\u00ad", "bration done"], set()) == "recalibration done"


def test_capitalised_continuation_follows_the_same_rule() -> None:
    assert join_lines(["the North-", "West corridor"], {"the", "corridor"}) == "the North-West corridor"
    assert join_lines(["journal (MN-", "RAS) style"], {"mnras"}) == "journal (MNRAS) style"


@pytest.mark.parametrize(
    ("text", "depth"),
    [
        ("2 Planning", 2 - 1),
        ("2.3 Routes", 2),
        ("A.1 Limits", 2),
        ("Chapter 4 Docks", 1),
        ("IV. Annex", 1),
        ("Planning", None),
    ],
)
def test_numbering_depth(text: str, depth: int | None) -> None:
    assert numbering(text) == depth


def test_norm_drops_numbers_case_and_punctuation() -> None:
    assert norm("1.2.  Flight PLANNING:") == norm("Flight planning") == "flight planning"


@pytest.mark.parametrize("text", ["7", "- 7 -", "Page 7 of 90", "vii", "12 / 233"])
def test_page_number_forms(text: str) -> None:
    assert is_page_number(text) or running_key(text) in ("# / #",)


def test_contents_leader_is_not_a_page_number() -> None:
    assert not is_page_number(". . . . . . . . 127")


def test_running_heads_with_changing_numbers_and_alternation() -> None:
    pages = []
    for n in range(1, 9):
        head = "Corvane Fleet Manual" if n % 2 else "Chapter 2. Docks"
        pages.append(
            [
                line(head, 72, 30, 300, page=n),
                line(f"Body text of page {n} that is unique.", 72, 100, 500, page=n),
                line(str(n), 300, 760, 306, page=n),
            ]
        )
    removed = find_running(pages, [792.0] * 8)
    assert len(removed) == 16
    assert all("Body" not in ln.text for ln in removed)


def test_two_columns_read_column_by_column() -> None:
    lines = []
    for i in range(12):
        y = 100 + i * 14
        lines.append(line(f"left column line {i} of running text here", 50, y, 290, block=1))
        lines.append(line(f"right column line {i} of running text here", 310, y, 550, block=2))
    assert len(find_gutters(lines)) == 1
    blocks = order_page(lines)
    text = " ".join(b.text for b in blocks)
    assert text.index("left column line 11") < text.index("right column line 0")


def test_key_value_rows_are_not_columns() -> None:
    lines = []
    for i in range(12):
        y = 100 + i * 14
        lines.append(line(f"key{i}", 50, y, 80, block=1))
        lines.append(line(f"what key {i} does, in a few words", 200, y, 400, block=1))
    assert find_gutters(lines) == []
    blocks = order_page(lines)
    assert blocks[0].lines[0].text.startswith("key0") and "what key 0" in blocks[0].lines[0].text


def test_vector_figure_labels_stay_together() -> None:
    # A two-column page with a drawn chart in the left column: its tick labels must not break
    # the columns or scatter through the text (pymupdf draws the page; common practice layout).
    import pymupdf

    from segment.adapters.pdf import parse_pdf
    from segment.tree import Paragraph

    doc = pymupdf.open()
    page = doc.new_page(width=595, height=842)
    prose = "Each dock reports its charge state every minute and the planner uses it. " * 6
    page.insert_textbox(pymupdf.Rect(50, 60, 290, 300), prose, fontsize=10)
    right = "Pads on the roof are cleared of snow before the first departure of the day. " * 6
    page.insert_textbox(pymupdf.Rect(310, 60, 550, 780), (right + "\n") * 5, fontsize=10)
    for i in range(12):  # a curve of twelve strokes with an axis box
        page.draw_bezier(
            (60 + i * 18, 500 - i * 9), (66 + i * 18, 480), (70 + i * 18, 520), (78 + i * 18, 495 - i * 8)
        )
    page.draw_rect(pymupdf.Rect(55, 400, 285, 560))
    for i, label in enumerate(["0", "10", "20", "30", "40"]):
        page.insert_text((60 + i * 50, 575), label, fontsize=7)
    page.insert_text((130, 395), "Charge over a shift", fontsize=7)
    page.insert_textbox(pymupdf.Rect(50, 600, 290, 780), prose, fontsize=10)
    parsed = parse_pdf(doc.tobytes(), "chart.pdf", use_outline=False)
    texts = [b.text for _, s in parsed.walk() for b in s.blocks if isinstance(b, Paragraph)]
    labels = [t for t in texts if t.startswith("Charge over a shift")]
    assert labels == ["Charge over a shift 0 10 20 30 40"]
    left = [i for i, t in enumerate(texts) if t.startswith("Each dock reports")]
    right_first = next(i for i, t in enumerate(texts) if t.startswith("Pads on the roof"))
    # Column by column: the whole left column (text, figure labels, text) before the right one.
    assert len(left) == 2 and left[0] < texts.index(labels[0]) < left[1] < right_first


def _vector(x0: float, y0: float, x1: float, y1: float, stroked: bool = False, color: int = 0xDDDDDD) -> dict:
    # The shape of a vector block in pymupdf's "dict" output with TEXT_COLLECT_VECTORS.
    return {"type": 3, "bbox": (x0, y0, x1, y1), "isrect": True, "stroked": stroked, "color": color}


def test_a_lone_shaded_box_is_not_a_table_candidate() -> None:
    # A shaded listing: its top and bottom edges share a width, but they are the same box's sides.
    r = rulings_from_vectors([_vector(60, 100, 550, 180)], 612, 792)
    assert len(r.h) == 2 and not r.strokes
    assert not is_candidate(r)


def test_two_rules_of_one_width_make_a_candidate() -> None:
    # Booktabs-style table: horizontal rules only, drawn as thin bars of the same extent.
    r = rulings_from_vectors([_vector(60, 100, 550, 100.8), _vector(60, 180, 550, 180.5)], 612, 792)
    assert is_candidate(r)


def test_short_rules_make_no_candidate() -> None:
    # Underlines and dashes narrower than MIN_RULE_WIDTH never bound a rule-bounded table.
    r = rulings_from_vectors([_vector(60, 100, 90, 100.8), _vector(60, 180, 90, 180.5)], 612, 792)
    assert not is_candidate(r)


def test_boxes_side_by_side_make_a_candidate() -> None:
    # Cells drawn as separate shaded boxes: a vertical edge of one meets the other's edges.
    r = rulings_from_vectors([_vector(60, 100, 200, 120), _vector(200, 100, 400, 120)], 612, 792)
    assert is_candidate(r)


def test_paused_gc_restores_the_collector_state() -> None:
    assert gc.isenabled()
    with paused_gc():
        assert not gc.isenabled()
        with paused_gc():
            assert not gc.isenabled()
        assert not gc.isenabled()
    assert gc.isenabled()
    gc.disable()
    try:
        with paused_gc():
            pass
        assert not gc.isenabled()  # a host that runs without the collector keeps it off
    finally:
        gc.enable()


@pytest.mark.parametrize(
    "text",
    [
        "Re-use the infor- mation desk_2 in x86_64",
        "caf\u00e9 na\u0131ve e\u0301t\u00e9 x\u00b2 \u2167 v1.2.3",  # accents, combining acute, superscript two, roman numeral
        "\u00abquoted\u00bb (paren) [bracket] snake_case CamelCase 42nd",
    ],
)
def test_vocabulary_is_the_letter_runs_of_the_text(text: str) -> None:
    # The same words as the pattern [^\W\d_]+ (runs of letters, Python `re` semantics) over the
    # lower-cased text: the fast path splits at white space first.
    import re

    assert vocabulary([line(text, 0, 0, 100)]) == set(re.findall(r"[^\W\d_]+", text.lower()))


def _span(text: str, x0: float, x1: float, font: str = "Serif", flags: int = 4, size: float = 10.0) -> dict:
    # The shape of a span in pymupdf's "dict" output (TextPage dict format), the fields we read.
    return {"text": text, "bbox": (x0, 0.0, x1, 12.0), "font": font, "flags": flags, "size": size}


def test_touching_spans_of_one_style_make_one_piece() -> None:
    # MuPDF gives each space it inserts a span of its own (other character flags): word, space, word.
    pieces = span_pieces([_span("Each", 72, 91.5), _span(" ", 91.5, 94.9), _span("line", 94.9, 110)])
    assert [(p.text, p.x0, p.x1) for p in pieces] == [("Each line", 72, 110)]


def test_style_changes_and_gaps_keep_pieces_apart() -> None:
    pieces = span_pieces(
        [
            _span("Key", 72, 90, flags=20),  # bold (flag bit 16)
            _span(" ", 90, 93),
            _span("value", 93, 120),
            _span(" ", 120, 160),  # an inserted space as wide as four characters: a gap
            _span("far", 160, 175),
            _span("off", 180, 195),  # does not touch the previous span
        ]
    )
    assert [p.text for p in pieces] == ["Key", " value", " ", "far", "off"]


def test_monospaced_spans_are_never_joined() -> None:
    # Code indentation is measured from word widths; MuPDF's inserted spaces are narrower.
    mono = {"font": "DejaVuSansMono", "flags": 8}
    pieces = span_pieces(
        [_span("M_1", 90, 107.2, **mono), _span(" ", 107.2, 110.8, **mono), _span("+", 110.8, 116.5, **mono)]
    )
    assert [p.text for p in pieces] == ["M_1", " ", "+"]


def test_table_words_are_placed_by_character_count() -> None:
    ln = line("ab cd", 100, 50, 150)  # one piece, 10 points a character
    words = line_words([ln], [(0, 100)])
    assert [(w.text, w.x0, w.x1) for w in words] == [("ab", 100, 120), ("cd", 130, 150)]
    assert line_words([ln], [(200, 300)]) == []  # outside every band: not read


def test_table_words_across_pieces_use_each_piece_width() -> None:
    ln = Line(
        1,
        100,
        50,
        190,
        62,
        [
            Piece("ab ", 100, 130, 10, False, False, False, False),
            Piece("cdef", 130, 190, 10, True, False, False, False),
        ],
        0,
    )
    ln.finish()
    words = line_words([ln], [(0, 100)])
    assert [(w.text, w.x0, w.x1) for w in words] == [("ab", 100, 120), ("cdef", 130, 190)]


def test_folding_table_stays_bounded() -> None:
    from segment.adapters.pdf import extract

    every = "".join(chr(c) for c in range(0x4E00, 0x4E00 + 3 * extract.SafeFolding.LIMIT))  # CJK ideographs
    assert normalise_text(every) == every  # no compatibility decomposition: unchanged
    assert len(extract.FOLDING) <= extract.SafeFolding.LIMIT
    assert normalise_text("\ufb01") == "fi"  # still folds after starting over
