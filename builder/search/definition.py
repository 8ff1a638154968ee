"""Exhaustive search for the cycles of a map among small starts: the definition, and its exact reference.

The definition
--------------
Starts are the integers s with |s| in a range of magnitudes [low, high],
both signs, taken in the order 0, 1, -1, 2, -2, ...  Write v_0 = s and
v_k = T(v_{k-1}); "s precedes v" means |v| < |s|, or v = +|s| when s < 0
(v is then the responsibility of a start met earlier in that order).  The
fate of s is decided by the first of these events, looking at the steps
k = 1, 2, ..., max_steps in turn and, at each step, at the tests in this
order:

(a) v_k = s: s lies on a cycle of length k, and since no earlier event
    happened no member precedes s, so s is the cycle's canonical member
    (least |member|, the positive one on a tie).  The cycle is FOUND.
(b) v_k precedes s: s is RESOLVED; it records nothing.
(m) v_k has more than max_bits bits: s is UNRESOLVED ("magnitude").
(w) the work of steps 1..k passes max_work: s is UNRESOLVED ("work").  The
    work of step k is mapping.cost(bits of v_k) bit-operations (see
    builder.arith.dynamics.StepCost), so it is a function of the orbit alone.
(c) v_k = v_j for some 1 <= j < k: the orbit has entered a cycle that does
    not contain s.  The cycle is FOUND, under its own canonical member,
    which may lie beyond the range.

If none happens by step max_steps, s is UNRESOLVED ("steps").  Its orbit is
not followed further; a start whose orbit reaches an unresolved start met
earlier is resolved by (b) and not listed (its fate is that start's fate).
Telling (c) from "steps" may follow the orbit past step max_steps (see
below); the work of those steps counts too, and if it passes max_work
there, s is UNRESOLVED ("work").

The fate of each start is a function of that start alone.  The result of a
range (the cycles found, the unresolved starts) is the union of the fates
of its starts, so results of disjoint ranges merge by plain union and do
not depend on how a range is split into chunks, nor on how many processes
share it.

Completeness.  Let C be a cycle whose canonical member c has |c| in the
range.  Follow the start s = c.  No member of C precedes c (that is what
canonical means), so (b) never happens on the orbit, which runs round C;
its first repeated value is v_L = v_0 = c, where L is the length of C, so
(c) never happens before step L either.  Hence (a) happens at step L unless
L > max_steps, a member of C has more than max_bits bits, or the work of
going round C passes max_work, and then c is listed as unresolved.  Every cycle whose least |member| lies in the range is
therefore either found or named by its canonical member among the
unresolved starts; none is missed silently.

Detection of (c) is exact although it keeps only O(1) values: Brent's
method (R. P. Brent, BIT 20 (1980) 176-184) compares v_k with v_p, p the
last power of two below k.  If the first repeat is v_{mu+lam} = v_mu with
mu + lam <= max_steps, it is seen by step p + lam <= P + max_steps, P the
least power of two >= max_steps; past max_steps the values are only cycle
members already seen, so any value that would have been an event proves
there is no such repeat.  See ``settle``.

This module imports neither YAML nor Jinja.  ``builder.search.engine`` decides
the same fates much faster with numpy; this module is the reference.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

import gmpy2

from builder.arith.dynamics import (
    DEFAULT_MAX_WORK,
    STEP_FLOOR_BITS,
    AffineMap,
    CycleFound,
    Unresolved,
    canonical_index,
    cycle_entry,
    walk,
)
from builder.arith.integers import MPZ_BITS

__all__ = [
    "HUNT_MAX_BITS",
    "HUNT_MAX_STEPS",
    "HuntResult",
    "canonical_member",
    "cycle_at",
    "hunt",
    "hunt_result",
    "merge_results",
    "order_key",
    "Fate",
    "settle",
    "settle_all",
    "settle_counted",
    "starts_of",
]

#: A hunt's default limits per start (a verification's step limit is builder.catalogue.verify.DEFAULT_MAX_STEPS).
HUNT_MAX_STEPS = 100_000
HUNT_MAX_BITS = 4096


def order_key(v: int) -> tuple[int, bool]:
    """Sort key of the start order 0, 1, -1, 2, -2, ..."""
    return abs(v), v < 0


def canonical_member(members: Iterable[int]) -> int:
    """The member of least absolute value, the positive one on a tie."""
    seq = tuple(members)
    return seq[canonical_index(seq)]


def cycle_at(mapping: AffineMap, start: int, length: int) -> CycleFound:
    """The cycle of the given length through ``start``, read from ``start`` (exact iteration)."""
    orbit = walk(mapping, start, length)
    if orbit.end != start:
        raise AssertionError(f"{start} does not return after {length} steps")
    return CycleFound(orbit.members, orbit.word)


def _rotated(mapping: AffineMap, cycle_member: int, length: int) -> CycleFound:
    """The cycle of ``cycle_member``, read from its canonical member."""
    members = cycle_at(mapping, cycle_member, length).members
    return cycle_at(mapping, canonical_member(members), length)


Fate = CycleFound | Unresolved | None


def settle(mapping: AffineMap, start: int, max_steps: int, max_bits: int, max_work: int = DEFAULT_MAX_WORK) -> Fate:
    """Decide the fate of one start exactly, as the module docstring defines it.

    Returns the cycle found (event (a): read from ``start``; event (c): read
    from its canonical member), None when the start is resolved by (b), or
    Unresolved with reason "magnitude" (event (m), at that step), "work"
    (event (w)) or "steps".
    """
    return settle_counted(mapping, start, max_steps, max_bits, max_work)[0]


def settle_counted(
    mapping: AffineMap, start: int, max_steps: int, max_bits: int, max_work: int
) -> tuple[Fate, int, int]:
    """``settle``, with the work it spent in bit-operations and the step of its event when that is (a) or (b), else 0."""
    m = mapping.modulus
    br = mapping.branches
    if start > 0:
        lo, hi = -start, start  # precedes: lo < v < hi
    elif start < 0:
        lo, hi = start, 1 - start
    else:
        lo, hi = 0, 0  # nothing precedes 0
    n = start
    tortoise, tortoise_at, power = start, 0, 1
    power_at_least = 1
    while power_at_least < max_steps:
        power_at_least <<= 1
    end = power_at_least + max_steps if max_steps > 0 else 0
    last = start  # v_{max_steps}
    big = False
    cost = mapping.cost
    least, floor = cost.least, STEP_FLOOR_BITS
    work = 0
    step = 0
    while step < end:
        a, b = br[n % m]
        n = (a * n + b) // m
        step += 1
        bits = n.bit_length()
        work += least if bits <= floor else cost(bits)
        if step <= max_steps:
            if n == start:
                return cycle_at(mapping, start, step), work, step
            if lo < n < hi:
                return None, work, step
            if bits > max_bits:
                return Unresolved(step, "magnitude", bits), work, 0
            if work > max_work:
                return Unresolved(step, "work", bits), work, 0
            if step == max_steps:
                last = n
        elif n == start or lo < n < hi or bits > max_bits:
            # Not a value of a cycle met within max_steps steps: no such cycle.
            break
        elif work > max_work:
            return Unresolved(step, "work", bits), work, 0
        if n == tortoise:
            period = step - tortoise_at
            mu, entry = cycle_entry(mapping, start, period)
            if mu + period <= max_steps:
                return _rotated(mapping, entry, period), work, 0
            break
        if step == power:
            tortoise, tortoise_at = n, step
            power <<= 1
        if not big and bits > MPZ_BITS:
            big = True
            n = gmpy2.mpz(n)
            br = tuple((gmpy2.mpz(a), gmpy2.mpz(b)) for a, b in br)
    return Unresolved(max_steps, "steps", int(last).bit_length()), work, 0


@dataclass(slots=True)
class HuntResult:
    """What a hunt over the magnitudes ``low`` .. ``bound`` found.

    ``cycles`` maps canonical member to the cycle read from it, in start
    order, including cycles whose canonical member lies beyond ``bound``
    (met from starts in the range).  ``unresolved`` lists the unresolved
    starts in start order; ``reasons`` gives "steps", "magnitude" or "work"
    for each.  ``work`` is what deciding the range cost, in bit-operations;
    ``stopped_at`` is, when a budget for the whole range ran out first, the
    least magnitude left undecided (the result then holds for low .. stopped_at - 1,
    and lists cycles met beyond).  ``steps`` is the range's total stopping time: the sum, over its
    starts decided by event (a) or (b), of the step of that event; a function of the definition
    alone (not of the engine, the chunks or the sieve), so hunts of one range by different
    machines can be compared by it.  None of the three takes part in comparisons.
    """

    bound: int
    cycles: dict[int, CycleFound] = field(default_factory=dict)
    unresolved: list[int] = field(default_factory=list)
    low: int = 0
    reasons: dict[int, str] = field(default_factory=dict)
    work: int = field(default=0, compare=False)
    stopped_at: int | None = field(default=None, compare=False)
    steps: int = field(default=0, compare=False)


def hunt_result(low: int, high: int, cycles: dict[int, CycleFound], reasons: dict[int, str]) -> HuntResult:
    """The result of the magnitudes ``low`` .. ``high`` from what their starts gave, in start order."""
    ordered = dict(sorted(cycles.items(), key=lambda kv: order_key(kv[0])))
    unresolved = sorted(reasons, key=order_key)
    return HuntResult(high, ordered, unresolved, low, {s: reasons[s] for s in unresolved})


def starts_of(low: int, high: int) -> Iterable[int]:
    """The starts with magnitude in low..high, in start order."""
    for magnitude in range(low, high + 1):
        yield magnitude
        if magnitude:
            yield -magnitude


def settle_all(
    mapping: AffineMap,
    starts: Iterable[int],
    limits: tuple[int, int, int],
    cycles: dict[int, CycleFound],
    reasons: dict[int, str],
    budget: int | None = None,
) -> tuple[int, int | None, int]:
    """Settle each start in turn, adding the cycles found to ``cycles`` and the unresolved starts to ``reasons``.

    ``limits`` are (max_steps, max_bits, max_work).  Returns the work spent, the start that was not
    settled when ``budget`` (a bound on the work of them all) ran out first, else None, and the
    stopping time of the starts settled (see HuntResult.steps).
    """
    max_steps, max_bits, max_work = limits
    spent = 0
    total = 0
    for s in starts:
        if budget is not None and spent >= budget:
            return spent, s, total
        fate, work, steps = settle_counted(mapping, s, max_steps, max_bits, max_work)
        spent += work
        total += steps
        if isinstance(fate, CycleFound):
            cycles.setdefault(fate.members[0], fate)
        elif isinstance(fate, Unresolved):
            reasons[s] = fate.reason
    return spent, None, total


def hunt(
    mapping: AffineMap,
    bound: int,
    max_steps: int = HUNT_MAX_STEPS,
    max_bits: int = HUNT_MAX_BITS,
    low: int = 0,
    max_work: int = DEFAULT_MAX_WORK,
) -> HuntResult:
    """Decide every start with ``low`` <= |n| <= ``bound`` by exact iteration (see the module docstring).

    Every cycle whose least |member| lies in that range is found, or its
    least member is among the unresolved starts.  Cycles met along the way
    whose least |member| lies beyond the bound are reported too.
    """
    if not 0 <= low <= bound + 1:
        raise ValueError(f"expected 0 <= low <= bound + 1, got low={low}, bound={bound}")
    cycles: dict[int, CycleFound] = {}
    reasons: dict[int, str] = {}
    work, _, steps = settle_all(mapping, starts_of(low, bound), (max_steps, max_bits, max_work), cycles, reasons)
    result = hunt_result(low, bound, cycles, reasons)
    result.work = work
    result.steps = steps
    return result


def merge_results(parts: Iterable[HuntResult]) -> list[HuntResult]:
    """Merge results of disjoint magnitude ranges by union.

    Adjacent ranges are joined, so the result is the list of maximal
    contiguous pieces in order; merging the chunks of a range gives exactly
    the result of hunting it in one piece.  Raises ValueError when two
    ranges overlap or two parts disagree about a cycle.
    """
    ordered = [p for p in sorted(parts, key=lambda p: (p.low, p.bound)) if p.low <= p.bound]
    pieces: list[HuntResult] = []
    if not ordered:
        return pieces
    low, high = ordered[0].low, ordered[0].low - 1
    cycles: dict[int, CycleFound] = {}
    reasons: dict[int, str] = {}
    steps = 0

    def piece() -> HuntResult:
        result = hunt_result(low, high, cycles, reasons)
        result.steps = steps
        return result

    for part in ordered:
        if part.low <= high:
            raise ValueError(f"magnitude ranges {low}..{high} and {part.low}..{part.bound} overlap")
        if part.low > high + 1:
            pieces.append(piece())
            cycles, reasons, steps = {}, {}, 0
            low = part.low
        high = part.bound
        steps += part.steps
        for c, cycle in part.cycles.items():
            if cycles.setdefault(c, cycle) != cycle:
                raise ValueError(f"two parts disagree about the cycle through {c}")
        for s in part.unresolved:
            reasons[s] = part.reasons.get(s, "steps")
    pieces.append(piece())
    return pieces
