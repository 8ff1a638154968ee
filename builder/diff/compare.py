"""Comparing two verified catalogues entry by entry: a pure function of two verification reports.

:func:`compare` sets the base and the head side by side (maps by id, cycles by map and id,
references by key) and says for each entry whether it was added, changed, renamed or removed,
which fields changed as written, whether a changed cycle is still the same cycle, and how the
head's verification judged it.  Fields come from the entries as verification kept them
(:mod:`builder.catalogue.written`) and everything mathematical from the verified records, so no
file is read here: a pull request review and a release changelog compare the same way.

An entry the pull request did not touch that held in the base and fails in the head is listed
too (this is how a removal that breaks a dependency shows), as are new problems of the head that
belong to no entry (a badly named file, say).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from pathlib import Path

from builder.catalogue.fields import PROVENANCE, field_order
from builder.catalogue.model import Cycle, Report
from builder.catalogue.written import WrittenEntry, WrittenValue
from builder.diff.census import census_notes
from builder.diff.changes import KINDS, Change, ChangeKind, Comparison, EntryCheck, FieldChange, Identity
from builder.diff.dependencies import REFERENCES_FILE, attested_warnings, cycle_key, dependency_warnings
from builder.errors import Problem, Severity

__all__ = ["compare", "compare_series"]

_FIELD_ORDER = field_order()
_PROVENANCE_ORDER = PROVENANCE.names
_ORDER = {c: i for i, c in enumerate(ChangeKind)}


@dataclass(frozen=True, slots=True)
class _Side:
    report: Report
    entries: Mapping[tuple[str, str], WrittenEntry]
    problems: Mapping[str, list[Problem]]  # by path relative to the catalogue root
    references_readable: bool
    cycles: Mapping[tuple[str, str], Cycle]


def _relative(path: Path, root: Path) -> str:
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return path.as_posix()


def _side(report: Report) -> _Side:
    root = report.catalogue.root
    problems: dict[str, list[Problem]] = {}
    for p in report.problems:
        rel = _relative(p.position.file, root)
        problems.setdefault(rel, []).append(replace(p, position=replace(p.position, file=Path(rel))))
    cycles = {(map_id, c.id): c for map_id, found in report.catalogue.cycles.items() for c in found}
    return _Side(report, report.written, problems, report.references_readable, cycles)


def compare(base: Report, head: Report) -> Comparison:
    """Set two verified catalogues side by side, entry by entry."""
    return _compare_sides(_side(base), _side(head))


def compare_series(reports: Sequence[Report]) -> list[Comparison]:
    """``compare`` each report with the one after it."""
    sides = [_side(r) for r in reports]
    return [_compare_sides(b, h) for b, h in zip(sides, sides[1:], strict=False)]


def _own_problems(side: _Side, entry: WrittenEntry) -> list[Problem]:
    found = side.problems.get(entry.path, [])
    if entry.kind != "reference" or not side.references_readable:
        return list(found)
    return [p for p in found if p.position.key_path and p.position.key_path[0] == entry.key]


def _check(side: _Side, entry: WrittenEntry) -> EntryCheck:
    problems = tuple(_own_problems(side, entry))
    catalogue = side.report.catalogue
    if entry.kind == "record":
        verified = catalogue.record is not None
    elif entry.kind == "map":
        verified = entry.key in catalogue.maps
    elif entry.kind == "cycle":
        verified = cycle_key(entry.key) in side.cycles
    else:
        verified = entry.key in catalogue.references
    reason = None
    if not verified and not any(p.severity == Severity.ERROR for p in problems):
        if entry.kind == "cycle" and cycle_key(entry.key)[0] not in catalogue.maps:
            reason = "its map does not verify"
        elif entry.kind == "reference":
            reason = f"{REFERENCES_FILE} does not verify"
        else:
            reason = "an entry it depends on does not verify"
    return EntryCheck(verified, problems, reason)


def _signature(problems: tuple[Problem, ...]) -> set[tuple[int, int, str]]:
    return {(p.position.line, p.position.column, p.message) for p in problems}


def _order(name: str) -> tuple[int, int]:
    """Fields in the order the catalogue format lists them (the field table); others after, by name."""
    head, _, rest = name.partition(".")
    first = _FIELD_ORDER.index(head) if head in _FIELD_ORDER else len(_FIELD_ORDER)
    second = _PROVENANCE_ORDER.index(rest) if rest in _PROVENANCE_ORDER else len(_PROVENANCE_ORDER)
    return first, second


def _describe(value: WrittenValue | None) -> str | None:
    return None if value is None else value.describe()


def _is_scalar(value: WrittenValue | None) -> bool:
    return value is not None and value.kind == "scalar"


def _field_changes(
    base: Mapping[str, WrittenValue] | None, head: Mapping[str, WrittenValue] | None
) -> tuple[FieldChange, ...]:
    if base is None or head is None:
        return (FieldChange("(the whole file: it cannot be read as an entry)", None, None),)
    names = sorted(set(base) | set(head), key=lambda n: (_order(n), n))
    return tuple(
        FieldChange(
            n, _describe(base.get(n)), _describe(head.get(n)), _is_scalar(base.get(n)) and _is_scalar(head.get(n))
        )
        for n in names
        if base.get(n) != head.get(n)
    )


def _identity(kind: str, base: _Side, head: _Side, key: str) -> Identity | None:
    if kind == "cycle":
        b, h = base.cycles.get(cycle_key(key)), head.cycles.get(cycle_key(key))
        if b is None or h is None:
            return None
        return Identity.SAME_CYCLE if b.fingerprint == h.fingerprint else Identity.DIFFERENT_CYCLE
    if kind == "map":
        bm, hm = base.report.catalogue.maps.get(key), head.report.catalogue.maps.get(key)
        if bm is None or hm is None:
            return None
        return Identity.SAME_MAP if bm.dynamics == hm.dynamics else Identity.DIFFERENT_MAP
    return None


def _with_unreadable_references(this: _Side, that: _Side) -> _Side:
    """A references.yaml that cannot be read has no keys to compare: its entries are those of the other
    side, each with unknown fields (so "changed", and failing with the file's problems)."""
    if this.references_readable or not that.references_readable:
        return this
    entries = dict(this.entries)
    for (kind, key), e in that.entries.items():
        if kind == "reference":
            entries[kind, key] = WrittenEntry(kind, key, e.path, None, None)
    return replace(this, entries=entries)


def _changed(b_side: _Side, h_side: _Side, b: WrittenEntry, h: WrittenEntry) -> Change | None:
    """The change of an entry both sides have, or None when it is the same (and holds as well as before)."""
    check = _check(h_side, h)
    if b.fields is None and h.fields is None and b.digest == h.digest:
        fields: tuple[FieldChange, ...] = ()
    elif b.fields is not None and b.fields == h.fields:
        fields = ()
    else:
        fields = _field_changes(b.fields, h.fields)
    layout_only = not fields and b.digest != h.digest
    if fields or layout_only:
        identity = _identity(h.kind, b_side, h_side, h.key)
        return Change(h.kind, h.key, ChangeKind.CHANGED, h.path, None, None, fields, layout_only, identity, check)
    before = _check(b_side, b)
    worse = bool(_signature(check.errors) - _signature(before.errors)) or (before.holds and not check.holds)
    return Change(h.kind, h.key, ChangeKind.UNCHANGED, h.path, check=check) if worse else None


def _renames(b_side: _Side, h_side: _Side, removed: list[WrittenEntry], added: list[WrittenEntry]) -> list[Change]:
    """A removed and an added cycle with the same fingerprint (the same map definition and canonical
    member, whatever the files and the map are called): the same cycle under a new name.

    Matched entries are taken out of ``removed`` and ``added``.
    """
    renamed: list[Change] = []
    arrivals: dict[str, WrittenEntry] = {}
    for h in added:
        cycle = h_side.cycles.get(cycle_key(h.key))
        if h.kind == "cycle" and cycle is not None:
            arrivals.setdefault(cycle.fingerprint, h)
    for b in list(removed):
        cycle = b_side.cycles.get(cycle_key(b.key))
        match = arrivals.pop(cycle.fingerprint, None) if b.kind == "cycle" and cycle is not None else None
        if match is None:
            continue
        removed.remove(b)
        added.remove(match)
        fields = _field_changes(b.fields, match.fields)
        check = _check(h_side, match)
        renamed.append(
            Change(
                "cycle",
                match.key,
                ChangeKind.RENAMED,
                match.path,
                b.path,
                b.key,
                fields,
                False,
                Identity.RENAMED_CYCLE,
                check,
            )
        )
    return renamed


def _other_problems(b_side: _Side, h_side: _Side) -> list[Problem]:
    """New problems of the head that belong to no entry."""
    attributed = {e.path for e in h_side.entries.values()}
    base_other = {
        (rel, p.position.line, p.position.column, p.message) for rel, found in b_side.problems.items() for p in found
    }
    other = []
    for rel, found in sorted(h_side.problems.items()):
        for p in found:
            belongs = rel in attributed and (
                rel != REFERENCES_FILE or not h_side.references_readable or bool(p.position.key_path)
            )
            if not belongs and (rel, p.position.line, p.position.column, p.message) not in base_other:
                other.append(p)
    return other


def _compare_sides(b_side: _Side, h_side: _Side) -> Comparison:
    b_side, h_side = _with_unreadable_references(b_side, h_side), _with_unreadable_references(h_side, b_side)
    changes: list[Change] = []
    unchanged = dict.fromkeys(KINDS, 0)
    removed: list[WrittenEntry] = []
    added: list[WrittenEntry] = []
    for ident in sorted(set(b_side.entries) | set(h_side.entries), key=lambda k: (KINDS.index(k[0]), k[1])):
        b, h = b_side.entries.get(ident), h_side.entries.get(ident)
        if h is None or b is None:
            (removed if h is None else added).append(b or h)  # type: ignore[arg-type]
            continue
        change = _changed(b_side, h_side, b, h)
        if change is None or change.change == ChangeKind.UNCHANGED:
            unchanged[h.kind] += 1
        if change is not None:
            changes.append(change)
    renamed = _renames(b_side, h_side, removed, added)
    changes += [Change(h.kind, h.key, ChangeKind.ADDED, h.path, check=_check(h_side, h)) for h in added]
    changes += [Change(b.kind, b.key, ChangeKind.REMOVED, b.path) for b in removed]
    changes += renamed
    for i, c in enumerate(changes):
        if c.kind == "cycle":
            cycle = (b_side if c.change == ChangeKind.REMOVED else h_side).cycles.get(cycle_key(c.key))
            if cycle is not None:
                changes[i] = replace(c, fingerprint=cycle.fingerprint)
    changes.sort(key=lambda c: (KINDS.index(c.kind), _ORDER[c.change], c.key))
    warnings = dependency_warnings(b_side.entries, b_side.cycles, h_side.entries, changes)
    warnings += attested_warnings(
        b_side.report.catalogue.maps, b_side.cycles, h_side.report.catalogue.maps, h_side.entries, changes
    )
    other = _other_problems(b_side, h_side)
    census = census_notes(b_side.report.catalogue.maps, h_side.report.catalogue.maps, h_side.entries)
    return Comparison(tuple(changes), unchanged, tuple(warnings), tuple(other), h_side.report.files, tuple(census))
