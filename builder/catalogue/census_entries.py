"""Writing a census into a catalogue: a census claim added to a map file, and a family census's maps and cycles.

The claim is one item of the map file's ``census:`` list (builder.catalogue.claims keeps every other line as
written).  A family census writes, for each map of its range, what a family hunt writes
(builder.catalogue.family: the map file when new, an entry for each cycle the catalogue lacks), and a census
claim up to its length unless the map already has one at least as long.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from pathlib import Path

from builder.arith.dynamics import CycleFound
from builder.catalogue.claims import ClaimError, append_claim
from builder.catalogue.entries import yaml_string
from builder.catalogue.family import (
    BELAGA_MIGNOTTE,
    FamilyError,
    KnownMap,
    Placement,
    Target,
    map_text,
    write_entry,
    write_text,
)

__all__ = ["CensusWritten", "add_census_claim", "census_claim_text", "write_census"]

#: The field census claims are listed under in a map file.
FIELD = "census"


def census_claim_text(up_to: int, found_on: _dt.date, method: str, indent: str) -> str:
    """A census claim as one item of a ``census:`` block list, its dash at ``indent``."""
    inner = indent + "  "
    return f"{indent}- up_to: {up_to}\n{inner}found_on: {found_on.isoformat()}\n{inner}method: {yaml_string(method)}\n"


def add_census_claim(path: Path, up_to: int, found_on: _dt.date, method: str) -> None:
    """Add a census claim to the map file at ``path`` (ClaimError: a file it cannot be added to as written)."""
    text = path.read_text(encoding="utf-8")
    updated = append_claim(text, path, lambda indent: census_claim_text(up_to, found_on, method, indent), FIELD)
    write_text(path, updated)


@dataclass(frozen=True, slots=True)
class CensusWritten:
    """What writing one map's census did: the map file made or not, the cycle files made, the claim added or not."""

    map_id: str
    path: Path
    new_map: bool
    new_cycles: tuple[int, ...]
    claim_added: bool


def write_census(
    target: Target,
    placement: Placement,
    cycles: list[CycleFound],
    up_to: int,
    provenance: tuple[str, _dt.date, str],
) -> CensusWritten:
    """Write a complete census of the placed map up to ``up_to`` (its ``cycles``, each read from its canonical
    member) into ``target``; ``provenance`` is (found_by, found_on, command) for the entries and the claim."""
    found_by, found_on, command = provenance
    known = target.maps.get(placement.map_id)
    new_map = known is None
    if known is None:
        cites = placement.member.q == 3 and abs(placement.member.d) > 1 and BELAGA_MIGNOTTE in target.references
        write_text(placement.path, map_text(placement.member, (BELAGA_MIGNOTTE,) if cites else ()))
        known = KnownMap(placement.map_id, placement.path, placement.member.mapping, [], set())
        target.maps[placement.map_id] = known
    folder = target.root / "cycles" / placement.map_id
    made: list[int] = []
    method = f"found by {command}: every aperiodic necklace of length up to {up_to} tried once, exactly"
    for cycle in cycles:
        canonical = cycle.members[0]
        if canonical in known.cycles:
            continue
        write_entry(folder, placement.map_id, cycle, canonical, found_by, found_on.isoformat(), method)
        known.cycles.add(canonical)
        made.append(canonical)
    added = max(known.census, default=0) < up_to
    if added:
        claim_method = f"{command}: every aperiodic necklace of length 1..{up_to} tried once (census by length)"
        try:
            add_census_claim(known.path, up_to, found_on, claim_method)
        except ClaimError as exc:
            raise FamilyError(str(exc)) from None
        known.census.append(up_to)
    return CensusWritten(placement.map_id, placement.path, new_map, tuple(made), added)
