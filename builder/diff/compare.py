"""``periplus review BASE HEAD``: what a pull request changes in the catalogue, and whether it holds.

Both sides are verified in full; :func:`compare` then sets them side by side,
entry by entry (maps by id, cycles by map and id, references by key), and
says for each entry whether it was added, changed, renamed or removed, which
fields changed, whether a changed cycle is still the same cycle, and how the
head's verification judged it.  ``compare`` is a pure function of two
verification reports and the files under their roots, so a release changelog
can call it on two tagged versions (extract them with
:func:`revision_catalogue`).

Exit status of the command:

- 1 when an added, changed or renamed entry of the head does not hold, when
  an entry the pull request did not touch held in the base and fails in the
  head (this is how a removal that breaks a dependency shows: a cycle whose
  map was removed, or an entry citing a removed reference, no longer
  verifies), or when the head has a new problem that belongs to no entry
  (a badly named file, say);
- 0 otherwise, warnings included: a warning (a removed cycle that a coverage
  claim of the base covered, a removed entry that others still use) asks the
  reviewer to look, it does not fail the review by itself;
- 2 for usage errors: a missing directory, an unknown revision, a revision
  without the catalogue path.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from builder.arith.integers import DECIMAL_INTEGER, parse_decimal
from builder.catalogue.load import Mapping as MappingNode
from builder.catalogue.load import Node, Scalar, read_file, scan_catalogue
from builder.catalogue.load import Sequence as SequenceNode
from builder.catalogue.model import Cycle, Report
from builder.catalogue.verify import short
from builder.errors import Problem

__all__ = [
    "CHANGES",
    "KINDS",
    "PLURAL",
    "Change",
    "Comparison",
    "FieldChange",
    "Outcome",
    "ReviewWarning",
    "compare",
    "compare_series",
    "coverage_bounds",
]

#: The kinds of entry, in the order the report lists them.
KINDS = ("record", "map", "cycle", "reference")
PLURAL = {"record": "record details", "map": "maps", "cycle": "cycles", "reference": "references"}
#: The kinds of change, in the order the counts table lists them.
CHANGES = ("added", "changed", "renamed", "removed")
_REFERENCES_FILE = "references.yaml"


# --- what the comparison returns ---------------------------------------------


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
class Outcome:
    """How the head's verification judged an entry: whether it reached the verified record, and its problems.

    Problem paths are relative to the catalogue root.
    """

    verified: bool
    problems: tuple[Problem, ...] = ()
    reason: str | None = None  # why an entry with no problem of its own is not verified

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == "error")

    @property
    def holds(self) -> bool:
        return self.verified and not self.errors


@dataclass(frozen=True, slots=True)
class Change:
    """One entry that differs between the sides (or that the head now fails, although it is unchanged).

    ``change`` is "added", "changed", "renamed", "removed" or "unchanged" (only for an entry whose
    verification got worse).  ``path`` is the head's file, or the base's for a removal; ``base_path``
    the base's file of a renamed cycle.  ``identity`` says, for a changed map or cycle, whether it is
    mathematically the same ("same cycle", "different cycle", "same map", "different map"), None when
    one side does not verify and it cannot be told.  ``outcome`` is None for a removal.
    """

    kind: str
    key: str
    change: str
    path: str
    base_path: str | None = None
    base_key: str | None = None
    fields: tuple[FieldChange, ...] = ()
    layout_only: bool = False  # the file differs, but only in comments, order or layout
    identity: str | None = None
    outcome: Outcome | None = None
    fingerprint: str | None = None  # a cycle's fingerprint: the head's, or the base's for a removal

    @property
    def fails(self) -> bool:
        return self.outcome is not None and not self.outcome.holds


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

    def of_kind(self, kind: str) -> tuple[Change, ...]:
        return tuple(c for c in self.changes if c.kind == kind)

    def count(self, kind: str, change: str) -> int:
        if change == "unchanged":
            return self.unchanged.get(kind, 0)
        return sum(1 for c in self.changes if c.kind == kind and c.change == change)

    @property
    def failures(self) -> tuple[Change, ...]:
        return tuple(c for c in self.changes if c.fails)

    @property
    def ok(self) -> bool:
        return not self.failures and not any(p.severity == "error" for p in self.other_problems)


# --- reading each side ---------------------------------------------------------------


@dataclass(slots=True)
class _Entry:
    kind: str
    key: str
    path: str
    fields: dict[str, Any] | None  # flattened comparable values; None when the file cannot be read
    data: Any  # the entry as plain Python data (integers parsed), for dependency checks
    text: bytes | None  # the file's bytes (maps and cycles), to tell layout-only edits


@dataclass(slots=True)
class _Side:
    report: Report
    root: Path
    entries: dict[tuple[str, str], _Entry]
    problems: dict[str, list[Problem]]  # by relative path
    references_readable: bool
    cycles: dict[tuple[str, str], Cycle] = field(default_factory=dict)


def _relative(path: Path, root: Path) -> str:
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return path.as_posix()


def _comparable(node: Node) -> Any:
    """A node as hashable data that compares as the text was written (so ``5`` and ``"5"`` differ)."""
    if isinstance(node, Scalar):
        return ("scalar", node.value, node.plain)
    if isinstance(node, SequenceNode):
        return ("list", tuple(_comparable(n) for n in node.items))
    if isinstance(node, MappingNode):
        return ("mapping", tuple(sorted((k, _comparable(v)) for k, (_, v) in node.entries.items())))
    return ("other",)


def _flatten(node: Node, prefix: str = "") -> dict[str, Any]:
    """Fields by dotted name, descending into mappings (``provenance.found_by``); lists are one field."""
    if not isinstance(node, MappingNode):
        return {prefix: _comparable(node)}
    out: dict[str, Any] = {}
    if not node.entries and prefix:
        out[prefix] = _comparable(node)
    for key, (_, value) in node.entries.items():
        name = f"{prefix}.{key}" if prefix else key
        out.update(_flatten(value, name) if isinstance(value, MappingNode) else {name: _comparable(value)})
    return out


def _plain(node: Node | None) -> Any:
    """A node as plain Python data: mappings, lists, integers (of any size) and strings."""
    if isinstance(node, MappingNode):
        return {k: _plain(v) for k, (_, v) in node.entries.items()}
    if isinstance(node, SequenceNode):
        return [_plain(n) for n in node.items]
    if isinstance(node, Scalar):
        if node.plain and DECIMAL_INTEGER.fullmatch(node.value):
            return parse_decimal(node.value)
        return node.value
    return None


def _read_side(report: Report) -> _Side:
    root = report.catalogue.root
    raw = scan_catalogue(root)
    entries: dict[tuple[str, str], _Entry] = {}
    readable = True
    for file in raw.files:
        rel = _relative(file.path, root)
        node, _ = read_file(file)
        if file.kind == "references":
            if isinstance(node, MappingNode):
                for key, (_, value) in node.entries.items():
                    entries["reference", key] = _Entry("reference", key, rel, _flatten(value), _plain(value), None)
            else:
                readable = False
            continue
        key = file.id if file.kind in ("record", "map") else f"{file.folder}/{file.id}"
        try:
            text: bytes | None = file.path.read_bytes()
        except OSError:
            text = None
        fields = _flatten(node) if isinstance(node, MappingNode) else None
        entries[file.kind, key] = _Entry(file.kind, key, rel, fields, _plain(node), text)
    problems: dict[str, list[Problem]] = {}
    for p in report.problems:
        rel = _relative(p.position.file, root)
        problems.setdefault(rel, []).append(replace(p, position=replace(p.position, file=Path(rel))))
    side = _Side(report, root, entries, problems, readable)
    for map_id, cycles in report.catalogue.cycles.items():
        for cycle in cycles:
            side.cycles[map_id, cycle.id] = cycle
    return side


def _own_problems(side: _Side, entry: _Entry) -> list[Problem]:
    found = side.problems.get(entry.path, [])
    if entry.kind != "reference":
        return list(found)
    if not side.references_readable:
        return list(found)
    return [p for p in found if p.position.key_path and p.position.key_path[0] == entry.key]


def _outcome(side: _Side, entry: _Entry) -> Outcome:
    problems = tuple(_own_problems(side, entry))
    catalogue = side.report.catalogue
    if entry.kind == "record":
        verified = catalogue.record is not None
    elif entry.kind == "map":
        verified = entry.key in catalogue.maps
    elif entry.kind == "cycle":
        verified = _cycle_key(entry.key) in side.cycles
    else:
        verified = entry.key in catalogue.references
    reason = None
    if not verified and not any(p.severity == "error" for p in problems):
        if entry.kind == "cycle" and entry.key.partition("/")[0] not in catalogue.maps:
            reason = "its map does not verify"
        elif entry.kind == "reference":
            reason = f"{_REFERENCES_FILE} does not verify"
        else:
            reason = "an entry it depends on does not verify"
    return Outcome(verified, problems, reason)


def _signature(problems: tuple[Problem, ...]) -> set[tuple[int, int, str]]:
    return {(p.position.line, p.position.column, p.message) for p in problems}


# --- comparing ---------------------------------------------------------------------------


def _describe(value: Any) -> str | None:
    if value is None:
        return None
    kind = value[0]
    if kind == "scalar":
        return str(value[1])
    if kind == "list":
        return f"a list of {len(value[1])}"
    if kind == "mapping":
        return "a mapping"
    return "a value"


def _field_changes(base: dict[str, Any] | None, head: dict[str, Any] | None) -> tuple[FieldChange, ...]:
    if base is None or head is None:
        return (FieldChange("(the whole file: it cannot be read as an entry)", None, None),)
    names = sorted(set(base) | set(head), key=lambda n: (_order(n), n))
    return tuple(
        FieldChange(
            n,
            _describe(base.get(n)),
            _describe(head.get(n)),
            _is_scalar(base.get(n)) and _is_scalar(head.get(n)),
        )
        for n in names
        if base.get(n) != head.get(n)
    )


def _is_scalar(value: Any) -> bool:
    return value is not None and value[0] == "scalar"


# Fields in the order the catalogue format lists them (catalogue/README.md); others sort after, by name.
_FIELD_ORDER = (
    "title",
    "description",
    "maintainers",
    "licence",
    "base_url",
    "version",
    "credit_committers",
    "map",
    "start",
    "word",
    "length",
    "members",
    "provenance",
    "name",
    "modulus",
    "branches",
    "summary",
    "notes",
    "references",
    "coverage",
    "authors",
    "venue",
    "year",
    "doi",
    "url",
    "status",
    "note",
)
_PROVENANCE_ORDER = ("found_by", "found_on", "method", "references", "notes")


def _order(name: str) -> tuple[int, int]:
    head, _, rest = name.partition(".")
    first = _FIELD_ORDER.index(head) if head in _FIELD_ORDER else len(_FIELD_ORDER)
    second = _PROVENANCE_ORDER.index(rest) if rest in _PROVENANCE_ORDER else len(_PROVENANCE_ORDER)
    return first, second


def _cycle_key(key: str) -> tuple[str, str]:
    """(map id, cycle id) of a cycle entry's key ``map-id/cycle-id``."""
    map_id, _, cycle_id = key.partition("/")
    return map_id, cycle_id


def _identity(kind: str, base: _Side, head: _Side, base_key: str, head_key: str) -> str | None:
    if kind == "cycle":
        b = base.cycles.get(_cycle_key(base_key))
        h = head.cycles.get(_cycle_key(head_key))
        if b is None or h is None:
            return None
        return "same cycle" if b.fingerprint == h.fingerprint else "different cycle"
    if kind == "map":
        bm = base.report.catalogue.maps.get(base_key)
        hm = head.report.catalogue.maps.get(head_key)
        if bm is None or hm is None:
            return None
        return "same map" if bm.dynamics == hm.dynamics else "different map"
    return None


def coverage_bounds(map_yaml: Mapping[str, Any]) -> list[int]:
    """The bounds of a map entry's coverage claims, read from its YAML as plain data.

    A claim ``{kind, bound, found_on, method, max_steps, max_bits, unresolved}`` says that every
    cycle of the map whose canonical member has ``|member| <= bound`` is listed.  Records without a
    whole-number bound are left out (verification reports them).
    """
    records = map_yaml.get("coverage") if isinstance(map_yaml, Mapping) else None
    if not isinstance(records, list):
        return []
    bounds = []
    for record in records:
        bound = record.get("bound") if isinstance(record, Mapping) else None
        if isinstance(bound, int) and not isinstance(bound, bool) and bound >= 0:
            bounds.append(bound)
    return bounds


def compare(base: Report, head: Report) -> Comparison:
    """Set two verified catalogues side by side, entry by entry.

    Reads the entries' files under each report's catalogue root (which must still exist) to compare
    fields as written; everything mathematical comes from the reports.
    """
    return _compare_sides(_read_side(base), _read_side(head))


def compare_series(reports: Sequence[Report]) -> list[Comparison]:
    """``compare`` each report with the one after it, reading each catalogue's files once."""
    sides = [_read_side(r) for r in reports]
    return [_compare_sides(b, h) for b, h in zip(sides, sides[1:], strict=False)]


def _compare_sides(b_side: _Side, h_side: _Side) -> Comparison:
    # Copies: the entries filled in below belong to this comparison, not to a side read once and shared.
    b_side, h_side = replace(b_side, entries=dict(b_side.entries)), replace(h_side, entries=dict(h_side.entries))
    # A references.yaml that cannot be read has no keys to compare: its entries are those of the other
    # side, each with unknown fields (so "changed", and failing with the file's problems).
    for this, that in ((b_side, h_side), (h_side, b_side)):
        if not this.references_readable:
            for (kind, key), e in list(that.entries.items()):
                if kind == "reference" and that.references_readable:
                    this.entries[kind, key] = _Entry(kind, key, e.path, None, None, None)
    changes: list[Change] = []
    unchanged = dict.fromkeys(KINDS, 0)
    removed: list[_Entry] = []
    added: list[_Entry] = []
    for ident in sorted(set(b_side.entries) | set(h_side.entries), key=lambda k: (KINDS.index(k[0]), k[1])):
        b, h = b_side.entries.get(ident), h_side.entries.get(ident)
        if h is None:
            assert b is not None
            removed.append(b)
            continue
        if b is None:
            added.append(h)
            continue
        outcome = _outcome(h_side, h)
        if b.fields is None and h.fields is None and b.text == h.text:
            fields: tuple[FieldChange, ...] = ()
        elif b.fields is not None and b.fields == h.fields:
            fields = ()
        else:
            fields = _field_changes(b.fields, h.fields)
        layout_only = not fields and b.text != h.text
        if fields or layout_only:
            identity = _identity(h.kind, b_side, h_side, b.key, h.key)
            changes.append(Change(h.kind, h.key, "changed", h.path, None, None, fields, layout_only, identity, outcome))
            continue
        unchanged[h.kind] += 1
        before = _outcome(b_side, b)
        worse = bool(_signature(outcome.errors) - _signature(before.errors)) or (before.holds and not outcome.holds)
        if worse:
            changes.append(Change(h.kind, h.key, "unchanged", h.path, outcome=outcome))
    # A removed and an added cycle with the same fingerprint (the same map definition and canonical
    # member, whatever the files and the map are called): the same cycle under a new name.
    renamed: list[Change] = []
    arrivals: dict[str, _Entry] = {}
    for h in added:
        cycle = h_side.cycles.get(_cycle_key(h.key))
        if h.kind == "cycle" and cycle is not None:
            arrivals.setdefault(cycle.fingerprint, h)
    for b in list(removed):
        cycle = b_side.cycles.get(_cycle_key(b.key))
        if b.kind != "cycle" or cycle is None:
            continue
        h_match = arrivals.pop(cycle.fingerprint, None)
        if h_match is None:
            continue
        removed.remove(b)
        added.remove(h_match)
        renamed.append(
            Change(
                "cycle",
                h_match.key,
                "renamed",
                h_match.path,
                b.path,
                b.key,
                _field_changes(b.fields, h_match.fields),
                False,
                "same cycle, renamed",
                _outcome(h_side, h_match),
            )
        )
    changes += [Change(h.kind, h.key, "added", h.path, outcome=_outcome(h_side, h)) for h in added]
    changes += [Change(b.kind, b.key, "removed", b.path) for b in removed]
    changes += renamed
    for i, c in enumerate(changes):
        if c.kind == "cycle":
            cycle = (b_side if c.change == "removed" else h_side).cycles.get(_cycle_key(c.key))
            if cycle is not None:
                changes[i] = replace(c, fingerprint=cycle.fingerprint)
    order = {c: i for i, c in enumerate(("added", "changed", "renamed", "removed", "unchanged"))}
    changes.sort(key=lambda c: (KINDS.index(c.kind), order[c.change], c.key))
    warnings = _warnings(b_side, h_side, changes)
    attributed = {e.path for e in h_side.entries.values()}
    base_other = {
        (rel, p.position.line, p.position.column, p.message) for rel, found in b_side.problems.items() for p in found
    }
    other = []
    for rel, found in sorted(h_side.problems.items()):
        for p in found:
            belongs = rel in attributed and (
                rel != _REFERENCES_FILE or not h_side.references_readable or bool(p.position.key_path)
            )
            if belongs or (rel, p.position.line, p.position.column, p.message) in base_other:
                continue
            other.append(p)
    return Comparison(tuple(changes), unchanged, tuple(warnings), tuple(other), h_side.report.files)


def _list_paths(paths: list[str], keep: int = 5) -> str:
    shown = ", ".join(paths[:keep])
    return shown + (f" and {len(paths) - keep} more" if len(paths) > keep else "")


def _cited(entry: _Entry) -> list[str]:
    data = entry.data if isinstance(entry.data, dict) else {}
    keys: Any = data.get("references") if entry.kind == "map" else None
    if entry.kind == "cycle":
        provenance = data.get("provenance")
        keys = provenance.get("references") if isinstance(provenance, dict) else None
    return [k for k in keys if isinstance(k, str)] if isinstance(keys, list) else []


def _warnings(base: _Side, head: _Side, changes: list[Change]) -> list[ReviewWarning]:
    out: list[ReviewWarning] = []
    head_cycles = [e for e in head.entries.values() if e.kind == "cycle"]
    for c in changes:
        if c.change != "removed":
            continue
        if c.kind == "map":
            users = sorted(
                e.path
                for e in head_cycles
                if e.key.partition("/")[0] == c.key or (isinstance(e.data, dict) and e.data.get("map") == c.key)
            )
            if users:
                out.append(
                    ReviewWarning(
                        "map-still-used",
                        f"{c.path} is removed, but {len(users)} cycle "
                        f"{'file' if len(users) == 1 else 'files'} of the head still use the map "
                        f"{c.key}: {_list_paths(users)}",
                    )
                )
        elif c.kind == "reference":
            citing = sorted(e.path for e in head.entries.values() if c.key in _cited(e))
            if citing:
                out.append(
                    ReviewWarning(
                        "reference-still-cited",
                        f"the reference {c.key} is removed from {_REFERENCES_FILE}, but "
                        f"{len(citing)} {'entry' if len(citing) == 1 else 'entries'} of the head still "
                        f"cite it: {_list_paths(citing)}",
                    )
                )
    # Cycles that leave the record: removed (not renamed), or changed into another cycle.
    leaving = [c for c in changes if c.kind == "cycle" and (c.change == "removed" or c.identity == "different cycle")]
    for c in leaving:
        map_id, cycle_id = _cycle_key(c.key)
        cycle = base.cycles.get((map_id, cycle_id))
        map_entry = base.entries.get(("map", map_id))
        if cycle is None or map_entry is None or ("map", map_id) not in head.entries:
            continue
        data = map_entry.data if isinstance(map_entry.data, dict) else {}
        covering = [b for b in coverage_bounds(data) if abs(cycle.canonical) <= b]
        if not covering:
            continue
        how = "is removed" if c.change == "removed" else "now starts on a different cycle"
        out.append(
            ReviewWarning(
                "covered-cycle-removed",
                f"{c.path} {how}: the base lists it as the cycle through {short(str(cycle.canonical))}, and "
                f"a coverage claim of {map_entry.path} in the base (bound {max(covering)}) says every cycle "
                f"with least |member| up to its bound is listed",
                head.entries["map", map_id].path,
            )
        )
    return out
