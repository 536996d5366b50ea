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

    def __post_init__(self) -> None:
        if self.max_tokens < 16:
            raise SettingsError(f"max_tokens must be at least 16, got {self.max_tokens}")
        if self.min_tokens < 0:
            raise SettingsError(f"min_tokens must be 0 or more, got {self.min_tokens}")
        if not 0 <= self.overlap_tokens < self.max_tokens // 2:
            raise SettingsError(
                f"overlap_tokens must be between 0 and half of max_tokens, got {self.overlap_tokens}"
            )

    def fingerprint(self) -> str:
        """Hash of the fields that change the chunks of a file (not include/exclude or limits)."""
        keys = ("max_tokens", "min_tokens", "overlap_tokens", "tokenizer", "language")
        data: dict[str, Any] = {k: getattr(self, k) for k in keys}
        data.update({f.name: getattr(self, f.name) for f in fields(self) if f.name.startswith("markdown_")})
        data["output_version"] = OUTPUT_VERSION
        if self.tokenizer:
            data["tokenizer_sha"] = _file_sha(self.tokenizer)
        blob = json.dumps(data, sort_keys=True).encode()
        return hashlib.sha256(blob).hexdigest()[:16]

    def to_dict(self) -> dict[str, Any]:
        """Plain dict form (tuples become lists)."""
        return {k: list(v) if isinstance(v, tuple) else v for k, v in asdict(self).items()}


def _file_sha(path: str) -> str:
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return "missing"


def load_settings(src: Path | None = None, overrides: dict[str, Any] | None = None) -> Settings:
    """Defaults, then `segment.toml` in `src` (if a folder holding one), then `overrides`.

    Overrides whose value is None are ignored, so unset command-line flags leave the file's value.
    `exclude` patterns from the file and the overrides are added to the default exclusions.
    """
    values: dict[str, Any] = {}
    if src is not None and src.is_dir() and (src / CONFIG_NAME).is_file():
        values.update(_read_toml(src / CONFIG_NAME))
    extra_exclude = tuple(values.pop("exclude", ()))
    for key, value in (overrides or {}).items():
        if key == "exclude":
            extra_exclude += tuple(value or ())
        elif value is not None and value != ():
            values[key] = value
    # Exclusions add to the defaults (secrets stay out); `!pattern` re-includes, gitignore-style.
    values["exclude"] = DEFAULT_EXCLUDE + extra_exclude
    return coerce(values, origin="settings")


def _read_toml(path: Path) -> dict[str, Any]:
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError) as exc:
        raise SettingsError(f"{path}: cannot read settings: {exc}") from exc
    # Accept both a flat file and a [segment] table.
    table = data.get("segment", data)
    if not isinstance(table, dict):
        raise SettingsError(f"{path}: [segment] must be a table")
    if table.get("tokenizer"):
        tok = Path(str(table["tokenizer"]))
        table["tokenizer"] = str(tok if tok.is_absolute() else path.parent / tok)
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
        elif isinstance(default, bool) or key == "tokenizer":
            pass
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
