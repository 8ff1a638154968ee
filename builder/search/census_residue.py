"""The census of a map that acts by residue class mod m, T(n) = (a_r n + b_r)/m for n = r (mod m), with every a_r > 0.

A cycle of k members visits residues in a word w of length k, and following w, T^k(n) = (A n + B)/m^k
(builder.arith.dynamics.cycle_equation), so its members satisfy (m^k - A) n = B.  Facts used, with proofs:

(A) Aperiodic words.  The word of a cycle of least period k is aperiodic.  Proof: were it u repeated k/p
times, f = T^p along u would be affine with a positive slope A_u / m^p (every a_r > 0), and f^(k/p) fixes
the start n; an affine map of positive slope alpha with f^j(n) = n has alpha^j = 1 or f(n) = n (if
alpha = 1, f(x) = x + beta and j beta = 0; if alpha != 1, f^j(n) - n = (alpha^j - 1)(n - fixed point), so
n is the fixed point), so f(n) = n and T^p(n) = n with p < k, against the least period.  (Common
practice, no source; with a negative slope alpha = -1 can occur, so maps with a_r < 0 are refused.)
So each cycle of length k has, read from its least rotation, one Lyndon word of length k over m letters.

(C) One start per word.  When m^k != A the word fixes its start B / (m^k - A).  When m^k = A, T^k along w is
n -> n + B/m^k: a cycle needs B = 0, and then every n following w would be periodic; the census cannot
list those, and stops at that length.

(F) Closure decides.  Where some gcd(a_r, m) > 1 the rational start need not follow the word's residues, so
a candidate counts only once it is an integer, each step's residue is the word's letter, and it comes back
after exactly k steps.

No search bound excludes anything here (the product identity of builder.arith.census has a factor per
letter; no window is derived for it): every word of each length is tried, shortest length first, in
Python integers, as far as the budget of words goes.  Rows are one per length (x = -1: all words).
"""

from __future__ import annotations

from builder.arith.census import ClassRow, lyndon_words_up_to
from builder.arith.dynamics import AffineMap, CycleFound, canonical_index, cycle_equation, from_canonical
from builder.arith.words import divisors, mobius
from builder.search.census_map import ENUMERATED, OVER_BUDGET, MapCensus

__all__ = ["applies", "residue_census", "words_of_length"]

#: A word tried here, in Python integers, counts as this many words of the census budget: the compiled scan of
#: builder.search.necklaces is about that much faster (bench/census_speed.py prints the ratio).
EXACT_WORD_COST = 1000
#: What ``residue_census`` calls a length whose words cannot all be settled (rule (C)).
DEGENERATE = "degenerate"


def applies(mapping: AffineMap) -> bool:
    """Whether the residue-class census applies: every multiplier positive (rule (A))."""
    return all(a > 0 for a, _ in mapping.branches)


def words_of_length(k: int, letters: int) -> int:
    """Aperiodic necklaces of length k over ``letters`` letters: Witt's formula (1/k) sum over j | k of
    mu(j) letters^(k/j)."""
    total = sum(mobius(j) * int(letters ** (k // j)) for j in divisors(k))
    assert total % k == 0, (k, letters)
    return total // k


def residue_census(mapping: AffineMap, up_to: int, budget: int) -> MapCensus:
    """Every cycle of length 1..up_to of ``mapping`` (all multipliers positive), as far as ``budget`` goes (in words
    of the compiled scan: each word tried here costs EXACT_WORD_COST of them)."""
    assert applies(mapping), "the residue census needs positive multipliers (rule (A))"
    m = mapping.modulus
    census = MapCensus(0, 0, up_to, -1, budget)
    budget //= EXACT_WORD_COST
    left = budget
    by_length: dict[int, list[tuple[int, ...]]] = {}
    for word in lyndon_words_up_to(min(up_to, _affordable(up_to, m, budget)), m):
        by_length.setdefault(len(word), []).append(word)
    for k in range(1, up_to + 1):
        count = words_of_length(k, m)
        if count > left or k not in by_length:
            census.stopped_by = (k, -1)
            census.rows.append(ClassRow(k, -1, count, 0, 0, OVER_BUDGET))
            break
        left -= count
        found: list[CycleFound] = []
        for word in by_length[k]:
            cycle = _close(mapping, word)
            if isinstance(cycle, CycleFound):
                found.append(cycle)
            elif cycle == DEGENERATE:
                census.stopped_by = (k, -1)
                break
        if census.stopped_by is not None:
            census.rows.append(ClassRow(k, -1, count, 0, 0, DEGENERATE, count))
            break
        census.words += count
        census.cycles += found
        census.rows.append(ClassRow(k, -1, count, 0, 0, ENUMERATED, count, tuple(sorted(c.members[0] for c in found))))
    census.cycles.sort(key=lambda c: (len(c.members), abs(c.members[0]), c.members[0] < 0))
    census.complete_to = up_to if census.stopped_by is None else census.stopped_by[0] - 1
    return census


def _affordable(up_to: int, m: int, budget: int) -> int:
    """The longest length whose words, with those of every shorter length, fit in ``budget``."""
    total = 0
    for k in range(1, up_to + 1):
        total += words_of_length(k, m)
        if total > budget:
            return k - 1
    return up_to


def _close(mapping: AffineMap, word: tuple[int, ...]) -> CycleFound | str | None:
    """The cycle ``word`` gives (rules (C) and (F)), None when it gives none, DEGENERATE when m^k = A."""
    equation = cycle_equation(mapping, word)
    if equation.target == 0:
        return DEGENERATE
    if equation.offset % equation.target:
        return None
    start = equation.offset // equation.target
    members = [start]
    n = start
    for r in word:
        if n % mapping.modulus != r:
            return None  # the rational start does not follow the word (rule (F))
        n = mapping(n)
        members.append(n)
    if n != start or start in members[1:-1]:
        return None
    cycle = CycleFound(tuple(members[:-1]), word)
    assert canonical_index(cycle.members) >= 0
    return from_canonical(cycle)
