"""Golden trees of the HTML adapter: fixtures/html/<case>.html -> <case>.tree.txt (pretty form).

The cases are our own pages, each built around one rule of the adapter (boilerplate, headings and
anchors, blocks, text and charsets, DocBook-style reference pages, the table model). Sources of the
expectations are named in each fixture's comment or below; DOCSEGMENT_REGEN=1 rewrites the goldens
(review the diff before committing).
"""

from __future__ import annotations

from pathlib import Path

import pytest

import segment
from segment.tree import pretty
from tests.conftest import FIXTURES, check_golden

CASES = sorted((FIXTURES / "html").glob("*.html"))


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_tree_matches_golden(path: Path) -> None:
    doc = segment.parse(path)
    check_golden(path.with_suffix(".tree.txt"), pretty(doc))


def _doc(name: str) -> segment.Document:
    return segment.parse(FIXTURES / "html" / name)


def _all_text(doc: segment.Document) -> str:
    return pretty(doc)


def test_boilerplate_words_never_reach_the_tree() -> None:
    # Common practice (no standard names page chrome): nav, header, footer, aside, script, style,
    # noscript, template, forms and hidden elements are not content.
    text = _all_text(_doc("boilerplate.html"))
    for word in (
        "Skip to content",
        "Search the docs",
        "Guides",
        "cookies",
        "do not index me",
        "Enable scripts",
        "Template text",
        "Hidden text",
        "Inline-hidden",
        "decorative",
        "See also the drone firmware",
        "Was this page helpful",
        "All rights reserved",
        "On this page",
    ):
        assert word not in text, word
    for word in (
        "Dock firmware",
        "Each dock runs its own firmware",
        "Docks update at night",
        "An update never starts",
    ):
        assert word in text, word


def test_heading_permalinks_and_anchors() -> None:
    doc = _doc("headings.html")
    heads = [(s.heading.level, s.heading.text, s.heading.anchor) for _p, s in doc.walk() if s.heading]
    assert heads == [
        (1, "Route planner", "route-planner"),  # Sphinx-style trailing ¶ link
        (2, "Waypoints", "waypoints"),  # id of the enclosing <section>
        (3, "Altitude", "altitude"),  # leading icon-only link (hosted Markdown renderers)
        (3, "Speed", "speed-limits"),  # trailing "#" link gives the fragment
        (2, "No-fly zones", "no-fly-zones"),  # DocBook <a name> inside the heading
        (2, "Battery reserve", "battery-reserve"),  # WAI-ARIA role=heading + aria-level
        (4, "Reserve by wind", "reserve-by-wind"),  # Docusaurus-style hash-link
        (2, "Contact support", None),  # a link with words is heading text
    ]
    assert doc.title == "Route planner"


def test_title_from_title_element_when_no_h1() -> None:
    assert _doc("title-only.html").title == "Release notes 3.2"
    # With an h1 the first h1's text is the title, not <title> ("Dock firmware | Corvane...").
    assert _doc("boilerplate.html").title == "Dock firmware"


def test_charsets() -> None:
    # WHATWG Encoding Standard: the label iso-8859-1 means windows-1252 (0x80 is the euro sign).
    assert "€ euro, café" in _all_text(_doc("charset-http-equiv.html"))
    assert "“curly”" in _all_text(_doc("charset-meta.html"))
    assert "über" in _all_text(_doc("bom-utf16.html"))
    bad = _doc("invalid-utf8.html")
    assert bad.warnings and "U+FFFD" in bad.warnings[0]
    assert "café" in _all_text(bad)
    assert not _doc("charset-meta.html").warnings
