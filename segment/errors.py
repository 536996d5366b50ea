"""Errors that say what failed and where. Each carries the file and a machine-readable status."""

from __future__ import annotations


class SegmentError(Exception):
    """Base class: something about one source file could not be done."""

    status = "error"

    def __init__(self, source: str, reason: str, status: str | None = None) -> None:
        super().__init__(f"{source}: {reason}")
        self.source = source
        self.reason = reason
        if status is not None:
            self.status = status


class UnsupportedFormat(SegmentError):
    """No adapter handles this file's name or content."""

    status = "unsupported"


class ParseError(SegmentError):
    """The adapter could not read the file (corrupt, encrypted, wrong content...)."""

    status = "corrupt"


class TooLarge(SegmentError):
    """The file exceeds a configured cap (bytes, pages, characters)."""

    status = "resource_limit"


class SettingsError(ValueError):
    """A setting has a bad value; the message names the setting and where it came from."""
