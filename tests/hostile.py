"""A hostile corpus, made by code at test time (nothing large is committed).

Each `Hostile` case is one file: its name (bytes, so undecodable names are possible), its
content, and what a build must make of it: chunks holding a given text (`expect="ok"`), or one
of the failure statuses in `statuses`; `absent` is text that must never reach the chunks. The
cases follow the reliability scenarios "bad PDFs", "event before the write finishes", "deep
HTML", "Markdown nesting", "quadratic Markdown", "huge paragraphs", "encodings" and "odd file
names" (docs/reliability.md), and give each newer format (reStructuredText, notebooks, MDX, plain
text) its own bad inputs; the PDF faults are made with pymupdf itself.

Things that are not file contents (symlinks, a file that vanishes, an unreadable file) are made
by the helpers at the bottom, since they need a real folder.
"""

from __future__ import annotations

import json
import os
import random
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path

import pymupdf

GOOD_TEXT = "The hangar crew logs every battery swap"
"""A sentence each good file carries, so its chunks can be found."""


@dataclass(frozen=True, slots=True)
class Hostile:
    """One hostile file and what a build must make of it."""

    name: bytes
    """File name (bytes: names need not be valid UTF-8)."""
    make: Callable[[], bytes]
    expect: str
    """`ok` (chunks, holding `needle`) or `failed` (a status from `statuses`, no chunks)."""
    statuses: frozenset[str] = frozenset()
    """Failure statuses accepted for `failed`, or for `ok` cases allowed to fail cleanly."""
    needle: str = ""
    """Text that must reach the chunks of an `ok` case ("" when it may have no chunks)."""
    why: str = ""
    tags: frozenset[str] = field(default_factory=frozenset)
    absent: str = ""
    """Text that must never reach the chunks ("" when there is none), e.g. a file the source
    tried to include, or a notebook output."""

    @property
    def source(self) -> str:
        """The name as chunk records and the feed write it (undecodable bytes become U+FFFD)."""
        return self.name.decode("utf-8", "replace")


# -- PDFs ---------------------------------------------------------------------------------------


PDF_TOPICS = (
    "Battery",
    "Propeller",
    "Gimbal",
    "Firmware",
    "Landing",
    "Radio",
    "Camera",
    "Compass",
    "Charger",
    "Hangar",
    "Transport",
    "Storage",
)


@cache
def good_pdf(pages: int = 12) -> bytes:
    """A plain text PDF (one heading line and a few sentences per page), no object streams.
    At most 12 pages: each has its own heading (repeated ones would read as running heads)."""
    doc = pymupdf.open()
    for n in range(1, pages + 1):
        page = doc.new_page()
        page.insert_text((72, 72 + 6 * (n % 4)), f"{PDF_TOPICS[n - 1]} checklist", fontsize=16)
        y = 130
        for k in range(12):
            page.insert_text((72, y), f"Step {n}.{k}: {GOOD_TEXT} on page {n}.", fontsize=10)
            y += 16
    doc.set_metadata({"title": "Hangar procedures"})
    data = doc.tobytes(garbage=0, deflate=True)
    doc.close()
    return data


def cut_pdf(share: float) -> bytes:
    """The good PDF cut after `share` of its bytes (a copy still in progress: the "event before the write finishes" scenario)."""
    data = good_pdf()
    return data[: int(len(data) * share)]


def broken_xref_pdf() -> bytes:
    """The cross-reference table and the startxref offset overwritten (MuPDF repairs it)."""
    out = bytearray(good_pdf())
    pos = out.rfind(b"startxref")
    out[pos + 10 : pos + 18] = b"99999999"
    xref = out.find(b"\nxref")
    if 0 <= xref < pos:
        out[xref + 1 : xref + 41] = b"X" * 40
    return bytes(out)


def encrypted_pdf(user_pw: str) -> bytes:
    """AES-256 (PDF 2.0 standard security handler) with the given user password."""
    doc = pymupdf.open(stream=good_pdf(), filetype="pdf")
    data = doc.tobytes(encryption=pymupdf.PDF_ENCRYPT_AES_256, owner_pw="owner-secret", user_pw=user_pw)
    doc.close()
    return data


@cache
def objstm_pdf() -> bytes:
    """The good PDF saved with object streams (compressed cross-reference streams)."""
    doc = pymupdf.open(stream=good_pdf(), filetype="pdf")
    data = doc.tobytes(garbage=1, deflate=True, use_objstms=1)
    doc.close()
    return data


def random_bytes(n: int, seed: int = 6) -> bytes:
    return random.Random(seed).randbytes(n)


# -- notebooks, reStructuredText ------------------------------------------------------------------

NEEDLE_OUTPUT = "OUTPUT-BYTES-NEVER-CHUNKED "
"""The text of the huge notebook output; outputs are off by default, so none may be chunked."""
PASSWD_LINE = "root:x:0:0:"
"""The start of /etc/passwd's first line (its usual form, from memory: passwd(5))."""


def notebook(cells: list[dict[str, object]]) -> bytes:
    """A format 4.5 notebook (cell ids required from 4.5 on: nbformat's v4.5 schema)."""
    return json.dumps(
        {
            "nbformat": 4,
            "nbformat_minor": 5,
            "metadata": {
                "kernelspec": {"name": "python3", "language": "python", "display_name": "Python 3"},
                "language_info": {"name": "python"},
            },
            "cells": cells,
        }
    ).encode()


def markdown_cell(n: int, source: str) -> dict[str, object]:
    return {"cell_type": "markdown", "id": f"m{n}", "metadata": {}, "source": source}


def code_cell(n: int, source: str, outputs: list[dict[str, object]] | None = None) -> dict[str, object]:
    return {
        "cell_type": "code",
        "id": f"c{n}",
        "metadata": {},
        "execution_count": n,
        "source": source,
        "outputs": outputs or [],
    }


def good_notebook(label: str) -> bytes:
    """A small good notebook: a heading cell, a text cell, a code cell."""
    return notebook(
        [
            markdown_cell(1, f"# Fleet notebook {label}\n\n{GOOD_TEXT} for {label}."),
            code_cell(2, "packs = 12\nprint(packs)"),
        ]
    )


def good_rst(label: str) -> bytes:
    """A small good reStructuredText page."""
    return (
        f"Fleet page {label}\n{'=' * (11 + len(label))}\n\n{GOOD_TEXT} for {label}.\n\n"
        "Storage\n-------\n\nKeep spare packs in the fire cabinet.\n"
    ).encode()


def huge_output_notebook() -> bytes:
    """A notebook whose one code cell has a 50 MB stream output."""
    text = NEEDLE_OUTPUT * (50_000_000 // len(NEEDLE_OUTPUT))
    output: dict[str, object] = {"output_type": "stream", "name": "stdout", "text": text}
    return notebook([markdown_cell(1, f"# Telemetry dump\n\n{DEEP}"), code_cell(2, "dump()", [output])])


def many_cells_notebook(n: int = 100_000) -> bytes:
    """A notebook of `n` cells, text and code taking turns; the last cell holds the needle."""
    cells = [code_cell(i, f"x = {i}") if i % 2 else markdown_cell(i, f"Cell {i}.") for i in range(n - 1)]
    return notebook([*cells, markdown_cell(n, DEEP)])


def rst_quote_bomb(levels: int = 10_000) -> bytes:
    """`levels` nested block quotes: each paragraph indented one column more than the last
    (the reStructuredText specification: an indented text block is a block quote)."""
    body = "".join(" " * i + f"Level {i}.\n\n" for i in range(levels))
    return ("Quotes\n======\n\n" + body + " " * levels + DEEP + "\n").encode()


UNKNOWN_DIRECTIVE_END = "body line 29999 of the directive"


def rst_unknown_directive() -> bytes:
    """An unknown directive with a body of about 1 MB."""
    body = "".join(f"   body line {i} of the directive\n" for i in range(30_000))
    return (f"Unknown\n=======\n\n{GOOD_TEXT}.\n\n.. frobnicate:: argument\n\n{body}\nAfter it.\n").encode()


# -- the corpus ---------------------------------------------------------------------------------

PDF_FAIL = frozenset({"corrupt"})
DEEP = "deepest words here"

CASES: tuple[Hostile, ...] = (
    # Bad PDFs, and PDFs cut while a copy is still in progress
    *(
        Hostile(
            f"cut-{int(s * 100)}.pdf".encode(),
            lambda s=s: cut_pdf(s),
            "ok",
            PDF_FAIL,
            "",
            f"PDF cut at {s:.0%}: fails to open, or opens repaired with partial text",
            frozenset({"pdf", "cut"}),
        )
        for s in (0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 0.97)
    ),
    *(
        Hostile(
            f"objstm-cut-{int(s * 100)}.pdf".encode(),
            lambda s=s: objstm_pdf()[: int(len(objstm_pdf()) * s)],
            "ok",
            PDF_FAIL | {"no_text"},
            "",
            f"PDF with object streams cut at {s:.0%} (may open with 0 pages)",
            frozenset({"pdf", "cut"}),
        )
        for s in (0.5, 0.9)
    ),
    Hostile(
        b"header-only.pdf", lambda: b"%PDF-1.7\n", "failed", PDF_FAIL, why="a PDF header and nothing else"
    ),
    Hostile(
        b"header-garbage.pdf",
        lambda: b"%PDF-1.4\n" + random_bytes(20_000, 7),
        "failed",
        PDF_FAIL | {"no_text"},
        why="a PDF header, then random bytes",
    ),
    Hostile(
        b"broken-xref.pdf",
        broken_xref_pdf,
        "ok",
        PDF_FAIL,
        "Storage checklist",
        "cross-reference table overwritten: repaired",
        frozenset({"pdf"}),
    ),
    Hostile(
        b"aes256-user.pdf",
        lambda: encrypted_pdf("hangar-7"),
        "failed",
        frozenset({"encrypted"}),
        why="AES-256 with a user password",
        tags=frozenset({"pdf"}),
    ),
    Hostile(
        b"owner-only.pdf",
        lambda: encrypted_pdf(""),
        "ok",
        frozenset(),
        "Gimbal checklist",
        "AES-256 with an owner password only: must read normally",
        frozenset({"pdf"}),
    ),
    Hostile(b"random-bytes.pdf", lambda: random_bytes(30_000), "failed", PDF_FAIL, why="random bytes"),
    Hostile(
        b"html-named.pdf",
        lambda: b"<html><body><h1>Gate codes</h1><p>Not a PDF.</p></body></html>",
        "failed",
        PDF_FAIL,
        why="HTML bytes named .pdf (MuPDF would sniff and open it)",
    ),
    Hostile(
        b"text-named.pdf",
        lambda: b"# Release notes\n\nPlain text, not a PDF.\n",
        "failed",
        PDF_FAIL,
        why="text named .pdf",
    ),
    # 0-byte files of each format
    Hostile(b"empty.pdf", lambda: b"", "failed", frozenset({"empty"}), why="0 bytes"),
    Hostile(b"empty.md", lambda: b"", "ok", why="0 bytes: no chunks, no error"),
    Hostile(b"empty.html", lambda: b"", "ok", why="0 bytes: no chunks, no error"),
    # Deep HTML and Markdown nesting
    Hostile(
        b"deep-divs.html",
        lambda: b"<div>" * 100_000 + DEEP.encode() + b"</div>" * 100_000,
        "ok",
        needle=DEEP,
        why="100,000 nested divs",
    ),
    Hostile(
        b"deep-quotes.md",
        lambda: ("> " * 10_000 + DEEP + "\n").encode(),
        "ok",
        needle=DEEP,
        why="10,000 nested block quotes",
    ),
    Hostile(
        b"deep-list.md",
        lambda: ("- " * 10_000 + DEEP + "\n").encode(),
        "ok",
        needle=DEEP,
        why="10,000 nested list items",
    ),
    # Quadratic Markdown: markdown-it's quadratic-prone runs, 100k characters each
    *(
        Hostile(
            f"run-{label}.md".encode(),
            lambda unit=unit: (unit * (100_000 // len(unit) + 1))[:100_000].encode(),
            "ok",
            needle="",
            why=f"{unit!r} repeated to 100k characters",
            tags=frozenset({"quadratic"}),
        )
        for label, unit in (
            ("bracket", "["),
            ("lt", "<"),
            ("star-under", "*_"),
            ("strong-a", "**a"),
            ("link-open", "[a](b "),
        )
    ),
    # Huge paragraphs: 1.2M characters each
    Hostile(
        b"para-sentences.md",
        lambda: (("The drone returns to its dock. " * 40_000)[:1_200_000] + "\n").encode(),
        "ok",
        needle="The drone returns to its dock.",
        why="1.2M characters of short sentences",
        tags=frozenset({"long"}),
    ),
    Hostile(
        b"para-words.md",
        lambda: (("lorem ipsum dolor " * 70_000)[:1_200_000] + "\n").encode(),
        "ok",
        needle="lorem ipsum dolor",
        why="1.2M characters, no punctuation",
        tags=frozenset({"long"}),
    ),
    # Encodings and bytes
    Hostile(
        b"cp1252.md",
        lambda: b"# Crew\xe2 notes\n\nThe pilot\x92s log \x96 kept daily.\n",
        "ok",
        needle="pilot\u2019s log",
        why="CP-1252 bytes in a .md",
    ),
    Hostile(
        b"utf16.md",
        lambda: "\ufeff# Wartung\n\nDie Crew prüft die Akkus.\n".encode("utf-16-le"),
        "ok",
        needle="Die Crew prüft die Akkus.",
        why="UTF-16 LE with a BOM",
    ),
    Hostile(
        b"nul-bytes.md",
        lambda: b"# Header\n\nText\x00with\x00NULs.\n",
        "failed",
        frozenset({"corrupt"}),
        why="NUL bytes: binary content",
    ),
    Hostile(
        b"latin1.html",
        lambda: b"<meta charset=windows-1252><h1>Caf\xe9</h1><p>The pilot\x92s log.</p>",
        "ok",
        needle="pilot\u2019s log",
        why="declared windows-1252 HTML",
    ),
    # Odd file names
    Hostile(
        b"bad\xffname.md", lambda: good_md("undecodable"), "ok", needle=GOOD_TEXT, why="byte 0xff in the name"
    ),
    Hostile(b"two\nlines.md", lambda: good_md("newline"), "ok", needle=GOOD_TEXT, why="newline in the name"),
    Hostile("cafe\u0301.md".encode(), lambda: good_md("nfd"), "ok", needle=GOOD_TEXT, why="NFD name"),
    Hostile(b"n" * 252 + b".md", lambda: good_md("long name"), "ok", needle=GOOD_TEXT, why="255-byte name"),
    Hostile(b"..md", lambda: good_md("dots"), "ok", needle=GOOD_TEXT, why="a name of dots"),
    Hostile(b"-rf .md", lambda: good_md("dash"), "ok", needle=GOOD_TEXT, why="leading dash and space"),
    # reStructuredText: nesting, includes, unknown directives
    Hostile(
        b"quote-bomb.rst",
        rst_quote_bomb,
        "ok",
        needle=DEEP,
        why="10,000 nested block quotes (50 MB of indentation)",
        tags=frozenset({"big"}),
    ),
    Hostile(
        b"include-passwd.rst",
        lambda: f"Accounts\n========\n\n{GOOD_TEXT}.\n\n.. include:: /etc/passwd\n".encode(),
        "ok",
        needle=GOOD_TEXT,
        why="an include of /etc/passwd: never read",
        absent=PASSWD_LINE,
    ),
    Hostile(
        b"unknown-directive.rst",
        rst_unknown_directive,
        "ok",
        needle=UNKNOWN_DIRECTIVE_END,
        why="an unknown directive with a 1 MB body: kept as text",
    ),
    Hostile(b"empty.rst", lambda: b"", "ok", why="0 bytes: no chunks, no error"),
    # Notebooks: not JSON, not a notebook, too big, too many cells
    Hostile(
        b"truncated.ipynb",
        lambda: good_notebook("truncated")[:60],
        "failed",
        frozenset({"corrupt"}),
        why="truncated JSON",
    ),
    Hostile(
        b"huge-output.ipynb",
        huge_output_notebook,
        "ok",
        needle=DEEP,
        why="a 50 MB stream output: outputs never reach the chunks",
        tags=frozenset({"big"}),
        absent=NEEDLE_OUTPUT.strip(),
    ),
    Hostile(
        b"many-cells.ipynb",
        many_cells_notebook,
        "ok",
        needle=DEEP,
        why="100,000 cells",
        tags=frozenset({"big"}),
    ),
    Hostile(
        b"image.ipynb",
        lambda: b"\x89PNG\r\n\x1a\n" + random_bytes(4_000, 12),
        "failed",
        frozenset({"corrupt"}),
        why="PNG bytes named .ipynb",
    ),
    Hostile(b"empty.ipynb", lambda: b"", "failed", frozenset({"corrupt", "empty"}), why="0 bytes"),
    # MDX: JSX left open
    Hostile(
        b"unbalanced.mdx",
        lambda: (
            f'# Setup\n\n<Tabs>\n<TabItem label="Linux">\n\n{DEEP}\n\n<div className="note">\n\n'
            "Run the installer.\n\n<Steps>\n"
        ).encode(),
        "ok",
        needle=DEEP,
        why="JSX elements opened and never closed",
    ),
    Hostile(b"empty.mdx", lambda: b"", "ok", why="0 bytes: no chunks, no error"),
    # Plain text: binary bytes, a legacy code page
    Hostile(b"empty.txt", lambda: b"", "ok", why="0 bytes: no chunks, no error"),
    Hostile(
        b"binary.txt",
        lambda: random_bytes(20_000, 13) + b"\x00" * 16,
        "failed",
        frozenset({"corrupt"}),
        why="binary bytes named .txt",
    ),
    Hostile(
        b"cp1252.txt",
        lambda: b"Crew notes\n==========\n\nThe pilot\x92s log \x96 kept daily at the caf\xe9.\n",
        "ok",
        needle="pilot\u2019s log \u2013 kept daily at the caf\u00e9",
        why="Windows-1252 bytes in a .txt",
    ),
)


def good_md(label: str) -> bytes:
    """A small good Markdown page."""
    return (
        f"# Fleet page {label}\n\n{GOOD_TEXT} for {label}. Charge packs to 60 percent.\n\n"
        f"## Storage\n\nKeep spare packs in the fire cabinet ({label}).\n"
    ).encode()


def good_html(label: str) -> bytes:
    return (
        f"<html><body><main><h1>Fleet page {label}</h1><p>{GOOD_TEXT} for {label}.</p>"
        f"<h2>Storage</h2><p>Keep spare packs in the fire cabinet.</p></main></body></html>"
    ).encode()


GOOD_FILES: dict[str, Callable[[], bytes]] = {
    "good/battery.md": lambda: good_md("battery"),
    "good/storage.html": lambda: good_html("storage"),
    "good/procedures.pdf": good_pdf,
    "good/charging.rst": lambda: good_rst("charging"),
    "good/telemetry.ipynb": lambda: good_notebook("telemetry"),
    "good/setup.mdx": lambda: b"import Tabs from './tabs'\n\n" + good_md("setup"),
    "good/notes.txt": lambda: good_md("notes"),
}


def good_for(name: bytes, label: str) -> bytes:
    """A good file of the format the name's suffix selects."""
    if name.endswith(b".pdf"):
        return good_pdf()
    if name.endswith(b".ipynb"):
        return good_notebook(label)
    if name.endswith(b".rst"):
        return good_rst(label)
    return good_md(label)


def write_cases(root: Path, cases: tuple[Hostile, ...] = CASES, prefix: str = "") -> dict[bytes, Hostile]:
    """Write the cases under `root` (in folder `prefix`); returns them by relative path bytes."""
    folder = os.path.join(os.fsencode(root), os.fsencode(prefix)) if prefix else os.fsencode(root)
    os.makedirs(folder, exist_ok=True)
    written: dict[bytes, Hostile] = {}
    for case in cases:
        with open(os.path.join(folder, case.name), "wb") as fh:
            fh.write(case.make())
        rel = (os.fsencode(prefix) + b"/" + case.name) if prefix else case.name
        written[rel] = case
    return written


def write_good(root: Path) -> dict[str, bytes]:
    """The good files beside the hostile ones; returns {relative path: bytes}."""
    out: dict[str, bytes] = {}
    for rel, make in GOOD_FILES.items():
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        data = make()
        path.write_bytes(data)
        out[rel] = data
    return out


def make_links(root: Path, outside: Path) -> dict[str, str]:
    """A folder symlink loop and links out of the root; returns {name: what it is}."""
    outside.mkdir(parents=True, exist_ok=True)
    (outside / "secret.md").write_bytes(good_md("outside the root"))
    links = {
        "loop": (root, "folder symlink to its own root (a loop)"),
        "up": (root.parent, "folder symlink to the parent of the root"),
        "ext-dir": (outside, "folder symlink out of the root"),
        "ext.md": (outside / "secret.md", "file symlink out of the root"),
        "etc-passwd.md": (Path("/etc/passwd"), "file symlink to a system file"),
    }
    for name, (target, _) in links.items():
        (root / name).symlink_to(target)
    return {name: why for name, (_, why) in links.items()}


def drop_capabilities_prefix() -> list[str]:
    """A command prefix that makes root subject to file permissions (so chmod 000 bites),
    or [] when not root; None-like empty list also when setpriv is missing (caller skips)."""
    if os.geteuid() != 0:
        return []
    for folder in os.environ.get("PATH", "/usr/bin:/bin").split(":"):
        candidate = os.path.join(folder, "setpriv")
        if os.access(candidate, os.X_OK):
            # Capabilities outside the bounding set are lost at exec, even for uid 0 (capabilities(7)).
            return [candidate, "--bounding-set=-dac_override,-dac_read_search", "--"]
    raise LookupError("setpriv not found")
