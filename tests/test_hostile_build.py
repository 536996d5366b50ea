"""The hostile corpus (tests/hostile.py) through `segment build`, next to good files.

What must hold (the reliability scenarios "bad PDFs", "deep HTML", "Markdown nesting",
"quadratic Markdown", "huge paragraphs", "encodings", "symlink loops and escapes" and "odd file
names", and the bad inputs of reStructuredText, notebooks, MDX and plain text): the process never
crashes or hangs (pytest-timeout bounds it); no text a case marks as absent (an included
/etc/passwd, a notebook output) reaches a chunk; each bad file is named with its status and reason on stderr, in
`segment status --json` and in the feed's `error` entries; every good file is chunked as usual;
nothing outside the source root is read through a symlink; and a file that was good keeps its
last good chunks when it turns bad.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from segment.daemon import Watcher, read_status
from segment.settings import Settings
from tests import hostile
from tests.daemon_helpers import assert_feed_matches, chunk_files, current_ids, feed

BUILD_TIMEOUT = 240


@dataclass
class Built:
    src: Path
    out: Path
    code: int
    stderr: str
    status: dict[str, Any]
    cases: dict[bytes, hostile.Hostile]
    good: dict[str, bytes]
    links: dict[str, str]
    locked: str | None
    """The unreadable file's name, or None when it could not be made unreadable."""

    def chunks_of(self, source: str) -> list[dict[str, Any]]:
        return [r for r in records(self.out) if r["source"] == source]


def records(out: Path) -> list[dict[str, Any]]:
    return [json.loads(line) for data in chunk_files(out).values() for line in data.splitlines()]


def run(
    cmd: list[str], prefix: list[str] | None = None, timeout: float = BUILD_TIMEOUT
) -> subprocess.CompletedProcess[str]:
    environ = {k: v for k, v in os.environ.items() if not k.startswith("DOCSEGMENT_")}
    return subprocess.run(
        [*(prefix or []), sys.executable, "-m", "segment", *cmd],
        env=environ,
        capture_output=True,
        text=True,
        timeout=timeout,
    )


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> Built:
    base = tmp_path_factory.mktemp("hostile")
    src, out = base / "docs", base / "out"
    cases = hostile.write_cases(src)
    good = hostile.write_good(src)
    links = hostile.make_links(src, base / "outside")
    try:
        prefix = hostile.drop_capabilities_prefix()
        locked: str | None = "locked.md"
        (src / "locked.md").write_bytes(hostile.good_md("locked"))
        (src / "locked.md").chmod(0)
    except LookupError:
        prefix, locked = [], None
    done = run(["build", str(src), "-o", str(out), "--jobs", "2"], prefix)
    status = run(["status", str(out), "--json"])
    assert status.returncode == 0, status.stderr
    return Built(
        src, out, done.returncode, done.stderr, json.loads(status.stdout), cases, good, links, locked
    )


def failed_cases(built: Built) -> dict[str, hostile.Hostile]:
    return {c.source: c for c in built.cases.values() if c.expect == "failed"}


@pytest.mark.timeout(BUILD_TIMEOUT + 60)
def test_the_build_ends_with_exit_1_no_traceback_and_every_good_file_chunked(built: Built) -> None:
    assert built.code == 1, built.stderr  # 1: some files failed, the rest written (segment.cli)
    assert "Traceback" not in built.stderr
    for rel in built.good:
        texts = " ".join(r["text"] for r in built.chunks_of(rel))
        assert hostile.GOOD_TEXT in texts or "on page 3" in texts, f"good file {rel} lost"
    assert_feed_matches(built.out)


@pytest.mark.timeout(BUILD_TIMEOUT + 60)
def test_each_bad_file_is_reported_on_stderr_in_status_and_in_the_feed(built: Built) -> None:
    in_status = {f["source"]: f for f in built.status["failed"]}
    errors = {e["source"]: str(e["error"]) for e in feed(built.out) if e["op"] == "error"}
    expected = failed_cases(built)
    for source, case in expected.items():
        assert source in in_status, f"{source} ({case.why}) missing from segment status"
        status, reason = in_status[source]["status"], in_status[source]["reason"]
        assert status in case.statuses, f"{source}: {status}: {reason}"
        assert reason.strip() and source in built.stderr and status in built.stderr
        assert f"failed: {source}: {status}: " in built.stderr  # the per-file line of run_build
        assert errors[source].startswith(f"{status}: ")
        assert built.chunks_of(source) == []
    if built.locked:
        assert in_status[built.locked]["status"] == "unreadable"
        assert "Permission denied" in in_status[built.locked]["reason"]
    # Nothing else failed, except cases allowed to fail cleanly (cut PDFs), with their status.
    allowed = {c.source: c for c in built.cases.values() if c.expect == "ok" and c.statuses}
    for source in set(in_status) - set(expected) - {built.locked}:
        assert source in allowed, f"{source} failed: {in_status[source]}"
        assert in_status[source]["status"] in allowed[source].statuses
        assert errors[source].startswith(in_status[source]["status"] + ": ")


@pytest.mark.timeout(BUILD_TIMEOUT + 60)
def test_each_surviving_case_reaches_the_chunks(built: Built) -> None:
    sources = set(current_ids(built.out).values())
    for case in built.cases.values():
        if case.expect != "ok":
            continue
        if case.statuses and case.source in {f["source"] for f in built.status["failed"]}:
            continue  # allowed to fail cleanly (a cut PDF that cannot be repaired)
        texts = "\n".join(r["text"] for r in built.chunks_of(case.source))
        if case.needle:
            assert case.needle in texts, f"{case.source!r} ({case.why}): text lost"
        if case.absent:
            assert case.absent not in texts, f"{case.source!r} ({case.why}): {case.absent!r} chunked"
        elif case.make():
            assert case.source in sources or "cut" in case.tags, f"{case.source!r} gave no chunks"


@pytest.mark.timeout(BUILD_TIMEOUT + 60)
def test_nothing_outside_the_root_is_read_and_output_stays_inside_out(built: Built) -> None:
    # Reliability scenario "symlink loops and escapes": a folder symlink loop, links to the
    # parent, out of the root, to /etc.
    sources = set(current_ids(built.out).values())
    for name in built.links:
        assert not any(s == name or s.startswith(name + "/") for s in sources), built.links[name]
    assert not any("outside the root" in r["text"] for r in records(built.out))
    # Whatever the names (dots, dashes, newlines, 0xff, 255 bytes): every output file is under OUT.
    root = (built.out / "chunks").resolve()
    for dirpath, _, names in os.walk(os.fsencode(built.out / "chunks")):
        for name in names:
            assert Path(os.fsdecode(os.path.join(dirpath, name))).resolve().is_relative_to(root)
    assert set(os.listdir(built.out)) <= {
        ".lock",
        "changes.jsonl",
        "chunks",
        "state.sqlite3",
        "state.sqlite3-shm",
        "state.sqlite3-wal",
    }
    assert sorted(os.listdir(built.src.parent)) == ["docs", "out", "outside"]


@pytest.mark.timeout(BUILD_TIMEOUT + 60)
def test_unchanged_rebuilds_parse_no_bad_file_again_and_a_transient_failure_is_quarantined(
    built: Built,
) -> None:
    # Permanent failures (corrupt, encrypted, empty) are not retried until the file changes;
    # a transient one (unreadable) is retried until it failed 3 times, then quarantined.
    prefix = hostile.drop_capabilities_prefix()
    lines = []
    for _ in range(3):
        done = run(["build", str(built.src), "-o", str(built.out)], prefix)
        assert done.returncode == 1 and "Traceback" not in done.stderr
        lines.append(next(ln for ln in done.stderr.splitlines() if "build:" in ln))
    assert all("re-segmented 0 files" in line for line in lines), lines
    if built.locked:
        assert ["1 failed" in line for line in lines] == [True, True, False], lines  # tries 2, 3, then none
        status = json.loads(run(["status", str(built.out), "--json"]).stdout)
        reason = next(f["reason"] for f in status["failed"] if f["source"] == built.locked)
        assert "quarantined until the file changes" in reason
    else:
        assert not any("failed" in line for line in lines), lines


# -- a good file turning bad -----------------------------------------------------------------

FAST_BAD = [c for c in hostile.CASES if c.expect == "failed"]


@pytest.mark.timeout(120)
def test_a_good_file_that_turns_bad_keeps_its_last_good_chunks(tmp_path: Path) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    src.mkdir()
    for case in FAST_BAD:
        (src / case.source).write_bytes(hostile.good_for(case.name, case.source))
    assert run(["build", str(src), "-o", str(out)]).returncode == 0
    before = chunk_files(out)
    assert len(before) == len(FAST_BAD)
    hostile.write_cases(src, tuple(FAST_BAD))
    done = run(["build", str(src), "-o", str(out)])
    assert done.returncode == 1 and "Traceback" not in done.stderr
    assert chunk_files(out) == before  # DESIGN.md section 5: a file that fails keeps its last good chunks
    errors = [e for e in feed(out) if e["op"] == "error"]
    assert sorted(e["source"] for e in errors) == sorted(c.source for c in FAST_BAD)
    assert not [e for e in feed(out) if e["op"] == "delete"]
    status = read_status(out)
    assert status is not None and len(status.failed) == len(FAST_BAD)
    assert status.chunks == len(current_ids(out))  # the kept ids are still counted
    assert_feed_matches(out)


# -- the same files arriving while `segment watch` runs ------------------------------------------

# The quadratic, long and big (50 MB, 100,000 cells) cases are left to the build above: the
# watcher runs the same parse in the same worker, and writing them again here only costs time.
WATCH_CASES = tuple(c for c in hostile.CASES if not ({"quadratic", "long", "big"} & c.tags))


@pytest.mark.timeout(180)
def test_hostile_files_dropped_into_a_watched_folder_get_statuses_and_the_watcher_keeps_going(
    tmp_path: Path,
) -> None:
    src, out = tmp_path / "docs", tmp_path / "out"
    hostile.write_good(src)
    with Watcher(src, out, Settings(), quiet_ms=50) as w:
        written = hostile.write_cases(src, WATCH_CASES, prefix="incoming")
        hostile.make_links(src / "incoming", tmp_path / "outside")
        w.catch_up(120)
        (src / "after.md").write_bytes(hostile.good_md("after the storm"))
        w.catch_up(60)
        failed = {s: st for s, st, _ in w.report.failed}
    expected = {"incoming/" + c.source: c for c in written.values() if c.expect == "failed"}
    for source, case in expected.items():
        assert failed.get(source) in case.statuses, (source, failed.get(source))
    sources = set(current_ids(out).values())
    assert "after.md" in sources and set(hostile.GOOD_FILES) <= sources
    assert not any(s.startswith(("incoming/loop/", "incoming/up/", "incoming/ext")) for s in sources)
    assert_feed_matches(out)
