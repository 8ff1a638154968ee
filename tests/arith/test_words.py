"""Words, periods, rotations and necklace counts (builder.arith.words), checked against sympy.

Every fixed value below names where it comes from.  "Common practice, no
source" marks facts of the trade that anyone can re-derive by hand and that
no particular publication is cited for.
"""

from __future__ import annotations

import itertools
from math import comb

import pytest
import sympy
from hypothesis import given
from hypothesis import strategies as st
from sympy.utilities.iterables import necklaces

from builder.arith.dynamics import AffineMap, cycle_equation
from builder.arith.words import (
    aperiodic_necklace_count,
    binomial_row,
    divisors,
    is_rotation,
    least_period,
    least_rotation_index,
    mobius,
    necklace_row,
    rotate,
    rotation_key,
    word_text,
)

SHORTCUT_3X1 = AffineMap(2, ((1, 0), (3, 1)))


def _aperiodic_by_brute_force(word: tuple[int, ...]) -> bool:
    """A necklace is aperiodic when its k rotations are pairwise distinct (definition)."""
    return len({word[r:] + word[:r] for r in range(len(word))}) == len(word)


def _sympy_counts(k: int) -> dict[int, int]:
    """Aperiodic binary necklaces of k beads by number of marked beads, enumerated by sympy."""
    counts = dict.fromkeys(range(k + 1), 0)
    for neck in necklaces(k, 2):
        if _aperiodic_by_brute_force(tuple(neck)):
            counts[sum(neck)] += 1
    return counts


# Moreau's necklace-counting formula, L(k, x) = (1/k) sum_{d | gcd(k, x)} mu(d) C(k/d, x/d)
# (C. Moreau, 1872), cross-checked here against sympy's necklace enumeration
# (sympy.utilities.iterables.necklaces) for every k <= 16 and every x.
@pytest.mark.parametrize("k", range(1, 17))
def test_moreau_count_matches_sympy_enumeration(k: int) -> None:
    expected = _sympy_counts(k)
    for x in range(k + 1):
        assert aperiodic_necklace_count(k, x) == expected[x], (k, x)
    # More marked beads than beads: no necklace at all.
    assert aperiodic_necklace_count(k, k + 1) == 0


# Second, sympy-free enumeration for small k: every binary word reduced to its
# least rotation (definition of a necklace; common practice, no source).
@pytest.mark.parametrize("k", range(1, 11))
def test_moreau_count_matches_reduction_by_rotation(k: int) -> None:
    classes: dict[tuple[int, ...], tuple[int, ...]] = {}
    for word in itertools.product((0, 1), repeat=k):
        rep = min(word[r:] + word[:r] for r in range(k))
        classes[rep] = rep
    for x in range(k + 1):
        count = sum(1 for rep in classes if sum(rep) == x and _aperiodic_by_brute_force(rep))
        assert aperiodic_necklace_count(k, x) == count, (k, x)


def test_moreau_count_matches_formula_written_out() -> None:
    """Moreau's formula, written out with sympy's mobius and divisors, for larger k too."""
    for k in range(1, 41):
        for x in range(k + 1):
            g = sympy.gcd(k, x)
            total = sum(int(sympy.mobius(d)) * comb(k // d, x // d) for d in sympy.divisors(g))
            assert total % k == 0
            assert aperiodic_necklace_count(k, x) == total // k, (k, x)


def test_necklace_count_fixed_values() -> None:
    # L(11, 6) = C(11, 6) / 11 = 462 / 11 = 42 (11 is prime; common practice, no source).
    assert aperiodic_necklace_count(11, 6) == 42
    # 4 beads with 2 marked: necklaces 0011 and 0101, of which only 0011 is
    # aperiodic (common practice, no source).
    four_two = [n for n in necklaces(4, 2) if sum(n) == 2]
    assert sorted(four_two) == [(0, 0, 1, 1), (0, 1, 0, 1)]
    assert aperiodic_necklace_count(4, 2) == 1
    # Small cases by hand (common practice, no source): the one-bead words 0 and 1,
    # no aperiodic constant word longer than one bead, no empty necklace.
    assert aperiodic_necklace_count(1, 0) == aperiodic_necklace_count(1, 1) == 1
    assert aperiodic_necklace_count(5, 0) == aperiodic_necklace_count(5, 5) == 0
    assert aperiodic_necklace_count(0, 0) == 0
    with pytest.raises(ValueError):
        aperiodic_necklace_count(-1, 0)
    with pytest.raises(ValueError):
        aperiodic_necklace_count(3, -1)


def test_2_11_minus_3_6() -> None:
    # 2^11 - 3^6 = 2048 - 729 = 1319 (common practice, no source): the target
    # m^k - A of every 3x+1 shortcut word of length 11 with 6 odd steps.
    assert 2**11 - 3**6 == 1319
    for ones in itertools.combinations(range(11), 6):
        word = tuple(1 if i in ones else 0 for i in range(11))
        assert cycle_equation(SHORTCUT_3X1, word).target == 1319


# divisors and mobius against sympy.divisors and sympy.mobius.
def test_divisors_match_sympy() -> None:
    for n in range(1, 2001):
        assert divisors(n) == [int(d) for d in sympy.divisors(n)], n
    for n in (2**20, 3**13, 2**5 * 3**4 * 5**3 * 7, 999_983, 10**12):
        assert divisors(n) == [int(d) for d in sympy.divisors(n)], n
    for bad in (0, -1, -12):
        with pytest.raises(ValueError):
            divisors(bad)


def test_mobius_matches_sympy() -> None:
    for n in range(1, 5001):
        assert mobius(n) == int(sympy.mobius(n)), n
    for n in (2 * 3 * 5 * 7 * 11 * 13, 999_983, 999_983**2, 2**40, 1_000_003 * 999_983):
        assert mobius(n) == int(sympy.mobius(n)), n
    for bad in (0, -1, -30):
        with pytest.raises(ValueError):
            mobius(bad)


# Periods and rotations against brute force (definitions; common practice, no source).
def _brute_period(word: tuple[int, ...]) -> int:
    n = len(word)
    if n == 0:
        return 0
    return next(p for p in range(1, n + 1) if n % p == 0 and word == word[p:] + word[:p])


def _brute_least_rotation(word: tuple[int, ...]) -> int:
    if not word:
        return 0
    rotations = [word[r:] + word[:r] for r in range(len(word))]
    return rotations.index(min(rotations))


@pytest.mark.parametrize("alphabet", [(0, 1), (0, 1, 2), (5, -1, 300)], ids=["binary", "ternary", "wide"])
def test_periods_and_rotations_exhaustively(alphabet: tuple[int, ...]) -> None:
    # The "wide" alphabet (a negative letter and one >= 256) exercises the
    # Knuth-Morris-Pratt and rotate-and-compare branches instead of bytes.
    max_len = 10 if len(alphabet) == 2 else 7
    for n in range(max_len + 1):
        for word in itertools.product(alphabet, repeat=n):
            assert least_period(word) == _brute_period(word), word
            assert least_rotation_index(word) == _brute_least_rotation(word), word
            assert least_period(list(word)) == _brute_period(word)
    for n in range(6):
        words = list(itertools.product(alphabet[:2], repeat=n))
        for u in words:
            for v in words:
                expected = any(u == v[r:] + v[:r] for r in range(n)) if n else True
                assert is_rotation(u, v) == expected, (u, v)


def test_rotation_helpers_small_cases() -> None:
    assert rotate((1, 2, 3), 1) == (2, 3, 1)
    assert rotate((1, 2, 3), -1) == (3, 1, 2)
    assert rotate((1, 2, 3), 3) == (1, 2, 3)
    assert rotate((), 5) == ()
    assert not is_rotation((1, 0), (1, 0, 0))
    assert is_rotation((1, 1, 0), (0, 1, 1))
    assert not is_rotation((1, 1, 0, 0), (1, 0, 1, 0))
    assert least_period((1, 0) * 6) == 2
    assert least_period((1, 0) * 6 + (1,)) == 13
    assert least_period((1000, 7) * 3) == 2  # wide alphabet
    assert least_period((1000, 7, 1000)) == 3
    assert least_rotation_index((1, 1, 0, 1, 0)) == 2  # 01011 is least


# A whole length at once (builder.arith.words.necklace_row, used by the odds): the same numbers as
# Moreau's formula term by term above, and binomial rows equal to sympy's binomial.
@pytest.mark.parametrize("k", [*range(0, 41), 60, 64, 97, 120])
def test_necklace_row_is_moreau_for_every_x(k: int) -> None:
    assert necklace_row(k) == [aperiodic_necklace_count(k, x) for x in range(k + 1)]


@pytest.mark.parametrize("n", [0, 1, 2, 7, 30, 101])
def test_binomial_row_is_sympys(n: int) -> None:
    assert binomial_row(n) == [int(sympy.binomial(n, j)) for j in range(n + 1)]


@given(st.integers(min_value=2, max_value=12).flatmap(lambda m: st.tuples(st.just(m), st.lists(st.integers(0, m - 1)))))
def test_a_word_is_written_as_its_residues_digit_by_digit_up_to_mod_10_else_with_commas(
    case: tuple[int, list[int]],
) -> None:
    # Words with a modulus of at most 10 are strings of digits (catalogue/README.md, "Words"); with a
    # larger one, the residues as a list, which pages write separated by commas (common practice, no source).
    modulus, residues = case
    separator = "" if modulus <= 10 else ","
    assert word_text(tuple(residues), modulus) == separator.join(str(r) for r in residues)


@given(
    st.lists(st.integers(0, 300), max_size=40),
    st.lists(st.integers(0, 300), max_size=40),
    st.integers(0, 39),
)
def test_two_words_share_a_rotation_key_exactly_when_one_is_a_rotation_of_the_other(
    u: list[int], v: list[int], r: int
) -> None:
    # The rule (common practice, no source): rotations of one word have one least rotation, and words
    # that are not rotations of each other have different ones; a short and a long word of the same
    # residues are keyed as the linear algorithm orders them, whether the word is short (every rotation
    # compared in C) or longer than 512 residues (Booth's algorithm).
    assert rotation_key(u) == rotation_key(rotate(u, r % len(u))) if u else rotation_key(u) == rotation_key(())
    assert (rotation_key(u) == rotation_key(v)) == is_rotation(u, v)
    small = [c % 2 for c in u]
    assert rotation_key(small) == bytes(rotate(small, least_rotation_index(small)))
    long = small * (600 // max(len(small), 1) + 1) if small else []
    assert rotation_key(long) == bytes(rotate(long, least_rotation_index(long)))
