"""What a change does to census claims, named for the reviewer: each claim added, removed or changed, and whether
the head's verification proved it or it rests on the contributor's word beyond some length."""

from __future__ import annotations

from collections.abc import Mapping

from builder.arith.integers import show
from builder.catalogue.model import Census, MapEntry
from builder.catalogue.written import WrittenEntry
from builder.wording import count

__all__ = ["census_notes"]

Entries = Mapping[tuple[str, str], WrittenEntry]


def census_notes(base_maps: Mapping[str, MapEntry], head_maps: Mapping[str, MapEntry], head: Entries) -> list[str]:
    """One line per census claim that the change adds, removes or changes (a claim is known by its length)."""
    notes = []
    for map_id in sorted(set(base_maps) | set(head_maps)):
        before = {c.up_to: c for c in base_maps[map_id].census} if map_id in base_maps else {}
        after = {c.up_to: c for c in head_maps[map_id].census} if map_id in head_maps else {}
        written = head.get(("map", map_id))
        path = written.path if written is not None else map_id
        for i, claim in enumerate(head_maps[map_id].census if map_id in head_maps else ()):
            old = before.get(claim.up_to)
            if old is None:
                notes.append(f"{path} census[{i}] added: {_claim_text(claim)}")
            elif (old.found_on, old.method) != (claim.found_on, claim.method):
                notes.append(f"{path} census[{i}] changed (its date or method): {_claim_text(claim)}")
        for up_to in sorted(set(before) - set(after)):
            notes.append(f"{path}: the census claim up to {up_to:,} steps is removed")
    return notes


def _claim_text(claim: Census) -> str:
    said = f"every cycle of at most {claim.up_to:,} steps is listed"
    check = claim.check
    if check is None:
        return f"{said}; not proved here (census claims were not rechecked): attested"
    base = (
        f"every start with |n| <= {show(check.search_bound)} searched again"
        if check.search_bound >= 0
        else "no coverage claim searched again"
    )
    how = f"{count(check.excluded, 'class', 'classes')} excluded ({base}), {count(check.words, 'word')} tried"
    if claim.rechecked:
        return f"{said}; proved here: {how}"
    stop = f", stopped by the class {check.stopped_by}" if check.stopped_by is not None else ""
    return f"{said}; proved here only up to {check.up_to:,} steps ({how}{stop}): the rest is attested"
