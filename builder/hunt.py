"""Exhaustive search for the cycles of a map among small starts.

Starts are taken in order of absolute value (0, 1, -1, 2, -2, ...).  An
orbit is followed until it returns to its start (a new cycle, whose least
|member| is that start), reaches a value already covered (its fate is then
known), repeats elsewhere (a cycle of larger members, found too), or runs
past the limits (the start is listed as unresolved, never hidden).  This
module imports neither YAML nor Jinja.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .dynamics import AffineMap, CycleFound, EntersCycle, Unresolved, trace

__all__ = ["HuntResult", "hunt"]

# Most orbits reach a covered value within a few steps; past this many the
# start is traced in full (with cycle detection and the magnitude bound).
_QUICK_STEPS = 1000


@dataclass(slots=True)
class HuntResult:
    """Cycles found by canonical member, and the starts whose orbits were not resolved."""

    bound: int
    cycles: dict[int, CycleFound] = field(default_factory=dict)
    unresolved: list[int] = field(default_factory=list)


def _canonical(members: tuple[int, ...]) -> int:
    return min(members, key=lambda v: (abs(v), v < 0))


def hunt(mapping: AffineMap, bound: int, max_steps: int = 100_000, max_bits: int = 4096) -> HuntResult:
    """Find every cycle of ``mapping`` whose least |member| is at most ``bound``.

    Every start n with |n| <= bound is iterated.  Cycles met along the way
    whose least |member| exceeds the bound are reported too.
    """
    result = HuntResult(bound)
    unresolved: set[int] = set()
    m = mapping.modulus
    br = mapping.branches
    for magnitude in range(bound + 1):
        for s in (magnitude, -magnitude) if magnitude else (0,):
            n = s
            for _ in range(_QUICK_STEPS):
                a, b = br[n % m]
                n = (a * n + b) // m
                if n == s:
                    break
                # Values of smaller magnitude (and +|s| when s < 0) are covered.
                if -magnitude < n < magnitude or n == magnitude != s:
                    break
            if n == s:
                # s is the canonical member of its cycle, but the limits still
                # apply: a cycle longer than max_steps (or whose members pass
                # max_bits) is reported as unresolved, not asserted away.
                outcome = trace(mapping, s, max_steps, max_bits)
                if isinstance(outcome, CycleFound):
                    result.cycles[s] = outcome
                else:
                    unresolved.add(s)
                continue
            if -magnitude < n < magnitude or n == magnitude != s:
                if n in unresolved:
                    unresolved.add(s)
                continue
            # Left the covered range without settling: classify exactly.
            outcome = trace(mapping, s, max_steps, max_bits)
            if isinstance(outcome, EntersCycle):
                c = outcome.cycle
                result.cycles.setdefault(_canonical(c.members), _rotate_to_canonical(c))
            elif isinstance(outcome, CycleFound):
                # s lies on a cycle longer than the quick pass.
                result.cycles.setdefault(_canonical(outcome.members), _rotate_to_canonical(outcome))
            elif isinstance(outcome, Unresolved):
                unresolved.add(s)
    result.cycles = dict(sorted(result.cycles.items(), key=lambda kv: (abs(kv[0]), kv[0] < 0)))
    result.unresolved = sorted(unresolved, key=lambda v: (abs(v), v < 0))
    return result


def _rotate_to_canonical(cycle: CycleFound) -> CycleFound:
    members = cycle.members
    i = members.index(_canonical(members))
    return CycleFound(members[i:] + members[:i], cycle.word[i:] + cycle.word[:i])
