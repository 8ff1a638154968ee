"""The heuristic odds model against facts of the trade, and the odds command."""

from __future__ import annotations

import math

import gmpy2
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from builder.arith.dynamics import AffineMap
from builder.arith.odds import length_chances, length_odds, modelled, odds_table

SHORTCUT_3X1 = AffineMap(2, ((1, 0), (3, 1)))
SHORTCUT_3X_MINUS_1 = AffineMap(2, ((1, 0), (3, -1)))


def test_3x_plus_1_at_length_11_with_6_odd_steps():
    # Facts of the trade, no published source: L(11, 6) = 42, target 2^11 - 3^6 = 1319,
    # chance 1 - (1 - 1/1319)^42, about 3%.
    row = odds_table(SHORTCUT_3X1, 11)[6]
    assert (row.necklaces, row.target) == (42, 1319)
    assert row.chance == pytest.approx(1 - (1 - 1 / 1319) ** 42)
    assert 0.03 < row.chance < 0.032


def test_3x_minus_1_at_length_19_with_12_odd_steps():
    # Facts of the trade, no published source: L(19, 12) = C(19, 12)/19 = 2652 (19 is prime),
    # |target| = 3^12 - 2^19 = 7153 (the signed m^k - A is -7153), chance about 31%.
    row = odds_table(SHORTCUT_3X_MINUS_1, 19)[12]
    assert row.necklaces == math.comb(19, 12) // 19 == 2652
    assert row.target == 2**19 - 3**12 == -7153
    assert 0.30 < row.chance < 0.32


def test_3x_minus_1_at_length_3_is_certain():
    # Fact of the trade, no published source: 2^3 - 3^2 = -1, so every word with two odd
    # steps gives an integer cycle (the cycle through 5 of 3x-1, Lagarias 1985 via literature.md).
    row = odds_table(SHORTCUT_3X_MINUS_1, 3)[2]
    assert abs(row.target) == 1
    assert row.chance == 1.0
    assert length_odds(SHORTCUT_3X_MINUS_1, 3) == 1.0


def test_qx_plus_d_counts_the_common_factor():
    # For 3x+5 every offset B is a multiple of 5 (common practice, no source): at k = 4, x = 2
    # the target 2^4 - 3^2 = 7 is coprime to 5, at k = 2, x = 1 it is 1.
    rows = odds_table(AffineMap(2, ((1, 0), (3, 5))), 4)
    assert rows[2].target == 7 and rows[2].share == pytest.approx(1 / 7)
    # A target divisible by d: 3x+5 at k=3, x=1 gives 8 - 3 = 5, so g = 5 and every word counts.
    assert odds_table(AffineMap(2, ((1, 0), (3, 5))), 3)[1].share == 1


def test_odds_command_prints_the_rows(cli):
    run = cli("odds", "3x-plus-1", "--lengths", "11", "--catalogue", "catalogue")
    assert run.code == 0, run.err
    row = next(line.split() for line in run.lines if line.split()[:2] == ["11", "6"])
    assert row[2:5] == ["42", "1319", "3.14%"]
    # The catalogue has the cycle through -17 at k = 11, x = 7 (Lagarias 1985 via literature.md).
    row7 = next(line.split() for line in run.lines if line.split()[:2] == ["11", "7"])
    assert row7[-1] == "1"


@pytest.mark.parametrize("bad", ["0", "5..2", "x", "1..20000"])
def test_odds_command_refuses_bad_lengths(cli, bad):
    run = cli("odds", "3x-plus-1", "--lengths", bad, "--catalogue", "catalogue")
    assert run.code == 2
    assert "--lengths" in run.err


def test_odds_command_refuses_a_table_too_long_to_print(cli):
    # 1..10000 would be 50 million rows (k + 1 for each length; common practice, no source): refused
    # at once with one line, before any work (issue 12: no command line hangs).
    run = cli("odds", "3x-plus-1", "--lengths", "1..10000", "--catalogue", "catalogue")
    assert run.code == 2
    assert run.err == (
        "periplus: error: --lengths: expected at most 100,000 rows (k + 1 for each length k), got 50,015,000 "
        "for '1..10000'; ask for fewer lengths\n"
    )


def test_the_model_is_not_computed_for_multipliers_beyond_a_machine_word(cli, catalogue):
    # Found by the fuzz campaign: a 20,000-digit multiplier made a build spend two minutes on the odds
    # chart, whose every target then has millions of bits.  3^41,900 is odd (common practice, no source).
    a = str(gmpy2.mpz(3) ** 41_900)
    wide = (
        "name: wide\nmodulus: 2\nbranches:\n  - {residue: 0, multiplier: 1, increment: 0}\n"
        f"  - {{residue: 1, multiplier: {a}, increment: {a}}}\nsummary: s\n"
    )
    root = catalogue(files={"maps/wide.yaml": wide})
    assert not modelled(AffineMap(2, ((1, 0), (3**41_900, 3**41_900))))
    assert modelled(AffineMap(2, ((1, 0), (3, 10**5000 + 1))))  # a huge increment alone is cheap
    run = cli("odds", "wide", "--lengths", "1..5", "--catalogue", str(root))
    assert run.code == 2
    assert run.err.startswith("periplus: error: odds: expected multipliers of at most 64 bits, got larger ones in wide")


@settings(max_examples=60, deadline=None)
@given(
    q=st.sampled_from([1, 3, 5, 7, 181, 2**61 - 1]),
    half=st.one_of(st.integers(-5000, 5000), st.integers(2**30 - 5, 2**30 + 5), st.integers(-(10**60), 10**60)),
    top=st.integers(1, 45),
)
def test_the_chart_computes_the_same_model_at_once(q, half, top):
    # Rule (builder.arith.odds): the chance at length k is 1 - prod_x (1 - g/|2^k - A|)^L(k, x), with
    # g = gcd(target, d) for n/2, (qn + d)/2; length_chances computes it for k = 1..top with arrays,
    # and must agree with the exact per-length computation to rounding.  d is odd, as q is, so that
    # the map sends integers to integers (common practice, no source); d near 2^31 takes both gcd paths.
    d = 2 * half + 1
    mapping = AffineMap(2, ((1, 0), (q, d)))
    fast = length_chances(mapping, top)
    assert len(fast) == top
    for k, chance in enumerate(fast, start=1):
        assert math.isclose(chance, length_odds(mapping, k), rel_tol=1e-9, abs_tol=1e-12), (q, d, k)


def test_the_chart_sees_certain_lengths_as_certain():
    # 3x+13: the target 2^8 - 3^5 = 13 divides d = 13, so every word of length 8 with 5 odd steps
    # gives an integer cycle (issue 16, citing the cycle equation; common practice, no source).
    assert length_chances(AffineMap(2, ((1, 0), (3, 13))), 8)[7] == 1.0
    assert length_chances(AffineMap(2, ((1, 0), (3, 13))), 0) == []
