"""Which files under SRC belong to the output: include/exclude, editor litter, OUT itself.

Scan and watch share this one policy (reliability scenario "symlink loops and escapes"), so a watched tree and a fresh build
always agree on the set of files:
- patterns are gitignore-style (pathspec), `Settings.exclude` defaults included; an excluded
  folder hides everything below it, as in git;
- only files an adapter supports are taken; files without a suffix (README, NOTES) only when an
  include pattern names them (`README`, `**/NOTES*`; not a folder pattern such as `docs/**`);
- editor temp and swap files are never taken (`4913`, `*~`, `*.swp`, `.#*`, ...);
- the output folder is skipped when it lies inside SRC;
- directory symlinks are not followed; a file symlink is taken only when its target lies inside
  SRC; so nothing outside the root is read and loops cannot happen.
"""

from __future__ import annotations

import fnmatch
import os
import stat
from dataclasses import dataclass
from pathlib import Path

import pathspec

from segment.adapters import is_extensionless, lower_suffix, names_files, supported_suffixes
from segment.daemon.store import StatSig
from segment.settings import CONFIG_NAME, Settings

COOKIE_PREFIX = ".docsegment-cookie-"
"""Names of the barrier files `Watcher.catch_up()` creates at the root (never segmented)."""

EDITOR_LITTER: tuple[str, ...] = (
    "4913",  # vim's probe file (common practice: vim writes it to test the folder)
    "*~",  # backup files (vim, emacs, gedit)
    "*.swp",
    "*.swx",
    "*.swo",  # vim swap files
    ".#*",  # emacs lock files
    "#*#",  # emacs auto-save files
    ".goutputstream-*",  # GLib/gedit atomic-save temp files
    "*.tmp",
    "*.part",
    "*.crdownload",  # half-downloaded files
    COOKIE_PREFIX + "*",
)


def is_litter(name: str) -> bool:
    """True for editor temp/swap/backup names and our own cookie files."""
    return any(fnmatch.fnmatchcase(name, pattern) for pattern in EDITOR_LITTER)


@dataclass(frozen=True, slots=True)
class Found:
    """A file the scan takes: its relative path and stat signature."""

    path: str
    sig: StatSig


class Scope:
    """The file policy for one SRC/OUT pair."""

    def __init__(self, src: Path, out: Path, settings: Settings) -> None:
        self.src = Path(os.path.abspath(src))
        self.out = Path(os.path.abspath(out))
        self.real_src = Path(os.path.realpath(self.src))
        self.exclude = pathspec.GitIgnoreSpec.from_lines(settings.exclude)
        self.include = pathspec.GitIgnoreSpec.from_lines(settings.include) if settings.include else None
        naming = [p for p in settings.include if names_files(p)]
        self.include_names = pathspec.GitIgnoreSpec.from_lines(naming) if naming else None
        """Include patterns that name files (`README`, `**/NOTES*`): only these take extension-less files."""
        self._out_id = _dir_id(self.out)
        self.unread: dict[str, list[str]] = {}
        """Files the last `scan` skipped because no adapter reads them: suffix -> paths."""

    # -- names -----------------------------------------------------------------------------

    def rel(self, abspath: str | bytes) -> str | None:
        """Relative POSIX path of an absolute path under SRC, or None when outside it."""
        text = os.fsdecode(abspath)
        try:
            rel = os.path.relpath(text, self.src)
        except ValueError:
            return None
        if rel == "." or rel.startswith(".." + os.sep) or rel == "..":
            return "" if rel == "." else None
        return rel.replace(os.sep, "/")

    def abs(self, rel: str) -> Path:
        """Absolute path of a relative one."""
        return self.src / rel if rel else self.src

    def in_out(self, rel: str) -> bool:
        """True when `rel` is the output folder or lies inside it."""
        out_rel = self.rel(str(self.out))
        if not out_rel:
            return False
        return rel == out_rel or rel.startswith(out_rel + "/")

    def dir_wanted(self, rel: str) -> bool:
        """Whether the scan descends into a folder."""
        if not rel:
            return True
        if self.in_out(rel) or self.exclude.match_file(rel + "/"):
            return False
        return not (self._out_id is not None and _dir_id(self.abs(rel)) == self._out_id)

    def file_wanted(self, rel: str) -> bool:
        """Whether a file path (by name only) belongs to the output."""
        name = rel.rsplit("/", 1)[-1]
        if not is_read(name) and not (is_extensionless(name) and self.named_by_include(rel)):
            return False
        return self._selected(rel)

    def named_by_include(self, rel: str) -> bool:
        """True when an include pattern that names files (not a whole folder) matches `rel`."""
        return self.include_names is not None and self.include_names.match_file(rel)

    def _selected(self, rel: str) -> bool:
        """The user's and our own selection, whatever the suffix: not litter, not excluded,
        included, not inside OUT."""
        name = rel.rsplit("/", 1)[-1]
        if not rel or is_litter(name) or self.in_out(rel):
            return False
        parts = rel.split("/")
        for i in range(1, len(parts)):
            if self.exclude.match_file("/".join(parts[:i]) + "/"):
                return False
        if self.exclude.match_file(rel):
            return False
        return self.include is None or self.include.match_file(rel)

    def not_read(self, rel: str) -> bool:
        """True for a file the user's selection takes but no adapter reads (counted, skipped).

        The settings file at the root is ours, not a skipped document.
        """
        name = rel.rsplit("/", 1)[-1]
        if rel == CONFIG_NAME or is_read(name) or (is_extensionless(name) and self.named_by_include(rel)):
            return False
        return self._selected(rel)

    # -- disk ------------------------------------------------------------------------------

    def stat_file(self, rel: str) -> StatSig | None:
        """Signature of a wanted regular file (symlinks resolved inside SRC), else None."""
        if not self.file_wanted(rel):
            return None
        return self._stat_regular(self.abs(rel))

    def _stat_regular(self, path: Path) -> StatSig | None:
        try:
            st = os.lstat(path)
            if stat.S_ISLNK(st.st_mode):
                target = os.path.realpath(path)
                if not _inside(target, str(self.real_src)):
                    return None
                st = os.stat(target)
        except OSError:
            return None
        return StatSig.of(st) if stat.S_ISREG(st.st_mode) else None

    def scan(self, prefix: str = "") -> dict[str, StatSig]:
        """Every wanted file at or below `prefix` (a file or folder), walked iteratively."""
        found: dict[str, StatSig] = {}
        self.unread = {}
        if prefix:
            parts = prefix.split("/")
            if not all(self.dir_wanted("/".join(parts[:i])) for i in range(1, len(parts))):
                return found
            top = self.abs(prefix)
            try:
                st = os.lstat(top)
            except OSError:
                return found
            if not stat.S_ISDIR(st.st_mode):
                sig = self.stat_file(prefix)
                if sig is not None:
                    found[prefix] = sig
                return found
            if not self.dir_wanted(prefix):
                return found
        stack = [prefix]
        while stack:
            folder = stack.pop()
            try:
                entries = list(os.scandir(self.abs(folder)))
            except OSError:
                continue
            for entry in entries:
                rel = f"{folder}/{entry.name}" if folder else entry.name
                try:
                    is_dir = entry.is_dir(follow_symlinks=False)
                except OSError:
                    continue
                if is_dir:
                    if self.dir_wanted(rel):
                        stack.append(rel)
                elif self.file_wanted(rel):
                    sig = self._stat_regular(Path(entry.path))
                    if sig is not None:
                        found[rel] = sig
                elif self.not_read(rel) and self._stat_regular(Path(entry.path)) is not None:
                    self.unread.setdefault(suffix_of(entry.name), []).append(rel)
        return found


def suffix_of(name: str) -> str:
    """The lower-case suffix of a file name, "(none)" when it has none."""
    return lower_suffix(name) or "(none)"


def is_read(name: str) -> bool:
    """True when some adapter reads a file of this name (by its suffix)."""
    return lower_suffix(name) in supported_suffixes()


def display_name(rel: str) -> str:
    """The path as valid Unicode for records: undecodable bytes become U+FFFD."""
    return rel.encode("utf-8", "surrogateescape").decode("utf-8", "replace")


def _inside(path: str, root: str) -> bool:
    return path == root or path.startswith(root.rstrip(os.sep) + os.sep)


def _dir_id(path: Path) -> tuple[int, int] | None:
    try:
        st = os.stat(path)
    except OSError:
        return None
    return (st.st_dev, st.st_ino)
