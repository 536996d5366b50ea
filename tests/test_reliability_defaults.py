"""Safe defaults and files that change under our feet (issue 6; reliability scenario "symlink loops and escapes", "output inside the source", "undecodable file names", "file still being written").

- files that usually hold secrets are excluded by default (Settings.exclude);
- symlinks never lead out of the source root (checked in test_hostile_build too);
- chunk files stay inside OUT/chunks whatever the source names;
- the output folder inside the source root is never read back;
- a file that vanishes between the scan and the read is neither an error nor a crash;
- an unreadable file gets status `unreadable` with the reason, and the run goes on.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

from segment.daemon import read_status, reconcile
from segment.daemon.reconcile import Reconciler
from segment.daemon.scope import Scope
from segment.daemon.tasks import Task, run_task
from segment.settings import Settings
from tests import hostile
from tests.daemon_helpers import assert_feed_matches, chunk_files, current_ids, feed, page, write

SECRET_NAMES = [
    ".env",
    ".env.md",
    ".env.production.md",
    "id_rsa",
    "id_rsa.md",
    "id_ed25519.md",
    "certs/server.pem",
    "certs/server.key",
    "deploy/.env.local.md",
]


@pytest.mark.timeout(60)
def test_files_that_usually_hold_secrets_are_excluded_by_default(tmp_path: Path) -> None:
    # Common practice: .env files and private keys (PEM, *.key, ssh id_*) must never be indexed.
    assert {".env", ".env.*", "*.pem", "*.key"} <= set(Settings().exclude)
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "guide.md", page("Pilot roles"))
    for name in SECRET_NAMES:
        write(src / name, page("Secrets", "API_TOKEN=nw-secret-123"))
    # Even a user include pattern that matches everything keeps the default exclusions.
    reconcile(src, out, Settings(include=("*",)))
    assert sorted(chunk_files(out)) == ["guide.md.jsonl"]
    assert not any("nw-secret" in e.get("source", "") for e in feed(out))


@pytest.mark.timeout(60)
def test_chunk_paths_stay_inside_out_whatever_the_names(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    names = [
        b"..md",
        b"...md",
        b"-rf .md",
        b" lead.md",
        b"back\\..\\slash.md",
        b"x\xff\xfe.md",
        b"nl\n..\n.md",
        "\u202eevil.md".encode(),
        b"n" * 252 + b".md",
        b"%2e%2e%2fx.md",
    ]
    deep = os.path.join(os.fsencode(src), b"..a", b"...", b"b")
    os.makedirs(deep)
    for name in names:
        for folder in (os.fsencode(src), deep):
            with open(os.path.join(folder, name), "wb") as fh:
                fh.write(hostile.good_md(name.decode("utf-8", "replace")))
    before = sorted(os.listdir(tmp_path))
    with Reconciler(src, out, Settings()) as reconciler:
        report = reconciler.reconcile()
        assert report.parsed == 2 * len(names) and not report.failed
        chunks_root = os.path.realpath(reconciler.layout.root)
        for rel in reconciler.store.all():
            target = os.path.realpath(reconciler.layout.path_of(rel))
            assert target.startswith(chunks_root + os.sep), rel
    assert sorted(os.listdir(tmp_path)) == sorted([*before, "out"])  # nothing beside SRC and OUT
    for dirpath, _, files in os.walk(os.fsencode(out / "chunks")):
        for name in files:
            with open(os.path.join(dirpath, name), "rb") as fh:
                for line in fh:
                    json.loads(line.decode("utf-8", "strict"))  # strict UTF-8 JSON ("undecodable file names")
    assert_feed_matches(out)


def test_paths_outside_the_root_have_no_relative_name(tmp_path: Path) -> None:
    # Watch events are mapped through Scope.rel: a path outside SRC never becomes an output path.
    scope = Scope(tmp_path / "docs", tmp_path / "out", Settings())
    assert scope.rel(str(tmp_path / "docs" / "a.md")) == "a.md"
    for outside in (tmp_path / "elsewhere.md", tmp_path / "docs" / ".." / "x.md", Path("/etc/passwd")):
        assert scope.rel(str(outside)) is None


@pytest.mark.timeout(60)
def test_output_inside_the_source_root_is_not_read_back(tmp_path: Path) -> None:
    # reliability scenario "output inside the source" (batch side; the watch side is in test_daemon_watch).
    src = tmp_path / "docs"
    write(src / "guide.md", page("Pilot roles"))
    out = src / "chunks-out"
    first = reconcile(src, out)
    second = reconcile(src, out)
    assert (first.parsed, second.parsed, second.scanned) == (1, 0, 1)
    assert set(current_ids(out).values()) == {"guide.md"}


@pytest.mark.timeout(60)
def test_a_file_that_vanishes_between_scan_and_read_is_no_error(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "stays.md", page("Geofences"))
    write(src / "was-good.md", page("Battery care"))
    reconcile(src, out)
    write(src / "brand-new.md", page("Flight logs"))
    real_scan = Scope.scan

    def scan_then_delete(self: Scope, prefix: str = "") -> dict[str, object]:
        found = real_scan(self, prefix)
        for name in ("brand-new.md", "was-good.md"):
            (src / name).unlink(missing_ok=True)  # gone after the scan saw it, before a worker reads it
        return found  # type: ignore[return-value]

    monkeypatch.setattr(Scope, "scan", scan_then_delete)
    write(src / "was-good.md", page("Battery care", "Edited, then deleted at once."))
    report = reconcile(src, out)
    assert report.failed == []
    assert set(current_ids(out).values()) == {"stays.md"}  # the deleted page's chunks went with it
    assert_feed_matches(out)
    assert read_status(out).failed == []  # type: ignore[union-attr]


def test_a_worker_reports_a_vanished_file_as_missing(tmp_path: Path) -> None:
    outcome = run_task(Task("gone.md", str(tmp_path / "gone.md"), "gone.md"), Settings())
    assert (outcome.status, outcome.reason) == ("missing", "file vanished before it could be read")


def test_an_unreadable_file_gets_status_unreadable(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # Tests run as root, which reads chmod 000 files; the build-level case in test_hostile_build
    # drops the capability with setpriv. Here the read itself is made to fail.
    path = write(tmp_path / "locked.md", page("Locked"))
    real_open = open

    def deny(file: object, *args: object, **kwargs: object) -> object:
        if str(file) == str(path):
            raise PermissionError(13, "Permission denied", str(file))
        return real_open(file, *args, **kwargs)  # type: ignore[call-overload]

    monkeypatch.setattr("builtins.open", deny)
    outcome = run_task(Task("locked.md", str(path), "locked.md"), Settings())
    assert outcome.status == "unreadable" and "Permission denied" in (outcome.reason or "")


@pytest.mark.timeout(60)
def test_a_project_exclude_list_keeps_the_secret_patterns(tmp_path: Path) -> None:
    # An `exclude` list in segment.toml adds to the defaults, like the command-line flag.
    from segment.settings import load_settings

    src, out = tmp_path / "docs", tmp_path / "out"
    write(src / "segment.toml", 'exclude = ["drafts/"]\n')
    write(src / "guide.md", page("Pilot roles"))
    write(src / ".env.md", page("Secrets", "API_TOKEN=nw-secret-123"))
    reconcile(src, out, load_settings(src))
    assert sorted(chunk_files(out)) == ["guide.md.jsonl"]
