"""Warnings about what a change removes from under other entries: maps still used, references still cited,
cycles that coverage claims say are listed; and about coverage claims that the head's verification could
check only in part (attested beyond what it searched again)."""

from __future__ import annotations

from collections.abc import Iterable, Mapping

from builder.arith.integers import show
from builder.catalogue.model import Cycle, MapEntry
from builder.catalogue.reader import short
from builder.catalogue.written import WrittenEntry
from builder.diff.changes import Change, ChangeKind, Identity, ReviewWarning
from builder.wording import count

__all__ = ["REFERENCES_FILE", "attested_warnings", "cycle_key", "dependency_warnings"]

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


def _path_of(head: Entries, map_id: str, entry: MapEntry) -> str:
    written = head.get(("map", map_id))
    return written.path if written is not None else entry.path.name


def _attested_part(entry: MapEntry, canonical: int) -> tuple[int, int] | None:
    """(bound, rechecked up to) of a claim of ``entry`` that covers ``canonical`` only by its word."""
    for claim in entry.coverage:
        if claim.rechecked_up_to < abs(canonical) <= claim.bound:
            return claim.bound, claim.rechecked_up_to
    return None


def attested_warnings(
    base_maps: Mapping[str, MapEntry],
    base_cycles: Mapping[tuple[str, str], Cycle],
    head_maps: Mapping[str, MapEntry],
    head: Entries,
    changes: list[Change],
) -> list[ReviewWarning]:
    """Warnings for the claims the head's verification could not check in full.

    A claim added or raised beyond what was searched again, and a cycle that leaves the record
    from inside such a claim's attested range, rest on the contributor's word alone.
    """
    out = []
    for map_id, entry in head_maps.items():
        path = _path_of(head, map_id, entry)
        before = [c.bound for c in base_maps[map_id].coverage] if map_id in base_maps else []
        for i, claim in enumerate(entry.coverage):
            if claim.attested and claim.bound > max(before, default=-1):
                checked = (
                    f"searched again only up to {show(claim.rechecked_up_to)}"
                    if claim.rechecked_up_to >= 0
                    else "not searched again at all"
                )
                out.append(
                    ReviewWarning(
                        "attested-claim",
                        f"{path} coverage[{i}] claims every cycle with least |member| up to "
                        f"{show(claim.bound)} is listed, but it was {checked} here: the rest is attested, not checked",
                        path,
                    )
                )
    for c in changes:
        if c.kind != "cycle" or (c.change != ChangeKind.REMOVED and c.identity != Identity.DIFFERENT_CYCLE):
            continue
        map_id, cycle_id = cycle_key(c.key)
        cycle = base_cycles.get((map_id, cycle_id))
        head_map = head_maps.get(map_id)
        part = None if cycle is None or head_map is None else _attested_part(head_map, cycle.canonical)
        if part is not None and cycle is not None and head_map is not None:
            path = _path_of(head, map_id, head_map)
            out.append(
                ReviewWarning(
                    "attested-cycle-removed",
                    f"{c.path} takes the cycle through {short(show(cycle.canonical))} out of the record, inside the "
                    f"attested part of a coverage claim of {path} (bound {show(part[0])}, searched again "
                    f"only up to {show(part[1])}): nothing here checks that the claim still holds",
                    path,
                )
            )
    return out
