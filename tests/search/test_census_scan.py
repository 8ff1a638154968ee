"""The census's word scan (builder.search.census, the compiled builder.search.necklaces) and the census of one map
(builder.search.census_map), against published lists of cycles and brute force.

Every fixed value names its source; "common practice, no source" marks what anyone can re-derive by hand.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from builder.arith.census import class_bound
from builder.arith.words import necklace_row
from builder.search import census as census_module
from builder.search.census import Scan, class_divisors, close, scan_words
from builder.search.census_map import ENUMERATED, OVER_BUDGET, _excluded, _open_classes, map_census


def _family(q: int, up_to: int, dmax: int, jobs: int = 1) -> tuple[Scan, dict[int, list[tuple[int, int, int]]]]:
    """Every primitive cycle of length <= up_to of each n/2, (qn + d)/2 with |d| <= dmax: d -> [(canonical, k, x)]."""
    admissible = [e for e in range(1, dmax + 1, 2) if e % q]
    scan = scan_words(q, range(1, up_to + 1), lambda k, x: class_divisors(q, k, x, admissible), jobs)
    found: dict[int, list[tuple[int, int, int]]] = {}
    for hit in scan.hits:
        for d in (hit.e, -hit.e):
            cycle = close(q, d, hit)
            assert cycle is not None
            found.setdefault(d, []).append((cycle.members[0], hit.k, sum(cycle.word)))
    return scan, {d: sorted(c) for d, c in found.items()}


def _positive(cycles: list[tuple[int, int, int]]) -> list[int]:
    return sorted(c for c, _, _ in cycles if c > 0)


# Positive primitive cycles by least member (../shared/literature.md, "Cycles of 3x+d by length and odd steps":
# J. C. Lagarias, Acta Arith. 56 (1990) 33-53, Table 3.1; E. Belaga, M. Mignotte, HAL hal-00129727 (2006);
# recomputed there from every start up to 10^6), those of length at most 24.
UP_TO_24 = {
    1: [1],
    -1: [1, 5, 17],  # the mirror images of the cycles through -1, -5, -17 of 3x+1 (Lagarias 1985, literature.md)
    5: [1, 19, 23],
    7: [5],
    11: [1, 13],
    13: [1, 131, 211, 227, 251, 259, 283, 287, 319],
    23: [5, 7],
    29: [1, 11],
}


def test_one_scan_to_length_24_gives_the_published_lists_of_every_d() -> None:
    scan, found = _family(3, 24, 30)
    for d, expected in UP_TO_24.items():
        assert _positive(found[d]) == expected, d
    assert (0, 1, 0) in found[1] and (0, 1, 0) in found[-1]  # {0}, a cycle of every map, primitive for d = +-1
    # every word of length 1..24 was tried once: Moreau's count of aperiodic necklaces (builder.arith.words)
    assert scan.words == sum(sum(necklace_row(k)) for k in range(1, 25))


def test_length_27_adds_187_and_347_to_3x_plus_5() -> None:
    # ../shared/literature.md, d = 5: 187 and 347, both of class (27, 17) (Belaga and Mignotte 2006, Table 1).
    _, found = _family(3, 27, 5)
    assert _positive(found[5]) == [1, 19, 23, 187, 347]
    assert [(c, k, x) for c, k, x in found[5] if c in (187, 347)] == [(187, 27, 17), (347, 27, 17)]


def test_every_word_to_length_20_gives_exactly_the_five_cycles_of_3x_plus_1() -> None:
    # Brute force: every Lyndon word of length <= 20 yields exactly the cycles through 0, 1, -1, -5 and -17 of
    # 3x+1 (common practice, no source; the five are also in ../shared/literature.md, Lagarias 1985).
    scan = scan_words(3, range(1, 21), lambda k, x: class_divisors(3, k, x, [1]))
    cycles = sorted(close(3, 1, hit).members[0] for hit in scan.hits if close(3, 1, hit) is not None)  # type: ignore[union-attr]
    assert cycles == [-17, -5, -1, 0, 1]


@pytest.mark.parametrize("q", [1, 3, 5, 7])
def test_the_kernel_and_the_exact_path_keep_the_same_words(q: int, monkeypatch: pytest.MonkeyPatch) -> None:
    # The compiled scan (in units of 3 free positions, on 2 processes) against the same scan in Python integers
    # over Duval's Lyndon words (builder.arith.census; itself checked against the definition).
    admissible = [e for e in range(1, 200, 2) if math.gcd(e, q) == 1]

    def wanted(k: int, x: int) -> tuple[int, ...]:
        return class_divisors(q, k, x, admissible)

    monkeypatch.setattr(census_module, "UNIT_BITS", 3)
    compiled = scan_words(q, range(1, 15), wanted, jobs=2)
    monkeypatch.setattr(census_module, "fits_kernel", lambda q, n: False)
    exact = scan_words(q, range(1, 15), wanted)
    assert compiled.hits == exact.hits
    assert compiled.tried == exact.tried
    assert compiled.hits  # the check can fail: words were kept


def test_a_unit_that_keeps_more_words_than_its_room_runs_again(monkeypatch: pytest.MonkeyPatch) -> None:
    # Every word of 3x+1's lengths 1..12 kept (all admissible e up to 10^6): more than a room of 4 words.
    admissible = [e for e in range(1, 10**6, 2) if e % 3]
    full = scan_words(3, range(1, 13), lambda k, x: class_divisors(3, k, x, admissible))
    monkeypatch.setattr(census_module, "ROOM", 4)
    small = scan_words(3, range(1, 13), lambda k, x: class_divisors(3, k, x, admissible))
    assert small.hits == full.hits and len(full.hits) > 4


# --- the census of one map -----------------------------------------------------------------------------------


def test_a_map_census_below_211_enumerates_the_class_8_5_of_3x_plus_13() -> None:
    # ../shared/literature.md, d = 13: the seven cycles 211 .. 319 of class (8, 5); with a search bound below
    # 211 none of them is covered, so the class must be enumerated.
    census = map_census(3, 13, 8, 200, 10**6)
    row = next(r for r in census.rows if (r.k, r.x) == (8, 5))
    assert row.status == ENUMERATED and row.words == row.tried == 7
    assert row.cycles == (211, 227, 251, 259, 283, 287, 319)
    assert row.target == 13 and row.bound == 413
    assert census.complete_to == 8 and census.stopped_by is None
    # above the class bound 413 the search covers it: excluded, nothing to enumerate in that class
    above = map_census(3, 13, 8, 413, 10**6)
    assert all((r.k, r.x) != (8, 5) for r in above.rows)


def test_the_shipped_bound_of_3x_plus_5_settles_every_length_to_400_without_a_word() -> None:
    # The example: with the search bound 10^5 the first admissible positive class of 3x+5 is (401, 253)
    # (tests/arith/test_census_rules.py checks that from the window); so lengths 1..400 need no enumeration.
    census = map_census(3, 5, 400, 10**5, 0)
    assert census.complete_to == 400 and census.words == 0 and census.rows == []


def test_a_census_over_its_budget_says_where_it_stopped_and_claims_only_below() -> None:
    # Honest stop: 3x+1 with a search bound of 1 leaves classes open at every length from 3 on; a budget of the
    # words of lengths 1..10 settles those and no more (counts: Moreau's formula, builder.arith.words).
    budget = sum(sum(necklace_row(k)) for k in range(1, 11))
    census = map_census(3, 1, 14, 1, budget)
    assert census.complete_to == 10
    assert census.stopped_by is not None and census.stopped_by[0] == 11
    assert {r.status for r in census.rows if r.k >= 11} == {OVER_BUDGET}
    assert {r.status for r in census.rows if r.k <= 10} == {ENUMERATED}
    # of the cycles with every member above 1, -5 (length 3) is found; -17 has length 11 (../shared/literature.md,
    # Lagarias 1985: shortcut lengths 1, 2, 1, 3, 11), over the budget
    assert [c.members[0] for c in census.cycles] == [-5]


@pytest.mark.parametrize(
    ("q", "d", "n"), [(3, 1, 1), (3, 1, 30), (3, 13, 200), (3, -13, 200), (5, 1, 3), (3, 5, 100), (7, 3, 5)]
)
def test_the_open_classes_are_those_whose_bound_passes_the_search_bound(q: int, d: int, n: int) -> None:
    # The bisection of census_map against the definition, class by class: excluded exactly when bound(k, x) <= n
    # (rules (B) and (E) of builder.arith.census).
    for k in range(1, 40):
        by_definition = [x for x in range(1, k + 1) if class_bound(q, d, k, x).bound > n]
        assert list(_open_classes(q, d, n, k)) == by_definition, k
        assert all(_excluded(q, d, n, k, x) == (x not in by_definition) for x in range(k + 1))


# --- the whole chain against brute force --------------------------------------------------------------------


def _all_cycles_by_words(q: int, d: int, up_to: int) -> set[int]:
    """The canonical member of every cycle of n/2, (qn + d)/2 of length at most up_to, by brute force over every
    Lyndon word (its cycle equation's start, when an integer, followed around; common practice, no source)."""
    from builder.arith.census import lyndon_words_up_to
    from builder.arith.dynamics import AffineMap, canonical_index, cycle_equation

    mapping = AffineMap(2, ((1, 0), (q, d)))
    found = set()
    for word in lyndon_words_up_to(up_to):
        start, denominator = cycle_equation(mapping, word).start()
        if denominator == 1:
            members = [start]
            for _ in word[1:]:
                members.append(mapping(members[-1]))
            found.add(members[canonical_index(members)])
    return found


@given(
    st.sampled_from([1, 3, 5, 7]),
    st.integers(-61, 61).filter(lambda d: d % 2),
    st.integers(0, 400),
    st.integers(1, 13),
)
@settings(max_examples=60, deadline=None)
def test_what_the_bound_covers_and_what_the_census_finds_are_every_cycle(q: int, d: int, n: int, up_to: int) -> None:
    # Rules (B) and (E) of builder.arith.census: a class excluded by the search bound n holds only cycles with a
    # member of magnitude at most n; every other class is enumerated.  So the cycles with such a member, together
    # with those the census finds, are every cycle of length at most up_to (brute force over every word).
    every = _all_cycles_by_words(q, d, up_to)
    census = map_census(q, d, up_to, n, 10**9)
    found = {c.members[0] for c in census.cycles}
    assert census.complete_to == up_to
    assert found <= every
    covered = set()
    for c in every:
        if c not in found:
            covered.add(c)
    mapping_members = _members(q, d, covered, up_to)
    assert all(min(map(abs, members)) <= n for members in mapping_members), (covered, n)


def _members(q: int, d: int, canonicals: set[int], up_to: int) -> list[list[int]]:
    from builder.arith.dynamics import AffineMap

    mapping = AffineMap(2, ((1, 0), (q, d)))
    cycles = []
    for c in canonicals:
        members = [c]
        while len(members) <= up_to and mapping(members[-1]) != c:
            members.append(mapping(members[-1]))
        cycles.append(members)
    return cycles
