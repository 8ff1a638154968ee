"""Basins: for every start up to a bound, the cycle its orbit ends in, counted per cycle.

The fate of a start (builder.search.definition) gives its basin at once or through another start:

* (a) or (c): the start's orbit ends in that cycle;
* (b): the orbit reaches a value v that precedes the start, so it runs on as the orbit of the start v,
  met earlier in start order: the start ends where v ends;
* unresolved: unknown, and so is every start that reaches it.

So one pass in start order settles every basin: the compiled pass (``_parents``) records for each
start the index of the start it falls onto, or that it returned to itself, or that the exact path
must say; the exact reference (and the engine's list of unresolved starts) decides the last kind;
then each start takes the basin of its parent, which comes before it.  A basin names its cycle by
its canonical member (least |member|, the positive one on a tie), counts the starts whose orbits end
in it, and names the first of them in start order (0, 1, -1, 2, -2, ...).

Memory is a few bytes per start, so ``basins`` refuses bounds above BASIN_LIMIT.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from builder.arith.dynamics import AffineMap, CycleFound
from builder.search.definition import settle
from builder.search.engine import hunt_range, int64_bound
from builder.search.jit import njit
from builder.search.kernel import I64, step_of, tables

__all__ = ["BASIN_LIMIT", "Basin", "Basins", "basins", "start_at", "start_index"]

#: The largest bound whose basins are counted: 2^22 magnitudes, about 8.4 million starts (100 MB).
BASIN_LIMIT = 1 << 22

_RETURNED = -1  # the start's orbit came back to it first: it is its cycle's canonical member
_EXACT = -2  # the exact path decides


@dataclass(frozen=True, slots=True)
class Basin:
    """The starts up to a bound whose orbits end in the cycle through ``cycle`` (its canonical member)."""

    cycle: int
    starts: int
    first: int


@dataclass(frozen=True, slots=True)
class Basins:
    """Every start with |s| <= bound (2 bound + 1 of them) by the cycle its orbit ends in; ``unknown`` counts
    the starts that are unresolved or reach one.  ``basins`` are in the start order of their first starts."""

    bound: int
    basins: tuple[Basin, ...]
    unknown: int

    @property
    def starts(self) -> int:
        return 2 * self.bound + 1


def start_index(s: int) -> int:
    """The place of a start in the order 0, 1, -1, 2, -2, ..."""
    return 2 * s - 1 if s > 0 else -2 * s


def start_at(i: int) -> int:
    """The start at place ``i`` of that order."""
    return (i + 1) // 2 if i % 2 else -(i // 2)


def basins(
    mapping: AffineMap,
    bound: int,
    max_steps: int,
    max_bits: int,
    max_work: int,
    unresolved: Iterable[int] | None = None,
) -> Basins:
    """The basins of every start with |s| <= bound, under the limits of builder.search.definition.

    ``unresolved``: the unresolved starts of a hunt of 0..bound under the same limits, when the caller has
    them (else the engine finds them again).
    """
    if not 0 <= bound <= BASIN_LIMIT:
        raise ValueError(f"expected a bound from 0 to {BASIN_LIMIT:,} for basins, got {bound:,}")
    size = 2 * bound + 1
    parent = np.full(size, _EXACT, dtype=np.int64)
    limit = int64_bound(mapping)
    steps = min(max_steps, 4096, max_work // mapping.cost.least)
    if limit > bound and steps >= 1 and max_bits >= 62:
        _parents(*tables(mapping), bound, steps, limit, parent)
    if unresolved is None:
        unresolved = hunt_range(mapping, 0, bound, max_steps, max_bits, max_work).unresolved
    undecided = set(unresolved)
    own: dict[int, int] = {}  # start index -> canonical member of the cycle it ends in (None: unknown)
    unknown_at: list[int] = []
    for i in np.flatnonzero(parent < 0).tolist():
        s = start_at(i)
        if parent[i] == _RETURNED:
            own[i] = s
        elif s in undecided:
            unknown_at.append(i)
        else:
            fate = settle(mapping, s, max_steps, max_bits, max_work)
            if isinstance(fate, CycleFound):
                own[i] = fate.members[0]
            elif fate is None:
                parent[i] = start_index(_fallen_onto(mapping, s, max_steps))
            else:  # the engine and the reference agree on every fate (tests/search): not reached
                raise AssertionError(f"start {s}: unresolved for the reference, not for the engine")
    cycles = sorted(set(own.values()), key=start_index)
    code = {c: k for k, c in enumerate(cycles)}
    basin = np.full(size, -1, dtype=np.int64)
    for i, c in own.items():
        basin[i] = code[c]
    _inherit(parent, basin)
    counts = np.bincount(basin[basin >= 0], minlength=len(cycles))
    firsts = _firsts(basin, len(cycles))
    found = tuple(Basin(c, int(counts[k]), start_at(int(firsts[k]))) for k, c in enumerate(cycles) if counts[k])
    return Basins(bound, tuple(sorted(found, key=lambda b: start_index(b.first))), int((basin < 0).sum()))


def _fallen_onto(mapping: AffineMap, s: int, max_steps: int) -> int:
    """The first value of the orbit of ``s`` that precedes it (the definition resolved ``s`` by (b))."""
    lo, hi = (-s, s) if s > 0 else (s, 1 - s)
    n = s
    m = mapping.modulus
    for _ in range(max_steps):
        a, b = mapping.branches[n % m]
        n = (a * n + b) // m
        if lo < n < hi:
            return n
    raise AssertionError(f"start {s} was resolved by (b), but no value within {max_steps} steps precedes it")


@njit(cache=True, nogil=True)
def _parents(
    kind: int,
    m: int,
    shift: int,
    mult: I64,
    incr: I64,
    a1: int,
    b1: int,
    bound: int,
    steps: int,
    limit: int,
    parent: I64,
) -> None:
    # The start at index i: (i + 1) // 2 for odd i, -(i // 2) for even i.
    for i in range(1, parent.size):
        s = (i + 1) // 2 if i % 2 else -(i // 2)
        n = s
        for _ in range(steps):
            n = step_of(kind, m, shift, mult, incr, a1, b1, n)
            if n == s:
                parent[i] = _RETURNED
                break
            if (s > 0 and -s < n < s) or (s < 0 and s < n <= -s):
                parent[i] = 2 * n - 1 if n > 0 else -2 * n
                break
            if n > limit or n < -limit:
                break  # left to the exact path
    # 0: T(0) = b_0 / m; its fate is the exact path's unless it is a fixed point.
    if step_of(kind, m, shift, mult, incr, a1, b1, 0) == 0:
        parent[0] = _RETURNED


@njit(cache=True, nogil=True)
def _inherit(parent: I64, basin: I64) -> None:
    for i in range(parent.size):
        if parent[i] >= 0:
            basin[i] = basin[parent[i]]


@njit(cache=True, nogil=True)
def _firsts(basin: I64, count: int) -> npt.NDArray[np.int64]:
    first = np.full(count, -1, dtype=np.int64)
    for i in range(basin.size):
        k = basin[i]
        if k >= 0 and first[k] < 0:
            first[k] = i
    return first
