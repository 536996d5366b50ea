"""docsegment: structure-aware chunks from Markdown, HTML and PDF documentation."""

from segment.api import chunk, chunk_file, parse, parse_bytes
from segment.chunk import Chunk
from segment.errors import ParseError, SegmentError, SettingsError, TooLarge, UnsupportedFormat
from segment.settings import Settings, load_settings
from segment.tree import Document, TitleOrigin

__version__ = "0.1.0"

__all__ = [
    "Chunk",
    "Document",
    "ParseError",
    "SegmentError",
    "Settings",
    "SettingsError",
    "TitleOrigin",
    "TooLarge",
    "UnsupportedFormat",
    "__version__",
    "chunk",
    "chunk_file",
    "load_settings",
    "parse",
    "parse_bytes",
]
