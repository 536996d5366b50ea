"""Jupyter notebooks (`.ipynb`) -> common tree, on nbformat and the Markdown adapter.

- The file must be notebook JSON (an object with `cells`, or `worksheets` for format 3, and an
  `nbformat` version); anything else is refused with status `corrupt`. Older formats are
  converted to format 4 by nbformat.
- nbformat's validator checks the notebook; one that does not pass is still read, leniently,
  and the document carries a warning saying why.
- Markdown cells go through the Markdown adapter one by one; their headings, from all cells, build
  one section tree (a `##` in cell 9 nests under the `#` of cell 2).
- Code cells become code blocks in the kernel's language; raw cells become code blocks without
  one. Text outputs (`stream`, `text/plain`, `text/markdown`) are kept only with
  `Settings.notebook_outputs`; tracebacks, images and HTML never reach the text.
- Locator: every node's `Span.lines` holds the 1-based range of *cells* it came from (what a
  reader can open in a notebook); the segmenter writes it to the record's `cells` field and leaves
  `lines` null (see `segment.chunk.CELL_FORMATS`).
- Properties: the notebook metadata's `title`, `authors` (their names) and the kernel's language.
"""

from __future__ import annotations

import json
import warnings
from collections.abc import Callable
from typing import Any

import nbformat

from segment.adapters import markdown
from segment.adapters.text import decode_text, sniff_binary
from segment.errors import ParseError
from segment.settings import Settings
from segment.tree import (
    Block,
    Code,
    Definition,
    DefinitionList,
    Document,
    Heading,
    ListBlock,
    Paragraph,
    Quote,
    SectionBuilder,
    Span,
    Table,
    finish_spans,
)

MAX_OUTPUT_CHARS = 100_000
"""Text kept of one output when outputs are on; the rest is cut with a warning (a 50 MB log
printed by a cell is not documentation)."""

_convert: Callable[[Any, int], dict[str, Any]] = nbformat.convert
"""nbformat's converter between format versions (untyped upstream)."""

_TEXT_MIME = ("text/markdown", "text/plain")
"""Result and display data kept, in order of preference; images and HTML never are."""


def parse(data: bytes, source: str, settings: Settings | None = None) -> Document:
    """Parse notebook bytes into a Document."""
    settings = settings or Settings()
    sniff_binary(data, source, "a Jupyter notebook")
    doc = Document(source=source, format="notebook")
    notebook = read_notebook(data, source, doc.warnings)
    _NotebookBuilder(doc, notebook, settings.notebook_outputs).build()
    return doc


def read_notebook(data: bytes, source: str, warnings_out: list[str]) -> dict[str, Any]:
    """Notebook JSON as a format-4 dict, validated by nbformat (failures become warnings)."""
    text = decode_text(data, warnings_out)
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as exc:
        raise ParseError(
            source, f"not a Jupyter notebook: invalid JSON at line {exc.lineno} column {exc.colno}"
        ) from exc
    except RecursionError as exc:
        raise ParseError(source, "not a Jupyter notebook: JSON nested too deeply") from exc
    if not isinstance(raw, dict) or not isinstance(raw.get("nbformat"), int):
        raise ParseError(source, "not a Jupyter notebook: no `nbformat` version in the JSON object")
    if raw["nbformat"] < 4:
        try:
            old = nbformat.versions[raw["nbformat"]].to_notebook_json(raw)
            raw = _convert(old, 4)
        except Exception as exc:  # nbformat's readers and converters assume a well-formed notebook
            raise ParseError(
                source, f"notebook format {raw['nbformat']} could not be converted: {exc}"
            ) from exc
    elif raw["nbformat"] > 4:
        warnings_out.append(f"notebook format {raw['nbformat']} is newer than 4: read as format 4")
    if not isinstance(raw.get("cells"), list):
        raise ParseError(source, "not a Jupyter notebook: no list of cells")
    _validate(raw, warnings_out)
    return dict(raw)


def _validate(notebook: dict[str, Any], warnings_out: list[str]) -> None:
    """nbformat's validator; its complaints become one warning each, never an error."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            nbformat.validate(notebook, version=4)
        except nbformat.ValidationError as exc:
            first = str(exc.message if hasattr(exc, "message") else exc).splitlines()[0][:200]
            warnings_out.append(f"notebook does not pass nbformat's validator, read leniently: {first}")
        except Exception as exc:  # the validator itself tripping over odd input: read leniently too
            warnings_out.append(f"notebook could not be validated, read leniently: {type(exc).__name__}")
    for message in dict.fromkeys(str(w.message).splitlines()[0][:200] for w in caught):
        warnings_out.append(f"nbformat: {message}")


def cell_text(value: Any) -> str:
    """A cell's `source` (or an output's text): a string, or a list of strings to join."""
    if isinstance(value, str):
        return value
    if isinstance(value, list):
        return "".join(v for v in value if isinstance(v, str))
    return ""


def kernel_language(metadata: dict[str, Any]) -> str | None:
    """The kernel's language: `kernelspec.language`, else `language_info.name`."""
    for key, field in (("kernelspec", "language"), ("language_info", "name")):
        table = metadata.get(key)
        if isinstance(table, dict) and isinstance(table.get(field), str) and table[field].strip():
            return str(table[field]).strip()
    return None


def notebook_properties(metadata: dict[str, Any]) -> dict[str, Any]:
    """Declared properties of a notebook: title, author names, kernel language."""
    out: dict[str, Any] = {}
    title = metadata.get("title")
    if isinstance(title, str) and title.strip():
        out["title"] = " ".join(title.split())
    authors = metadata.get("authors")
    if isinstance(authors, list):
        names = [
            a["name"].strip() if isinstance(a, dict) and isinstance(a.get("name"), str) else a
            for a in authors
        ]
        names = [n for n in names if isinstance(n, str) and n.strip()]
        if names:
            out["authors"] = names
    language = kernel_language(metadata)
    if language:
        out["kernel_language"] = language
    return out


class _NotebookBuilder:
    """Cells in order into one section tree."""

    def __init__(self, doc: Document, notebook: dict[str, Any], outputs: bool) -> None:
        self.doc = doc
        self.cells: list[Any] = notebook.get("cells") or []
        metadata = notebook.get("metadata")
        self.metadata: dict[str, Any] = metadata if isinstance(metadata, dict) else {}
        self.language = kernel_language(self.metadata)
        self.outputs = outputs
        self.sections = SectionBuilder(doc.root)
        self.anchors: set[str] = set()
        self.first_heading: Heading | None = None

    def build(self) -> None:
        self.doc.properties.update(notebook_properties(self.metadata))
        for number, cell in enumerate(self.cells, start=1):
            if not isinstance(cell, dict):
                self.doc.warnings.append(f"cell {number}: not a JSON object, skipped")
                continue
            kind = cell.get("cell_type")
            text = cell_text(cell.get("source"))
            span = Span(lines=(number, number))
            if kind == "markdown":
                self.markdown_cell(text, number, span)
            elif kind in ("code", "raw"):
                lines = _lines(text)
                if lines:
                    language = self.language if kind == "code" else None
                    self.sections.add(Code(lines, language, span))
                if kind == "code" and self.outputs:
                    self.code_outputs(cell.get("outputs"), number, span)
            else:
                self.doc.warnings.append(f"cell {number}: unknown cell type {kind!r}, skipped")
        title = self.doc.properties.get("title")
        if isinstance(title, str):
            self.doc.title = title
        elif self.first_heading is not None and self.first_heading.level == 1:
            self.doc.title = self.first_heading.text
        finish_spans(self.doc.root)

    def markdown_cell(self, text: str, number: int, span: Span) -> None:
        if not text.strip():
            return
        try:
            cell_doc = markdown.parse(text.encode("utf-8"), self.doc.source)
        except ParseError as exc:  # e.g. NUL characters in the cell: keep its text plainly
            self.doc.warnings.append(f"cell {number}: {exc.reason}; kept as plain text")
            self.sections.add(Paragraph(" ".join(text.replace("\x00", " ").split()), span))
            return
        self.doc.warnings.extend(f"cell {number}: {w}" for w in cell_doc.warnings)
        for _path, section in cell_doc.walk():
            if section.heading is not None:
                heading = section.heading
                heading.anchor = self.unique_anchor(heading.anchor or markdown.slugify(heading.text))
                heading.span = span
                if self.first_heading is None:
                    self.first_heading = heading
                self.sections.open(heading)
            for block in section.blocks:
                respan(block, span)
                self.sections.add(block)

    def unique_anchor(self, anchor: str) -> str:
        """Anchors unique across cells (each cell was slugged on its own)."""
        candidate, n = anchor, 0
        while candidate in self.anchors:
            n += 1
            candidate = f"{anchor}-{n}"
        self.anchors.add(candidate)
        return candidate

    def code_outputs(self, outputs: Any, number: int, span: Span) -> None:
        for output in outputs if isinstance(outputs, list) else []:
            if not isinstance(output, dict):
                continue
            kind = output.get("output_type")
            if kind == "stream":
                self.add_output_text(cell_text(output.get("text")), number, span)
            elif kind in ("execute_result", "display_data"):
                data = output.get("data")
                if not isinstance(data, dict):
                    continue
                mime = next((m for m in _TEXT_MIME if m in data), None)
                if mime == "text/markdown":
                    self.add_output_markdown(cell_text(data[mime]), number, span)
                elif mime == "text/plain":
                    self.add_output_text(cell_text(data[mime]), number, span)
            # `error` outputs (tracebacks) are never kept.

    def add_output_text(self, text: str, number: int, span: Span) -> None:
        text = self.capped(text, number)
        lines = _lines(text)
        if lines:
            self.sections.add(Code(lines, None, span))

    def add_output_markdown(self, text: str, number: int, span: Span) -> None:
        text = self.capped(text, number)
        if not text.strip():
            return
        output_doc = markdown.parse(text.encode("utf-8"), self.doc.source)
        for _path, section in output_doc.walk():
            if section.heading is not None:  # an output never opens a section of the notebook
                self.sections.add(Paragraph(section.heading.text, span))
            for block in section.blocks:
                respan(block, span)
                self.sections.add(block)

    def capped(self, text: str, number: int) -> str:
        if len(text) <= MAX_OUTPUT_CHARS:
            return text
        self.doc.warnings.append(f"cell {number}: output of {len(text)} characters cut to {MAX_OUTPUT_CHARS}")
        return text[:MAX_OUTPUT_CHARS]


def respan(block: Block, span: Span) -> None:
    """Give a block and everything inside it the cell's span (iteratively); line offsets inside
    the cell no longer apply."""
    stack: list[Any] = [block]
    while stack:
        node = stack.pop()
        node.span = span
        if isinstance(node, Paragraph):
            node.line_starts = []
        elif isinstance(node, Code):
            node.first_line = None
        elif isinstance(node, Table):
            stack.extend(node.header)
            stack.extend(node.rows)
        elif isinstance(node, ListBlock):
            for item in node.items:
                item.span = span
                stack.extend(item.blocks)
        elif isinstance(node, Quote):
            stack.extend(node.blocks)
        elif isinstance(node, DefinitionList):
            stack.extend(node.items)
        elif isinstance(node, Definition):
            stack.extend(node.blocks)


def _lines(text: str) -> list[str]:
    lines = text.split("\n")
    while lines and not lines[-1].strip():
        lines.pop()
    while lines and not lines[0].strip():
        lines.pop(0)
    return lines
