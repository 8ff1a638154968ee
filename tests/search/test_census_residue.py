"""The census of maps that act by residue class with positive multipliers (builder.search.census_residue), against
published cycles and brute force.

Every fixed value names its source; "common practice, no source" marks what anyone can re-derive by hand.
"""

from __future__ import annotations

import pytest

from builder.arith.dynamics import AffineMap
from builder.search.census_map import ENUMERATED, OVER_BUDGET, map_census
from builder.search.census_residue import DEGENERATE, EXACT_WORD_COST, applies, residue_census, words_of_length

#: g(3n) = 2n, g(3n+1) = 4n+1, g(3n+2) = 4n+3, a permutation of the integers.
MOD_3 = AffineMap(3, ((2, 0), (4, -1), (4, 1)))


def test_the_mod_3_permutation_has_the_published_cycles_and_their_mirror_images() -> None:
    # ../shared/literature.md: the cycles (1), (2, 3), (4, 5, 7, 9, 6) and (44, 59, 79, 105, 70, 93, 62, 83, 111,
    # 74, 99, 66) (M. S. Klamkin, Problem 63-12, SIAM Review 5 (1963) 275-276; also Lagarias (ed.), The Ultimate
    # Challenge, 2010); g(-n) = -g(n) gives their mirror images, and g(0) = 0 (common practice, no source).
    census = residue_census(MOD_3, 12, 10**9)
    assert census.complete_to == 12 and census.stopped_by is None
    positive = [c.members for c in census.cycles if c.members[0] > 0]
    assert positive == [(1,), (2, 3), (4, 5, 7, 9, 6), (44, 59, 79, 105, 70, 93, 62, 83, 111, 74, 99, 66)]
    assert sorted(c.members[0] for c in census.cycles) == [-44, -4, -2, -1, 0, 1, 2, 4, 44]
    assert census.words == sum(words_of_length(k, 3) for k in range(1, 13))
    assert {r.status for r in census.rows} == {ENUMERATED} and [r.k for r in census.rows] == list(range(1, 13))


def test_witts_count_is_the_number_of_lyndon_words() -> None:
    # Witt's formula against Duval's words (builder.arith.census, itself checked against the definition).
    from builder.arith.census import lyndon_words_up_to

    for letters in (2, 3, 4):
        words = lyndon_words_up_to(8, letters)
        for k in range(1, 9):
            assert sum(1 for w in words if len(w) == k) == words_of_length(k, letters)


@pytest.mark.parametrize("d", [1, 3, -7, 13])
def test_a_binary_map_gives_the_same_cycles_as_the_census_by_classes(d: int) -> None:
    # n/2, (5n+d)/2 has positive multipliers: both censuses apply, from every word (no search bound), and agree.
    mapping = AffineMap(2, ((1, 0), (5, d)))
    by_residue = residue_census(mapping, 14, 10**9)
    by_class = map_census(5, d, 14, -1, 10**9)
    assert sorted(c.members for c in by_residue.cycles) == sorted(c.members for c in by_class.cycles)


def test_5x_plus_1_has_its_published_positive_cycles() -> None:
    # ../shared/literature.md: 5x+1 on positives has cycles through 1, 13 and 17 (Metzger 1999, as annotated by
    # Lagarias); in shortcut steps they have 5 (1 -> 3 -> 8 -> 4 -> 2 -> 1, by hand), 7 and 7 members, so the
    # lengths up to 10 hold them all.
    census = residue_census(AffineMap(2, ((1, 0), (5, 1))), 10, 10**9)
    assert sorted(c.members[0] for c in census.cycles if c.members[0] > 0) == [1, 13, 17]


def test_a_word_that_fixes_every_follower_stops_the_census() -> None:
    # n -> 2n/2 = n on even n: the word "0" has m^k = A (2 = 2), so every even n is a fixed point and no list of
    # cycles of length 1 is complete (rule (C) of builder.search.census_residue).
    census = residue_census(AffineMap(2, ((2, 0), (3, 1))), 5, 10**9)
    assert census.complete_to == 0 and census.stopped_by == (1, -1)
    assert census.rows[-1].status == DEGENERATE


def test_a_census_over_its_budget_stops_at_the_first_length_it_cannot_afford() -> None:
    budget = EXACT_WORD_COST * sum(words_of_length(k, 3) for k in range(1, 8))
    census = residue_census(MOD_3, 12, budget)
    assert census.complete_to == 7 and census.stopped_by == (8, -1)
    assert census.rows[-1].status == OVER_BUDGET


def test_a_map_with_a_negative_multiplier_is_not_for_this_census() -> None:
    # With a negative slope an affine map can have points of period 2 (x -> -x): a cycle's word may be periodic
    # (rule (A) of builder.search.census_residue).
    assert not applies(AffineMap(2, ((1, 0), (-3, 1))))
    assert applies(MOD_3)
