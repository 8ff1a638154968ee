"""Basins (builder.search.basins): where every start up to a bound ends, against published facts and brute force.

The brute force below follows each start exactly, one step of the map at a time, until its orbit meets a
member of a cycle already known or repeats a value of its own (then the repeated part is a new cycle); it
shares no code with the module under test (common practice, no source).
"""

from __future__ import annotations

import random
from collections import Counter

import pytest

from builder.arith.dynamics import DEFAULT_MAX_WORK, AffineMap
from builder.catalogue.fields import BASIN_LIMIT as READ_LIMIT
from builder.search.basins import BASIN_LIMIT, Basin, basins, start_at, start_index


def qx_plus_d(q: int, d: int) -> AffineMap:
    """The shortcut map T(n) = n/2 (n even), (qn + d)/2 (n odd)."""
    return AffineMap(2, ((1, 0), (q, d)))


def step(mapping: AffineMap, n: int) -> int:
    a, b = mapping.branches[n % mapping.modulus]
    q, r = divmod(a * n + b, mapping.modulus)
    assert r == 0
    return q


def least(members: list[int]) -> int:
    """The canonical member: least |member|, the positive one on a tie (catalogue/README.md)."""
    return min(members, key=lambda v: (abs(v), v < 0))


def brute_force(mapping: AffineMap, bound: int, steps: int = 3000, bits: int = 256) -> dict[int, int | None]:
    """Each start with |s| <= bound mapped to the canonical member of the cycle its orbit ends in (None when the
    orbit neither meets a cycle nor repeats within ``steps`` steps and members below 2^bits)."""
    cycle_of: dict[int, int] = {}  # member -> canonical member of its cycle
    out: dict[int, int | None] = {}
    for s in sorted(range(-bound, bound + 1), key=start_index):
        path: dict[int, int] = {}
        n = s
        for i in range(steps):
            if n in cycle_of:
                out[s] = cycle_of[n]
                break
            if n in path:
                members = list(path)[path[n] :]
                canonical = least(members)
                cycle_of.update(dict.fromkeys(members, canonical))
                out[s] = canonical
                break
            if abs(n).bit_length() > bits:
                out[s] = None
                break
            path[n] = i
            n = step(mapping, n)
        else:
            out[s] = None
    return out


def tallied(fates: dict[int, int | None]) -> tuple[list[Basin], int]:
    """Brute-force fates as basins in the order of their first starts, and the count of unknown starts."""
    counts = Counter(c for c in fates.values() if c is not None)
    firsts: dict[int, int] = {}
    for s in sorted(fates, key=start_index):
        c = fates[s]
        if c is not None:
            firsts.setdefault(c, s)
    found = [Basin(c, counts[c], firsts[c]) for c in sorted(firsts, key=lambda c: start_index(firsts[c]))]
    return found, sum(1 for c in fates.values() if c is None)


# --- published facts -----------------------------------------------------------------------------


def test_3x_plus_1_positive_starts_reach_1_and_negative_ones_the_three_negative_cycles() -> None:
    bound = 20_000
    found = basins(qx_plus_d(3, 1), bound, 100_000, 4096, DEFAULT_MAX_WORK)
    by_cycle = {b.cycle: b for b in found.basins}
    # T. Oliveira e Silva, Math. Comp. 68 (1999) 371-384: every positive start far beyond this bound reaches 1,
    # so the positive starts are exactly the basin of the cycle {1, 2}, the first of them 1.
    assert by_cycle[1] == Basin(1, bound, 1)
    # J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23: the known cycles on the negative integers pass
    # through -1, -5 and -17; the negative starts up to this bound all end in one of them.
    assert set(by_cycle) == {0, 1, -1, -5, -17}
    assert sum(by_cycle[c].starts for c in (-1, -5, -17)) == bound
    assert [by_cycle[c].first for c in (-1, -5, -17)] == [-1, -5, -17]  # common practice, no source: by hand
    # Common practice, no source: T(0) = 0, a fixed point that only 0 reaches (T(n) = 0 only for n = 0).
    assert by_cycle[0] == Basin(0, 1, 0)
    assert found.unknown == 0 and found.starts == 2 * bound + 1


@pytest.mark.parametrize("bound", [50, 1_000, 12_345])
def test_3x_plus_5_positive_multiples_of_5_end_in_5_times_the_cycle_of_1(bound: int) -> None:
    found = basins(qx_plus_d(3, 5), bound, 100_000, 4096, DEFAULT_MAX_WORK)
    five = next(b for b in found.basins if b.cycle == 5)
    # Common practice, no source: T(5m) = 5 T'(m) with T' the 3x+1 map, so the positive multiples of 5 follow
    # 5 times 3x+1 orbits to 5 * {1, 2} = {5, 10} (every positive start reaches 1: Oliveira e Silva 1999);
    # and 5 divides T(n) only when it divides n, so no other start reaches {5, 10}.
    assert five == Basin(5, bound // 5, 5)
    assert found.unknown == 0


# --- against brute force -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("q", "d", "bound"), [(3, 1, 300), (3, -1, 300), (3, 5, 400), (3, 7, 200), (3, -11, 250), (1, 1, 60), (3, 13, 0)]
)
def test_basins_of_qx_plus_d_are_brute_force_counts(q: int, d: int, bound: int) -> None:
    mapping = qx_plus_d(q, d)
    found = basins(mapping, bound, 100_000, 4096, DEFAULT_MAX_WORK)
    expected, unknown = tallied(brute_force(mapping, bound))
    assert unknown == 0
    assert (list(found.basins), found.unknown) == (expected, 0)


def _random_map(rng: random.Random) -> AffineMap:
    """A well-defined map of modulus 2 to 4 with small multipliers (many of them contract)."""
    m = rng.randint(2, 4)
    branches = []
    for i in range(m):
        a = rng.choice([x for x in range(-m - 1, m + 2) if x])
        branches.append((a, -a * i + m * rng.randint(-4, 4)))
    return AffineMap(m, tuple(branches))


def test_basins_of_random_maps_are_brute_force_counts() -> None:
    # Maps whose every start up to the bound the brute force settles well inside the search's limits (3,000
    # steps, 256 bits against 100,000 and 4,096): every start's fate is then decided, and must agree.
    rng = random.Random(20261201)
    checked = 0
    while checked < 40:
        mapping = _random_map(rng)
        bound = rng.randint(0, 80)
        fates = brute_force(mapping, bound)
        if None in fates.values():
            continue
        found = basins(mapping, bound, 100_000, 4096, DEFAULT_MAX_WORK)
        expected, _ = tallied(fates)
        assert (list(found.basins), found.unknown) == (expected, 0), mapping
        checked += 1


def test_5x_plus_1_unknown_starts_are_those_the_brute_force_cannot_settle() -> None:
    # Common practice, no source: most orbits of 5x+1 grow without bound. With limits this small the search
    # leaves them unknown, and every start it places is placed where the brute force puts it.
    mapping = qx_plus_d(5, 1)
    found = basins(mapping, 100, 500, 64, DEFAULT_MAX_WORK)
    fates = brute_force(mapping, 100, steps=3_000, bits=1024)
    counted = {b.cycle: b.starts for b in found.basins}
    settled = Counter(c for c in fates.values() if c is not None)
    assert set(counted) <= set(settled)
    assert all(counted[c] <= settled[c] for c in counted)
    assert sum(counted.values()) + found.unknown == 201 and found.unknown > 0


def test_start_order_and_the_limit() -> None:
    # The order 0, 1, -1, 2, -2, ... (builder.search.basins); common practice, no source.
    assert [start_at(i) for i in range(7)] == [0, 1, -1, 2, -2, 3, -3]
    assert all(start_index(start_at(i)) == i for i in range(1000))
    # The reader's copy of the limit (builder/catalogue/fields.py) is the counter's.
    assert READ_LIMIT == BASIN_LIMIT == 2**22
    with pytest.raises(ValueError, match=r"^expected a bound from 0 to 4,194,304 for basins, got 4,194,305$"):
        basins(qx_plus_d(3, 1), BASIN_LIMIT + 1, 100, 64, DEFAULT_MAX_WORK)
