"""The hunt engine: the fates of builder.search.definition, decided by the compiled kernel with an exact fallback.

``hunt_range`` cuts a range into batches and hands each to builder.search.kernel.decide, which
follows every start in int64 machine words (numba) and takes only events (a), (b) and, when
max_bits is below 62, (m), each at the very step the exact definition takes it, never after
max_steps steps, and sieves the starts that provably fall below themselves (see the kernel's
docstring for the proof).  Everything else is decided from its start by the exact reference
(builder.search.definition.settle, Python ints and Brent's cycle detection):

* a start whose orbit passes the overflow bound, beyond which the next step a n + b could leave
  int64 (see ``int64_bound``);
* a start still undecided after ``lane_steps`` steps (or max_steps, if fewer, or before the work
  of its steps could pass max_work: a member below 2^62 makes each step cost mapping.cost.least);
* a start whose orbit repeats a value without returning: it entered a cycle without it (event (c)).

The exact path restarts from the start, so what the kernel did to such a start does not matter.
Results are therefore those of builder.search.definition.hunt, start by start, whatever the batch
size, the step threshold and the sieve.
"""

from __future__ import annotations

import itertools
import sys
from collections.abc import Iterator

from builder.arith.dynamics import DEFAULT_MAX_WORK, AffineMap, CycleFound
from builder.search.batch import Decided, decide_in_batches
from builder.search.definition import HuntResult, cycle_at, hunt_result, order_key, settle_all, starts_of

__all__ = ["hunt_range", "int64_bound"]

#: Magnitudes per call of the kernel (its output buffers hold a few int64 per start), and per numpy batch.
DEFAULT_BATCH = 1 << 18
NUMPY_BATCH = 1 << 15
#: Ranges of at least this many magnitudes go to the compiled kernel (when numba is not loaded yet: a
#: smaller range is decided sooner by numpy than numba starts, and numba costs each process ~100 MB).
COMPILED_FROM = 1 << 16
#: Orbits past int64 go to the compiled follower (builder.search.wide) from this many in one range.
WIDE_FROM = 32
DEFAULT_LANE_STEPS = 4096
# Starts up to this magnitude go to the kernel (2 |s| must fit in int64 with room).
_KERNEL_STARTS = 1 << 60


def int64_bound(mapping: AffineMap) -> int:
    """The largest L such that |n| <= L keeps every int64 computation of a step exact.

    With |n| <= L = (2^62 - max|b|) // max|a|: |a n| <= 2^62 and |a n + b| <= 2^62,
    so the new value has |T(n)| <= 2^61; the retirement tests subtract or add
    per-lane constants of magnitude at most max(L, |start| + 1) <= 2^62, staying
    below 2^63 in absolute value.  Returns 0 or less when the constants are too
    large for int64 at all.
    """
    amax = max(abs(a) for a, _ in mapping.branches)
    bmax = max(abs(b) for _, b in mapping.branches)
    if bmax >= 1 << 62:
        return 0
    return ((1 << 62) - bmax) // amax


def hunt_range(
    mapping: AffineMap,
    low: int,
    high: int,
    max_steps: int,
    max_bits: int,
    max_work: int = DEFAULT_MAX_WORK,
    *,
    budget: int | None = None,
    batch: int | None = None,
    lane_steps: int = DEFAULT_LANE_STEPS,
    sieve: bool = True,
    compiled: bool | None = None,
) -> HuntResult:
    """Decide every start with low <= |n| <= high; the same result as definition.hunt(mapping, high, ..., low=low).

    With a ``budget`` (bit-operations for the whole range), the starts left to the exact path are
    taken in start order and the search stops once the budget is spent: the result's
    ``stopped_at`` is then the least magnitude left undecided.  The kernel's pass is bounded by
    the range and ``lane_steps`` alone; its step is counted as what its arithmetic costs, a
    64-bit word and the map's constants, without the interpreter's floor that exact steps pay.
    ``batch`` magnitudes go to each call of the kernel or batch of numpy; ``sieve`` False follows every
    start; ``compiled`` chooses the kernel (True) or numpy (False) over the rule of COMPILED_FROM.  None of
    these changes the result (tests/search).
    """
    if not 0 <= low <= high + 1:
        raise ValueError(f"expected 0 <= low <= high + 1, got {low}, {high}")
    cycles: dict[int, CycleFound] = {}
    reasons: dict[int, str] = {}
    exact: list[int] = []
    work = 0
    stopping = 0
    bound = int64_bound(mapping)
    magnitude_limit = (1 << max_bits) - 1 if max_bits < 62 else 0
    limit = min(bound, magnitude_limit) if magnitude_limit else bound
    kernel_top = min(high, limit, _KERNEL_STARTS)
    steps = min(max_steps, lane_steps, max_work // mapping.cost.least)
    if steps >= 1 and limit >= 1 and low <= kernel_top:
        if compiled is None:
            compiled = kernel_top - low + 1 >= COMPILED_FROM or "numba" in sys.modules
        size = batch or (DEFAULT_BATCH if compiled else NUMPY_BATCH)
        taken = 0
        escapes: list[Decided] = []
        lo = low
        while lo <= kernel_top:
            hi = min(kernel_top, lo + max(1, size) - 1)
            decided = _decide(mapping, lo, hi, (steps, limit, magnitude_limit), sieve, compiled)
            for start, length in decided.returned:
                cycles.setdefault(start, cycle_at(mapping, start, length))
            for start in decided.magnitude:
                reasons[start] = "magnitude"
            exact += decided.exact
            escapes.append(decided)
            stopping += decided.stopping
            taken += decided.kernel_steps
            lo = hi + 1
        for start, reason in _follow_escapes(mapping, escapes, (max_steps, max_work, max_bits), compiled):
            if reason:
                reasons[start] = reason
            else:
                exact.append(start)
        first_exact = kernel_top + 1
        work = taken * (64 + mapping.cost.constant_bits) * mapping.cost.weight
    else:
        first_exact = low
    if budget is not None:
        exact.sort(key=order_key)
    exact_starts = itertools.chain(exact, starts_of(first_exact, high))
    limits = (max_steps, max_bits, max_work)
    left = None if budget is None else max(0, budget - work)
    spent, unsettled, exact_stopping = settle_all(mapping, exact_starts, limits, cycles, reasons, left)
    result = hunt_result(low, high, cycles, reasons)
    result.work = work + spent
    result.steps = stopping + exact_stopping
    if unsettled is not None:
        result.stopped_at = abs(unsettled)
        result.unresolved = [s for s in result.unresolved if abs(s) < result.stopped_at]
        result.reasons = {s: result.reasons[s] for s in result.unresolved}
    return result


def _decide(mapping: AffineMap, lo: int, hi: int, bounds: tuple[int, int, int], sieve: bool, compiled: bool) -> Decided:
    steps, limit, magnitude_limit = bounds
    if compiled:
        from builder.search.kernel import decide  # numba, loaded only when a hunt needs it

        return decide(mapping, lo, hi, steps, limit, magnitude_limit, sieve)
    return decide_in_batches(mapping, lo, hi, steps, limit, magnitude_limit)


def _follow_escapes(
    mapping: AffineMap, escapes: list[Decided], limits: tuple[int, int, int], compiled: bool
) -> Iterator[tuple[int, str]]:
    """The starts whose orbits passed int64: ("magnitude") when the multi-word follower decides them by (m),
    else ("") for the exact path."""
    max_steps, max_work, max_bits = limits
    rows = [d.escaped for d in escapes if len(d.escaped)]
    count = sum(len(r) for r in rows)
    if not count:
        return
    if compiled or count >= WIDE_FROM:
        from builder.search.wide import follow, follows  # numba, loaded only when it pays

        if follows(mapping, max_bits):
            for escaped in rows:
                marked = follow(mapping, escaped, max_steps, max_work, max_bits)
                pairs = zip(escaped[:, 0].tolist(), marked.tolist(), strict=True)
                yield from ((s, "magnitude" if m else "") for s, m in pairs)
            return
    for escaped in rows:
        yield from ((s, "") for s in escaped[:, 0].tolist())
