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

import hashlib
from collections.abc import Collection, Iterator, Mapping
from functools import partial
from pathlib import Path
from types import MappingProxyType
from typing import TypeGuard

from builder.arith.dynamics import AffineMap
from builder.arith.integers import show
from builder.catalogue.cache import PathsUnder, VerifyCache, definition_digest, scope_of
from builder.catalogue.census import recheck_census
from builder.catalogue.coverage import recheck_coverage, searches_ahead
from builder.catalogue.cycles import check_cycle
from builder.catalogue.files import (
    FolderSource,
    RawCatalogue,
    RawFile,
    Source,
    Stamp,
    Survey,
    parse_bytes,
    read_bytes,
    read_file,
    scan_source,
)
from builder.catalogue.groups import FileGroups
from builder.catalogue.limits import DEFAULT_MAX_STEPS, DEFAULT_RECHECK_UP_TO, Limits
from builder.catalogue.maps import check_map
from builder.catalogue.model import Catalogue, Cycle, MapEntry, Record, Reference, Report
from builder.catalogue.nodes import MappingNode
from builder.catalogue.outcome import Asked, Check, Checked, Value
from builder.catalogue.reader import label
from builder.catalogue.record import RECORD_FILE, check_record
from builder.catalogue.references import check_references
from builder.catalogue.shared import Share, WrittenEntries, check_shared
from builder.catalogue.written import WrittenEntry, written_entries
from builder.errors import KeyPath, Position, Problem, Severity
from builder.processes import no_cycle_collection

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


def _loaded(file: RawFile) -> list[Problem]:
    """The problems of reading and parsing a file, and of its holding no YAML document at all."""
    problems = list(file.problems or ())
    if file.root is None and not problems:
        # No YAML document at all (empty, or only comments): it must not pass unnoticed.
        problems.append(Problem(Position(file.path), f"expected {_WHAT[file.kind]}, got an empty file", "empty-file"))
    return problems


class _Verification:
    """One run over a catalogue's files: the problems found and what verified so far."""

    def __init__(self, raw: RawCatalogue, limits: Limits, cache: VerifyCache, jobs: int = 1) -> None:
        self.raw = raw
        self.limits = limits
        self.cache = cache
        self.scope = scope_of(raw.root, limits)
        self.paths = PathsUnder(raw.root, {file.rel: file.path for file in raw.files})
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
        self.jobs = jobs
        self._states: dict[str | None, str] = {}
        self.shares: list[Share] = []  # the entries as written of worker-checked cycle files, in bytes
        self.cycle_order: dict[str, int] = {}  # each cycle file's number among them, by its path
        self.digests: dict[str, bytes] = {}  # of each cycle folder's files (Report.digests), by the folder's path

    def parsed(self, file: RawFile) -> tuple[RawFile, bool]:
        """The record's or the references' file with its nodes, and whether the loader found fault with it.

        A file the loader found fault with (a duplicate key, an anchor, a tag, a second document)
        still has its fields checked, but nothing from it reaches the model: its tree may not be
        what its author meant.  Its entries as written are kept.
        """
        file = read_file(self.raw, file)
        self.problems.extend(_loaded(file))
        for entry in written_entries(file.kind, file.id, file.rel, file.root, file.digest):
            self.written[entry.kind, entry.key] = entry
        if file.kind == "references" and not isinstance(file.root, MappingNode):
            self.references_readable = False
        return file, bool(file.problems)

    def rel(self, path: Path) -> str:
        """A path's place from the catalogue root (POSIX), as RawFile.rel gives it; a path outside, as it is."""
        try:
            return path.relative_to(self.raw.root).as_posix()
        except ValueError:
            return str(path)

    def where(self, path: Path, key_path: KeyPath) -> Position:
        """The position of a key path in a file already read."""
        entry = self.by_path.get(self.rel(path))
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

    def checked(self, file: RawFile, context: str, check: Check) -> Checked:
        """The outcome of a map or cycle file: kept by the cache for these bytes and ``context``, or checked now.

        ``context`` says what else the checks read (which map a cycle's folder names, and as what, and
        whether references.yaml could be read); the file's path is the cache's key within the root.
        """
        if file.problems is not None:  # parsed already (a raw catalogue loaded whole)
            return self.check(file, check)
        stamp = self.raw.source.stamp(file.rel) if self.cache.persistent else None
        key = self.unread_key(file, context, stamp)
        if key is not None and (kept := self.kept_under(file, key, stamp)) is not None:
            return kept
        data, problems, key = self.read(file, context)
        kept = self.kept_under(file, key, stamp)
        if kept is not None:
            return kept
        outcome = self.check(parse_bytes(file, data, problems, key[0] if key else None), check)
        if key is not None and self.keeps(outcome):
            self.cache.keep_file(self.scope, file.rel, key, outcome, self.paths, stamp=stamp)
        return outcome

    def read(self, file: RawFile, context: str) -> tuple[bytes | None, list[Problem], tuple[bytes, str] | None]:
        """The file's bytes (None, with the problem, when unreadable) and its cache key: their digest and ``context``."""
        data, problems = read_bytes(self.raw, file)
        return data, problems, None if data is None else (hashlib.sha256(data).digest(), context)

    def unread_key(self, file: RawFile, context: str, stamp: Stamp | None) -> tuple[bytes, str] | None:
        """The file's cache key without reading it: the SHA-256 it was kept under, when its stamp is the
        one kept with it (the same bytes, builder.catalogue.files.Stamp), and ``context``."""
        kept = self.cache.key_of(self.scope, file.rel, stamp, self.paths)
        return (kept[0], context) if isinstance(kept, tuple) and isinstance(kept[0], bytes) else None

    def unread_hits(
        self, folder: str, files: list[tuple[str, Stamp | None, str]]
    ) -> dict[int, tuple[tuple[bytes, str], Checked]]:
        """For the files (path, stamp, context) of ``folder``, by their place in the list: the key and outcome
        the cache keeps for each whose stamp and context are those kept with it and whose outcome still
        holds with the references, unread: :meth:`kept` for a whole folder at once."""
        hits: dict[int, tuple[tuple[bytes, str], Checked]] = {}

        def accept(place: int, key: object, outcome: object) -> bool:
            if (
                isinstance(key, tuple)
                and len(key) == 2
                and isinstance(key[0], bytes)
                and key[1] == files[place][2]
                and self.holds(outcome)
            ):
                hits[place] = (key, outcome)
                return True
            return False

        self.cache.stamped(self.scope, folder, [(rel, stamp) for rel, stamp, _ in files], self.paths, accept)
        return hits

    def kept_under(self, file: RawFile, key: tuple[bytes, str] | None, stamp: Stamp | None = None) -> Checked | None:
        """The outcome the cache keeps for the file under ``key``, if it still holds with the references."""
        if key is None:
            return None
        kept = self.cache.file(self.scope, file.rel, key, self.paths, stamp)
        return kept if self.holds(kept) else None

    def holds(self, kept: object) -> TypeGuard[Checked]:
        """Whether ``kept``, as the cache gave it, is an outcome that still holds with the references."""
        return isinstance(kept, Checked) and kept.holds_with(self.known)

    def keeps(self, outcome: Checked) -> bool:
        """Whether an outcome may be kept: its answers about reference keys are known, or none could be asked."""
        return outcome.asked is not None or self.known is None

    def check(self, file: RawFile, check: Check) -> Checked:
        """Check a map or cycle file read and parsed (or not readable), as the loader left it."""
        problems = _loaded(file)
        key = f"{file.folder}/{file.id}" if file.kind == "cycle" else file.id
        written = written_entries(file.kind, key, file.rel, file.root, file.digest)
        asked = Asked(self.known) if self.known is not None else None
        value = check(file, asked, problems)
        answers = None if asked is None or asked.whole else tuple(asked.answers.items())
        return Checked(tuple(problems), tuple(written), bool(file.problems), value, answers)

    def take(self, outcome: Checked) -> None:
        """Add a file's problems and entries as written to the run's."""
        self.problems.extend(outcome.problems)
        for entry in outcome.written:
            self.written[entry.kind, entry.key] = entry
            self.by_path[entry.path] = entry

    def read_maps(self) -> None:
        def check(file: RawFile, known: Collection[str] | None, problems: list[Problem]) -> Value:
            return check_map(file, known, problems)

        context = "map, references " + ("unread" if self.known is None else "read")
        files = list(self.raw.of_kind("map"))
        hits = {}
        if self.cache.persistent:  # the outcomes the cache keeps for the files' stamps, looked up at once
            stamps = self.raw.source.stamps([file.rel for file in files])
            hits = self.unread_hits("maps", [(file.rel, stamps[i], context) for i, file in enumerate(files)])
        for i, file in enumerate(files):
            hit = hits.get(i) if file.problems is None else None
            outcome = hit[1] if hit is not None else self.checked(file, context, check)
            self.take(outcome)
            entry = outcome.value
            if isinstance(entry, MapEntry) and not outcome.faulted:
                self.maps[entry.id] = entry
            else:
                self.bad_maps.add(file.id)
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
        """Check every cycle file; with ``jobs`` above 1 and many files to check, in forked processes.

        Three passes keep the outcome the same however the work is shared: the files the cache
        keeps are looked up in order; the others are checked (by workers, each a share in file
        order); then every outcome is taken in file order, so that which of two copies of a cycle
        is reported as the duplicate never depends on the sharing.
        """
        files = list(self.raw.of_kind("cycle"))
        # A folder's files come one after another: each folder's outcomes are looked up together.
        groups = FileGroups.of(files)
        folder_of = groups.each(lambda folder, at: folder)
        states = groups.each(lambda folder, at: self.cycle_state(files[at[0]].folder))
        outcomes: list[Checked | None] = [None] * len(files)
        keys: list[tuple[bytes, str] | None] = [None] * len(files)
        persistent = self.cache.persistent
        source = self.raw.source
        stamps = source.stamps([file.rel for file in files]) if persistent else [None] * len(files)
        # The entries as written of the files the cache keeps, kept apart by folder: read when asked for.
        asides: dict[str, tuple[bytes, ...]] = {}
        for folder, at in groups.places:
            hits = self.unread_hits(folder, [(files[i].rel, stamps[i], states[i]) for i in at]) if persistent else {}
            for j, i in enumerate(at):
                file = files[i]
                if file.problems is not None:  # parsed already (a raw catalogue loaded whole)
                    outcomes[i] = self.check(file, self.check_cycle)
                elif j in hits:
                    keys[i], outcomes[i] = hits[j]
                elif persistent:
                    outcomes[i], keys[i] = self.kept(file, states[i], stamps[i])
            if persistent:
                asides[folder] = self.cache.aside()
        todo = [i for i, outcome in enumerate(outcomes) if outcome is None]
        shares: dict[int, Share] = {}  # the outcomes checked by workers, whose entries as written they keep
        for i, key, done, by in self.check_many(files, states, todo):
            outcomes[i], keys[i] = done, key
            if by is not None:
                shares[i] = by
        checked = set(todo)
        revisit = {folder_of[i] for i in todo} if persistent else set()
        kept_apart = self.kept_apart(files, groups, checked, asides)
        for i, (file, outcome) in enumerate(zip(files, outcomes, strict=True)):
            assert outcome is not None, "every cycle file has an outcome"
            key = keys[i]
            share = shares.get(i)
            if persistent and i in checked and key is not None and self.keeps(outcome):
                written = outcome.written if share is None else share.written_of(i)
                kept = outcome._replace(written=())  # its entries as written are kept apart, read when asked for
                self.cache.keep_file(self.scope, file.rel, key, kept, self.paths, aside=written, stamp=stamps[i])
            elif key is not None and revisit and folder_of[i] in revisit:
                # Kept, in a folder left before its other files were checked: seen by this run again.
                self.cache.file(self.scope, file.rel, key, self.paths, stamps[i])
            self.take(outcome)
            if share is not None and (not self.shares or self.shares[-1] is not share):
                if self.shares:
                    self.shares[-1].forget()  # shares come one after another: the one before is done
                self.shares.append(share)
            if outcome.value is not None and not outcome.faulted:
                assert not isinstance(outcome.value, MapEntry)
                self.add_cycle(*outcome.value)
        self.shares += kept_apart
        self.digests = groups.digests(files, keys)
        for share in self.shares:
            share.forget()  # read again only if the entries as written are asked for
        self.cycle_order = {file.rel: i for i, file in enumerate(files)}

    def kept_apart(
        self,
        files: list[RawFile],
        groups: FileGroups,
        checked: set[int],
        asides: Mapping[str, tuple[bytes, ...]],
    ) -> list[Share]:
        """For each folder (``groups``: its name and its files' places), the entries as written of its files whose
        outcome the cache kept (checked files have theirs with their outcome): read from the cache's bytes when
        asked for."""
        shares = []
        for folder, at in groups.places:
            rels = {files[i].rel for i in at if i not in checked and files[i].problems is None}
            if rels:
                shares += [Share(data, self.paths, rels) for data in asides.get(folder, ())]
        return shares

    def cycle_state(self, folder: str | None) -> str:
        """What a cycle's checks read besides its file: the map of its folder (its definition, or that it
        failed or is missing), and whether references.yaml could be read."""
        state = self._states.get(folder)
        if state is None:
            entry = self.maps.get(folder or "")
            of = definition_digest(entry.dynamics) if entry else "failed" if folder in self.bad_maps else "none"
            state = self._states[folder] = f"cycle of {of}, references {'unread' if self.known is None else 'read'}"
        return state

    def check_cycle(self, file: RawFile, known: Collection[str] | None, problems: list[Problem]) -> Value:
        result = check_cycle(file, self.maps, self.bad_maps, known, self.limits, problems)
        if result is None:
            return None
        cycle, node, key = result
        return cycle, node.line, node.column, key

    def kept(self, file: RawFile, context: str, stamp: Stamp | None) -> tuple[Checked | None, tuple[bytes, str] | None]:
        """The outcome the cache keeps for the file's bytes and ``context`` (None if none), and its key; the
        file is read only if its ``stamp`` is not the one kept with it."""
        key = self.unread_key(file, context, stamp)
        if key is not None and (kept := self.kept_under(file, key, stamp)) is not None:
            return kept, key
        _, _, key = self.read(file, context)
        return self.kept_under(file, key, stamp), key

    def check_one(self, file: RawFile, context: str) -> tuple[tuple[bytes, str] | None, Checked]:
        """Read, parse and check one cycle file: its cache key (None if unreadable) and outcome."""
        data, problems, key = self.read(file, context)
        return key, self.check(parse_bytes(file, data, problems, key[0] if key else None), self.check_cycle)

    def check_many(
        self, files: list[RawFile], states: list[str], todo: list[int]
    ) -> Iterator[tuple[int, tuple[bytes, str] | None, Checked, Share | None]]:
        """Check the files numbered ``todo``; in forked workers when there are enough of them (shared.py), which
        also run the coverage searches that the cache does not keep, first, for report() to find kept."""
        ahead = searches_ahead(self.maps.values(), self.limits, self.cache)
        check = self.check_one
        yield from check_shared(lambda i: check(files[i], states[i]), files, todo, self.jobs, self.paths, *ahead)

    def add_cycle(self, cycle: Cycle, line: int, column: int, key: KeyPath) -> None:
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
        position = Position(cycle.path, line, column, key)
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
                self.maps[map_id] = recheck_coverage(entry, found, self.limits, self.problems, where, self.cache)
        if self.limits.recheck_up_to >= 0 and any(entry.census for entry in self.maps.values()):
            recheck_census(self.maps, self.by_map, self.limits, self.problems, lambda e, key: self.where(e.path, key))
        catalogue = Catalogue(
            root=self.raw.root,
            maps=MappingProxyType(dict(sorted(self.maps.items()))),
            cycles=MappingProxyType(cycles),
            references=MappingProxyType(dict(sorted(self.references.items()))),
            record=self.record,
        )
        # Count every path looked at, including those refused by name or kind,
        # so that "N errors in X of Y files" never has X > Y.
        # Told apart by their paths from the root, as text: hashing 50,000 Path objects would make each keep
        # a list of its parts.
        files = {f.rel for f in self.raw.files} | {self.rel(p.position.file) for p in self.problems}
        written: Mapping[tuple[str, str], WrittenEntry] = (
            WrittenEntries(self.written, self.shares, self.cycle_order)
            if self.shares
            else MappingProxyType(self.written)
        )
        return Report(
            catalogue, tuple(sorted(self.problems)), len(files), written, self.references_readable, self.digests
        )


def verify_raw(raw: RawCatalogue, limits: Limits = Limits(), cache: VerifyCache | None = None, jobs: int = 1) -> Report:
    """Verify a catalogue's files; return the verified model, every problem and the entries as written.

    Files not yet parsed are parsed one at a time and dropped once checked,
    so memory holds the model, not every file's node tree.  With a ``cache``,
    files whose outcome it keeps are not parsed or checked again, and coverage
    searches it keeps are not run again (:mod:`builder.catalogue.cache`); the
    report is the same.
    """
    with no_cycle_collection():
        run = _Verification(raw, limits, cache if cache is not None else VerifyCache.memory(), jobs)
        run.read_references()
        run.read_record()
        run.read_maps()
        run.read_cycles()
        return run.report()


def verify_source(source: Source, limits: Limits = Limits(), cache: VerifyCache | None = None, jobs: int = 1) -> Report:
    """Verify the catalogue held by ``source`` (a folder, or a tree in memory), in ``jobs`` processes."""
    return verify_raw(scan_source(source), limits, cache, jobs)


def verify_catalogue(
    root: Path, limits: Limits = Limits(), cache: VerifyCache | None = None, jobs: int = 1, survey: Survey | None = None
) -> Report:
    """Load and verify the catalogue at root (raises CatalogueUnreadable if it is not one), in ``jobs`` processes;
    ``survey``: its listings and stamps, taken ahead (builder.catalogue.files.take_survey)."""
    return verify_raw(scan_source(FolderSource(root, survey)), limits, cache, jobs)
