"""The verified model as typed records: what the site publishes of each map, cycle, claim and reference.

Each record is built once from the verified catalogue, with every number that belongs to a cycle
already written as decimal text (any size, through builder.arith.integers) and every date of git
history as an ISO date.  The pages read these records' attributes and the exports
(builder.site.exports) turn the same records into JSON, CSV and Atom, so a page and a data file
can never disagree.  What the model already holds as text (a reference, a cycle's provenance) is
published as the model's own frozen type (builder.catalogue.model), not copied into another.
"""

from __future__ import annotations

import heapq
import sys
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date
from typing import NamedTuple, TypeVar

from builder.arith.integers import decimals, to_decimal
from builder.arith.words import word_text
from builder.catalogue.model import Census, Coverage, Cycle, MapEntry, Provenance, Record
from builder.catalogue.relations import Relations
from builder.history import Edition, FileHistory, NoHistory, RepoHistory
from builder.site.numbers import percent
from builder.site.paths import cycle_url, map_url

__all__ = [
    "AboutRecord",
    "BasinRecord",
    "CensusClassRecord",
    "CensusRecord",
    "CoverageRecord",
    "CycleRecord",
    "HistoryRecord",
    "MapRecord",
    "newest",
]


@dataclass(frozen=True, slots=True)
class AboutRecord:
    """The record's own description, as every export carries it: what it is, its licence, this edition."""

    title: str
    description: str
    maintainers: str
    licence: str
    licence_url: str
    base_url: str | None  # absolute, ending in "/"; None while the record has no published address
    version: str
    edition: str  # the edition's label
    release_status: str
    commit: str | None
    edition_shown: str  # the label without the commit, as pages and the per-map files give it

    @classmethod
    def of(cls, record: Record, edition: Edition, base_url: str | None) -> AboutRecord:
        return cls(
            record.title,
            record.description,
            record.maintainers,
            record.licence,
            record.licence_url,
            base_url,
            record.version,
            edition.label,
            edition.status,
            edition.commit,
            edition.shown,
        )


@dataclass(frozen=True, slots=True)
class HistoryRecord:
    """When an entry's file was first added and last changed, from git: ISO dates and full commit ids.

    The committers' names are published only when the record credits committers (``names``).
    """

    file: str  # the entry's path inside the catalogue, POSIX
    added: str | None
    added_commit: str | None
    added_by: str | None
    changed: str | None
    changed_commit: str | None
    changed_by: str | None
    uncommitted: bool
    names: bool

    @classmethod
    def of(cls, history: RepoHistory | NoHistory, rel: str, names: bool) -> HistoryRecord | None:
        """The history of the file ``rel``; None outside a repository."""
        if isinstance(history, NoHistory):
            return None
        found: FileHistory = history.of(rel)
        added, changed = found.added, found.changed
        return cls(
            rel,
            added.date.isoformat() if added else None,
            added.id if added else None,
            added.committer if added and names else None,
            changed.date.isoformat() if changed else None,
            changed.id if changed else None,
            changed.committer if changed and names else None,
            found.uncommitted,
            names,
        )

    @property
    def added_short(self) -> str | None:
        return self.added_commit[:12] if self.added_commit else None

    @property
    def changed_short(self) -> str | None:
        return self.changed_commit[:12] if self.changed_commit else None


class CycleRecord(NamedTuple):
    """One verified cycle: its members and word read from the canonical member, its equation, provenance.

    The start and the address are written out when asked for, not kept (pages read the other numbers as
    integers from ``cycle``, and group their digits): a build holds 50,000 records, and every
    worker process that reads them copies the memory they fill.  A named tuple, made in C: a build
    makes one per cycle.
    """

    map_id: str
    id: str
    fingerprint: str
    canonical: str
    length: int
    word: str
    residue_counts: tuple[int, ...]
    standard_length: int | None
    shared_factor: str | None  # the factor its members share with the increment, for qx+d maps
    provenance: Provenance
    history: HistoryRecord | None
    cycle: Cycle  # the verified cycle it was made from

    @property
    def members(self) -> tuple[str, ...]:
        """The members from the canonical member, in the order the map visits them: written out when
        asked for (they are most of a record's size, and a build needs them as text for the data files alone)."""
        return decimals(self.cycle.canonical_members)

    @property
    def url(self) -> str:
        """Its page, relative to the site root."""
        return cycle_url(self.map_id, self.id)

    @property
    def start(self) -> str:
        """The member the entry starts from."""
        return to_decimal(self.cycle.start)

    @classmethod
    def of(cls, entry: MapEntry, cycle: Cycle, rel: Relations, history: HistoryRecord | None) -> CycleRecord:
        return cls(
            entry.id,
            cycle.id,
            cycle.fingerprint,
            to_decimal(cycle.canonical),
            cycle.length,
            sys.intern(word_text(cycle.canonical_word, entry.modulus)),  # one text for a word many maps share
            tuple(cycle.residue_counts),
            cycle.standard_length,
            _decimal_or_none(rel.shared_factor.get((entry.id, cycle.id))),
            cycle.provenance,
            history,
            cycle,
        )


class BasinRecord(NamedTuple):
    """The starts up to a claim's bound that end in one cycle: the cycle's least |member| and its page (None when
    the record lists no such cycle: its least member lies beyond the bound), how many starts, their share of all
    starts up to the bound (text: "49.82%"), and the first of them in the order 0, 1, -1, 2, -2, ..."""

    cycle: str
    url: str | None
    starts: int
    share: str
    first: str


@dataclass(frozen=True, slots=True)
class CoverageRecord:
    """A completeness claim (every start up to ``bound`` in absolute value was followed under the map),
    and how much of it this build searched again."""

    kind: str
    bound: str
    found_on: str  # ISO date
    method: str
    max_steps: int
    max_bits: int
    unresolved: tuple[str, ...]  # the starts whose orbits were not resolved within the limits
    rechecked: bool  # whether this build searched the whole claim again
    rechecked_up_to: str | None  # this build searched every start with |n| up to this again (None: none)
    recheck_steps: int | None  # the limits it did so with (the claim's, capped by the build's)
    recheck_bits: int | None
    stopped_by: str | None  # why it stopped short of the bound: "recheck-up-to", "work" or "limits"
    # Where the starts end, when the claim says (None: it does not): each cycle's basin, in the order of their
    # first starts, and how many starts end in no known cycle, with its share.
    basins: tuple[BasinRecord, ...] | None = None
    all_starts: int | None = None  # 2 bound + 1, the starts the basins share
    unknown: int | None = None
    unknown_share: str | None = None

    @classmethod
    def of(cls, claim: Coverage, urls: Mapping[int, str] | None = None) -> CoverageRecord:
        """``urls``: the pages of the map's cycles by least |member| (needed when the claim gives basins)."""
        recheck = claim.recheck
        searched = recheck is not None and recheck.up_to >= 0
        basins = all_starts = unknown = unknown_share = None
        if claim.basins is not None:
            total, pages = 2 * claim.bound + 1, urls or {}
            basins = tuple(
                BasinRecord(to_decimal(b.cycle), pages.get(b.cycle), b.starts, percent(b.starts, total),
                            to_decimal(b.first))
                for b in claim.basins.basins
            )  # fmt: skip
            all_starts, unknown, unknown_share = total, claim.basins.unknown, percent(claim.basins.unknown, total)
        return cls(
            claim.kind,
            to_decimal(claim.bound),
            claim.found_on.isoformat(),
            claim.method,
            claim.max_steps,
            claim.max_bits,
            decimals(claim.unresolved),
            claim.rechecked,
            to_decimal(recheck.up_to) if searched and recheck is not None else None,
            recheck.max_steps if recheck is not None else None,
            recheck.max_bits if recheck is not None else None,
            recheck.stopped_by if recheck is not None and not claim.rechecked else None,
            basins,
            all_starts,
            unknown,
            unknown_share,
        )


@dataclass(frozen=True, slots=True)
class CensusClassRecord:
    """One class (k, x) a census did not exclude: its words L(k, x), target 2^k - q^x and bound on the least
    member (decimal text, any size), its status ("enumerated" or "over budget"), the words tried, and the
    cycles found as (least member, its page or None)."""

    k: int
    x: int
    words: str
    target: str
    bound: str
    status: str
    tried: int
    cycles: tuple[tuple[str, str | None], ...]


@dataclass(frozen=True, slots=True)
class CensusRecord:
    """A completeness claim by length (every cycle of at most ``up_to`` steps is listed) and what this build proved
    of it: every length up to ``proved_up_to`` (0: none), from the searched bound (None: no coverage claim was
    searched again), with ``excluded`` classes excluded by it and ``words`` words tried."""

    up_to: int
    found_on: str  # ISO date
    method: str
    rechecked: bool
    proved_up_to: int
    search_bound: str | None
    excluded: int
    words: int
    stopped_by: tuple[int, int] | None  # the first class the build's budget left open
    classes: tuple[CensusClassRecord, ...]  # those not excluded, by k then x

    @classmethod
    def of(cls, claim: Census, urls: Mapping[int, str]) -> CensusRecord:
        check = claim.check
        classes: tuple[CensusClassRecord, ...] = ()
        if check is not None:
            classes = tuple(
                CensusClassRecord(r.k, r.x, to_decimal(r.words), to_decimal(r.target), to_decimal(r.bound), r.status,
                                  r.tried, tuple((to_decimal(c), urls.get(c)) for c in r.cycles))
                for r in check.rows
            )  # fmt: skip
        bound = None if check is None or check.search_bound < 0 else to_decimal(check.search_bound)
        return cls(
            claim.up_to,
            claim.found_on.isoformat(),
            claim.method,
            claim.rechecked,
            claim.rechecked_up_to,
            bound,
            0 if check is None else check.excluded,
            0 if check is None else check.words,
            None if check is None else check.stopped_by,
            classes,
        )


@dataclass(frozen=True, slots=True)
class MapRecord:
    """One map with its definition, claims and cycles, and the record it belongs to."""

    id: str
    name: str
    url: str  # its page, relative to the site root
    modulus: int
    branches: tuple[tuple[str, str], ...]  # (multiplier, increment) for each residue 0..m-1
    summary: str
    notes: str | None
    references: tuple[str, ...]
    mirror_map: str | None  # the map of n -> -T(-n), when the record has it
    coverage: tuple[CoverageRecord, ...]
    census: tuple[CensusRecord, ...]
    history: HistoryRecord | None
    cycles: tuple[CycleRecord, ...]  # in order of canonical member
    about: AboutRecord

    @classmethod
    def of(
        cls,
        entry: MapEntry,
        cycles: tuple[CycleRecord, ...],
        rel: Relations,
        history: HistoryRecord | None,
        about: AboutRecord,
    ) -> MapRecord:
        branches = tuple((to_decimal(a), to_decimal(b)) for a, b in entry.branches)
        with_basins = any(c.basins is not None for c in entry.coverage)
        urls = {r.cycle.canonical: r.url for r in cycles} if with_basins or entry.census else None
        return cls(
            entry.id,
            entry.name,
            map_url(entry.id),
            entry.modulus,
            branches,
            entry.summary,
            entry.notes,
            tuple(entry.references),
            rel.mirror_map.get(entry.id),
            tuple(CoverageRecord.of(c, urls) for c in entry.coverage),
            tuple(CensusRecord.of(c, urls or {}) for c in entry.census),
            history,
            cycles,
            about,
        )


def _decimal_or_none(n: int | None) -> str | None:
    return None if n is None else to_decimal(n)


K = TypeVar("K")


def newest(count: int, last_first: Iterable[tuple[date, K]]) -> list[tuple[date, K]]:
    """The ``count`` greatest pairs (date, key) (each key distinct and comparable), greatest first, as
    heapq.nlargest finds them.  The pairs are given from the last of a record's cycles to the first:
    they mostly rise through a record (its cycles in catalogue order), and nlargest does work for each
    pair greater than the least it keeps."""
    return heapq.nlargest(count, last_first)
