"""The census's exact rules (builder.arith.census): windows, bounds and Lyndon words, against published values
and brute force.

Every fixed value names its source; "common practice, no source" marks what anyone can re-derive by hand.
"""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.utilities.iterables import necklaces

from builder.arith.census import (
    class_bound,
    class_side,
    first_admitted,
    lyndon_words,
    lyndon_words_up_to,
    window_admits,
)
from builder.arith.dynamics import AffineMap, CycleFound, cycle_equation, trace
from builder.arith.words import necklace_row

# --- published values -------------------------------------------------------------------------------------


def test_the_window_at_2_to_the_40_opens_where_eliahou_says() -> None:
    # S. Eliahou, Discrete Math. 118 (1993) 45-56, doi:10.1016/0012-365X(93)90052-U: with every member above
    # 2^40, a cycle of 3x+1 has at least 17,087,915 elements; the class is (17087915, 10781274)
    # (../shared/literature.md, "Bounds a census can use", recomputed there with 60-digit logarithms).
    k, x = first_admitted(3, 1, 2**40)
    assert (k, x) == (17_087_915, 10_781_274)
    # and the class is inside the window by exact integers (3^x has k bits: 3^x < 2^k; the other side
    # compared as (3 * 2^40 + 1)^x against 2^(k + 40 x))
    assert window_admits(3, 1, 2**40, k, x)


@pytest.mark.parametrize(
    ("d", "n", "expected"),
    [
        # the issue's own recomputation, from the shipped claims' bound 10^5 (3x+1 and 3x+5)
        (1, 10**5, (1539, 971)),
        (5, 10**5, (401, 253)),
    ],
)
def test_the_window_at_the_shipped_bounds(d: int, n: int, expected: tuple[int, int]) -> None:
    assert first_admitted(3, d, n) == expected


@pytest.mark.parametrize(
    ("q", "d", "n"), [(3, 1, 1), (3, 1, 10), (3, 5, 7), (3, 1, 1000), (5, 1, 3), (3, 13, 50), (7, 3, 20)]
)
def test_the_first_admitted_class_is_the_least_by_brute_force(q: int, d: int, n: int) -> None:
    # The Stern-Brocot descent against a walk over every class in order of x, then k (common practice, no
    # source: the fraction of least denominator inside an interval).
    found = next((k, x) for x in itertools.count(1) for k in range(x, 4 * x + 4) if window_admits(q, d, n, k, x))
    assert first_admitted(q, d, n) == found


# --- rules (D) and (B) against every cycle the words give ---------------------------------------------------


def _cycles_by_words(q: int, d: int, up_to: int) -> list[tuple[int, int, list[int]]]:
    """Every cycle of n/2, (qn + d)/2 of length at most up_to: (k, x, members), from every Lyndon word by its
    cycle equation and exact iteration (the words and the rational cycles correspond one to one: J. C. Lagarias,
    Acta Arith. 56 (1990) 33-53, for q = 3; the same algebra for any odd q, common practice, no source)."""
    mapping = AffineMap(2, ((1, 0), (q, d)))
    found = []
    for word in lyndon_words_up_to(up_to):
        start, denominator = cycle_equation(mapping, word).start()
        if denominator != 1:
            continue
        members = [start]
        for _ in word[1:]:
            members.append(mapping(members[-1]))
        assert mapping(members[-1]) == start
        found.append((len(word), sum(word), members))
    return found


@pytest.mark.parametrize(("q", "d"), [(3, 1), (3, -1), (3, 5), (3, 13), (3, -13), (3, 23), (5, 1), (5, 3), (7, 1)])
def test_every_cycle_obeys_the_side_and_the_bound_of_its_class(q: int, d: int) -> None:
    # Rules (D) and (B) of builder.arith.census, against brute force for k <= 14.
    cycles = _cycles_by_words(q, d, 14)
    assert cycles
    for k, x, members in cycles:
        if members == [0]:
            continue
        assert all(m > 0 for m in members) or all(m < 0 for m in members), members  # rule (S)
        sign = 1 if members[0] > 0 else -1
        assert class_side(q, d, k, x) == sign, (k, x, members)
        odd = [abs(m) for m in members if m % 2]
        assert min(odd) <= class_bound(q, d, k, x).bound, (k, x, members)


def test_the_bound_is_the_last_m_where_the_inequality_holds() -> None:
    # Rule (B) read directly: 2^k M^x <= (3M + 13)^x holds for M = 413 and not for 414 in class (8, 5)
    # of 3x+13 (common practice, no source: the inequality evaluated by hand).
    assert class_bound(3, 13, 8, 5).bound == 413
    assert 2**8 * 413**5 <= (3 * 413 + 13) ** 5 and not 2**8 * 414**5 <= (3 * 414 + 13) ** 5
    # the seven cycles of the class have least members 211 .. 319 (../shared/literature.md, d = 13)
    assert class_bound(3, 13, 8, 5).bound >= 319


@given(st.sampled_from([1, 3, 5, 7]), st.integers(-40, 40).filter(lambda d: d % 2), st.integers(1, 30), st.data())
@settings(max_examples=200, deadline=None)
def test_a_class_bound_is_where_the_inequality_stops(q: int, d: int, k: int, data: st.DataObject) -> None:
    # Rule (B): the M where the inequality holds are 1..bound (side +1) or |d|//q + 1..bound (side -1).
    x = data.draw(st.integers(1, k))
    found = class_bound(q, d, k, x)
    e = abs(d)

    def holds(m: int) -> bool:
        if found.side == (1 if d > 0 else -1):
            return 2**k * m**x <= (q * m + e) ** x
        return q * m > e and (q * m - e) ** x <= 2**k * m**x

    if found.bound:
        assert holds(found.bound)
    else:  # no M at all: not even the first one of the segment
        assert not holds(1) and not holds(e // q + 1)
    assert not holds(found.bound + 1)
    assert not holds(found.bound + 7) and not holds(found.bound * 3 + 1)


# --- Lyndon words ------------------------------------------------------------------------------------------


def _is_lyndon(word: tuple[int, ...]) -> bool:
    """A Lyndon word is strictly smaller than each of its proper rotations (definition; common practice)."""
    return all(word < word[r:] + word[:r] for r in range(1, len(word)))


@pytest.mark.parametrize("n", range(1, 15))
def test_duval_gives_every_lyndon_word_once_in_order(n: int) -> None:
    # against the definition over all 2^k words of each length, and against Moreau's count (necklace_row)
    found = lyndon_words_up_to(n)
    expected = sorted(w for k in range(1, n + 1) for w in itertools.product((0, 1), repeat=k) if _is_lyndon(w))
    assert found == expected
    assert sum(1 for w in found if len(w) == n) == sum(necklace_row(n))


@pytest.mark.parametrize(("k", "x"), [(8, 5), (12, 6), (13, 4), (1, 1), (1, 0), (2, 1)])
def test_lyndon_words_of_a_class_match_sympy(k: int, x: int) -> None:
    # sympy's necklaces (general-purpose reference library), kept when aperiodic and with x ones, as least rotations.
    expected = sorted(
        min(n[r:] + n[:r] for r in range(k))
        for n in necklaces(k, 2)
        if sum(n) == x and len({n[r:] + n[:r] for r in range(k)}) == k
    )
    assert lyndon_words(k, x) == expected


def test_the_class_8_5_of_3x_plus_13_gives_seven_cycles() -> None:
    # ../shared/literature.md, d = 13: every one of the L(8, 5) = 7 words gives a cycle, since 2^8 - 3^5 = 13 = d.
    mapping = AffineMap(2, ((1, 0), (3, 13)))
    starts = set()
    for word in lyndon_words(8, 5):
        start, denominator = cycle_equation(mapping, word).start()
        assert denominator == 1
        assert isinstance(trace(mapping, start, 100, 64), CycleFound)
        starts.add(min(abs(m) for m in _orbit(mapping, start, 8)))
    assert sorted(starts) == [211, 227, 251, 259, 283, 287, 319]
    assert math.gcd(2**8 - 3**5, 13) == 13


def _orbit(mapping: AffineMap, start: int, k: int) -> list[int]:
    members = [start]
    for _ in range(k - 1):
        members.append(mapping(members[-1]))
    return members
