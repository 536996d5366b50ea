"""Documentation-site Markdown and the same page rendered to HTML agree.

The site fixtures (fixtures/markdown/site, written in the dialect of Python-Markdown-based
documentation generators) are rendered to HTML by Python-Markdown with pymdown-extensions, the
renderer those generators use, and our HTML adapter must give the tree our Markdown adapter gives:
the same headings, the same blocks in the same order, the same quote labels ("Warning: Title"),
tabs as their label line then their body, terms with their definitions, rows and code lines.

Documented differences, normalised here before comparing:
1. `:::kind` containers are not a syntax of that renderer (they come from MDX sites): removed
   from the source for both sides;
2. footnotes: the renderer writes numbered markers and a list of notes at the page's end, while
   the Markdown adapter drops markers and moves each note to the citing section: removed from the
   source for both sides (footnotes have their own tests in test_markdown_site.py);
3. code spans keep their backticks in Markdown chunk text, not in HTML (the HTML has none);
4. task items: the HTML adapter reads no checkbox, the Markdown adapter writes `[ ]` / `[x]`.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import segment
from segment.tree import pretty
from tests.conftest import FIXTURES

markdown = pytest.importorskip("markdown", reason="Python-Markdown is a test dependency")
pytest.importorskip("pymdownx", reason="pymdown-extensions is a test dependency")

CASES = sorted((FIXTURES / "markdown" / "site").glob("*.md"))
EXTENSIONS = [
    "admonition",
    "pymdownx.details",
    "pymdownx.superfences",
    "pymdownx.tabbed",
    "def_list",
    "pymdownx.tasklist",
    "attr_list",
    "abbr",
    "tables",
]


def without_front_matter(text: str) -> str:
    return text.split("---", 2)[2] if text.startswith("---\n") else text


def shared_source(text: str) -> str:
    """The page without the two constructs the renderer treats otherwise (differences 1, 2)."""
    text = re.sub(r"^:::.*?^:::[ \t]*$", "", text, flags=re.MULTILINE | re.DOTALL)
    text = re.sub(r"^\[\^[^\]]+\]:.*(?:\n(?:    |\t).*)*", "", text, flags=re.MULTILINE)
    return re.sub(r"\[\^[^\]]+\]", "", text)


def shape(document: segment.Document) -> list[str]:
    """The tree's pretty form without locators, anchors, languages and the format line."""
    lines = []
    for line in pretty(document).splitlines()[1:]:
        if line.lstrip().startswith("meta "):
            continue
        line = re.sub(r" \[L[0-9-]*\]| \[\]| #\S+| lang=\S+", "", line)
        line = line.replace("`", "")  # difference 3
        line = re.sub(r"'\[[ x]\] ", "'", line)  # difference 4
        lines.append(line.rstrip())
    return lines


@pytest.mark.parametrize("path", CASES, ids=[p.stem for p in CASES])
def test_the_html_adapter_agrees_with_the_markdown_adapter_on_site_pages(path: Path) -> None:
    source = shared_source(without_front_matter(path.read_text(encoding="utf-8")))
    html = markdown.markdown(
        source, extensions=EXTENSIONS, extension_configs={"pymdownx.tabbed": {"alternate_style": True}}
    )
    page = f"<!doctype html><html><body><main>{html}</main></body></html>"
    from_markdown = segment.parse_bytes(source.encode(), path.name)
    from_html = segment.parse_bytes(page.encode(), path.with_suffix(".html").name)
    assert shape(from_html) == shape(from_markdown)
