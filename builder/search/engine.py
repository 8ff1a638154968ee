"""The vectorised hunt engine: the fates of builder.search.definition, decided on batches of starts with numpy.

Each batch holds one lane per start, as int64.  Every step, each active lane
computes T with per-residue multiplier and increment tables, then retires
when event (a) or (b) of builder.search.definition happens, or (m) when max_bits is
below 62.  Only those decisions are taken here, each at the very step the
exact definition takes it, and never after max_steps steps.  Everything
else leaves the vectorised path and is decided from its start by the exact
reference (builder.search.definition.settle, Python ints and Brent's cycle detection):

* a lane whose |value| exceeds the overflow bound, beyond which the next
  step a n + b could leave int64 (see ``_int64_bound``);
* a lane still active after ``lane_steps`` steps (or max_steps, if fewer,
  or before the work of its steps could pass max_work: a lane's member
  stays below 2^62, so each of its steps costs mapping.cost.least):
  it may have entered a cycle (c), which only the exact path detects;
* the last few lanes of a batch (``tail``), which run faster one at a time.

The exact path restarts from the start, so what the vectorised path did to
such a lane does not matter.  Results are therefore those of
builder.search.definition.hunt, start by start, whatever the batch size and thresholds.
"""

from __future__ import annotations

import itertools

import numpy as np
import numpy.typing as npt

from builder.arith.dynamics import DEFAULT_MAX_WORK, AffineMap, CycleFound
from builder.search.definition import HuntResult, cycle_at, hunt_result, order_key, settle_all, starts_of

__all__ = ["hunt_range", "int64_bound"]

I64 = npt.NDArray[np.int64]
U64 = npt.NDArray[np.uint64]

DEFAULT_BATCH = 1 << 16
DEFAULT_LANE_STEPS = 4096
DEFAULT_TAIL = 8
# Starts up to this magnitude use the vectorised path (2 |s| must fit in int64 with room).
_VECTOR_STARTS = 1 << 60


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
    batch: int = DEFAULT_BATCH,
    lane_steps: int = DEFAULT_LANE_STEPS,
    tail: int = DEFAULT_TAIL,
) -> HuntResult:
    """Decide every start with low <= |n| <= high; the same result as definition.hunt(mapping, high, ..., low=low).

    With a ``budget`` (bit-operations for the whole range), the starts left to the exact path are
    taken in start order and the search stops once the budget is spent: the result's
    ``stopped_at`` is then the least magnitude left undecided.  The vectorised pass is bounded by
    the range and ``lane_steps`` alone; a lane's step is counted as what its arithmetic costs, a
    64-bit word and the map's constants, without the interpreter's floor that exact steps pay.
    """
    if not 0 <= low <= high + 1:
        raise ValueError(f"expected 0 <= low <= high + 1, got {low}, {high}")
    cycles: dict[int, CycleFound] = {}
    reasons: dict[int, str] = {}
    exact: list[int] = []
    work = 0
    bound = int64_bound(mapping)
    vector_top = min(high, bound, _VECTOR_STARTS)
    lane_steps = min(lane_steps, max_work // mapping.cost.least)
    if max_steps >= 1 and lane_steps >= 1 and bound >= 1 and low <= vector_top:
        engine = _Engine(mapping, max_steps, max_bits, bound, lane_steps, tail)
        half = max(1, batch // 2)
        lo = low
        while lo <= vector_top:
            hi = min(vector_top, lo + half - 1)
            engine.run(lo, hi, cycles, reasons, exact)
            lo = hi + 1
        first_exact = vector_top + 1
        work = engine.lane_steps * (64 + mapping.cost.constant_bits) * mapping.cost.weight
    else:
        first_exact = low
    if budget is not None:
        exact.sort(key=order_key)
    exact_starts = itertools.chain(exact, starts_of(first_exact, high))
    limits = (max_steps, max_bits, max_work)
    left = None if budget is None else max(0, budget - work)
    spent, unsettled = settle_all(mapping, exact_starts, limits, cycles, reasons, left)
    result = hunt_result(low, high, cycles, reasons)
    result.work = work + spent
    if unsettled is not None:
        result.stopped_at = abs(unsettled)
        result.unresolved = [s for s in result.unresolved if abs(s) < result.stopped_at]
        result.reasons = {s: result.reasons[s] for s in result.unresolved}
    return result


class _Engine:
    """Per-map tables and thresholds for the batch loop."""

    def __init__(self, mapping: AffineMap, max_steps: int, max_bits: int, bound: int, lane_steps: int, tail: int):
        self.mapping = mapping
        m = mapping.modulus
        self.m = m
        self.shift = m.bit_length() - 1 if m & (m - 1) == 0 else -1
        self.mult = np.array([a for a, _ in mapping.branches], dtype=np.int64)
        self.incr = np.array([b for _, b in mapping.branches], dtype=np.int64)
        # m = 2 with T(n) = n/2 on the even class: a cheaper step.
        self.halving = m == 2 and mapping.branches[0] == (1, 0)
        self.a1 = int(mapping.branches[1][0]) if m == 2 else 0
        self.b1 = int(mapping.branches[1][1]) if m == 2 else 0
        self.max_steps = max_steps
        self.max_bits = max_bits
        self.magnitude_limit = (1 << max_bits) - 1 if max_bits < 62 else None
        self.limit = bound if self.magnitude_limit is None else min(bound, self.magnitude_limit)
        self.steps = min(max_steps, lane_steps)
        self.tail = tail
        self.lane_steps = 0  # lanes times steps taken so far

    def _step(self, n: I64) -> I64:
        if self.halving:
            odd = (n & 1).astype(bool)
            t = n.copy()
            t[odd] = t[odd] * self.a1 + self.b1
            t >>= 1
            return t
        if self.shift >= 0:
            r = n & (self.m - 1)
            t = self.mult.take(r)
            t *= n
            t += self.incr.take(r)
            t >>= self.shift
            return t
        r = np.mod(n, self.m)
        t = self.mult.take(r)
        t *= n
        t += self.incr.take(r)
        t //= self.m
        return t

    def run(self, lo: int, hi: int, cycles: dict[int, CycleFound], reasons: dict[int, str], exact: list[int]) -> None:
        """Decide the starts with lo <= |n| <= hi; undecided ones are appended to ``exact``."""
        mags = np.arange(max(lo, 1), hi + 1, dtype=np.int64)
        s = np.concatenate((np.zeros(1 if lo == 0 else 0, dtype=np.int64), mags, -mags))
        # "v precedes s" is L <= v < L + W, tested as one unsigned comparison.
        pos = s > 0
        neg = s < 0
        first = np.where(pos, 1 - s, np.where(neg, s + 1, 1)).astype(np.int64)
        width = np.where(pos, 2 * s - 1, np.where(neg, -2 * s, 0)).astype(np.uint64)
        n = s.copy()
        limit = np.int64(self.limit)
        span = np.uint64(2 * self.limit)
        step = 0
        while n.size:
            n = self._step(n)
            step += 1
            self.lane_steps += n.size
            returned = n == s
            done = returned | ((n - first).view(np.uint64) < width)
            out = (n + limit).view(np.uint64) > span
            stop = done | out
            if stop.any():
                if returned.any():
                    for start in s[returned].tolist():
                        cycles.setdefault(start, cycle_at(self.mapping, start, step))
                escaped = out & ~done
                if escaped.any():
                    values = n[escaped]
                    starts = s[escaped]
                    if self.magnitude_limit is not None:
                        big = np.abs(values) > self.magnitude_limit
                        for start in starts[big].tolist():
                            reasons[start] = "magnitude"
                        starts = starts[~big]
                    exact.extend(starts.tolist())
                keep = ~stop
                n, s, first, width = n[keep], s[keep], first[keep], width[keep]
            if step >= self.steps or 0 < n.size <= self.tail:
                exact.extend(s.tolist())
                return
