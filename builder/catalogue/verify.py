"""Verifying a whole catalogue: every file checked, every cycle re-derived, the verified record assembled.

Every file is checked even after others fail; each problem is reported at the YAML node at fault,
with what was expected and what was got.  Files are read in a fixed order (references, the record,
maps, cycles) so that each check knows what the ones before it verified: which reference keys may be
cited, which maps cycles may name.  Two entries of the same cycle, or two maps with one definition,
are caught here; coverage claims are re-run last, against the verified cycles.  While reading, each
entry is also kept as written (:mod:`builder.catalogue.written`), so that a review or a changelog
compares catalogues without reading a file again.
"""

from __future__ import annotations

from collections.abc import Collection
from functools import partial
from pathlib import Path
from types import MappingProxyType

from builder.arith.dynamics import AffineMap
from builder.arith.integers import show
from builder.catalogue.coverage import recheck_coverage
from builder.catalogue.cycles import check_cycle
from builder.catalogue.files import RawCatalogue, RawFile, Source, read_file, scan_catalogue, scan_source
from builder.catalogue.limits import DEFAULT_MAX_STEPS, DEFAULT_RECHECK_UP_TO, Limits
from builder.catalogue.maps import check_map
from builder.catalogue.model import Catalogue, Cycle, MapEntry, Record, Reference, Report
from builder.catalogue.nodes import MappingNode, Node
from builder.catalogue.reader import label
from builder.catalogue.record import RECORD_FILE, check_record
from builder.catalogue.references import check_references
from builder.catalogue.written import WrittenEntry, written_entries
from builder.errors import KeyPath, Position, Problem, Severity

__all__ = [
    "DEFAULT_MAX_STEPS",
    "DEFAULT_RECHECK_UP_TO",
    "RECORD_FILE",
    "Limits",
    "verify_catalogue",
    "verify_raw",
    "verify_source",
]

_WHAT = {
    "record": "the record's description (a mapping of fields)",
    "map": "a map entry (a mapping of fields)",
    "cycle": "a cycle entry (a mapping of fields)",
    "references": "a mapping from reference keys to references",
}


class _Verification:
    """One run over a catalogue's files: the problems found and what verified so far."""

    def __init__(self, raw: RawCatalogue, limits: Limits) -> None:
        self.raw = raw
        self.limits = limits
        self.problems = list(raw.layout_problems)
        self.written: dict[tuple[str, str], WrittenEntry] = {}
        self.by_path: dict[str, WrittenEntry] = {}  # maps and cycles by file
        self.references_readable = True
        self.references: dict[str, Reference] = {}
        # Keys that entries may cite: those of the valid references, or, when
        # references.yaml has problems of its own, every key it lists (None if it
        # could not be read at all), so that its faults are not blamed on every
        # entry that cites it.
        self.known: Collection[str] | None = self.references
        self.record: Record | None = None
        self.maps: dict[str, MapEntry] = {}
        self.bad_maps: set[str] = set()
        self.by_map: dict[str, dict[int, Cycle]] = {}
        self.by_fingerprint: dict[str, Cycle] = {}

    def parsed(self, file: RawFile) -> tuple[RawFile, bool]:
        """The file with its nodes, and whether the loader found fault with it; keeps its entries as written.

        A file the loader found fault with (a duplicate key, an anchor, a tag, a second document)
        still has its fields checked, but nothing from it reaches the model: its tree may not be
        what its author meant.
        """
        file = read_file(self.raw, file)
        found = file.problems or []
        self.problems.extend(found)
        if file.root is None and not found:
            # No YAML document at all (empty, or only comments): it must not pass unnoticed.
            message = f"expected {_WHAT[file.kind]}, got an empty file"
            self.problems.append(Problem(Position(file.path), message, "empty-file"))
        rel = file.rel
        key = file.id if file.kind in ("record", "map", "references") else f"{file.folder}/{file.id}"
        for entry in written_entries(file.kind, key, rel, file.root, file.digest):
            self.written[entry.kind, entry.key] = entry
            if entry.kind in ("map", "cycle"):
                self.by_path[entry.path] = entry
        if file.kind == "references" and not isinstance(file.root, MappingNode):
            self.references_readable = False
        return file, bool(found)

    def where(self, path: Path, key_path: KeyPath) -> Position:
        """The position of a key path in a file already read."""
        entry = self.by_path.get(path.relative_to(self.raw.root).as_posix())
        line, column = entry.position(key_path) if entry is not None else (0, 0)
        return Position(path, line, column, key_path)

    def read_references(self) -> None:
        for file in self.raw.of_kind("references"):
            before = len(self.problems)
            file, faulted = self.parsed(file)
            self.references = check_references(file, self.problems)
            self.known = self.references
            if len(self.problems) > before:
                self.known = set(file.root.entries) if isinstance(file.root, MappingNode) else None
            if faulted:
                self.references = {}

    def read_record(self) -> None:
        records = list(self.raw.of_kind("record"))
        for file in records:
            file, faulted = self.parsed(file)
            record = check_record(file, self.problems)
            self.record = None if faulted else record
        # A record.yaml that is a folder or a link is reported as such by the layout check, not as missing.
        misplaced = any(p.position.file == self.raw.root / RECORD_FILE for p in self.raw.layout_problems)
        if not records and not misplaced:
            self.problems.append(
                Problem(
                    Position(self.raw.root / RECORD_FILE),
                    f"expected {RECORD_FILE}, the record's title, description, maintainers, licence, base_url and "
                    f"version, got no such file",
                    "missing-record",
                )
            )

    def read_maps(self) -> None:
        for file in self.raw.of_kind("map"):
            file, faulted = self.parsed(file)
            entry = check_map(file, self.known, self.problems)
            if entry is None or faulted:
                self.bad_maps.add(file.id)
            else:
                self.maps[entry.id] = entry
        definitions: dict[AffineMap, MapEntry] = {}
        for entry in self.maps.values():
            first = definitions.setdefault(entry.dynamics, entry)
            if first is not entry:
                self.problems.append(
                    Problem(
                        self.where(entry.path, ("branches",)),
                        f"branches: expected a map not yet listed, got the definition of {first.path} again "
                        f"(modulus {entry.modulus}, the same branches); a map is listed once, so its cycles are too",
                        "duplicate-map",
                        Severity.WARNING,
                    )
                )

    def read_cycles(self) -> None:
        for file in self.raw.of_kind("cycle"):
            file, faulted = self.parsed(file)
            result = check_cycle(file, self.maps, self.bad_maps, self.known, self.limits, self.problems)
            if result is not None and not faulted:
                self.add_cycle(*result)

    def add_cycle(self, cycle: Cycle, node: Node, key: KeyPath) -> None:
        """List a derived cycle unless it is listed already, under this map or a map of the same definition."""
        seen = self.by_map.setdefault(cycle.map_id, {})
        first = seen.get(cycle.canonical)
        twin = self.by_fingerprint.get(cycle.fingerprint)
        if first is not None:
            message = (
                f"expected a cycle not yet listed, got the cycle of {first.path} again (both contain "
                f"{show(cycle.canonical)}); a cycle is listed once, whatever member it starts from"
            )
        elif twin is not None:
            # Another map with the very same definition already lists this cycle.
            message = (
                f"expected a cycle not yet listed, got the cycle of {twin.path} again (both have "
                f"the fingerprint {cycle.fingerprint}: the maps {twin.map_id} and {cycle.map_id} have the same "
                f"definition, and both contain {show(cycle.canonical)})"
            )
        else:
            seen[cycle.canonical] = cycle
            self.by_fingerprint[cycle.fingerprint] = cycle
            return
        position = Position(cycle.path, node.line, node.column, key)
        self.problems.append(Problem(position, label(key) + message, "duplicate-cycle"))

    def report(self) -> Report:
        cycles = {
            map_id: tuple(sorted(found.values(), key=lambda c: (abs(c.canonical), c.canonical < 0)))
            for map_id, found in sorted(self.by_map.items())
        }
        for map_id, entry in list(self.maps.items()):
            if entry.coverage:
                where = partial(self.where, entry.path)
                found = self.by_map.get(map_id, {})
                self.maps[map_id] = recheck_coverage(entry, found, self.limits, self.problems, where)
        catalogue = Catalogue(
            root=self.raw.root,
            maps=MappingProxyType(dict(sorted(self.maps.items()))),
            cycles=MappingProxyType(cycles),
            references=MappingProxyType(dict(sorted(self.references.items()))),
            record=self.record,
        )
        # Count every path looked at, including those refused by name or kind,
        # so that "N errors in X of Y files" never has X > Y.
        files = {f.path for f in self.raw.files} | {p.position.file for p in self.problems}
        written = MappingProxyType(self.written)
        return Report(catalogue, tuple(sorted(self.problems)), len(files), written, self.references_readable)


def verify_raw(raw: RawCatalogue, limits: Limits = Limits()) -> Report:
    """Verify a catalogue's files; return the verified model, every problem and the entries as written.

    Files not yet parsed are parsed one at a time and dropped once checked,
    so memory holds the model, not every file's node tree.
    """
    run = _Verification(raw, limits)
    run.read_references()
    run.read_record()
    run.read_maps()
    run.read_cycles()
    return run.report()


def verify_source(source: Source, limits: Limits = Limits()) -> Report:
    """Verify the catalogue held by ``source`` (a folder, or a tree in memory)."""
    return verify_raw(scan_source(source), limits)


def verify_catalogue(root: Path, limits: Limits = Limits()) -> Report:
    """Load and verify the catalogue at root (raises CatalogueUnreadable if it is not one)."""
    return verify_raw(scan_catalogue(root), limits)
