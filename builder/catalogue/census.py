"""Census claims proved again: every cycle of at most ``up_to`` steps of a map is listed.

A census rests on the map's *searched bound* N: the largest magnitude up to which a coverage claim
was searched again by this verification with no start left unresolved below it (``searched_bound``).
Every cycle with a member of magnitude at most N is then listed, so the classes (k, x) whose cycles
must have such a member are excluded (builder.arith.census, rules (B) and (E)), and the classes left
open have every word of their length tried (builder.search.census_map).  A map that acts by residue class
with positive multipliers has no such bound: every word of each length is tried, in Python integers
(builder.search.census_residue), within its own budget.  The maps of one multiplier
q share one scan of the lengths any of them leaves open, shortest first, within the verification's
census budget (``Limits.census_words``): a claim whose lengths were all settled is proved, the others
are attested beyond the last length settled.  A cycle the census finds that the catalogue does not
list is an error at the claim.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import replace
from typing import TYPE_CHECKING

from builder.arith.dynamics import shortcut_form
from builder.arith.integers import show
from builder.catalogue.limits import Limits
from builder.catalogue.model import Census, CensusCheck, Coverage, Cycle, MapEntry
from builder.errors import KeyPath, Position, Problem

if TYPE_CHECKING:
    from builder.search.census_map import MapCensus

__all__ = ["recheck_census", "searched_bound"]


def searched_bound(coverage: tuple[Coverage, ...]) -> int:
    """The largest N such that this verification searched every start with |n| <= N again and resolved them all
    (-1: none): below it, every cycle is listed."""
    best = -1
    for claim in coverage:
        top = claim.rechecked_up_to
        if claim.unresolved:
            top = min(top, min(map(abs, claim.unresolved)) - 1)
        best = max(best, top)
    return best


def recheck_census(
    maps: dict[str, MapEntry],
    cycles: Mapping[str, Mapping[int, Cycle]],
    limits: Limits,
    problems: list[Problem],
    where: Callable[[MapEntry, KeyPath], Position],
) -> None:
    """Prove the census claims of ``maps`` again (replacing each entry by one whose claims say what was proved);
    report a cycle found that ``cycles`` (canonical member -> cycle, by map id) lacks."""
    from builder.search.census_map import plan_census, settle  # the search stage, when a map makes a claim
    from builder.search.census_residue import residue_census

    by_q: dict[int, list[tuple[MapEntry, int]]] = {}
    others = []
    for entry in maps.values():
        form = shortcut_form(entry.dynamics)
        if entry.census and form is not None and form[0] > 0:
            by_q.setdefault(form[0], []).append((entry, form[1]))
        elif entry.census:  # all multipliers positive (builder.catalogue.maps refuses other maps)
            others.append(entry)
    done: list[tuple[MapEntry, MapCensus]] = []
    for q, group in sorted(by_q.items()):
        plans = [
            plan_census(q, d, max(c.up_to for c in entry.census), searched_bound(entry.coverage)) for entry, d in group
        ]
        done += zip((entry for entry, _ in group), settle(plans, limits.census_words), strict=True)
    for entry in others:
        done.append((entry, residue_census(entry.dynamics, max(c.up_to for c in entry.census), limits.census_words)))
    for entry, census in done:
        listed = cycles.get(entry.id, {})
        claims = []
        for i, claim in enumerate(entry.census):
            missing = [c for c in census.cycles if len(c.members) <= claim.up_to and c.members[0] not in listed]
            for cycle in missing[:1]:  # the first is enough to fail the claim; the census lists them all
                message = (
                    f"census[{i}]: the census finds the cycle through {show(cycle.members[0])} "
                    f"({len(cycle.members)} steps{f', {sum(cycle.word)} odd' if entry.modulus == 2 else ''}), "
                    "which the catalogue does not list"
                    f"{'' if len(missing) == 1 else f' (and {len(missing) - 1} more)'}; every cycle of at most "
                    f"{claim.up_to:,} steps must be listed"
                )
                problems.append(Problem(where(entry, ("census", i)), message, "census-cycle-missing"))
            claims.append(_checked(claim, census))
        maps[entry.id] = replace(entry, census=tuple(claims))


def _checked(claim: Census, census: MapCensus) -> Census:
    from builder.search.census import words_in_length

    rows = tuple(r for r in census.rows if r.k <= claim.up_to)
    words = sum(r.words if r.x < 0 else 0 for r in rows if r.tried)  # a residue map's rows: one per length
    words += sum(words_in_length(k) for k in {r.k for r in rows if r.tried and r.x >= 0})
    excluded = sum(n for k, n in census.excluded.items() if k <= claim.up_to)
    stopped = census.stopped_by if census.stopped_by is not None and census.stopped_by[0] <= claim.up_to else None
    found = tuple(c.members[0] for c in census.cycles if len(c.members) <= claim.up_to)
    check = CensusCheck(
        min(census.complete_to, claim.up_to), census.search_bound, words, stopped, rows, excluded, found
    )
    return replace(claim, check=check)
