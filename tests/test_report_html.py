"""`segment report OUT --html DIR` as a user sees it: rendered by a real browser (headless Chromium).

.ci/run installs Chromium from the Debian packages when it is missing; these tests skip, saying
why, only where no Chromium binary can be found.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from click.testing import CliRunner
from PIL import Image, ImageStat

from segment.cli import cli
from segment.report.html.site import page_name
from segment.settings import Settings
from tests.report_helpers import build, chunk_records, demo_copy

BROWSERS = ("chromium", "chromium-browser", "google-chrome")
# Resources a page would fetch: src/href of media, scripts, stylesheets, CSS url() and @import.
# SVG's xmlns="http://www.w3.org/2000/svg" is a namespace name, never fetched, so it is not matched.
FETCHING = re.compile(
    r"""(?:\bsrc\s*=\s*["']?\s*https?://|<link\b[^>]*\bhref\s*=\s*["']?\s*https?://|"""
    r"""xlink:href\s*=\s*["']?\s*https?://|url\(\s*["']?\s*https?://|@import)""",
    re.IGNORECASE,
)


def browser() -> str:
    for name in BROWSERS:
        found = shutil.which(name)
        if found:
            return found
    pytest.skip("no Chromium binary on PATH (.ci/run installs the Debian package `chromium`)")


def run_browser(tmp: Path, *args: str) -> subprocess.CompletedProcess[str]:
    cmd = [
        browser(),
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        f"--user-data-dir={tmp / 'browser-profile'}",
        *args,
    ]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=True)


def dump_dom(tmp: Path, page: Path) -> str:
    return run_browser(tmp, "--dump-dom", page.as_uri()).stdout


def screenshot(tmp: Path, page: Path, name: str) -> Image.Image:
    png = tmp / name
    run_browser(tmp, f"--screenshot={png}", "--window-size=1280,1400", page.as_uri())
    return Image.open(png).convert("L")


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    tmp = tmp_path_factory.mktemp("report-site")
    out = build(demo_copy(tmp), tmp / "out", Settings(max_tokens=128))
    result = CliRunner().invoke(
        cli, ["report", str(out), "--html", str(tmp / "site")], catch_exceptions=False
    )
    assert result.exit_code == 0, result.output
    return out, tmp / "site"


def test_the_overview_renders_its_plots_and_every_file(site: tuple[Path, Path], tmp_path: Path) -> None:
    out, root = site
    dom = dump_dom(tmp_path, root / "index.html")
    assert dom.count('<figure class="plot">') == 4
    assert dom.count("<svg") >= 4 and "tokens per chunk" in dom
    sources = {r["source"] for r in chunk_records(out)}
    assert dom.count('<tr class="file') == len(sources) == 8
    for source in sources:
        assert f'href="files/{page_name(source)}"' in dom


def test_a_file_page_holds_one_element_per_chunk(site: tuple[Path, Path], tmp_path: Path) -> None:
    out, root = site
    records = [r for r in chunk_records(out) if r["source"] == "reference/cli.md"]
    dom = dump_dom(tmp_path, root / "files" / page_name("reference/cli.md"))
    cards = re.findall(r'<article class="chunk[^"]*" id="c(\d+)"', dom)
    assert [int(c) for c in cards] == [r["seq"] for r in records]
    for r in records:
        assert r["id"] in dom
    # every source line is there, and the lines of chunk #0 carry its mark
    assert dom.count('class="no"') >= len(
        (out.parent / "demo" / "reference" / "cli.md").read_text(encoding="utf-8").splitlines()
    )
    assert "table continued from #" in dom  # the Commands table is cut at 128 tokens


def test_screenshots_are_not_blank(site: tuple[Path, Path], tmp_path: Path) -> None:
    _, root = site
    for page, name in (
        (root / "index.html", "overview.png"),
        (root / "files" / page_name("guides/flight-planning.md"), "file.png"),
    ):
        image = screenshot(tmp_path, page, name)
        # a blank (one-colour) page has zero variance; text, plots and chunk marks give plenty
        assert ImageStat.Stat(image).var[0] > 100, name


def test_pages_fetch_nothing_from_the_network(site: tuple[Path, Path], tmp_path: Path) -> None:
    _, root = site
    pages = sorted(root.rglob("*.html"))
    assert len(pages) == 9
    for page in pages:
        assert not FETCHING.search(page.read_text(encoding="utf-8")), page.name
    for page in (root / "index.html", pages[1]):
        assert not FETCHING.search(dump_dom(tmp_path, page)), page.name


def test_a_chunk_url_is_linked_when_the_record_has_one(tmp_path: Path) -> None:
    from io import StringIO

    from segment.report.html.viewer import write_file_page

    base = {"source": "a.md", "format": "markdown", "breadcrumb": ["A"], "blocks": ["paragraph"],
            "lines": [1, 1], "pages": None, "anchor": "a", "oversize": False}  # fmt: skip
    with_url = dict(base, id="0" * 32, seq=0, text="One.", tokens=2, url="https://docs.example/a#a")
    without = dict(base, id="1" * 32, seq=1, text="Two and then", tokens=3)  # no url field at all
    page = StringIO()
    write_file_page(
        page,
        "a.md",
        [with_url, without],
        budget=16,
        source_path=None,
        page_dir=tmp_path,
        overview="../index.html",
    )
    html = page.getvalue()
    assert html.count('<article class="chunk') == 2
    assert '<a href="https://docs.example/a#a">' in html  # a link to follow, not a resource to fetch
    assert not FETCHING.search(html)
    assert "ends mid-sentence" in html  # "Two and then" stops without a full stop


def test_overlap_is_shown_in_the_text_and_in_the_source_margin(tmp_path: Path) -> None:
    out = build(demo_copy(tmp_path), tmp_path / "out", Settings(max_tokens=96, overlap_tokens=24))
    site = tmp_path / "site"
    result = CliRunner().invoke(cli, ["report", str(out), "--html", str(site)], catch_exceptions=False)
    assert result.exit_code == 0, result.output
    pages = [p.read_text(encoding="utf-8") for p in (site / "files").glob("*.html")]
    assert any('class="flag overlap"' in page and "<mark>" in page for page in pages)
    assert any('class="ln both"' in page for page in pages)  # lines two chunks share
    # the store keeps only a hash of the settings: budget and overlap are found from it
    assert all("budget 96 tokens" in page for page in pages)
