"""Re-running coverage claims: the starts up to the bound, searched again, against the listed cycles.

A claim says that every cycle whose least |member| is at most its bound is listed, and that its
unresolved starts are exactly those the search cannot resolve within its limits.  Every
verification searches every claim again for the starts with |n| up to min(bound, --recheck-up-to),
so a cycle missing there is always caught, whatever bound the claim states.  What it could not
search is attested, and said to be: the part beyond --recheck-up-to, the part beyond the point
where the map's work budget ran out, and the part beyond a start that the capped limits leave
unresolved but the claim does not list (it may resolve within the claim's larger limits, or be a
cycle's least member).  The recheck's limits are the claim's own, capped by the verification's:
a claim cannot make verification follow orbits further than its command allows.

A claim's basins (where each start up to the bound ends) name cycles: one whose least |member| is
within the bound must be listed, always checked.  When the whole claim is searched again, the basins
are counted again too (builder.search.basins, from the recheck's unresolved starts) and must be the
claim's; the count is kept in the memo beside the search, under a key of its own.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterable, Mapping
from dataclasses import replace
from functools import partial
from pathlib import Path
from typing import Any, Protocol

from builder.arith.dynamics import AffineMap, default_max_bits
from builder.arith.integers import show
from builder.catalogue.cache import VerifyCache, definition_digest
from builder.catalogue.limits import Limits
from builder.catalogue.model import Basin, Basins, Coverage, Cycle, MapEntry, Recheck
from builder.catalogue.reader import label
from builder.errors import KeyPath, Position, Problem, Severity
from builder.search.definition import HuntResult

__all__ = ["SearchMemo", "recheck_coverage", "search_coverage", "searched", "searches_ahead"]

Finding = tuple[str, str, Severity]  # message, code, severity
Placed = tuple[KeyPath, str, str, Severity]  # a finding at a key path within the claim


class SearchMemo(Protocol):
    """Where searches are kept by key (builder.catalogue.cache.VerifyCache is one)."""

    def search(self, key: bytes) -> Any | None: ...

    def keep_search(self, key: bytes, value: Any) -> None: ...


def recheck_coverage(
    entry: MapEntry,
    cycles: Mapping[int, Cycle],
    limits: Limits,
    problems: list[Problem],
    where: Callable[[KeyPath], Position],
    cache: SearchMemo | None = None,
) -> MapEntry:
    """Search each coverage claim again as far as the limits allow; report what the catalogue or the claim lacks.

    ``cycles`` are the map's verified cycles by canonical member; ``where`` gives the position of
    a key path in the map's file.  The claims of one map share ``limits.map_work``.  A search the
    ``cache`` keeps (the same definition, range, limits and budget) is taken from it, not run again.
    """
    memo: SearchMemo = cache if cache is not None else VerifyCache.memory()
    checked = []
    searches: dict[tuple[int, int, int], HuntResult] = {}  # claims of one map often search the same starts
    budget = limits.map_work
    for i, claim in enumerate(entry.coverage):
        placed = _listed_basins(claim, cycles)
        if limits.recheck_up_to >= 0:
            state = (budget, searches, memo)
            findings, counted, recheck = _recheck(entry, claim, cycles, limits, state, label(("coverage", i)))
            budget -= recheck[1]
            if findings:
                at = where(("coverage", i))
                problems.extend(Problem(at, message, code, severity) for message, code, severity in findings)
            placed += counted
            claim = replace(claim, recheck=recheck[0])
        for suffix, message, code, severity in placed:
            key_path: KeyPath = ("coverage", i, *suffix)
            problems.append(Problem(_nearest(where, key_path), label(key_path) + message, code, severity))
        checked.append(claim)
    return replace(entry, coverage=tuple(checked))


def _nearest(where: Callable[[KeyPath], Position], key_path: KeyPath) -> Position:
    """The position of ``key_path``, or of its nearest enclosing value whose position the file's entry keeps
    (it keeps those of fields and of the items of a list, not of what lies inside a claim's list)."""
    for end in range(len(key_path), 0, -1):
        at = where(key_path[:end])
        if at.line:
            return Position(at.file, at.line, at.column, key_path)
    return where(key_path)


def _capped(entry: MapEntry, claim: Coverage, limits: Limits, label: str) -> tuple[int, int, list[Finding]]:
    """The claim's limits capped by the verification's, with a warning for each one capped."""
    bits_cap = limits.max_bits if limits.max_bits is not None else default_max_bits(entry.dynamics, claim.bound)
    findings: list[Finding] = []
    for name, asked, cap, option in (
        ("max_steps", claim.max_steps, limits.max_steps, "--max-steps"),
        ("max_bits", claim.max_bits, bits_cap, "--max-bits"),
    ):
        if asked > cap:
            findings.append((
                f"{label}{name} is {show(asked)}, more than this verification follows an orbit ({option} {cap:,}): "
                f"the claim is searched again with {cap:,}, and its starts left unresolved there that it "
                "does not list are not checked",
                "coverage-limits-capped", Severity.WARNING,
            ))  # fmt: skip
    return min(claim.max_steps, limits.max_steps), min(claim.max_bits, bits_cap), findings


def _recheck(
    entry: MapEntry,
    claim: Coverage,
    cycles: Mapping[int, Cycle],
    limits: Limits,
    budget: tuple[int, dict[tuple[int, int, int], HuntResult], SearchMemo],
    label: str,
) -> tuple[list[Finding], list[Placed], tuple[Recheck, int]]:
    """Search the claim again (or reuse an equal search of the same map); return the findings, those about
    its basins (counted again when the whole claim was searched), and what was checked with the work it took."""
    max_steps, max_bits, findings = _capped(entry, claim, limits, label)
    capped = (max_steps, max_bits) != (claim.max_steps, claim.max_bits)
    top = min(claim.bound, limits.recheck_up_to)
    stopped_by = "recheck-up-to" if top < claim.bound else None
    left, searches, memo = budget
    result = searches.get((top, max_steps, max_bits))
    work = 0
    if result is None:
        # The vectorised pass over the range always runs (its cost is bounded by the range); the
        # starts it hands to exact iteration share what is left of the map's budget.
        key = _search_key(entry.dynamics, top, max_steps, max_bits, limits.max_work, max(left, 0))
        kept = memo.search(key)
        if isinstance(kept, HuntResult):
            result = kept
        else:
            # Imported when a search is run (with numpy): a build whose searches are all kept does without.
            from builder.search.engine import hunt_range

            result = hunt_range(entry.dynamics, 0, top, max_steps, max_bits, limits.max_work, budget=max(left, 0))
            memo.keep_search(key, result)
        searches[top, max_steps, max_bits] = result
        work = result.work
    if result.stopped_at is not None:
        top, stopped_by = result.stopped_at - 1, "work"
    listed = set(claim.unresolved)
    # Starts the recheck could not decide: left unresolved for want of work, or under capped limits,
    # and not listed by the claim.  The claim is checked below the least of them.
    undecided = [
        s for s in result.unresolved if s not in listed and (result.reasons[s] == "work" or capped) and abs(s) <= top
    ]
    if undecided:
        top = abs(undecided[0]) - 1
        stopped_by = "work" if result.reasons[undecided[0]] == "work" else "limits"
    findings += _findings(entry, claim, result, top, cycles, label)
    recheck = Recheck(top, max_steps, max_bits, limits.max_work, stopped_by)
    counted: list[Placed] = []
    if claim.basins is not None and top >= claim.bound:
        key = _search_key(entry.dynamics, top, max_steps, max_bits, limits.max_work, max(left, 0), "basins")
        counted = _compare_basins(claim.basins, _counted(entry.dynamics, result, recheck, key, memo))
    return findings, counted, (recheck, work)


def _search_key(
    mapping: AffineMap, top: int, max_steps: int, max_bits: int, max_work: int, budget: int, what: str = "search"
) -> bytes:
    """What decides a search's result: the map's definition, the range 0..top, the limits and the work budget;
    ``what`` tells the search itself from what is counted from it (its basins)."""
    text = f"{definition_digest(mapping)}:{top}:{max_steps}:{max_bits}:{max_work}:{budget}"
    if what != "search":  # a search's key as it always was: the searches kept stay valid
        text += f":{what}"
    return hashlib.sha256(text.encode()).digest()


def _counted(mapping: AffineMap, result: HuntResult, recheck: Recheck, key: bytes, memo: SearchMemo) -> Basins:
    """The basins of every start up to ``recheck.up_to`` under its limits, counted from the search ``result``
    of that range (its unresolved starts), or as ``memo`` keeps them under ``key``."""
    kept = memo.search(key)
    if isinstance(kept, Basins):
        return kept
    from builder.search.basins import basins  # with numba: only where basins are counted

    found = basins(mapping, recheck.up_to, recheck.max_steps, recheck.max_bits, recheck.max_work, result.unresolved)
    counted = Basins(tuple(Basin(b.cycle, b.starts, b.first) for b in found.basins), found.unknown)
    memo.keep_search(key, counted)
    return counted


def _basin_text(basin: Basin | None) -> str:
    if basin is None:
        return "none"
    return f"{basin.starts:,} start{'' if basin.starts == 1 else 's'} from {show(basin.first)}"


def _compare_basins(claimed: Basins, counted: Basins) -> list[Placed]:
    """The first basin the claim states otherwise than the count (the claim's word, then the search's), or
    its unknown count; nothing when they agree."""
    index = {b.cycle: i for i, b in enumerate(claimed.basins)}
    found = {b.cycle for b in counted.basins}
    pairs: list[tuple[int | None, Basin | None]] = [(index.get(b.cycle), b) for b in counted.basins]
    pairs += [(i, None) for i, b in enumerate(claimed.basins) if b.cycle not in found]
    for i, basin in pairs:
        own = None if i is None else claimed.basins[i]
        if own != basin:
            cycle = own.cycle if own is not None else basin.cycle if basin is not None else 0
            message = (
                f"expected {_basin_text(own)} ending in the cycle through {show(cycle)}, "
                f"got {_basin_text(basin)} (counted again from the search)"
            )
            return [(("basins",) if i is None else ("basins", i), message, "coverage-basins-differ", Severity.ERROR)]
    if claimed.unknown != counted.unknown:
        message = (
            f"expected {claimed.unknown:,} starts ending in no known cycle, got {counted.unknown:,} "
            "(counted again from the search)"
        )
        return [(("unknown",), message, "coverage-basins-differ", Severity.ERROR)]
    return []


def _listed_basins(claim: Coverage, cycles: Mapping[int, Cycle]) -> list[Placed]:
    """Each cycle of the claim's basins whose least |member| is within the bound must be catalogued."""
    if claim.basins is None:
        return []
    placed: list[Placed] = []
    for i, basin in enumerate(claim.basins.basins):
        if abs(basin.cycle) <= claim.bound and basin.cycle not in cycles:
            message = (
                f"expected a listed cycle's least |member|, or one beyond the bound {show(claim.bound)}, "
                f"got {show(basin.cycle)}, which no cycle entry of the map has"
            )
            placed.append((("basins", i, "cycle"), message, "coverage-basin-unlisted", Severity.ERROR))
    return placed


def _findings(
    entry: MapEntry, claim: Coverage, result: HuntResult, top: int, cycles: Mapping[int, Cycle], label: str
) -> list[Finding]:
    findings: list[Finding] = []
    for canonical, found in result.cycles.items():
        # A cycle the search meets is real wherever it was met: one the claim covers must be listed.
        if abs(canonical) <= claim.bound and canonical not in cycles:
            findings.append((
                f"{label}expected every cycle with least |member| up to {show(claim.bound)} to be listed, "
                f"got none for the cycle through {show(canonical)} (length {len(found.members)}), "
                f"which the search finds; add cycles/{entry.id}/<id>.yaml with start {show(canonical)}",
                "coverage-missing-cycle", Severity.ERROR,
            ))  # fmt: skip
    listed = set(claim.unresolved)
    for start in result.unresolved:
        if start not in listed and abs(start) <= top:
            findings.append((
                f"{label}expected the unresolved starts to be listed, got no mention of {show(start)}, "
                f"whose orbit is not resolved within {claim.max_steps} steps and {claim.max_bits} bits",
                "coverage-unlisted-start", Severity.ERROR,
            ))  # fmt: skip
    resolved = {s for s in listed if abs(s) <= top} - set(result.unresolved)
    for start in sorted(resolved, key=lambda v: (abs(v), v < 0)):
        findings.append((
            f"{label}unresolved lists {show(start)}, but its orbit is resolved within the claim's limits",
            "coverage-resolved-start", Severity.WARNING,
        ))  # fmt: skip
    return findings


class _Missing(Exception):
    """A search that the memo a probe asks does not keep."""


class _Probe:
    """A memo that answers from another, and raises _Missing for a search that one does not keep."""

    def __init__(self, memo: SearchMemo) -> None:
        self.memo = memo

    def search(self, key: bytes) -> Any | None:
        kept = self.memo.search(key)
        if not isinstance(kept, HuntResult | Basins):  # none, or not one this program keeps: searched again
            raise _Missing
        return kept

    def keep_search(self, key: bytes, value: Any) -> None:
        raise AssertionError("a probe never searches")


class _Kept(dict[bytes, Any]):
    """A memo of the searches run in one recheck, and nothing else."""

    def search(self, key: bytes) -> Any | None:
        return self.get(key)

    def keep_search(self, key: bytes, value: Any) -> None:
        self[key] = value


def _nowhere(path: Any) -> Position:
    return Position(Path(), 0, 0, path)


def searched(entry: MapEntry, limits: Limits, memo: SearchMemo) -> bool:
    """Whether ``memo`` keeps every search that rechecking the map's claims (recheck_coverage) runs."""
    try:
        recheck_coverage(entry, {}, limits, [], _nowhere, _Probe(memo))
    except _Missing:
        return False
    return True


def search_coverage(entry: MapEntry, limits: Limits) -> dict[bytes, Any]:
    """Every search that rechecking the map's claims runs, by its key, all run here: work another process
    can do ahead of the recheck, which finds them kept once they are given to its memo.

    The searches do not depend on the cycles listed (only the findings do), so none are given here."""
    kept = _Kept()
    recheck_coverage(entry, {}, limits, [], _nowhere, kept)
    return dict(kept)


def searches_ahead(
    entries: Iterable[MapEntry], limits: Limits, memo: SearchMemo
) -> tuple[list[Callable[[], dict[bytes, Any]]], Callable[[dict[bytes, Any]], None]]:
    """The searches of the maps whose claims need one that ``memo`` does not keep, as work to do ahead
    (the longest first: the most starts to search), and what gives their results to ``memo``."""
    wanted = [e for e in entries if e.coverage and not searched(e, limits, memo)]
    wanted.sort(key=lambda e: -sum(min(c.bound, limits.recheck_up_to) for c in e.coverage))

    def take(found: dict[bytes, Any]) -> None:
        for key, value in found.items():
            memo.keep_search(key, value)

    return [partial(search_coverage, e, limits) for e in wanted], take
