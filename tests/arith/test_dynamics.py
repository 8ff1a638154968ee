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
from hypothesis import given
from hypothesis import strategies as st

from builder.arith.dynamics import (
    AffineMap,
    CycleFound,
    EntersCycle,
    Unresolved,
    branch_defects,
    cycle_equation,
    trace,
)
from builder.arith.integers import decimals, parse_decimal, to_decimal
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


@given(
    st.lists(
        st.one_of(
            st.integers(-(2**70), 2**70),
            # Either side of the one-pass limit (13,000 bits), and beyond what str writes (4,300 digits).
            st.sampled_from([12_999, 13_000, 15_000]).map(lambda bits: 2**bits - 1),
            st.sampled_from([12_999, 13_000, 15_000]).map(lambda bits: -(2**bits) + 3),
        ),
        max_size=8,
    )
)
def test_the_decimals_of_many_numbers_are_each_number_s(ns: list[int]) -> None:
    # decimals writes a sequence in one pass when every number is short enough for str; else one by one:
    # either way, gmpy2's decimal text of each (gmpy2, a reference library; sign and digits as Python's str).
    assert decimals(tuple(ns)) == tuple(str(gmpy2.mpz(n)) for n in ns) == tuple(map(to_decimal, ns))


def test_decimal_parsing_refuses_non_canonical_text() -> None:
    for bad in ("", "-", "+", "017", "1_000", " 1", "1 ", "1\n", "0x10", "1e3", "1.0", "٣", "--1", "00"):
        with pytest.raises(ValueError):
            parse_decimal(bad)
    with pytest.raises(ValueError):
        parse_decimal("0" + "1" * 10_000)
    assert parse_decimal("0") == parse_decimal("-0") == parse_decimal("+0") == 0
    assert to_decimal(0) == "0"
    assert to_decimal(-(2**20_000)) == "-" + to_decimal(2**20_000)


# --- the work budget (issue 12, item 2) -------------------------------------------------------------
# The rule checked (builder.arith.dynamics, "the work budget"): a step whose new member has b bits costs
# (max(b, 4096) + c) * w bit-operations, c the bit length of the map's largest constant and w = 1 plus
# one per doubling of c beyond 64 bits; an orbit stops once its work passes max_work.  Sizes and work are
# checked every step once members or constants are large, so a trace never overshoots by more than a step.


def _work_of(mapping: AffineMap, start: int, steps: int) -> tuple[int, int]:
    """(work of the first ``steps`` steps, by the rule above, written out plainly; bits of the last member)."""
    c = max(max(abs(a).bit_length(), abs(b).bit_length()) for a, b in mapping.branches)
    w = 1 + max(0, (c - 1).bit_length() - 6)
    total, n = 0, gmpy2.mpz(start)
    for _ in range(steps):
        n = mapping(n)
        total += (max(n.bit_length(), 4096) + c) * w
    return total, n.bit_length()


@pytest.mark.parametrize(
    "c, weight",
    # One 64-bit word: no factor; then one more per doubling (common practice, no source: GMP multiplies
    # near-linearly, in about n log n, so a constant of c bits costs a factor of about log2(c / 64)).
    [(1, 1), (2, 1), (64, 1), (65, 2), (128, 2), (129, 3), (66_439, 12)],
)
def test_step_cost_weighs_large_constants(c: int, weight: int) -> None:
    mapping = AffineMap(2, ((1, 0), ((1 << (c - 1)) + 1 if c > 1 else 1, 1)))
    assert mapping.cost.constant_bits == c
    assert mapping.cost.weight == weight
    assert mapping.cost(10) == mapping.cost.least == (4096 + c) * weight
    assert mapping.cost(10_000) == (10_000 + c) * weight


def test_a_huge_multiplier_is_stopped_at_the_magnitude_bound_not_far_past_it() -> None:
    # The finding: a multiplier of 20,000 digits made members reach 17 million bits against a bound
    # of 600 thousand, because sizes were checked every 256 steps.  3^41,900 has 19,991 digits
    # (41,900 log10 3 = 19,991.1; common practice, no source); it is odd, so (a n + a)/2 is an integer map.
    a = 3**41_900
    mapping = AffineMap(2, ((1, 0), (a, a)))
    outcome = trace(mapping, 1, 1_000_000)
    assert isinstance(outcome, Unresolved) and outcome.reason == "magnitude"
    limit = 65_536 + 8 * a.bit_length()  # trace's default magnitude bound (default_max_bits)
    assert limit < outcome.bits <= limit + a.bit_length() + 1  # one step past the bound at most


def test_a_huge_start_is_stopped_by_the_work_budget() -> None:
    # The finding: a 20,000-digit start in 5x+3 ran for a minute, its members growing by about
    # log2(5/4) = 0.32 bits a step (common practice, no source) towards a bound some 1.7 million steps
    # away.  With a budget of 3 * 10^8 bit-operations it stops after a few thousand steps.
    start = 7**23_666  # 20,000 digits (23,666 log10 7 = 20,000.1)
    mapping = AffineMap(2, ((1, 0), (5, 3)))
    max_work = 3 * 10**8
    outcome = trace(mapping, start, 1_000_000, max_work=max_work)
    assert isinstance(outcome, Unresolved) and outcome.reason == "work"
    spent, last_bits = _work_of(mapping, start, outcome.steps)
    assert max_work < spent <= max_work + mapping.cost(last_bits)  # stopped at the step that passed it
    assert _work_of(mapping, start, outcome.steps - 1)[0] <= max_work


def test_small_orbits_never_meet_the_default_work_budget() -> None:
    # A million steps on members below 4,096 bits cost about 4.1 * 10^9 bit-operations, within the
    # default budget of 10^10, so the step limit, not the budget, decides them (see the 5x+1 test above).
    outcome = trace(SHORTCUT_3X1, 27, 1_000_000)
    assert isinstance(outcome, EntersCycle)  # 27 reaches 1 -> 2 -> 1 (common practice, no source)
    assert AffineMap(2, ((1, 0), (3, 1))).cost.least * 1_000_000 < 10**10
