"""The verified record: frozen objects built only from entries that passed every check.

Everything a page or an export needs is derived here once (canonical
member, rotated word, residue counts, cycle equation), so later stages do no
arithmetic of their own.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import ClassVar

from builder.arith.census import ClassRow
from builder.arith.dynamics import AffineMap, Equation
from builder.arith.words import rotate
from builder.catalogue.written import WrittenEntry
from builder.errors import Problem, Severity

__all__ = [
    "PLACEHOLDER",
    "Basin",
    "Basins",
    "Catalogue",
    "Census",
    "CensusCheck",
    "Coverage",
    "Recheck",
    "Cycle",
    "MapEntry",
    "Provenance",
    "Record",
    "Reference",
    "Report",
    "licence_url",
]


#: Drafts leave provenance fields for the contributor with text starting so; verify warns about it.
PLACEHOLDER = "FILL IN"


def licence_url(identifier: str) -> str:
    """The SPDX licence list's page for a licence identifier."""
    return f"https://spdx.org/licenses/{identifier}.html"


@dataclass(frozen=True, slots=True)
class Record:
    """The record as a whole, from ``record.yaml``: what it is, who keeps it, and how it may be reused.

    ``licence`` is an SPDX licence identifier, written as the SPDX list writes it.  ``base_url`` is an
    http or https URL ending in ``/`` (the site's address, for absolute links), or None when the record
    has no published address yet (none given, or the starter's placeholder).  ``version`` is the
    release the catalogue is at or is heading for; a release is the git tag ``record-<version>``.
    ``credit_committers``: whether entry history may name the people who committed a change.
    """

    title: str
    description: str
    maintainers: str
    licence: str
    base_url: str | None
    version: str
    credit_committers: bool = False

    @property
    def licence_url(self) -> str:
        return licence_url(self.licence)


@dataclass(frozen=True, slots=True)
class Reference:
    key: str
    authors: tuple[str, ...]
    title: str
    venue: str
    year: int
    doi: str | None
    url: str | None
    status: str | None  # "read", "secondary" or "memory": how sure the record is of it
    note: str | None


@dataclass(frozen=True, slots=True)
class Recheck:
    """What one verification searched again of a coverage claim.

    Every start with |n| <= ``up_to`` was followed again with the limits ``max_steps``,
    ``max_bits`` and ``max_work`` (the claim's own, capped by the verification's), and the claim
    holds there.  ``up_to`` is -1 when nothing was; it is below the claim's bound when
    ``stopped_by`` says why: "recheck-up-to" (the verification's --recheck-up-to), "work" (the
    map's work budget ran out, or a start needed more than one orbit's), or "limits" (a start
    unresolved under the capped limits that the claim does not list).
    """

    up_to: int
    max_steps: int
    max_bits: int
    max_work: int
    stopped_by: str | None = None


@dataclass(frozen=True, slots=True)
class Basin:
    """The starts up to a claim's bound whose orbits end in one cycle: ``cycle`` is its canonical member,
    ``starts`` how many they are, ``first`` the first of them in the order 0, 1, -1, 2, -2, ..."""

    cycle: int
    starts: int
    first: int


@dataclass(frozen=True, slots=True)
class Basins:
    """Every start with |n| <= a claim's bound by the cycle its orbit ends in (builder.search.basins counts
    them); ``unknown`` starts are unresolved or reach one.  The counts and ``unknown`` add up to 2 bound + 1."""

    basins: tuple[Basin, ...]
    unknown: int


@dataclass(frozen=True, slots=True)
class Coverage:
    """A completeness claim: every start with |n| <= bound was iterated under the stated limits.

    It says: every cycle whose least |member| is at most ``bound`` is catalogued,
    and the starts in ``unresolved`` are exactly those whose orbits could not be
    resolved within ``max_steps`` steps and ``max_bits`` bits.  ``recheck`` is what
    this verification searched again (None: nothing); the part beyond it is attested.  ``basins``
    (None: the claim gives none) say where the starts end; they are compared with a count of the
    search when the whole claim is searched again, and attested otherwise.
    """

    kind: str  # "all-starts"
    bound: int
    found_on: date
    method: str
    max_steps: int
    max_bits: int
    unresolved: tuple[int, ...]
    recheck: Recheck | None = None
    basins: Basins | None = None

    @property
    def rechecked_up_to(self) -> int:
        """The largest magnitude up to which this verification checked the claim (-1: none)."""
        return -1 if self.recheck is None else self.recheck.up_to

    @property
    def rechecked(self) -> bool:
        """Whether this verification checked the whole claim."""
        return self.rechecked_up_to >= self.bound

    @property
    def attested(self) -> bool:
        """Whether part of the claim rests on its word alone (this verification did not check it)."""
        return not self.rechecked


@dataclass(frozen=True, slots=True)
class CensusCheck:
    """What one verification proved of a census claim (builder.search.census_map.MapCensus, kept as it ended).

    Lengths 1..``up_to`` are settled: every class excluded by ``search_bound`` (the rechecked coverage
    bound, -1: none) or enumerated, ``words`` words in all; ``stopped_by`` is the first class left over
    the budget (None: none was, or the census was not taken further).  ``rows`` are the classes that are
    not excluded, ``excluded`` the count of those that are, ``cycles`` the canonical members found.
    """

    up_to: int
    search_bound: int
    words: int
    stopped_by: tuple[int, int] | None
    rows: tuple[ClassRow, ...]
    excluded: int
    cycles: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class Census:
    """A completeness claim by length: every cycle of at most ``up_to`` steps is listed.  ``check`` is what this
    verification proved (None: nothing); the part beyond it is attested."""

    up_to: int
    found_on: date
    method: str
    check: CensusCheck | None = None

    @property
    def rechecked_up_to(self) -> int:
        """The longest length this verification proved complete (0: none)."""
        return 0 if self.check is None else min(self.check.up_to, self.up_to)

    @property
    def rechecked(self) -> bool:
        return self.rechecked_up_to >= self.up_to

    @property
    def attested(self) -> bool:
        """Whether part of the claim rests on its word alone (this verification did not prove it)."""
        return not self.rechecked


@dataclass(frozen=True, slots=True)
class MapEntry:
    id: str
    name: str
    summary: str
    notes: str | None
    references: tuple[str, ...]
    dynamics: AffineMap
    path: Path
    coverage: tuple[Coverage, ...] = ()
    census: tuple[Census, ...] = ()

    @property
    def modulus(self) -> int:
        return self.dynamics.modulus

    @property
    def branches(self) -> tuple[tuple[int, int], ...]:
        return self.dynamics.branches


@dataclass(frozen=True, slots=True, weakref_slot=True)
class Provenance:
    # Equal provenances load from the cache or the verification's workers as one object
    # (builder.catalogue.serial): the cycles of one search share theirs.
    __shared_when_equal__: ClassVar[bool] = True

    found_by: str
    found_on: date
    method: str
    references: tuple[str, ...]
    notes: str | None


@dataclass(frozen=True, slots=True)
class Cycle:
    """A verified cycle.  ``members`` and ``word`` are read from ``start``, as the entry gives them."""

    id: str
    map_id: str
    path: Path
    start: int
    members: tuple[int, ...]
    word: tuple[int, ...]
    canonical_index: int  # index in ``members`` of the canonical member
    equation: Equation  # along the word read from the canonical member
    residue_counts: tuple[int, ...]  # how often each residue 0..m-1 occurs in the word
    standard_length: int | None  # for 2-branch n/2 maps: the length counting n -> qn+d and n/2 apart
    provenance: Provenance
    fingerprint: str  # from the map's definition and the canonical member (builder.arith.fingerprint)

    @property
    def length(self) -> int:
        return len(self.members)

    @property
    def canonical(self) -> int:
        """The member of least absolute value, the positive one on a tie."""
        return self.members[self.canonical_index]

    @property
    def canonical_members(self) -> tuple[int, ...]:
        return rotate(self.members, self.canonical_index)

    @property
    def canonical_word(self) -> tuple[int, ...]:
        return rotate(self.word, self.canonical_index)

    @property
    def minimum(self) -> int:
        return min(self.members)

    @property
    def maximum(self) -> int:
        return max(self.members)


@dataclass(frozen=True, slots=True)
class Catalogue:
    root: Path
    maps: Mapping[str, MapEntry]
    cycles: Mapping[str, tuple[Cycle, ...]]  # by map id, in order of canonical member
    references: Mapping[str, Reference]
    record: Record | None = None  # None only when record.yaml is missing or does not verify


@dataclass(frozen=True, slots=True)
class Report:
    """The outcome of verifying a catalogue: the verified part, every problem found, and the entries as written.

    ``written`` holds every entry of every file read, verified or not, by (kind, key), in the order
    the files were read; ``references_readable`` is False when references.yaml exists but is not a
    mapping of keys (so its entries cannot be told apart).  ``digests`` gives for each folder of cycle
    files (``cycles/<map id>``) a SHA-256 of its files' names and bytes, where verification knew the bytes
    of every file of it (a catalogue read whole from memory has none).
    """

    catalogue: Catalogue
    problems: tuple[Problem, ...]
    files: int
    written: Mapping[tuple[str, str], WrittenEntry] = field(default_factory=dict)
    references_readable: bool = True
    digests: Mapping[str, bytes] = field(default_factory=dict)

    @property
    def errors(self) -> tuple[Problem, ...]:
        return tuple(p for p in self.problems if p.severity == Severity.ERROR)

    @property
    def ok(self) -> bool:
        return not self.errors
