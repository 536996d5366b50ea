"""The report as a self-contained site: an overview page and one chunk viewer page per file."""

from segment.report.html.site import write_site

__all__ = ["write_site"]
