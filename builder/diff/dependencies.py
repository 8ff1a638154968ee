"""Warnings about what a change removes from under other entries: maps still used, references still cited,
cycles that coverage claims say are listed."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from builder.catalogue.model import Cycle
from builder.catalogue.reader import short
from builder.catalogue.written import WrittenEntry
from builder.diff.changes import Change, ChangeKind, Identity, ReviewWarning
from builder.wording import count

__all__ = ["REFERENCES_FILE", "cycle_key", "dependency_warnings"]

REFERENCES_FILE = "references.yaml"
Entries = Mapping[tuple[str, str], WrittenEntry]


def cycle_key(key: str) -> tuple[str, str]:
    """(map id, cycle id) of a cycle entry's key ``map-id/cycle-id``."""
    map_id, _, cycle_id = key.partition("/")
    return map_id, cycle_id


def _list_paths(paths: list[str], keep: int = 5) -> str:
    shown = ", ".join(paths[:keep])
    return shown + (f" and {len(paths) - keep} more" if len(paths) > keep else "")


def _removal_warning(c: Change, head: Iterable[WrittenEntry]) -> ReviewWarning | None:
    if c.kind == "map":
        users = sorted(e.path for e in head if e.kind == "cycle" and c.key in (cycle_key(e.key)[0], e.names_map))
        if users:
            return ReviewWarning(
                "map-still-used",
                f"{c.path} is removed, but {count(len(users), 'cycle file')} of the head still use the map "
                f"{c.key}: {_list_paths(users)}",
            )
    elif c.kind == "reference":
        citing = sorted(e.path for e in head if c.key in e.cites)
        if citing:
            return ReviewWarning(
                "reference-still-cited",
                f"the reference {c.key} is removed from {REFERENCES_FILE}, but "
                f"{count(len(citing), 'entry', 'entries')} of the head still cite it: {_list_paths(citing)}",
            )
    return None


def dependency_warnings(
    base: Entries, base_cycles: Mapping[tuple[str, str], Cycle], head: Entries, changes: list[Change]
) -> list[ReviewWarning]:
    """The warnings a set of changes calls for, given both sides' entries as written."""
    out = [w for c in changes if c.change == ChangeKind.REMOVED and (w := _removal_warning(c, head.values()))]
    # Cycles that leave the record: removed (not renamed), or changed into another cycle.
    for c in changes:
        if c.kind != "cycle" or (c.change != ChangeKind.REMOVED and c.identity != Identity.DIFFERENT_CYCLE):
            continue
        map_id, cycle_id = cycle_key(c.key)
        cycle = base_cycles.get((map_id, cycle_id))
        map_entry = base.get(("map", map_id))
        if cycle is None or map_entry is None or ("map", map_id) not in head:
            continue
        covering = [b for b in map_entry.coverage_bounds if abs(cycle.canonical) <= b]
        if not covering:
            continue
        how = "is removed" if c.change == ChangeKind.REMOVED else "now starts on a different cycle"
        out.append(
            ReviewWarning(
                "covered-cycle-removed",
                f"{c.path} {how}: the base lists it as the cycle through {short(str(cycle.canonical))}, and "
                f"a coverage claim of {map_entry.path} in the base (bound {max(covering)}) says every cycle "
                f"with least |member| up to its bound is listed",
                head["map", map_id].path,
            )
        )
    return out
