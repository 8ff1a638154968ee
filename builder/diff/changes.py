"""What a comparison of two catalogues returns: the changed entries, how the head judged them, and warnings."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from enum import StrEnum

from builder.errors import Problem, Severity, Verdict

__all__ = [
    "CHANGES",
    "KINDS",
    "PLURAL",
    "Change",
    "ChangeKind",
    "Comparison",
    "EntryCheck",
    "FieldChange",
    "Identity",
    "ReviewWarning",
]

#: The kinds of entry, in the order the report lists them.
KINDS = ("record", "map", "cycle", "reference")
PLURAL = {"record": "record details", "map": "maps", "cycle": "cycles", "reference": "references"}


class ChangeKind(StrEnum):
    """What happened to an entry between the two sides."""

    ADDED = "added"
    CHANGED = "changed"
    RENAMED = "renamed"
    REMOVED = "removed"
    UNCHANGED = "unchanged"  # listed only when its verification got worse


#: The kinds of change, in the order the counts table lists them.
CHANGES = (ChangeKind.ADDED, ChangeKind.CHANGED, ChangeKind.RENAMED, ChangeKind.REMOVED)


class Identity(StrEnum):
    """Whether a changed map or cycle is mathematically the same one."""

    SAME_CYCLE = "same cycle"
    DIFFERENT_CYCLE = "different cycle"
    RENAMED_CYCLE = "same cycle, renamed"
    SAME_MAP = "same map"
    DIFFERENT_MAP = "different map"


@dataclass(frozen=True, slots=True)
class FieldChange:
    """One field that differs: its dotted name and, where it is a single value, the text on each side.

    ``before`` is None when the base does not give the field, ``after`` when the head does not;
    a list or mapping is described (``a list of 3``) rather than written out.
    """

    name: str
    before: str | None
    after: str | None
    values: bool = True  # both sides give a single value (so before -> after can be shown)


@dataclass(frozen=True, slots=True)
class EntryCheck:
    """How the head's verification judged an entry: whether it reached the verified record, and its problems.

    Problem paths are relative to the catalogue root.
    """

    verified: bool
    problems: tuple[Problem, ...] = ()
    reason: str | None = None  # why an entry with no problem of its own is not verified

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == Severity.ERROR)

    @property
    def verdict(self) -> Verdict:
        if self.errors:
            return Verdict.FAILS
        return Verdict.HOLDS if self.verified else Verdict.NOT_VERIFIED

    @property
    def holds(self) -> bool:
        return self.verdict is Verdict.HOLDS


@dataclass(frozen=True, slots=True)
class Change:
    """One entry that differs between the sides (or that the head now fails, although it is unchanged).

    ``change`` says what happened (UNCHANGED only for an entry whose verification got worse).  ``path``
    is the head's file, or the base's for a removal; ``base_path`` the base's file of a renamed cycle.
    ``identity`` says, for a changed map or cycle, whether it is mathematically the same, None when one
    side does not verify and it cannot be told.  ``check`` is None for a removal.
    """

    kind: str
    key: str
    change: ChangeKind
    path: str
    base_path: str | None = None
    base_key: str | None = None
    fields: tuple[FieldChange, ...] = ()
    layout_only: bool = False  # the file differs, but only in comments, order or layout
    identity: Identity | None = None
    check: EntryCheck | None = None
    fingerprint: str | None = None  # a cycle's fingerprint: the head's, or the base's for a removal

    @property
    def fails(self) -> bool:
        return self.check is not None and not self.check.holds


@dataclass(frozen=True, slots=True)
class ReviewWarning:
    """Something a reviewer should look at that does not by itself fail the review."""

    code: str  # "map-still-used", "reference-still-cited" or "covered-cycle-removed"
    message: str
    path: str | None = None  # a head file the warning is best shown on, if any


@dataclass(frozen=True, slots=True)
class Comparison:
    changes: tuple[Change, ...]
    unchanged: Mapping[str, int]  # entries of each kind that are the same on both sides
    warnings: tuple[ReviewWarning, ...]
    other_problems: tuple[Problem, ...]  # new problems of the head that belong to no entry
    head_files: int = 0
    census: tuple[str, ...] = ()  # the census claims added, removed or changed (builder.diff.census)

    def of_kind(self, kind: str) -> tuple[Change, ...]:
        return tuple(c for c in self.changes if c.kind == kind)

    def count(self, kind: str, change: str) -> int:
        if change == ChangeKind.UNCHANGED:
            return self.unchanged.get(kind, 0)
        return sum(1 for c in self.changes if c.kind == kind and c.change == change)

    @property
    def failures(self) -> tuple[Change, ...]:
        return tuple(c for c in self.changes if c.fails)

    @property
    def ok(self) -> bool:
        return not self.failures and not any(p.severity == Severity.ERROR for p in self.other_problems)
