"""Settings: one frozen record, read from defaults, `segment.toml` and command-line flags."""

from __future__ import annotations

import hashlib
import json
import tomllib
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path
from typing import Any

from segment.chunk import OUTPUT_VERSION
from segment.errors import SettingsError
from segment.links import check_url_settings

CONFIG_NAME = "segment.toml"

DEFAULT_EXCLUDE: tuple[str, ...] = (
    # Files that usually hold secrets never reach the chunk output by default.
    ".env",
    ".env.*",
    "*.pem",
    "*.key",
    "id_rsa*",
    "id_ed25519*",
    ".git/",
    "node_modules/",
)


RECORD_SHAPING: tuple[str, ...] = (
    "notebook_outputs",
    "properties",
    "property_value_chars",
    "properties_chars",
    "base_url",
    "url_layout",
)
"""Settings added after the first release that change chunks or records: in the fingerprint."""


@dataclass(frozen=True, slots=True)
class Settings:
    """Everything that changes the chunks, plus run limits.

    `fingerprint()` covers only the fields that change output, so the daemon knows what to rebuild.
    """

    max_tokens: int = 512
    """Token budget of one chunk."""
    min_tokens: int = 64
    """Sections smaller than this are packed with their siblings (up to `max_tokens`, which caps it)."""
    overlap_tokens: int = 0
    """Whole trailing sentences of the previous chunk repeated at the start of the next, within one section."""
    tokenizer: str | None = None
    """Path to a `tokenizer.json`; None uses the built-in estimator."""
    language: str = "en"
    """spaCy language code for the sentencizer."""
    include: tuple[str, ...] = ()
    """gitignore-style patterns; when given, only matching files are segmented."""
    exclude: tuple[str, ...] = DEFAULT_EXCLUDE
    """gitignore-style patterns of files to skip."""
    max_file_bytes: int = 64 * 1024 * 1024
    """Files larger than this are refused with status `resource_limit`."""
    max_pages: int = 5000
    """PDFs with more pages than this are refused with status `resource_limit`."""
    timeout_s: float = 120.0
    """Wall-clock budget for parsing and segmenting one file in a worker process."""
    memory_mb: int = 2048
    """Address-space limit of a worker process, in MiB (0: no limit)."""
    heading_line: str = "off"
    """First line of every chunk's text, counted in the budget: `off`; `path`, the heading path
    ("Sensors > Calibration"); `title`, the document title before it. For embedding a chunk with
    its context. Changes every id when switched (the text changes)."""
    markdown_headings: bool = False
    """Write heading lines in chunk text the Markdown way (`## Calibration`), so a reader or a
    language model tells headings from paragraphs. Changes the ids of chunks that hold a heading."""
    notebook_outputs: bool = False
    """Keep the text outputs of notebook code cells (`stream`, `text/plain`, `text/markdown`);
    tracebacks, images and HTML outputs are never kept."""
    properties: tuple[str, ...] = ("*",)
    """Which of a source's declared properties every chunk carries: key patterns (`*` wildcards;
    `!pattern` leaves keys out). `[]` keeps none."""
    property_value_chars: int = 1000
    """Size cap of one property value, in characters of its JSON form (longer text is cut, list
    items past the cap are left out)."""
    properties_chars: int = 4000
    """Size cap of all of a chunk's properties together, in characters of their JSON form
    (properties that would pass it are left out, in the source's order)."""
    base_url: str | None = None
    """Where the site is published (`https://docs.example.com/v2/`); chunks then get a `url`."""
    url_layout: str = "html"
    """How a source path becomes a page URL: `html` (`a/b.md` -> `a/b.html`), `folder`
    (`a/b.md` -> `a/b/`, `a/index.md` -> `a/`) or a template with `{path}`, `{stem}`, `{dir}`."""
    pdf_keep_contents: bool = False
    """Keep a PDF's table of contents and index pages as chunks (left out by default)."""
    rst_include_root: str | None = None
    """Folder whose files reStructuredText `include`, `literalinclude` and `csv-table :file:` may
    read; None (the default) reads no other file. Paths outside it are never read."""
    cluster: str | None = None
    """Address of a Dask scheduler (`tcp://host:8786`): files are parsed on its workers."""
    cluster_reads_files: bool = False
    """With `cluster`: workers read the files from the same path (a shared file system) instead of
    receiving their bytes from the driver."""
    markdown_admonitions: bool = True
    """Markdown: `!!! kind "Title"` / `??? kind` admonitions become labelled quotes."""
    markdown_tabs: bool = True
    """Markdown: `=== "Label"` content tabs become their label as a line, then their body."""
    markdown_definitions: bool = True
    """Markdown: `Term` / `: definition` lists become definition lists."""
    markdown_footnotes: bool = True
    """Markdown: footnote markers dropped, each note's text kept at the end of the citing section."""
    markdown_tasks: bool = True
    """Markdown: `- [ ]` / `- [x]` task items keep `[ ]` / `[x]` as the mark of their state."""
    markdown_containers: bool = True
    """Markdown: `:::kind Title` ... `:::` containers become labelled quotes."""
    markdown_abbreviations: bool = True
    """Markdown: `*[ABBR]: expansion` definition lines vanish."""
    markdown_attributes: bool = True
    """Markdown: `{: .class #id }` attribute lists stripped; a heading's `#id` sets its anchor."""
    budget_unit: str = "tokens"
    """What `max_tokens`, `min_tokens` and `overlap_tokens` count: `tokens` (the estimator or
    `tokenizer`) or `characters` (for services that limit characters; a common rule of thumb is
    about four characters a token)."""

    def __post_init__(self) -> None:
        if self.max_tokens < 16:
            raise SettingsError(f"max_tokens must be at least 16, got {self.max_tokens}")
        if self.min_tokens < 0:
            raise SettingsError(f"min_tokens must be 0 or more, got {self.min_tokens}")
        for name in ("max_file_bytes", "max_pages", "timeout_s"):
            if getattr(self, name) <= 0:
                raise SettingsError(f"{name} must be above 0, got {getattr(self, name)}")
        if self.memory_mb < 0:
            raise SettingsError(f"memory_mb must be 0 (no limit) or more, got {self.memory_mb}")
        if self.budget_unit not in BUDGET_UNITS:
            raise SettingsError(
                f"budget_unit must be one of {', '.join(BUDGET_UNITS)}, got {self.budget_unit!r}"
            )
        if self.budget_unit == "characters" and self.tokenizer:
            raise SettingsError("budget_unit = characters counts characters: a tokenizer has no use with it")
        if not 0 <= self.overlap_tokens < self.max_tokens // 2:
            raise SettingsError(
                f"overlap_tokens must be between 0 and half of max_tokens, got {self.overlap_tokens}"
            )
        if self.heading_line not in HEADING_LINE_VALUES:
            raise SettingsError(
                f"heading_line must be one of {', '.join(HEADING_LINE_VALUES)}, got {self.heading_line!r}"
            )
        if self.property_value_chars < 0 or self.properties_chars < 0:
            raise SettingsError("property_value_chars and properties_chars must be 0 or more")
        check_url_settings(self.base_url, self.url_layout)

    def fingerprint(self) -> str:
        """Hash of the fields that change the chunks of a file (not include/exclude or limits)."""
        keys = ("max_tokens", "min_tokens", "overlap_tokens", "tokenizer", "language", *RECORD_SHAPING)
        data: dict[str, Any] = {k: getattr(self, k) for k in keys}
        # Output-shaping fields added later: hashed only when not at their default, so that
        # output folders built before they existed keep their fingerprint.
        for key in OUTPUT_SHAPING_ADDED:
            if getattr(self, key) != _DEFAULTS[key]:
                data[key] = getattr(self, key)
        data.update({f.name: getattr(self, f.name) for f in fields(self) if f.name.startswith("markdown_")})
        data["output_version"] = OUTPUT_VERSION
        if self.tokenizer:
            data["tokenizer_sha"] = _file_sha(self.tokenizer)
        if self.rst_include_root:
            data["rst_include_root"] = self.rst_include_root
        blob = json.dumps(data, sort_keys=True).encode()
        return hashlib.sha256(blob).hexdigest()[:16]

    def to_dict(self) -> dict[str, Any]:
        """Plain dict form (tuples become lists)."""
        return {k: list(v) if isinstance(v, tuple) else v for k, v in asdict(self).items()}


BUDGET_UNITS = ("tokens", "characters")
"""Values of `Settings.budget_unit`."""

HEADING_LINE_VALUES = ("off", "path", "title")
"""Values of `Settings.heading_line`."""

OUTPUT_SHAPING_ADDED = ("heading_line", "markdown_headings", "pdf_keep_contents", "budget_unit")
"""Fields that change chunks, added after the first fingerprinted ones (see `fingerprint`)."""

_DEFAULTS: dict[str, Any] = {f.name: f.default for f in fields(Settings)}


def _file_sha(path: str) -> str:
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return "missing"


def load_settings(
    src: Path | None = None, overrides: dict[str, Any] | None = None, *, config: Path | None = None
) -> Settings:
    """Defaults, then a settings file, then `overrides`.

    The settings file is `config` when given (it must exist), else `segment.toml` in `src` (if a
    folder holding one).

    Overrides whose value is None are ignored, so unset command-line flags leave the file's value.
    `exclude` patterns from the file and the overrides are added to the default exclusions.
    """
    values: dict[str, Any] = {}
    if config is not None:
        if not Path(config).is_file():
            raise SettingsError(f"{config}: no such settings file")
        values.update(_read_toml(Path(config)))
    elif src is not None and src.is_dir() and (src / CONFIG_NAME).is_file():
        values.update(_read_toml(src / CONFIG_NAME))
    extra_exclude = tuple(values.pop("exclude", ()))
    for key, value in (overrides or {}).items():
        if key == "exclude":
            extra_exclude += tuple(value or ())
        elif value is not None and value != ():
            values[key] = value
    # Exclusions add to the defaults (secrets stay out); `!pattern` re-includes, gitignore-style.
    values["exclude"] = DEFAULT_EXCLUDE + extra_exclude
    settings = coerce(values, origin="settings")
    if "min_tokens" in values and settings.min_tokens > settings.max_tokens:  # the default is capped
        raise SettingsError(
            f"min_tokens ({settings.min_tokens}) must not be above max_tokens ({settings.max_tokens})"
        )
    return settings


def _read_toml(path: Path) -> dict[str, Any]:
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise SettingsError(f"{path}: cannot read settings: {exc}") from exc
    # Accept both a flat file and a [segment] table.
    table = data.get("segment", data)
    if not isinstance(table, dict):
        raise SettingsError(f"{path}: [segment] must be a table")
    table = {k: v for k, v in table.items() if k not in OTHER_TABLES}
    if table.get("tokenizer"):
        tok = Path(str(table["tokenizer"]))
        table["tokenizer"] = str(tok if tok.is_absolute() else path.parent / tok)
    for key in ("rst_include_root", "rst-include-root"):
        if table.get(key):
            root = Path(str(table[key]))
            table[key] = str(root if root.is_absolute() else path.parent / root)
    return coerce_dict(table, origin=str(path))


def coerce_dict(values: dict[str, Any], origin: str) -> dict[str, Any]:
    """Check names and types of raw setting values; keys use underscores or hyphens."""
    known = {f.name: f for f in fields(Settings)}
    out: dict[str, Any] = {}
    for raw_key, value in values.items():
        key = raw_key.replace("-", "_")
        if key not in known:
            raise SettingsError(f"{origin}: unknown setting {raw_key!r} (known: {', '.join(sorted(known))})")
        default = getattr(Settings(), key)
        if isinstance(default, tuple):
            if isinstance(value, str):
                value = [value]
            if not isinstance(value, (list, tuple)) or not all(isinstance(v, str) for v in value):
                raise SettingsError(f"{origin}: {key} must be a list of patterns")
            value = tuple(value)
        elif isinstance(default, bool):
            if not isinstance(value, bool):
                raise SettingsError(f"{origin}: {key} must be true or false, got {value!r}")
        elif default is None or isinstance(default, str):
            if value is not None and not isinstance(value, str):
                raise SettingsError(f"{origin}: {key} must be a string, got {value!r}")
        elif isinstance(default, int):
            if isinstance(value, bool) or not isinstance(value, int):
                raise SettingsError(f"{origin}: {key} must be a whole number, got {value!r}")
        elif isinstance(default, float):
            if not isinstance(value, (int, float)):
                raise SettingsError(f"{origin}: {key} must be a number, got {value!r}")
            value = float(value)
        out[key] = value
    return out


def coerce(values: dict[str, Any], origin: str) -> Settings:
    """Build Settings from raw values, with errors that name the setting."""
    checked = coerce_dict(values, origin)
    return replace(Settings(), **checked)


OTHER_TABLES: tuple[str, ...] = ("check",)
"""Tables of segment.toml read by other commands, never settings of the chunks (`[check]`)."""


def read_table(src: Path | None, name: str) -> dict[str, Any]:
    """The `[name]` table of `segment.toml` in `src` ({} when there is none)."""
    if src is None or not (src / CONFIG_NAME).is_file():
        return {}
    path = src / CONFIG_NAME
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise SettingsError(f"{path}: cannot read settings: {exc}") from exc
    table = data.get(name, {})
    if not isinstance(table, dict):
        raise SettingsError(f"{path}: [{name}] must be a table")
    return dict(table)


def find_config(start: Path) -> Path | None:
    """The first `segment.toml` in `start` or a folder above it (as `segment build` would read
    it for a tree rooted there), or None."""
    folder = Path(start).resolve()
    for candidate in (folder, *folder.parents):
        if (candidate / CONFIG_NAME).is_file():
            return candidate / CONFIG_NAME
    return None


def check_settings(settings: Settings) -> None:
    """What `Settings` cannot check cheaply on its own, checked once before any file is read:
    the spaCy language exists and the tokenizer file loads. Raises SettingsError naming it."""
    from segment.tokens import counter_for

    try:
        import spacy.util

        spacy.util.get_lang_class(settings.language)
    except (ImportError, KeyError, ValueError) as exc:
        raise SettingsError(f"language: {settings.language!r} is not a language spaCy knows") from exc
    counter_for(settings.tokenizer, settings.budget_unit)  # raises SettingsError for a bad file
