"""Batching of watch events, driven by a scripted event source and a fake clock (no sleeps)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from watchdog.events import (
    DirCreatedEvent,
    DirModifiedEvent,
    DirMovedEvent,
    FileClosedEvent,
    FileCreatedEvent,
    FileDeletedEvent,
    FileModifiedEvent,
    FileMovedEvent,
    FileOpenedEvent,
)

from segment.daemon.batching import FULL, Batch, Change, batches
from segment.daemon.events import changes_of
from segment.daemon.scope import Scope
from segment.daemon.vocabulary import ChangeKind
from segment.settings import Settings


class Clock:
    def __init__(self) -> None:
        self.now = 0.0

    def __call__(self) -> float:
        return self.now


class Script:
    """Events at given times; `get(timeout)` advances the clock like a blocking queue would."""

    def __init__(self, clock: Clock, events: list[tuple[float, Sequence[Change]]]) -> None:
        self.clock = clock
        self.events = sorted(events, key=lambda e: e[0])

    def get(self, timeout: float) -> Sequence[Change] | None:
        if self.events and self.events[0][0] <= self.clock.now + timeout:
            at, changes = self.events.pop(0)
            self.clock.now = max(self.clock.now, at)
            return changes
        self.clock.now += timeout
        return None


def run(
    events: list[tuple[float, Sequence[Change]]],
    *,
    quiet: float = 0.2,
    max_wait: float = 2.0,
    until: float = 10.0,
) -> list[tuple[float, Batch]]:
    clock = Clock()
    source = Script(clock, events)
    out = []
    for batch in batches(source, clock, quiet_s=quiet, max_wait_s=max_wait, stop=lambda: clock.now >= until):
        out.append((round(clock.now, 3), batch))
    return out


def f(path: str) -> list[Change]:
    return [Change(ChangeKind.FILE, path)]


def test_events_closer_than_the_quiet_period_make_one_batch_coalesced_per_path() -> None:
    got = run([(1.0, f("a.md")), (1.1, f("b.md")), (1.15, f("a.md")), (1.3, f("a.md"))])
    assert len(got) == 1
    at, batch = got[0]
    assert batch.files == ["a.md", "b.md"]
    assert at == 1.5  # 200 ms after the last event


def test_a_pause_longer_than_the_quiet_period_splits_batches() -> None:
    got = run([(1.0, f("a.md")), (1.5, f("b.md"))])
    assert [(at, b.files) for at, b in got] == [(1.2, ["a.md"]), (1.7, ["b.md"])]


def test_a_file_that_never_settles_is_still_processed_after_the_longest_wait() -> None:
    # syncthing processes a path that keeps changing after at most a bounded delay.
    events = [(1.0 + 0.1 * i, f("busy.md")) for i in range(100)]
    got = run(events, quiet=0.2, max_wait=2.0)
    assert got[0][0] == 3.0 and got[0][1].files == ["busy.md"]
    assert all(b.files == ["busy.md"] for _, b in got)


def test_stop_flushes_what_is_pending_at_once() -> None:
    got = run([(1.0, f("a.md"))], quiet=5.0, max_wait=50.0, until=2.0)
    assert [b.files for _, b in got] == [["a.md"]]
    assert got[0][0] < 6.0


def test_a_rescanned_folder_absorbs_files_below_it() -> None:
    got = run(
        [
            (1.0, f("docs/a.md")),
            (1.0, [Change(ChangeKind.FOLDER, "docs")]),
            (1.1, f("other.md")),
            (1.1, [Change(ChangeKind.COOKIE, "tok")]),
        ]
    )
    batch = got[0][1]
    assert batch.files == ["other.md"] and batch.folders == ["docs"]
    assert not batch.full and batch.cookies == ["tok"]


def test_a_full_request_covers_every_path_and_keeps_the_barriers() -> None:
    got = run(
        [(1.0, f("docs/a.md")), (1.1, [FULL]), (1.1, f("late.md")), (1.1, [Change(ChangeKind.COOKIE, "tok")])]
    )
    batch = got[0][1]
    assert batch.full and batch.files == [] and batch.folders == [] and batch.cookies == ["tok"]


def test_idle_supervision_runs_between_batches_and_its_requests_are_batched() -> None:
    clock = Clock()
    calls = []

    def idle() -> list[Change]:
        calls.append(clock.now)
        return [FULL] if len(calls) == 3 else []

    got = list(
        batches(
            Script(clock, []),
            clock,
            quiet_s=0.2,
            max_wait_s=2.0,
            stop=lambda: clock.now >= 3.0,
            idle=idle,
            idle_s=0.5,
        )
    )
    assert len(calls) >= 3
    assert [b.full for b in got] == [True]


# -- event routing (reliability scenario "editor saves by rename", "vim's save sequence", "output inside the source") ------------------------------------------------


def scope(tmp_path: Path) -> Scope:
    (tmp_path / "src").mkdir()
    return Scope(tmp_path / "src", tmp_path / "src" / "_out", Settings())


def test_a_move_is_routed_by_both_paths_so_an_atomic_save_onto_a_page_is_seen(tmp_path: Path) -> None:
    s = scope(tmp_path)
    src = str(tmp_path / "src")
    # "editor saves by rename": an editor's save is only `moved(src=.doc.md.tmp123, dest=doc.md)`.
    assert changes_of(FileMovedEvent(f"{src}/.doc.md.tmp123", f"{src}/doc.md"), s) == f("doc.md")
    assert changes_of(FileMovedEvent(f"{src}/a.md", f"{src}/b.md"), s) == f("a.md") + f("b.md")
    # vim renames the page to its backup first: the page's path is looked at, the backup never.
    assert changes_of(FileMovedEvent(f"{src}/doc.md", f"{src}/doc.md~"), s) == f("doc.md")


def test_editor_litter_our_output_and_unsupported_files_give_no_hints(tmp_path: Path) -> None:
    s = scope(tmp_path)
    src = str(tmp_path / "src")
    for name in (
        "4913",
        "doc.md~",
        ".doc.md.swp",
        ".#doc.md",
        ".goutputstream-AB12",
        "x.tmp",
        "_out/chunks/doc.md.jsonl",
        "_out/state.sqlite3",
        "notes.docx",
        "README",  # no suffix, and no include pattern names it
    ):
        assert changes_of(FileCreatedEvent(f"{src}/{name}"), s) == [], name
    assert changes_of(FileOpenedEvent(f"{src}/doc.md"), s) == []
    assert changes_of(DirModifiedEvent(src), s) == []


def test_content_events_and_folder_events_map_to_file_and_folder_hints(tmp_path: Path) -> None:
    s = scope(tmp_path)
    src = str(tmp_path / "src")
    for event in (
        FileCreatedEvent(f"{src}/a.md"),
        FileModifiedEvent(f"{src}/a.md"),
        FileClosedEvent(f"{src}/a.md"),
        FileDeletedEvent(f"{src}/a.md"),
    ):
        assert changes_of(event, s) == f("a.md")
    assert changes_of(DirCreatedEvent(f"{src}/guides"), s) == [Change(ChangeKind.FOLDER, "guides")]
    assert changes_of(DirMovedEvent(f"{src}/a", f"{src}/b/c"), s) == [
        Change(ChangeKind.FOLDER, "a"),
        Change(ChangeKind.FOLDER, "b/c"),
    ]
    assert changes_of(FileCreatedEvent(f"{src}/.docsegment-cookie-abc"), s) == [
        Change(ChangeKind.COOKIE, "abc")
    ]
    assert changes_of(FileCreatedEvent(str(tmp_path / "elsewhere.md")), s) == []


def test_a_storm_of_distinct_paths_becomes_one_full_reconcile() -> None:
    import segment.daemon.batching

    events = [(1.0 + i * 1e-4, f(f"storm/p{i}.md")) for i in range(segment.daemon.batching.MAX_PATHS + 1)]
    got = run(events)
    assert len(got) == 1
    assert got[0][1].full and got[0][1].files == []
