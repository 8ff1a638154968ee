"""Exact iteration, the cycle equation, limits and huge integers (builder.arith.dynamics, builder.arith.integers).

Fixed values name their source beside them; "common practice, no source"
marks facts of the trade that anyone can re-derive by hand.
"""

from __future__ import annotations

import itertools
import random
import sys

import gmpy2
import pytest

from builder.arith.dynamics import (
    AffineMap,
    CycleFound,
    EntersCycle,
    Unresolved,
    branch_defects,
    cycle_equation,
    trace,
)
from builder.arith.integers import parse_decimal, to_decimal
from builder.arith.words import aperiodic_necklace_count, is_rotation, least_rotation_index, rotate
from builder.search.definition import hunt

SHORTCUT_3X1 = AffineMap(2, ((1, 0), (3, 1)))
SHORTCUT_3XM1 = AffineMap(2, ((1, 0), (3, -1)))
SHORTCUT_5X1 = AffineMap(2, ((1, 0), (5, 1)))


def three_x_plus(d: int) -> AffineMap:
    return AffineMap(2, ((1, 0), (3, d)))


def bits(text: str) -> tuple[int, ...]:
    return tuple(int(c) for c in text)


# --- 2. The cycle equation for the shortcut 3x+1 map, k = 5, x = 3 -------------------------


def test_no_3x1_cycle_with_5_steps_and_3_odd_steps() -> None:
    # Fact of the trade (common practice, no source): the target is 2^5 - 3^3 = 5, and the
    # two aperiodic necklaces of 5 beads with 3 marked are 11100 and 11010 (1 = odd step,
    # read from the start), giving T^5(n) = (27n + 19)/32 and (27n + 23)/32.
    assert 2**5 - 3**3 == 5
    assert aperiodic_necklace_count(5, 3) == 2
    e1 = cycle_equation(SHORTCUT_3X1, bits("11100"))
    e2 = cycle_equation(SHORTCUT_3X1, bits("11010"))
    assert (e1.multiplier, e1.offset, e1.denominator, e1.target) == (27, 19, 32, 5)
    assert (e2.multiplier, e2.offset, e2.denominator, e2.target) == (27, 23, 32, 5)
    # 19 and 23 are not divisible by 5, so the fixed points 19/5 and 23/5 are not integers.
    assert e1.start() == (19, 5)
    assert e2.start() == (23, 5)
    # Every word of length 5 with 3 odd steps is a rotation of one of the two.
    for ones in itertools.combinations(range(5), 3):
        word = tuple(1 if i in ones else 0 for i in range(5))
        assert is_rotation(word, bits("11100")) or is_rotation(word, bits("11010"))
        equation = cycle_equation(SHORTCUT_3X1, word)
        assert equation.target == 5
        assert equation.offset % 5 != 0
        assert equation.start()[1] == 5


def test_3x_minus_1_has_integer_cycles_of_lengths_3_and_11() -> None:
    # Common practice, no source: 2^3 = 8 < 3^2 = 9 and 2^11 = 2048 < 3^7 = 2187 make the
    # targets -1 and -139; the 3x-1 cycles through 5 and 17 have these shapes.
    assert (2**3, 3**2, 2**11, 3**7) == (8, 9, 2048, 2187)
    for start, length, odd in ((5, 3, 2), (17, 11, 7)):
        outcome = trace(SHORTCUT_3XM1, start, 1000)
        assert isinstance(outcome, CycleFound)
        assert len(outcome.members) == length
        assert sum(outcome.word) == odd
        equation = cycle_equation(SHORTCUT_3XM1, outcome.word)
        assert equation.target == 2**length - 3**odd
        assert equation.start() == (start, 1)
    assert cycle_equation(SHORTCUT_3XM1, bits("110")).start() == (5, 1)
    assert cycle_equation(SHORTCUT_3XM1, bits("11110111000")).start() == (17, 1)


# --- Iteration and equation basics ------------------------------------------------------


def test_map_values_by_hand() -> None:
    # Common practice, no source: T(7) = 11, T(8) = 4, T(-5) = -7, T(-7) = -10 under the
    # shortcut 3x+1 map; the standard map gives 3n+1 on odd n.
    assert [SHORTCUT_3X1(n) for n in (7, 8, -5, -7, 0)] == [11, 4, -7, -10, 0]
    standard = AffineMap(2, ((1, 0), (6, 2)))
    assert [standard(n) for n in (7, 8, -5)] == [22, 4, -14]
    permutation = AffineMap(3, ((2, 0), (4, -1), (4, 1)))
    assert [permutation(n) for n in (3, 4, 5, 6, 7, 8)] == [2, 5, 7, 4, 9, 11]


def test_mirror_of_3x_plus_1_is_3x_minus_1() -> None:
    # Common practice, no source: n -> -T(-n) turns 3x+1 into 3x-1.
    assert SHORTCUT_3X1.mirror() == SHORTCUT_3XM1
    assert SHORTCUT_3X1.mirror().mirror() == SHORTCUT_3X1


def test_ill_defined_maps_are_refused() -> None:
    assert branch_defects(2, ((1, 0), (3, 1))) == []
    assert branch_defects(1, ((1, 0),))[0][0] == -1
    assert branch_defects(2, ((1, 0),))[0][0] == -1
    assert [r for r, _ in branch_defects(2, ((1, 0), (3, 0)))] == [1]
    assert [r for r, _ in branch_defects(3, ((0, 0), (4, -1), (4, 2)))] == [0, 2]
    with pytest.raises(ValueError):
        AffineMap(2, ((1, 0), (3, 2)))
    with pytest.raises(ValueError):
        AffineMap(2, ((0, 0), (3, 1)))


def test_equation_edge_cases() -> None:
    empty = cycle_equation(SHORTCUT_3X1, ())
    assert (empty.multiplier, empty.offset, empty.denominator) == (1, 0, 1)
    with pytest.raises(ZeroDivisionError):
        empty.start()
    # 0 is the fixed point of the word 0: B = 0, reduced to 0/1.
    assert cycle_equation(SHORTCUT_3X1, (0,)).start() == (0, 1)
    # -1 is the fixed point of the word 1: (3n + 1)/2 = n at n = -1, target 2 - 3 < 0.
    assert cycle_equation(SHORTCUT_3X1, (1,)).start() == (-1, 1)
    with pytest.raises(ValueError):
        cycle_equation(SHORTCUT_3X1, (0, 2))
    with pytest.raises(ValueError):
        cycle_equation(SHORTCUT_3X1, (-1,))


# --- 5. trace: entering a cycle, unresolved orbits, limits ---------------------------------


def test_trace_of_7_enters_the_cycle_1_2() -> None:
    # Common practice, no source: 7, 11, 17, 26, 13, 20, 10, 5, 8, 4, 2 reaches the cycle
    # (1, 2) at 2 after 10 steps.
    outcome = trace(SHORTCUT_3X1, 7, 1000)
    assert isinstance(outcome, EntersCycle)
    assert outcome.steps == 10
    assert sorted(outcome.cycle.members) == [1, 2]
    assert outcome.cycle.members[0] == 2  # the member where the orbit enters
    assert is_rotation(outcome.cycle.word, (1, 0))
    assert [SHORTCUT_3X1(v) for v in outcome.cycle.members] == list(rotate(outcome.cycle.members, 1))


def test_trace_of_a_start_on_a_cycle_is_cycle_found_from_that_start() -> None:
    outcome = trace(SHORTCUT_3X1, 2, 1000)
    assert outcome == CycleFound((2, 1), (0, 1))
    assert trace(SHORTCUT_3X1, 0, 1) == CycleFound((0,), (0,))


def test_5x_plus_1_from_7_is_unresolved_under_default_limits() -> None:
    # 7 under 5x+1 is believed divergent (common practice, no source); with the default
    # limits of `periplus verify` (1,000,000 steps, builder.catalogue.limits.DEFAULT_MAX_STEPS, and
    # trace's own default magnitude bound) the trace must stop and say so.  Not timed, by design.
    max_steps = 1_000_000
    outcome = trace(SHORTCUT_5X1, 7, max_steps)
    assert isinstance(outcome, Unresolved)
    assert outcome.reason in ("steps", "magnitude", "work")
    assert outcome.steps <= max_steps


def test_max_steps_bounds_the_work() -> None:
    for max_steps in (0, 1, 9, 10, 17, 100, 1000):
        outcome = trace(SHORTCUT_5X1, 7, max_steps)
        assert outcome == Unresolved(max_steps, "steps", outcome.bits)
    # 3x+1 from 7 needs 10 steps to reach the cycle and a few more for Brent's method to
    # notice the repetition: below that the answer is Unresolved with exactly max_steps steps.
    for max_steps in range(0, 11):
        outcome = trace(SHORTCUT_3X1, 7, max_steps)
        assert isinstance(outcome, Unresolved) and outcome.steps == max_steps
        assert outcome.reason == "steps"
    # A cycle of length 11 is found with max_steps = 11 but not with 10.
    assert isinstance(trace(SHORTCUT_3X1, -17, 11), CycleFound)
    assert trace(SHORTCUT_3X1, -17, 10) == Unresolved(10, "steps", trace(SHORTCUT_3X1, -17, 10).bits)


def test_max_bits_bounds_the_magnitude() -> None:
    outcome = trace(SHORTCUT_5X1, 7, 10**6, max_bits=200)
    assert isinstance(outcome, Unresolved)
    assert outcome.reason == "magnitude"
    assert outcome.bits > 200
    assert outcome.steps < 10**4


# --- hunt: limits are honoured and long cycles are kept ------------------------------------


def test_hunt_with_tiny_max_steps_reports_unresolved_instead_of_failing() -> None:
    # Regression: hunt used to assert that the re-trace of a quick-pass cycle succeeds,
    # which fails when the cycle is longer than max_steps.
    result = hunt(SHORTCUT_3X1, 10, max_steps=1)
    assert list(result.cycles) == [0, -1]
    # Common practice, no source: one step halves an even n (|n/2| < |n|, so the start is
    # resolved), and takes an odd n other than -1 to (3n+1)/2, of larger magnitude: those
    # starts are unresolved.  A start is listed only for its own orbit (2 reaches the
    # unresolved 1 but is not listed itself).
    assert result.unresolved == [1, 3, -3, 5, -5, 7, -7, 9, -9]
    assert set(result.reasons.values()) == {"steps"}


def test_hunt_keeps_cycles_longer_than_its_quick_pass() -> None:
    # Regression: a cycle through the start longer than hunt's quick pass (1000 steps)
    # was traced and then dropped.  With d = 2^k - 3, the word 1 0^(k-1) has 3x+1 offset
    # B_1 = 1, so 1 lies on a 3x+d cycle of length k (1, 2^(k-1), ..., 2).
    k = 1500
    mapping = three_x_plus(2**k - 3)
    result = hunt(mapping, 2, max_steps=10_000)
    assert 1 in result.cycles
    cycle = result.cycles[1]
    assert len(cycle.members) == k
    assert cycle.members[:3] == (1, 2 ** (k - 1), 2 ** (k - 2))
    assert cycle.word == (1,) + (0,) * (k - 1)


def test_hunt_results_are_cycles() -> None:
    result = hunt(three_x_plus(7), 200)
    for canonical, cycle in result.cycles.items():
        assert cycle.members[0] == canonical
        assert min(cycle.members, key=lambda v: (abs(v), v < 0)) == canonical
        assert [three_x_plus(7)(v) for v in cycle.members] == list(rotate(cycle.members, 1))
        assert cycle.word == tuple(v % 2 for v in cycle.members)


# --- 6. Huge integers -----------------------------------------------------------------------


def test_3x_plus_d_cycle_with_members_of_over_5000_digits() -> None:
    # Construction (common practice, no source; cf. Lagarias 1990 Thm 2.1): for a word of
    # length k with x odd steps and 3x+1 offset B_1, the 3x+d map with d = 2^k - 3^x has
    # offset d * B_1 along the word, so n = d B_1 / (2^k - 3^x) = B_1 is an integer cycle.
    # With the odd steps first every member is at least 3^(x-1), over 5,000 digits here.
    limit = sys.get_int_max_str_digits()
    k, x = 20_000, 10_600
    word = (1,) * x + (0,) * (k - x)
    b1 = cycle_equation(SHORTCUT_3X1, word).offset
    d = 2**k - 3**x
    mapping = three_x_plus(d)
    outcome = trace(mapping, b1, 10 * k)
    assert isinstance(outcome, CycleFound)
    assert len(outcome.members) == k
    assert outcome.word == word
    assert outcome.members[0] == b1
    assert all(type(v) is int for v in outcome.members)
    assert min(outcome.members).bit_length() > 16_610  # 10^5000 < 2^16610.
    assert len(to_decimal(min(outcome.members))) > 5000
    equation = cycle_equation(mapping, word)
    assert equation.target == d
    assert equation.offset == d * b1
    assert equation.start() == (b1, 1)
    # Other members are fixed points of the rotated words.
    for r in (1, 2, x - 1, x, k // 2, k - 1):
        assert cycle_equation(mapping, rotate(word, r)).start() == (outcome.members[r], 1)
    assert least_rotation_index(word) == x  # the Lyndon rotation 0^(k-x) 1^x
    assert sys.get_int_max_str_digits() == limit


def _big(digits: int, rng: random.Random) -> int:
    return rng.randrange(10 ** (digits - 1), 10**digits)


@pytest.mark.parametrize("digits", [1, 3999, 4000, 4299, 4300, 4301, 10_000, 25_000, 100_000])
def test_decimal_round_trip_agrees_with_gmpy2(digits: int) -> None:
    # Python refuses int <-> str beyond sys.get_int_max_str_digits() digits (4,300 by default,
    # CVE-2020-10735); the conversions must go around it, never change it.
    limit = sys.get_int_max_str_digits()
    rng = random.Random(digits)
    for n in (_big(digits, rng), -_big(digits, rng), 10 ** (digits - 1), -(10**digits - 1)):
        text = to_decimal(n)
        assert text == str(gmpy2.mpz(n))
        assert len(text.lstrip("-")) == digits
        assert parse_decimal(text) == n
        assert parse_decimal(text) == int(gmpy2.mpz(text))
        assert type(parse_decimal(text)) is int
        if n > 0:
            assert parse_decimal("+" + text) == n
    assert sys.get_int_max_str_digits() == limit


def test_decimal_parsing_refuses_non_canonical_text() -> None:
    for bad in ("", "-", "+", "017", "1_000", " 1", "1 ", "1\n", "0x10", "1e3", "1.0", "٣", "--1", "00"):
        with pytest.raises(ValueError):
            parse_decimal(bad)
    with pytest.raises(ValueError):
        parse_decimal("0" + "1" * 10_000)
    assert parse_decimal("0") == parse_decimal("-0") == parse_decimal("+0") == 0
    assert to_decimal(0) == "0"
    assert to_decimal(-(2**20_000)) == "-" + to_decimal(2**20_000)
