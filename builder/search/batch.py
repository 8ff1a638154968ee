"""The hunt's numpy engine: the kernel's decisions (builder.search.kernel) taken on batches of starts at once.

For a small range numba's fixed cost (about 0.6 s of CPU and 100 MB for its compiler in every
process that loads it) outweighs its speed, so builder.search.engine gives such ranges to this
module, which needs numpy alone.  Each batch holds one lane per start, as int64.  Every step, each
active lane computes T with per-residue multiplier and increment tables, then retires when event
(a) or (b) of builder.search.definition happens, or (m) when max_bits is below 62, each at the very
step the definition takes it, and never after ``steps`` steps.  A lane whose value passes the
overflow bound is reported with its step and value (``Decided.escaped``), as the kernel reports it;
a lane still active after ``steps`` steps, and the last few lanes of a batch (``TAIL``, which run
faster one at a time), are left to the exact path.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from builder.arith.dynamics import AffineMap

__all__ = ["Decided", "decide_in_batches"]

I64 = npt.NDArray[np.int64]

#: Lanes left when a batch's last ones go to the exact path.
TAIL = 8


@dataclass(frozen=True, slots=True)
class Decided:
    """What an engine took from a range: cycles (start, length) of event (a), starts of event (m), starts
    left to the exact path, starts whose orbit passed the int64 bound (rows: start, step, value at that
    step), the stopping time of the starts decided by (a) or (b), and the steps the engine took."""

    returned: list[tuple[int, int]]
    magnitude: list[int]
    exact: list[int]
    escaped: I64
    stopping: int
    kernel_steps: int


def _step(mapping: AffineMap, n: I64, mult: I64, incr: I64) -> I64:
    m = mapping.modulus
    if m == 2 and mapping.branches[0] == (1, 0):  # n/2 on the even class: a cheaper step
        odd = (n & 1).astype(bool)
        t = n.copy()
        t[odd] = t[odd] * mult[1] + incr[1]
        t >>= 1
        return t
    r = n & (m - 1) if m & (m - 1) == 0 else np.mod(n, m)
    t = mult.take(r)
    t *= n
    t += incr.take(r)
    if m & (m - 1) == 0:
        t >>= m.bit_length() - 1
    else:
        t //= m
    return t


def decide_in_batches(  # kept whole: one batch loop, as the module docstring states
    mapping: AffineMap, low: int, high: int, steps: int, limit: int, magnitude_limit: int
) -> Decided:
    """Decide the starts with low <= |s| <= high (one batch), as builder.search.kernel.decide does."""
    mult = np.array([a for a, _ in mapping.branches], dtype=np.int64)
    incr = np.array([b for _, b in mapping.branches], dtype=np.int64)
    mags = np.arange(max(low, 1), high + 1, dtype=np.int64)
    s = np.concatenate((np.zeros(1 if low == 0 else 0, dtype=np.int64), mags, -mags))
    # "v precedes s" is L <= v < L + W, tested as one unsigned comparison.
    pos = s > 0
    neg = s < 0
    first = np.where(pos, 1 - s, np.where(neg, s + 1, 1)).astype(np.int64)
    width = np.where(pos, 2 * s - 1, np.where(neg, -2 * s, 0)).astype(np.uint64)
    n = s.copy()
    bound = np.int64(limit)
    span = np.uint64(2 * limit)
    returned: list[tuple[int, int]] = []
    magnitude: list[int] = []
    exact: list[int] = []
    escaped: list[I64] = []
    stopping = taken = step = 0
    while n.size:
        n = _step(mapping, n, mult, incr)
        step += 1
        taken += n.size
        back = n == s
        done = back | ((n - first).view(np.uint64) < width)
        out = (n + bound).view(np.uint64) > span
        stop = done | out
        if stop.any():
            stopping += step * int(done.sum())
            returned += [(start, step) for start in s[back].tolist()]
            passed = out & ~done
            if passed.any():
                values, starts = n[passed], s[passed]
                if magnitude_limit:
                    big = np.abs(values) > magnitude_limit
                    magnitude += starts[big].tolist()
                    values, starts = values[~big], starts[~big]
                escaped.append(np.stack((starts, np.full_like(starts, step), values), axis=1))
            keep = ~stop
            n, s, first, width = n[keep], s[keep], first[keep], width[keep]
        if step >= steps or 0 < n.size <= TAIL:
            exact += s.tolist()
            break
    rows = np.concatenate(escaped) if escaped else np.zeros((0, 3), dtype=np.int64)
    return Decided(returned, magnitude, exact, rows, stopping, taken)
