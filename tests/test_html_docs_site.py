"""Documentation-site constructs in HTML, as the generators render them.

The page is our own (an invented product's install guide) written in the Markdown dialect of
documentation sites; the fixtures are that Markdown rendered by Python-Markdown with its
`admonition` and `def_list` extensions and pymdown-extensions' `details`, `superfences` and
`tabbed` (in its current "alternate" style and its first style), checked here against a fresh
render. Admonitions rendered by mdit-py-plugins' `admon` plugin and by docutils' HTML writer are
checked too. The expected labels follow the Markdown adapter's rule for `!!! warning "Title"`:
the kind capitalised, then ": " and the title when there is one.
"""

from __future__ import annotations

import re

import pytest

import segment
from segment.adapters.html import parse
from segment.tree import Code, DefinitionList, Document, ListBlock, Paragraph, Quote, pretty
from tests.conftest import FIXTURES

HTML = FIXTURES / "html"
SOURCE = """\
# Installing the relay

The relay runs on every host of a deployment.

!!! warning "Mind the version"
    Every host of one deployment runs the same relay version.

!!! tip
    Pin the version in your configuration tool.

??? note "Why one version"
    Relays of different versions disagree on lease lengths.

=== "Linux"

    Install the package:

    ```sh
    apt install quillmark-relay
    ```

=== "macOS"

    - brew install quillmark-relay
    - quillmark-relay start

Lease
:   A claim on one message for a while.

Topic
:   A name that fans one message out to every subscriber.
"""
EXTENSIONS = ["admonition", "pymdownx.details", "pymdownx.superfences", "pymdownx.tabbed", "def_list"]
FIXTURE_STYLES = {"docs-site.html": True, "docs-site-first-tab-style.html": False}
"""Fixture file -> pymdown-extensions' tabbed `alternate_style`."""


def _body(path: str) -> str:
    text = (HTML / path).read_text(encoding="utf-8")
    m = re.search(r"<article>\n(.*)\n</article>", text, re.DOTALL)
    assert m is not None
    return m.group(1)


@pytest.mark.parametrize("path", sorted(FIXTURE_STYLES))
def test_fixtures_are_what_the_generator_renders(path: str) -> None:
    markdown = pytest.importorskip("markdown")
    pytest.importorskip("pymdownx")
    style = {"pymdownx.tabbed": {"alternate_style": FIXTURE_STYLES[path]}}
    assert markdown.markdown(SOURCE, extensions=EXTENSIONS, extension_configs=style) == _body(path)


def _blocks(doc: Document) -> list[object]:
    section = doc.sections[0]
    return list(section.blocks)


@pytest.mark.parametrize("path", sorted(FIXTURE_STYLES))
def test_docs_site_page(path: str) -> None:
    doc = segment.parse(HTML / path)
    blocks = _blocks(doc)
    kinds = [type(b).__name__ for b in blocks]
    assert kinds == [
        "Paragraph",
        "Quote",
        "Quote",
        "Quote",
        "Paragraph",
        "Paragraph",
        "Code",
        "Paragraph",
        "ListBlock",
        "DefinitionList",
    ]
    warning, tip, note = blocks[1], blocks[2], blocks[3]
    assert isinstance(warning, Quote) and isinstance(tip, Quote) and isinstance(note, Quote)
    # Admonitions: "Kind: Title", the title paragraph not repeated in the body.
    assert warning.label == "Warning: Mind the version"
    assert [b.text for b in warning.blocks] == ["Every host of one deployment runs the same relay version."]  # type: ignore[union-attr]
    assert tip.label == "Tip"  # untitled: the generator writes the kind as the title
    assert [b.text for b in tip.blocks] == ["Pin the version in your configuration tool."]  # type: ignore[union-attr]
    assert note.label == "Note: Why one version"  # collapsible (details)
    # Tabs: each label a lead-in line, then its body with its own block kinds.
    linux, install, code, macos, items = blocks[4:9]
    assert isinstance(linux, Paragraph) and linux.text == "Linux:"
    assert isinstance(install, Paragraph) and install.text == "Install the package:"
    assert isinstance(code, Code) and code.lines == ["apt install quillmark-relay"]
    assert isinstance(macos, Paragraph) and macos.text == "macOS:"
    assert isinstance(items, ListBlock) and len(items.items) == 2
    # Definition lists: the definitions block, term with its definition.
    terms = blocks[9]
    assert isinstance(terms, DefinitionList)
    assert [d.terms for d in terms.items] == [["Lease"], ["Topic"]]


def test_both_tab_styles_give_one_tree() -> None:
    trees = [re.sub(r" \[L[\d-]+\]", "", pretty(segment.parse(HTML / p))) for p in sorted(FIXTURE_STYLES)]
    assert trees[0] == trees[1]


def test_a_tab_stays_with_its_label_in_the_chunks() -> None:
    # The segmenter keeps a lead-in line ending in ":" with what follows it (at budgets where the
    # label, the body's own lead-in and its code block fit one chunk).
    doc = segment.parse(HTML / "docs-site.html")
    for budget in (32, 48, 64, 128):
        for chunk in segment.chunk(doc, segment.Settings(max_tokens=budget, min_tokens=1)):
            lines = chunk.text.split("\n")
            assert lines[-1] not in ("Linux:", "macOS:"), (budget, chunk.text)


@pytest.mark.parametrize(
    ("markdown_text", "label"),
    [
        ('!!! warning "Mind the lid"\n    Close it.\n', "Warning: Mind the lid"),
        ("!!! note\n    Plain.\n", "Note"),
        ('!!! note ""\n    No title.\n', "Note"),
        ('??? tip "Folded"\n    Body.\n', "Tip: Folded"),
        ('!!! info inline end "Aside"\n    Body.\n', "Info: Aside"),
    ],
)
def test_mdit_admon_rendering(markdown_text: str, label: str) -> None:
    # mdit-py-plugins' admon plugin renders these; the label is read back from its HTML.
    from markdown_it import MarkdownIt
    from mdit_py_plugins.admon import admon_plugin

    html = MarkdownIt("commonmark").use(admon_plugin).render(markdown_text)
    doc = parse(html.encode(), "admon.html")
    quote = doc.root.blocks[0]
    assert isinstance(quote, Quote) and quote.label == label
    assert quote.blocks and all(label not in b.text for b in quote.blocks)  # type: ignore[union-attr]


def test_docutils_admonitions() -> None:
    # docutils' HTML writer: a kind's title is the kind itself; a generic admonition's class is
    # made from its title, so it has no kind and its title is the label.
    from docutils.core import publish_parts

    rst = ".. warning:: Close the lid.\n\n.. admonition:: Battery care\n\n   Charge fully.\n"
    body = publish_parts(rst, writer="html5")["body"]
    doc = parse(body.encode(), "rst.html")
    assert [(b.label, b.blocks[0].text) for b in doc.root.blocks] == [  # type: ignore[union-attr]
        ("Warning", "Close the lid."),
        ("Battery care", "Charge fully."),
    ]
