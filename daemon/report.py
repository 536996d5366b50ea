"""What one reconcile pass did: counts, failures, and its one log line."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(slots=True)
class PassReport:
    """What one pass of the reconciler did (counts, failures)."""

    scanned: int = 0
    """Files looked at (on disk or in the store)."""
    parsed: int = 0
    """Files re-segmented successfully."""
    unchanged: int = 0
    deleted: int = 0
    failed: list[tuple[str, str, str]] = field(default_factory=list)
    """(source, status, reason) of files that failed in this pass."""
    added: int = 0
    """Chunk ids announced as upserts."""
    removed: int = 0
    """Chunk ids announced as deletes."""
    relocated: int = 0
    """Chunk ids announced as relocated (same text, record changed)."""
    held: list[tuple[str, str]] = field(default_factory=list)
    """(source, reason) of files held back as still changing (pending: retried soon)."""
    last_seq: int = 0
    ms: float = 0.0
    parse_pids: set[int] = field(default_factory=set)
    """Processes that parsed files (never the daemon's own pid)."""
    not_read: dict[str, int] = field(default_factory=dict)
    """Files under SRC that no adapter reads, counted by suffix (full passes only)."""
    interrupted: int = 0
    """Files left for the next pass because a stop was requested."""

    def line(self, what: str) -> str:
        """The one log line for this pass."""
        failed = f", {len(self.failed)} failed" if self.failed else ""
        skipped = f", {len(self.held)} still changing" if self.held else ""
        moved = f", {self.relocated} relocated" if self.relocated else ""
        counts = ", ".join(f"{n} {suffix}" for suffix, n in sorted(self.not_read.items()))
        unread = f"; not read: {counts}" if counts else ""
        skipped += f", {self.interrupted} left for the next run (stopped)" if self.interrupted else ""
        return (
            f"{what}: {self.scanned} files, re-segmented {self.parsed} files, deleted {self.deleted}"
            f"{failed}{skipped}; chunks +{self.added} -{self.removed}{moved}; {self.ms:.0f} ms{unread}"
        )

    def merge(self, other: PassReport) -> None:
        """Add another pass's counts to this one."""
        self.scanned += other.scanned
        self.parsed += other.parsed
        self.unchanged += other.unchanged
        self.deleted += other.deleted
        self.failed += other.failed
        self.added += other.added
        self.removed += other.removed
        self.relocated += other.relocated
        self.held += other.held
        self.last_seq = max(self.last_seq, other.last_seq)
        self.parse_pids |= other.parse_pids
