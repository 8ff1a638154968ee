"""Published cycles, re-derived by the engine.

Values come from /work/shared/literature.md; each carries its source and the
status given there (read / secondary / memory).  Where a stored OEIS entry
was seen that states the same numbers it is named too, as a secondary
confirmation.  Every number is re-derived: by exact iteration (trace), by
the cycle equation (Lagarias 1990 Thm 2.1) and, where a finite search is
possible, by exhaustive enumeration of words.
"""

from __future__ import annotations

import itertools
from fractions import Fraction

import pytest

from builder.arith.dynamics import AffineMap, CycleFound, Unresolved, cycle_equation, trace
from builder.arith.words import least_period, least_rotation_index, rotate
from builder.search.definition import hunt

SHORTCUT_3X1 = AffineMap(2, ((1, 0), (3, 1)))
STANDARD_3X1 = AffineMap(2, ((1, 0), (6, 2)))
PERMUTATION_MOD_3 = AffineMap(3, ((2, 0), (4, -1), (4, 1)))


def qx_plus_d(q: int, d: int) -> AffineMap:
    """The shortcut map T(n) = n/2 or (qn + d)/2."""
    return AffineMap(2, ((1, 0), (q, d)))


LAGARIAS_1985 = 'J. C. Lagarias, "The 3x+1 problem and its generalizations", Amer. Math. Monthly 92 (1985) 3-23'
LAGARIAS_1990 = 'J. C. Lagarias, "The set of rational cycles for the 3x+1 problem", Acta Arith. 56 (1990) 33-53'
BELAGA_MIGNOTTE = "E. Belaga, M. Mignotte, primitive cycles of (3n+d)-mappings, HAL hal-00129727 (2006), Table 1"
METZGER = "Metzger (1999), as annotated in Lagarias, arXiv:math/0309224"
CRANDALL = 'R. E. Crandall, "On the 3x+1 problem", Math. Comp. 32 (1978) 1281-1292'
KLAMKIN = "M. S. Klamkin, Problem 63-12, SIAM Review 5 (1963) 275-276"


# (map name, map, least member listed, shortcut length, odd steps / marked residues, source, status)
# "odd" is the number of word letters that are not 0 (odd steps for the mod-2 maps).
PUBLISHED_CYCLES = [
    # 3x+1 on Z: Lagarias 1985, status memory (literature.md).  Also OEIS A224254
    # (negative cycles of lengths 2, 5, 18 in the standard map; secondary, stored copy seen).
    pytest.param("3x+1", SHORTCUT_3X1, 0, 1, 0, LAGARIAS_1985, "memory", id="3x+1:0"),
    pytest.param("3x+1", SHORTCUT_3X1, 1, 2, 1, LAGARIAS_1985, "memory", id="3x+1:1"),
    pytest.param("3x+1", SHORTCUT_3X1, -1, 1, 1, LAGARIAS_1985, "memory", id="3x+1:-1"),
    pytest.param("3x+1", SHORTCUT_3X1, -5, 3, 2, LAGARIAS_1985, "memory", id="3x+1:-5"),
    pytest.param("3x+1", SHORTCUT_3X1, -17, 11, 7, LAGARIAS_1985, "memory", id="3x+1:-17"),
    # 3x-1 on positives, the negatives of the 3x+1 cycles: Lagarias 1985, status memory.
    # Also OEIS A226623 row k=1: 1, 5, 17 (secondary).
    pytest.param("3x-1", qx_plus_d(3, -1), 1, 1, 1, LAGARIAS_1985, "memory", id="3x-1:1"),
    pytest.param("3x-1", qx_plus_d(3, -1), 5, 3, 2, LAGARIAS_1985, "memory", id="3x-1:5"),
    pytest.param("3x-1", qx_plus_d(3, -1), 17, 11, 7, LAGARIAS_1985, "memory", id="3x-1:17"),
    # 3x+5 positive primitive cycles: Belaga & Mignotte 2006 Table 1, status "record read,
    # table secondary".  Also OEIS A226607 row k=5: 1, 19, 23, 187, 347 (secondary).
    pytest.param("3x+5", qx_plus_d(3, 5), 1, 3, 1, BELAGA_MIGNOTTE, "secondary", id="3x+5:1"),
    pytest.param("3x+5", qx_plus_d(3, 5), 19, 5, 3, BELAGA_MIGNOTTE, "secondary", id="3x+5:19"),
    pytest.param("3x+5", qx_plus_d(3, 5), 23, 5, 3, BELAGA_MIGNOTTE, "secondary", id="3x+5:23"),
    pytest.param("3x+5", qx_plus_d(3, 5), 187, 27, 17, BELAGA_MIGNOTTE, "secondary", id="3x+5:187"),
    pytest.param("3x+5", qx_plus_d(3, 5), 347, 27, 17, BELAGA_MIGNOTTE, "secondary", id="3x+5:347"),
    # 3x+7 cycle 5, 11, 20, 10: literature.md "secondary" (no named source).
    # Also OEIS A226607 row k=7: 5 (secondary).
    pytest.param("3x+7", qx_plus_d(3, 7), 5, 4, 2, "secondary compilation", "secondary", id="3x+7:5"),
    # 3x-11 cycle 19, 23, 29, 38: literature.md "secondary".  Also OEIS A226623 (secondary).
    pytest.param("3x-11", qx_plus_d(3, -11), 19, 4, 3, "secondary compilation", "secondary", id="3x-11:19"),
    # 5x+1 cycles through 1, 13, 17: Metzger 1999 via Lagarias's annotated bibliography, secondary.
    pytest.param("5x+1", qx_plus_d(5, 1), 1, 5, 2, METZGER, "secondary", id="5x+1:1"),
    pytest.param("5x+1", qx_plus_d(5, 1), 13, 7, 3, METZGER, "secondary", id="5x+1:13"),
    pytest.param("5x+1", qx_plus_d(5, 1), 17, 7, 3, METZGER, "secondary", id="5x+1:17"),
    # 181x+1 cycles with odd members 27, 611 and 35, 99, length 15, 2 odd steps:
    # Crandall 1978 (27 cycle), status secondary.
    pytest.param("181x+1", qx_plus_d(181, 1), 27, 15, 2, CRANDALL, "secondary", id="181x+1:27"),
    pytest.param("181x+1", qx_plus_d(181, 1), 35, 15, 2, CRANDALL, "secondary", id="181x+1:35"),
    # Klamkin's permutation mod 3: Klamkin 1963, status "read via bibliography".
    # Here "odd" counts letters 1 and 2 (residues other than 0).
    pytest.param("mod-3", PERMUTATION_MOD_3, 1, 1, 1, KLAMKIN, "read via bibliography", id="mod3:1"),
    pytest.param("mod-3", PERMUTATION_MOD_3, 2, 2, 1, KLAMKIN, "read via bibliography", id="mod3:2"),
    pytest.param("mod-3", PERMUTATION_MOD_3, 4, 5, 3, KLAMKIN, "read via bibliography", id="mod3:4"),
    pytest.param("mod-3", PERMUTATION_MOD_3, 44, 12, 7, KLAMKIN, "read via bibliography", id="mod3:44"),
]


@pytest.mark.parametrize(("name", "mapping", "least", "length", "odd", "source", "status"), PUBLISHED_CYCLES)
def test_published_cycle(
    name: str, mapping: AffineMap, least: int, length: int, odd: int, source: str, status: str
) -> None:
    outcome = trace(mapping, least, 10_000)
    assert isinstance(outcome, CycleFound), (name, least, source, status)
    assert len(outcome.members) == length, (name, least, source, status)
    assert sum(1 for r in outcome.word if r) == odd, (name, least, source, status)
    assert min(outcome.members, key=abs) == least
    # Cycle equation, Lagarias 1990 Thm 2.1 (status read): for every rotation of the word,
    # B / (m^k - A) is the member the rotation starts from.
    for r in range(length):
        equation = cycle_equation(mapping, rotate(outcome.word, r))
        assert equation.denominator == mapping.modulus**length
        assert equation.start() == (outcome.members[r], 1), (name, least, r)
    assert least_period(outcome.word) == length  # a primitive cycle has an aperiodic word


# Members as printed in literature.md.
@pytest.mark.parametrize(
    ("mapping", "members", "source"),
    [
        pytest.param(SHORTCUT_3X1, (-5, -7, -10), LAGARIAS_1985, id="3x+1:-5"),  # memory
        pytest.param(qx_plus_d(3, 7), (5, 11, 20, 10), "secondary", id="3x+7"),  # secondary
        pytest.param(qx_plus_d(3, -11), (19, 23, 29, 38), "secondary", id="3x-11"),  # secondary
        pytest.param(PERMUTATION_MOD_3, (1,), KLAMKIN, id="mod3:1"),  # read via bibliography
        pytest.param(PERMUTATION_MOD_3, (2, 3), KLAMKIN, id="mod3:2"),
        pytest.param(PERMUTATION_MOD_3, (4, 5, 7, 9, 6), KLAMKIN, id="mod3:4"),
        pytest.param(PERMUTATION_MOD_3, (44, 59, 79, 105, 70, 93, 62, 83, 111, 74, 99, 66), KLAMKIN, id="mod3:44"),
    ],
)
def test_published_members_in_order(mapping: AffineMap, members: tuple[int, ...], source: str) -> None:
    outcome = trace(mapping, members[0], 10_000)
    assert isinstance(outcome, CycleFound), source
    assert outcome.members == members, source
    assert cycle_equation(mapping, outcome.word).start() == (members[0], 1)


# 181x+1: odd members 27, 611 and 35, 99 (Crandall 1978, secondary), and 2^15 - 181^2 = 7.
@pytest.mark.parametrize("odd_members", [(27, 611), (35, 99)])
def test_181x_plus_1_odd_members(odd_members: tuple[int, int]) -> None:
    mapping = qx_plus_d(181, 1)
    outcome = trace(mapping, odd_members[0], 1000)
    assert isinstance(outcome, CycleFound)
    assert tuple(v for v in outcome.members if v % 2) == odd_members
    equation = cycle_equation(mapping, outcome.word)
    assert equation.target == 2**15 - 181**2 == 7


# Standard-map lengths 1, 3, 2, 5, 18 (Lagarias 1985, memory; OEIS A224254, secondary):
# each odd step of the shortcut map is two steps (3n+1, then n/2) of the standard map.
@pytest.mark.parametrize(
    ("start", "shortcut", "odd", "standard"),
    [(0, 1, 0, 1), (1, 2, 1, 3), (-1, 1, 1, 2), (-5, 3, 2, 5), (-17, 11, 7, 18)],
)
def test_standard_map_lengths(start: int, shortcut: int, odd: int, standard: int) -> None:
    outcome = trace(STANDARD_3X1, start, 1000)
    assert isinstance(outcome, CycleFound)
    assert len(outcome.members) == standard == shortcut + odd
    equation = cycle_equation(STANDARD_3X1, outcome.word)
    assert equation.multiplier == 6**odd
    assert equation.start() == (start, 1)


def _lagarias_start(word: tuple[int, ...]) -> Fraction:
    """Lagarias 1990 Thm 2.1 (read), as written in literature.md: for the shortcut 3x+1 map,
    start = sum_j v_j 3^(v_{j+1}+...+v_{k-1}) 2^j / (2^k - 3^x)."""
    k, x = len(word), sum(word)
    total = sum(v * 3 ** sum(word[j + 1 :]) * 2**j for j, v in enumerate(word))
    return Fraction(total, 2**k - 3**x)


def test_cycle_equation_matches_lagarias_closed_form() -> None:
    # Every 0/1 word of length <= 12 (2^k - 3^x is odd, so never 0).
    for k in range(1, 13):
        for word in itertools.product((0, 1), repeat=k):
            num, den = cycle_equation(SHORTCUT_3X1, word).start()
            assert Fraction(num, den) == _lagarias_start(word), word
    # And the offset B itself is the numerator of the closed form.
    word = (1, 1, 1, 1, 0, 1, 1, 1, 0, 0, 0)  # the word of the 3x+1 cycle through -17
    equation = cycle_equation(SHORTCUT_3X1, word)
    assert equation.offset == sum(v * 3 ** sum(word[j + 1 :]) * 2**j for j, v in enumerate(word))


# --- Exhaustive checks where the product formula bounds the search -------------------
#
# Around a positive cycle of the shortcut qx+1 map, the step ratios multiply to 1:
# prod over odd members n_i of (q + 1/n_i) = 2^k, so q^x < 2^k <= (q + 1)^x
# (common practice, no source).  That makes "all cycles with x odd steps" finite.


def _positive_cycles_with_odd_steps(q: int, max_odd: int) -> set[tuple[int, ...]]:
    mapping = qx_plus_d(q, 1)
    found = set()
    for x in range(1, max_odd + 1):
        k = 1
        while 2**k <= (q + 1) ** x:
            if 2**k > q**x:
                for ones in itertools.combinations(range(k), x):
                    word = tuple(1 if i in ones else 0 for i in range(k))
                    num, den = cycle_equation(mapping, word).start()
                    if den == 1 and num > 0:
                        outcome = trace(mapping, num, 10 * k)
                        assert isinstance(outcome, CycleFound)
                        if outcome.word == word:  # the start follows the word
                            members = outcome.members
                            i = members.index(min(members))
                            found.add(members[i:] + members[:i])
            k += 1
    return found


def test_5x_plus_1_has_no_other_cycles_with_at_most_3_odd_members() -> None:
    # Metzger (1999) via Lagarias's annotated bibliography (secondary): cycles through
    # 1, 13, 17 and no others with at most 3 odd members.
    cycles = _positive_cycles_with_odd_steps(5, 3)
    assert sorted(c[0] for c in cycles) == [1, 13, 17]


def test_181x_plus_1_cycles_with_at_most_2_odd_members() -> None:
    # Crandall (1978), secondary: the two cycles with 2 odd members; none with 1.
    cycles = _positive_cycles_with_odd_steps(181, 2)
    assert sorted(c[0] for c in cycles) == [27, 35]
    assert all(len(c) == 15 for c in cycles)


def test_orbit_of_8_under_the_permutation_does_not_close() -> None:
    # Klamkin 1963 (read via bibliography): the orbit of 8 is not known to be finite.
    # The map is a permutation of Z, so an orbit cannot enter a cycle without starting on
    # it; within the limits the trace can only be unresolved.
    outcome = trace(PERMUTATION_MOD_3, 8, 20_000)
    assert isinstance(outcome, Unresolved)
    assert outcome.steps == 20_000


def test_permutation_is_a_bijection_on_a_window() -> None:
    # Klamkin 1963 (read via bibliography): g is a permutation of the integers.
    # Its inverse sends 2n -> 3n, 4n+1 -> 3n+1, 4n+3 -> 3n+2, so check both compositions.
    def inverse(n: int) -> int:
        if n % 2 == 0:
            return 3 * (n // 2)
        if n % 4 == 1:
            return 3 * (n // 4) + 1
        return 3 * (n // 4) + 2

    for n in range(-3000, 3001):
        assert inverse(PERMUTATION_MOD_3(n)) == n
        assert PERMUTATION_MOD_3(inverse(n)) == n


# --- 4. Hunts --------------------------------------------------------------------------


def test_hunt_3x_plus_1_to_10_000() -> None:
    # Lagarias 1985 (literature.md status memory): the cycles of 3x+1 on Z through
    # 0, 1, -1, -5, -17; no others with a start of absolute value <= 10^4.
    result = hunt(SHORTCUT_3X1, 10**4)
    assert list(result.cycles) == [0, 1, -1, -5, -17]
    assert result.unresolved == []
    assert [len(c.members) for c in result.cycles.values()] == [1, 2, 1, 3, 11]


def test_hunt_3x_plus_5_to_400() -> None:
    # Lagarias 1990, Table 3.1 (status: memory, as the brief gives it); the positive
    # primitive ones (members coprime to 5) are Belaga & Mignotte 2006 Table 1 (secondary)
    # and OEIS A226607 row k=5 (secondary).  5 is 5 times the 3x+1 cycle (1, 2).
    result = hunt(qx_plus_d(3, 5), 400)
    assert result.unresolved == []
    positive = sorted(c for c, cycle in result.cycles.items() if min(cycle.members) > 0)
    assert positive == [1, 5, 19, 23, 187, 347]
    primitive = [c for c in positive if all(v % 5 for v in result.cycles[c].members)]
    assert primitive == [1, 19, 23, 187, 347]
    assert [len(result.cycles[c].members) for c in primitive] == [3, 5, 5, 27, 27]
    # literature.md: every 3x+d also has the fixed point -d and d times each 3x+1 cycle.
    for c in (0, 1, -1, -5, -17):
        assert 5 * c in result.cycles
    assert result.cycles[-5].members == (-5,)
    assert sorted(result.cycles) == sorted([0, 1, 5, -5, 19, 23, -25, -85, 187, 347])


def test_canonical_words_of_3x_plus_5_cycles_share_shapes() -> None:
    # literature.md: several cycles share length and odd-step count (19 and 23; 187 and 347),
    # yet they are distinct necklaces.
    mapping = qx_plus_d(3, 5)
    words = {}
    for least in (19, 23, 187, 347):
        outcome = trace(mapping, least, 1000)
        assert isinstance(outcome, CycleFound)
        w = outcome.word
        words[least] = rotate(w, least_rotation_index(w))
    assert sum(words[19]) == sum(words[23]) and len(words[19]) == len(words[23])
    assert words[19] != words[23] and words[187] != words[347]
