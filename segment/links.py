"""Deep links: the page URL a source file is published at, plus the chunk's fragment.

A page URL is `base_url` + the page path, percent-encoded segment by segment as RFC 3986 says:
- path segments keep the unreserved characters, sub-delims, `:` and `@` (section 3.3, `pchar`);
  everything else, `%` included (section 2.4), becomes `%XX` of its UTF-8 bytes (section 2.5);
- fragments also keep `/` and `?` (section 3.5).
The page path comes from the source path by a layout:
- `html`: `guides/setup.md` -> `guides/setup.html` (static site generators' plain URLs);
- `folder`: `guides/setup.md` -> `guides/setup/`, `guides/index.md` -> `guides/` (the folder
  itself, `./` relative to it), as generators with "pretty" or directory URLs publish;
- a template with `{path}` (the source path without its suffix), `{stem}` (the file name without
  its suffix) and `{dir}` (the folder, with a trailing `/`, or empty at the root).
Sources that a site serves as they are (HTML, PDF, plain text) keep their path under every layout.
The fragment is the chunk's anchor, or for PDFs `page=N` (RFC 8118 section 3, from memory).
"""

from __future__ import annotations

import string
from enum import StrEnum
from pathlib import PurePosixPath
from urllib.parse import quote, urlsplit

from segment.errors import SettingsError


class UrlLayout(StrEnum):
    """The built-in ways a source path becomes a page path."""

    HTML = "html"
    FOLDER = "folder"


KEPT_PATH_FORMATS = frozenset({"html", "pdf", "text"})
"""Formats a site serves as they are: their page path is their source path."""

TEMPLATE_FIELDS = frozenset({"path", "stem", "dir"})

_PCHAR_SAFE = "!$&'()*+,;=:@"
"""RFC 3986 section 3.3: pchar = unreserved / pct-encoded / sub-delims / ":" / "@" (quote keeps
the unreserved characters itself)."""
_FRAGMENT_SAFE = _PCHAR_SAFE + "/?"
"""RFC 3986 section 3.5: fragment = *( pchar / "/" / "?" )."""


def check_url_settings(base_url: str | None, layout: str) -> None:
    """Raise SettingsError for a base URL or layout that cannot build links."""
    if base_url is not None:
        if not isinstance(base_url, str) or not base_url.strip():
            raise SettingsError(f"base_url must be a URL such as https://docs.example.com/, got {base_url!r}")
        parts = urlsplit(base_url)
        if not ((parts.scheme and parts.netloc) or base_url.startswith("/")):
            raise SettingsError(
                f"base_url must be an absolute URL (https://host/path/) or a site path (/docs/), got {base_url!r}"
            )
        if parts.query or parts.fragment or "#" in base_url:
            raise SettingsError(f"base_url must not carry a query or a fragment, got {base_url!r}")
    if not isinstance(layout, str):
        raise SettingsError(f"url_layout must be a string, got {layout!r}")
    if layout in tuple(UrlLayout):
        return
    if "{" not in layout:
        raise SettingsError(
            f"url_layout must be 'html', 'folder' or a template with {{path}}, {{stem}} or {{dir}}, got {layout!r}"
        )
    try:
        names = {name for _text, name, _spec, _conv in string.Formatter().parse(layout) if name is not None}
    except ValueError as exc:
        raise SettingsError(f"url_layout template {layout!r} is malformed: {exc}") from exc
    unknown = names - TEMPLATE_FIELDS
    if unknown or not names:
        raise SettingsError(
            f"url_layout template {layout!r} may use only {{path}}, {{stem}} and {{dir}} (found {sorted(unknown)})"
        )


def page_path(source: str, format: str, layout: str) -> str:
    """The page path (not encoded) a source file is published at, relative to the base URL."""
    parts = [p for p in source.split("/") if p not in ("", ".")]
    source = "/".join(parts)
    if format in KEPT_PATH_FORMATS or not parts:
        return source
    pure = PurePosixPath(source)
    stem = pure.stem if pure.suffix else pure.name
    folder = "/".join(parts[:-1])
    folder = folder + "/" if folder else ""
    without_suffix = folder + stem
    if layout == UrlLayout.HTML:
        return without_suffix + ".html"
    if layout == UrlLayout.FOLDER:
        return folder if stem == "index" else without_suffix + "/"
    return layout.format(path=without_suffix, stem=stem, dir=folder)


def encode_path(path: str) -> str:
    """Percent-encode a path segment by segment (RFC 3986 sections 2.4, 2.5, 3.3)."""
    return "/".join(quote(segment, safe=_PCHAR_SAFE) for segment in path.split("/"))


def encode_fragment(fragment: str) -> str:
    """Percent-encode a fragment (RFC 3986 section 3.5)."""
    return quote(fragment, safe=_FRAGMENT_SAFE)


def page_url(base_url: str | None, source: str, format: str, layout: str) -> str | None:
    """The page URL of a source file, or None without a base URL."""
    if base_url is None:
        return None
    base = base_url if base_url.endswith("/") else base_url + "/"
    return base + encode_path(page_path(source, format, layout)).lstrip("/")


def chunk_url(page: str | None, anchor: str | None, pages: tuple[int, int] | None = None) -> str | None:
    """The page URL plus the chunk's fragment: `#anchor`, or `#page=N` for a PDF chunk."""
    if page is None:
        return None
    if pages is not None:
        return f"{page}#page={pages[0]}"
    if anchor:
        return f"{page}#{encode_fragment(anchor)}"
    return page
