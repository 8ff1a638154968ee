"""A family of maps n/2, (qn+d)/2 for the odd d of a range, and what a hunt of each writes into a catalogue.

``family_maps`` lists the maps of a family: q odd and at least 3, every odd d in the range that q does not
divide (when q divides d, every cycle of the map is q times a cycle of the map with d/q, so it holds nothing
new).  Each map has an id and a name in the shipped catalogue's style (``3x-plus-5``, "3x+5";
``3x-minus-1``, "3x-1"), and the text of a new map file (``map_text``).

``Target`` is the catalogue written into: the maps and cycles it already holds (from a verification of it),
or none when it does not exist yet (``create_catalogue`` makes it, with a ``record.yaml``).  ``place`` finds
where the results for a map go: a map of the catalogue with the same definition, whatever its id, or a new
file; an id taken by another definition is a FamilyError naming the file.  ``write_results`` writes what a
hunt of the map found: a new map file, the cycle entries the catalogue lacks, and the coverage claim
(``claim_text``), appended to the map file with its other text and comments kept, unless an equal claim is
there already (same kind, bound, limits and unresolved starts: the date and the method are provenance).  A
claim whose bound is at most BASIN_LIMIT gives its basins (``hunt_basins``: counted under the hunt's limits
from its unresolved starts).

Every file is written through a temporary file beside it (a dot file, which catalogues ignore) and a rename,
and in an order that leaves a catalogue that verifies at every point: a new map file first (without a claim),
then the cycle entries, then the claim.  Nothing here prints; problems are FamilyError (a ValueError) with
"expected ..., got ..." messages.
"""

from __future__ import annotations

import datetime as _dt
import os
import shutil
from dataclasses import dataclass, field
from pathlib import Path

from builder import __version__
from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import to_decimal
from builder.catalogue.claims import ClaimError, append_claim
from builder.catalogue.entries import cycle_file_id, entry_text, yaml_string
from builder.catalogue.fields import BASIN_LIMIT
from builder.catalogue.model import Basin, Basins, Coverage, Report
from builder.catalogue.record import RECORD_FILE
from builder.search.survey import Survey

__all__ = [
    "BELAGA_MIGNOTTE",
    "DEFAULT_FOUND_BY",
    "FamilyError",
    "FamilyMap",
    "KnownMap",
    "Placement",
    "Target",
    "Written",
    "claim_text",
    "create_catalogue",
    "family_maps",
    "hunt_basins",
    "map_text",
    "place",
    "skipped_increments",
    "write_entry",
    "write_results",
    "write_text",
]

#: Who found the cycles, unless the run says otherwise (``--found-by``): the program that found them.
DEFAULT_FOUND_BY = "Periplus family hunt"
#: The reference the shipped 3x+d maps cite; a 3x+d map cites it when the catalogue has it.
BELAGA_MIGNOTTE = "belaga-mignotte-1998"
#: Its entry in a new catalogue's references.yaml (as the shipped catalogue has it).
_BELAGA_MIGNOTTE_ENTRY = """\
belaga-mignotte-1998:
  authors: [E. Belaga, M. Mignotte]
  title: Embedding the 3x+1 conjecture in a 3x+d context
  venue: Experimental Mathematics 7, 145-151
  year: 1998
  doi: 10.1080/10586458.1998.10504364
  status: secondary
"""


class FamilyError(ValueError):
    """A family that cannot be hunted or written as asked; the message says what was expected and got."""


# --- the maps of a family ------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class FamilyMap:
    """The map n/2 for even n, (qn+d)/2 for odd n."""

    q: int
    d: int

    @property
    def id(self) -> str:
        return f"{self.q}x-{'plus' if self.d > 0 else 'minus'}-{abs(self.d)}"

    @property
    def name(self) -> str:
        return f"{self.q}x{'+' if self.d > 0 else '-'}{abs(self.d)}"

    @property
    def mapping(self) -> AffineMap:
        return AffineMap(2, ((1, 0), (self.q, self.d)))


def _check_family(q: int, low: int, high: int) -> None:
    if q < 3 or q % 2 == 0:
        raise FamilyError(f"--qx: expected an odd multiplier of at least 3, got {q}")
    if low > high:
        raise FamilyError(f"--d: expected A..B with A <= B, got {low}..{high}")


def family_maps(q: int, low: int, high: int) -> list[FamilyMap]:
    """The maps n/2, (qn+d)/2 for every odd d in low..high that q does not divide, in order of d."""
    _check_family(q, low, high)
    first = low if low % 2 else low + 1
    return [FamilyMap(q, d) for d in range(first, high + 1, 2) if d % q]


def skipped_increments(q: int, low: int, high: int) -> list[int]:
    """The odd d in low..high that q divides (their maps hold only q times the cycles of d/q's)."""
    _check_family(q, low, high)
    first = low if low % 2 else low + 1
    return [d for d in range(first, high + 1, 2) if d % q == 0]


def map_text(member: FamilyMap, references: tuple[str, ...] = ()) -> str:
    """A new map file for ``member``, in the shipped catalogue's style, without coverage claims."""
    q, d = member.q, member.d
    sign = "+" if d > 0 else "-"
    notes = [
        "Every cycle whose least |member| is at most the bound of a coverage claim below is listed,",
        "unless that member is among the claim's unresolved starts.",
    ]
    if abs(d) > 1:
        fixed = f"the fixed point {-d} and,\n  " if q == 3 else ""
        notes += [
            f"Besides the cycles whose members are coprime to {abs(d)}, the map has {fixed}"
            f"for every divisor g of {abs(d)}, g times each cycle of {q}x{sign}({abs(d)}/g): counts published for",
            f"{q}x+d usually list only the positive cycles whose members are coprime to d.",
        ]
    lines = [
        f"name: {member.name}",
        "modulus: 2",
        "branches:",
        "  - {residue: 0, multiplier: 1, increment: 0}",
        f"  - {{residue: 1, multiplier: {q}, increment: {d}}}",
        f"summary: The shortcut {member.name} map on all integers, n/2 for even n and ({q}n{sign}{abs(d)})/2 "
        "for odd n.",
        "notes: |",
        *(f"  {line}" for line in notes),
    ]
    if references:
        lines.append(f"references: [{', '.join(references)}]")
    return "\n".join(lines) + "\n"


# --- texts of a hunt's results -------------------------------------------------------------------


def _covered(survey: Survey) -> None:
    if survey.ranges != [(0, survey.bound)]:
        got = ", ".join(f"{lo}..{hi}" for lo, hi in survey.ranges) or "nothing"
        raise FamilyError(
            f"{survey.map_id}: expected a hunt that covered every start with |n| in 0..{survey.bound}, got {got}"
        )


def hunt_basins(survey: Survey) -> Basins | None:
    """The basins of a complete hunt's starts, counted under its limits from its unresolved starts (None for a
    bound above BASIN_LIMIT, whose starts are too many to count in memory)."""
    _covered(survey)
    if survey.bound > BASIN_LIMIT:
        return None
    from builder.search.basins import basins  # with numba: only where basins are counted

    m, bound = survey.mapping, survey.bound
    found = basins(m, bound, survey.max_steps, survey.max_bits, survey.max_work, unresolved=survey.reasons)
    return Basins(tuple(Basin(b.cycle, b.starts, b.first) for b in found.basins), found.unknown)


def claim_text(
    survey: Survey, found_on: _dt.date, method: str, indent: str = "  ", basins: Basins | None = None
) -> str:
    """The coverage claim a complete hunt of 0..bound supports, as one item of a ``coverage:`` block list.

    ``indent`` is what stands before the item's dash; ``basins`` (``hunt_basins``), when given, are written too.
    """
    _covered(survey)
    inner = indent + "  "
    unresolved = ", ".join(to_decimal(s) for s in survey.reasons)
    lines = [
        f"{indent}- kind: all-starts",
        f"{inner}bound: {to_decimal(survey.bound)}",
        f"{inner}found_on: {found_on.isoformat()}",
        f"{inner}method: {yaml_string(method)}",
        f"{inner}max_steps: {survey.max_steps}",
        f"{inner}max_bits: {survey.max_bits}",
        f"{inner}unresolved: [{unresolved}]",
    ]
    if basins is not None:
        lines.append(f"{inner}basins:")
        lines += [
            f"{inner}  - {{cycle: {to_decimal(b.cycle)}, starts: {b.starts}, first: {to_decimal(b.first)}}}"
            for b in basins.basins
        ]
        lines.append(f"{inner}unknown: {basins.unknown}")
    return "\n".join(lines) + "\n"


def _same_claim(claim: Coverage, survey: Survey) -> bool:
    """Whether a claim of the catalogue states what ``survey`` supports (its date and method aside)."""
    return (
        claim.kind == "all-starts"
        and claim.bound == survey.bound
        and claim.max_steps == survey.max_steps
        and claim.max_bits == survey.max_bits
        and set(claim.unresolved) == set(survey.reasons)
    )


def _claim_method(survey: Survey, command: str) -> str:
    return f"{command} (Periplus {__version__}): every start n with |n| <= {survey.bound:,} followed exactly"


def _entry_method(survey: Survey, command: str, canonical: int) -> str:
    text = (
        f"{command}: every start n with |n| <= {survey.bound:,} followed exactly until it returned to itself, "
        f"reached a value of smaller magnitude (or +|n| from a negative n) or repeated, for at most "
        f"{survey.max_steps:,} steps and members of at most {survey.max_bits:,} bits; "
        "this file's start is the cycle's least |member|"
    )
    if abs(canonical) > survey.bound:
        text += (
            f", which lies beyond the bound {survey.bound:,}: the cycle was met on the way from a start in the range"
        )
    return text


# --- the catalogue written into ------------------------------------------------------------------


def write_text(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary dot file beside it and a rename (all or nothing)."""
    temporary = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        with open(temporary, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(temporary, path)
    finally:
        temporary.unlink(missing_ok=True)


@dataclass(slots=True)
class KnownMap:
    """A map the catalogue holds: its file, definition, coverage claims, canonical members and the lengths its
    census claims reach."""

    id: str
    path: Path
    mapping: AffineMap
    claims: list[Coverage]
    cycles: set[int]
    census: list[int] = field(default_factory=list)


@dataclass(slots=True)
class Target:
    """The catalogue a family hunt writes into, as far as the writing needs to know it."""

    root: Path
    exists: bool
    references: set[str] = field(default_factory=set)
    maps: dict[str, KnownMap] = field(default_factory=dict)

    @classmethod
    def new(cls, root: Path) -> Target:
        """A catalogue that does not exist yet (``create_catalogue`` makes it)."""
        return cls(root, False)

    @classmethod
    def of(cls, root: Path, report: Report) -> Target:
        """An existing catalogue, from its verification (which must have passed)."""
        catalogue = report.catalogue
        target = cls(root, True, set(catalogue.references))
        for entry in catalogue.maps.values():
            canon = {c.canonical for c in catalogue.cycles.get(entry.id, ())}
            census = [claim.up_to for claim in entry.census]
            target.maps[entry.id] = KnownMap(entry.id, entry.path, entry.dynamics, list(entry.coverage), canon, census)
        return target


@dataclass(frozen=True, slots=True)
class Placement:
    """Where a map's results go: the id and file of the map in the catalogue, and whether that file exists."""

    member: FamilyMap
    map_id: str
    path: Path
    exists: bool


def place(target: Target, member: FamilyMap) -> Placement:
    """Where the results for ``member`` go in ``target`` (FamilyError: its id is taken by another definition)."""
    mapping = member.mapping
    for known in target.maps.values():
        if known.mapping == mapping:
            return Placement(member, known.id, known.path, True)
    path = target.root / "maps" / f"{member.id}.yaml"
    if path.exists() or path.is_symlink():
        other = target.maps.get(member.id)
        got = "a file that does not define a map" if other is None else _definition(other.mapping)
        raise FamilyError(f"{path}: expected the map {member.name}, {_definition(mapping)}, got {got}")
    return Placement(member, member.id, path, False)


def _definition(mapping: AffineMap) -> str:
    """A map's definition for messages: T(n) = n/2 for n = 0, (3n+5)/2 for n = 1 (mod 2)."""
    m = mapping.modulus
    parts = []
    for i, (a, b) in enumerate(mapping.branches[:6]):
        top = ("n" if a == 1 else "-n" if a == -1 else f"{a}n") + (f"{'+' if b > 0 else '-'}{abs(b)}" if b else "")
        parts.append(f"{top if b == 0 and a == 1 else f'({top})'}/{m} for n = {i}")
    more = ", ..." if m > 6 else ""
    return f"T(n) = {', '.join(parts)}{more} (mod {m})"


def create_catalogue(root: Path, maintainers: str, q: int) -> Target:
    """Make a new catalogue at ``root`` (which must not exist, or be an empty folder) and return it as a target.

    It gets a ``record.yaml``, a ``maps/`` folder and, for q = 3, a ``references.yaml`` with the
    reference the 3x+d maps cite.  The files are made in a dot folder beside ``root`` and renamed into
    place, so an interrupted run leaves no half-made catalogue.
    """
    if root.exists() and (not root.is_dir() or any(root.iterdir())):
        raise FamilyError(f"{root}: expected a catalogue folder (with maps/) or a new one, got {_kind(root)}")
    root.absolute().parent.mkdir(parents=True, exist_ok=True)
    building = root.with_name(f".{root.name}.{os.getpid()}.new")
    shutil.rmtree(building, ignore_errors=True)
    try:
        (building / "maps").mkdir(parents=True)
        write_text(building / RECORD_FILE, _record_text(maintainers))
        references: set[str] = set()
        if q == 3:
            write_text(building / "references.yaml", _REFERENCES_HEAD + _BELAGA_MIGNOTTE_ENTRY)
            references.add(BELAGA_MIGNOTTE)
        if root.exists():
            root.rmdir()
        os.replace(building, root)
    finally:
        shutil.rmtree(building, ignore_errors=True)
    return Target(root, True, references)


def _kind(path: Path) -> str:
    return "a folder with other files" if path.is_dir() else "a file"


_REFERENCES_HEAD = """\
# Bibliography of the record (catalogue/README.md of Periplus, "References"). status says how sure the
# record is of what it cites: read, secondary (seen quoted elsewhere) or memory.
"""


def _record_text(maintainers: str) -> str:
    return (
        "# The record as a whole, written by periplus hunt --qx when it made this catalogue. Before publishing,\n"
        "# name the group that keeps it, check the licence, and add base_url: the address the site is published at.\n"
        "title: Cycles of maps n/2, (qn+d)/2\n"
        "description: >\n"
        "  Cycles of the maps n/2 for even n and (qn+d)/2 for odd n, found by hunting whole families of them:\n"
        "  every start up to a bound followed exactly, each cycle re-derived with exact integer arithmetic\n"
        "  when the record is built, and each hunt recorded as a coverage claim that the build re-runs.\n"
        f"maintainers: {yaml_string(maintainers)}\n"
        "licence: CC-BY-4.0\n"
        'version: "0.1"\n'
    )


# --- writing a hunt's results --------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Written:
    """What writing one map's results did: the map file made or not, the cycle files made, the claim added or not."""

    map_id: str
    path: Path
    new_map: bool
    new_cycles: tuple[int, ...]
    claim_added: bool


def write_results(
    target: Target,
    placement: Placement,
    survey: Survey,
    found_by: str,
    found_on: _dt.date,
    command: str,
    basins: Basins | None = None,
) -> Written:
    """Write what ``survey`` (a complete hunt of the placed map) found into ``target``.

    ``command`` names the run in the methods of the claim and the entries (``periplus hunt --qx 3 ...``);
    ``basins`` (``hunt_basins`` of the survey) go into the claim when given.
    """
    _covered(survey)
    if survey.mapping != placement.member.mapping:
        raise FamilyError(f"{survey.map_id}: expected a hunt of {placement.member.name}, got one of another map")
    known = target.maps.get(placement.map_id)
    new_map = known is None
    if known is None:
        cites = placement.member.q == 3 and abs(placement.member.d) > 1 and BELAGA_MIGNOTTE in target.references
        refs = (BELAGA_MIGNOTTE,) if cites else ()
        write_text(placement.path, map_text(placement.member, refs))
        known = KnownMap(placement.map_id, placement.path, survey.mapping, [], set())
        target.maps[placement.map_id] = known
    folder = target.root / "cycles" / placement.map_id
    made: list[int] = []
    for canonical, cycle in survey.cycles.items():
        if canonical in known.cycles:
            continue
        write_entry(folder, placement.map_id, cycle, canonical, found_by, found_on.isoformat(),
                     _entry_method(survey, command, canonical))  # fmt: skip
        known.cycles.add(canonical)
        made.append(canonical)
    added = not any(_same_claim(claim, survey) for claim in known.claims)
    if added:
        _add_claim(known, survey, found_on, _claim_method(survey, command), basins)
    return Written(placement.map_id, placement.path, new_map, tuple(made), added)


def write_entry(
    folder: Path, map_id: str, cycle: CycleFound, canonical: int, found_by: str, found_on: str, method: str
) -> None:
    if cycle.members[0] != canonical:
        raise FamilyError(f"{map_id}: expected the cycle read from its least |member| {canonical}, "
                          f"got one read from {cycle.members[0]}")  # fmt: skip
    path = folder / f"{cycle_file_id(canonical)}.yaml"
    if path.exists() or path.is_symlink():
        raise FamilyError(
            f"{path}: expected no file, since the catalogue lacks the cycle through {canonical}, got one that "
            "holds another cycle; rename it"
        )
    folder.mkdir(parents=True, exist_ok=True)
    write_text(path, entry_text(map_id, cycle, 2, found_by, found_on, method))


def _add_claim(known: KnownMap, survey: Survey, found_on: _dt.date, method: str, basins: Basins | None) -> None:
    text = known.path.read_text(encoding="utf-8")
    try:
        updated = append_claim(text, known.path, lambda indent: claim_text(survey, found_on, method, indent, basins))
    except ClaimError as exc:
        raise FamilyError(str(exc)) from None
    write_text(known.path, updated)
    unresolved = tuple(survey.reasons)
    known.claims.append(
        Coverage(
            "all-starts", survey.bound, found_on, method, survey.max_steps, survey.max_bits, unresolved, basins=basins
        )
    )
