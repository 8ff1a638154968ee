"""The census of one map n/2, (qn + d)/2 up to a length: each class (k, x) excluded, enumerated or over budget.

A class is *excluded by the search bound* N (every cycle with a member of magnitude at most N is
listed, as a rechecked coverage claim proves) when bound(k, x) <= N (builder.arith.census, rules (B)
and (E)).  Whether it is comes from one exact comparison at M = N + 1: the M where rule (B)'s
inequality holds are an initial segment 1..bound(k, x), so bound(k, x) <= N exactly when it fails at
N + 1.  Along one length the classes of one side are excluded on a segment of x away from k / log2 q
(rule (B)'s inequality at fixed M is monotone in x on each side: 2^k > q^x and the ratio
((qM + d)/M)^x / 2^k grows with x; on the other side ((qM - d)/M)^x / 2^k grows with x too, and
the class is excluded where it passes 1), so each length costs a bisection, not k comparisons.

A class that is not excluded is *enumerated*: every word of its length is tried once
(builder.search.census.scan_words), those of the class whose e divides d are followed around
(``close``), and what they give is the class's complete list.  A length is scanned whole, so it
costs its number of aperiodic necklaces in words; when that passes what is left of the budget, the
classes of the length that need it are *over budget*, and the census stops there (no later length is tried).

The census claims the lengths up to the last one before its first unsettled class, and names that class.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field

import gmpy2

from builder.arith.census import ClassRow, class_bound, class_side, last_holding
from builder.arith.dynamics import CycleFound
from builder.arith.words import aperiodic_necklace_count, divisors
from builder.search.census import Scan, class_divisors, close, scan_words, target, words_in_length

__all__ = ["MapCensus", "Plan", "map_census", "plan_census", "settle"]

EXCLUDED = "excluded"
ENUMERATED = "enumerated"
OVER_BUDGET = "over budget"
NO_WORDS = "no words"


@dataclass
class MapCensus:
    """The census of n/2, (qn + d)/2 up to ``up_to`` from search bound ``search_bound``.

    ``rows`` holds the classes that are not excluded (and those with no words are left out); ``excluded``
    counts the excluded classes of each length.  ``complete_to`` is the last length whose classes are all
    settled (0: none), ``stopped_by`` the first class that is not.  ``cycles``: every cycle found."""

    q: int
    d: int
    up_to: int
    search_bound: int
    budget: int
    rows: list[ClassRow] = field(default_factory=list)
    excluded: dict[int, int] = field(default_factory=dict)
    cycles: list[CycleFound] = field(default_factory=list)
    words: int = 0
    complete_to: int = 0
    stopped_by: tuple[int, int] | None = None


def _excluded(q: int, d: int, n: int, k: int, x: int, growing: bool | None = None) -> bool:
    """bound(k, x) <= n, by rule (B)'s inequality at M = n + 1 (see the module docstring); ``growing``: whether
    2^k > q^x (the positive side of qx + |d|), when the caller knows it."""
    if x == 0:
        return n >= 0  # bound 0: the only cycle is {0}, listed once any start was searched
    e = abs(d)
    if growing is None:
        growing = class_side(q, d, k, x) == (1 if d > 0 else -1)
    if growing:
        m = gmpy2.mpz(n + 1)
        return not (m**x << k) <= (q * m + e) ** x
    # side -1: rule (B)'s segment of M starts at |d| // q + 1, so bound <= n when it fails at the larger of
    # that and n + 1 (at the first, the segment is empty: bound 0)
    m = gmpy2.mpz(max(n + 1, e // q + 1))
    return not (q * m - e) ** x <= (m**x << k)


def _open_classes(q: int, d: int, n: int, k: int) -> range:
    """The x of length k that the search bound does not exclude: a segment on each side of k / log2 q.

    Floats only propose where each segment ends; each end is taken once exact comparisons on both of its sides
    confirm it, and found by bisection otherwise.  With no search bound (n < 0) no class is excluded."""
    if n < 0:
        return range(k + 1)
    # the last x with q^x < 2^k (side +1 of qx + |d|)
    split = last_holding(lambda x: x == 0 or q**x < (1 << k), 0, k, _guess(k, q))
    e = abs(d)
    m = n + 1
    # side +1 (x = 0..split): excluded for small x, open from some x on; none open when x = split is excluded
    first_open = split + 1
    if split and not _excluded(q, d, n, k, split, True):
        guess = _guess(k, q + e / m, ceiling=True) - 1
        first_open = 1 + last_holding(lambda x: _excluded(q, d, n, k, x, True), 0, split, guess)
    # side -1 (x = split+1..k): open up to some x, excluded from there on; none open when x = split + 1 is excluded
    last_open = split
    if split < k and not _excluded(q, d, n, k, split + 1, False):
        ratio = q - e / max(m, e // q + 1)
        guess = _guess(k, ratio) if ratio > 1 else k
        last_open = last_holding(lambda x: x == split or not _excluded(q, d, n, k, x, False), split, k, guess)
    return range(first_open, last_open + 1)  # the two segments meet at split: one run of x


def _guess(k: int, base: float, ceiling: bool = False) -> int:
    """k / log2(base), rounded down (or up): a float's proposal, which exact comparisons then check."""
    value = k / math.log2(base) if base > 1 else float(k)
    return math.ceil(value) if ceiling else math.floor(value)


@dataclass
class Plan:
    """What a census of n/2, (qn + d)/2 up to ``up_to`` needs beyond its search bound: for each length with open
    classes, those x (``lengths``); and how many classes of each length the bound excludes."""

    q: int
    d: int
    up_to: int
    search_bound: int
    lengths: list[tuple[int, range]] = field(default_factory=list)  # a range: no list of x at 10,000 steps
    excluded: dict[int, int] = field(default_factory=dict)


def plan_census(q: int, d: int, up_to: int, search_bound: int) -> Plan:
    """The classes of lengths 1..up_to that the search bound leaves open (classes with words only: L(k, x) > 0
    exactly for 0 < x < k, and for both x of length 1)."""
    plan = Plan(q, d, up_to, search_bound)
    for k in range(1, up_to + 1):
        found = _open_classes(q, d, search_bound, k)
        open_x = found if k == 1 else range(max(found.start, 1), min(found.stop, k))  # words only for 0 < x < k
        plan.excluded[k] = (2 if k == 1 else k - 1) - len(open_x)
        if open_x:
            plan.lengths.append((k, open_x))
    return plan


def settle(plans: list[Plan], budget: int, jobs: int = 1) -> list[MapCensus]:
    """The censuses of ``plans`` (maps of one q), from one scan of the lengths any of them leaves open, shortest
    first, as far as ``budget`` words go: a word serves every map at once (builder.search.census)."""
    assert len({p.q for p in plans}) <= 1, "one scan serves the maps of one q"
    if not plans:
        return []
    q = plans[0].q
    needed = sorted({k for p in plans for k, _ in p.lengths})
    scanned: list[int] = []
    left = budget
    for k in needed:
        cost = words_in_length(k)
        if cost > left:
            break
        left -= cost
        scanned.append(k)
    done = set(scanned)
    wanted_by: dict[tuple[int, int], set[int]] = {}
    for p in plans:
        own = divisors(abs(p.d))
        for k, open_x in p.lengths:
            if k in done:
                for x in open_x:
                    wanted_by.setdefault((k, x), set()).update(own)

    def wanted(k: int, x: int) -> tuple[int, ...]:
        return class_divisors(q, k, x, wanted_by.get((k, x), ()))

    scan = scan_words(q, scanned, wanted, jobs)
    return [_census_of(p, scan, done) for p in plans]


def _census_of(plan: Plan, scan: Scan, done: set[int]) -> MapCensus:
    q, d = plan.q, plan.d
    census = MapCensus(q, d, plan.up_to, plan.search_bound, 0, excluded=dict(plan.excluded))
    found: dict[tuple[int, int], list[CycleFound]] = {}
    open_at = dict(plan.lengths)
    for hit in scan.hits:
        cycle = close(q, d, hit) if hit.k in open_at else None
        if cycle is not None and sum(cycle.word) in open_at[hit.k]:
            found.setdefault((hit.k, sum(cycle.word)), []).append(cycle)
            census.cycles.append(cycle)
    for k, open_x in plan.lengths:
        if k in done and census.stopped_by is None:
            census.words += words_in_length(k)
            for x in open_x:
                cycles = tuple(sorted(c.members[0] for c in found.get((k, x), [])))
                census.rows.append(_row(q, d, k, x, ENUMERATED, scan.tried[k, x], cycles))
        elif census.stopped_by is None:  # the first length the budget leaves open: its classes, and no later ones
            census.stopped_by = (k, open_x[0])
            census.rows += [_row(q, d, k, x, OVER_BUDGET) for x in open_x]
    census.cycles = [c for c in census.cycles if census.stopped_by is None or len(c.members) < census.stopped_by[0]]
    census.cycles.sort(key=lambda c: (len(c.members), abs(c.members[0]), c.members[0] < 0))
    census.complete_to = plan.up_to if census.stopped_by is None else census.stopped_by[0] - 1
    return census


def map_census(q: int, d: int, up_to: int, search_bound: int, budget: int, jobs: int = 1) -> MapCensus:
    """The census of n/2, (qn + d)/2 (q, d odd) for every length 1..up_to (see the module docstring)."""
    census = settle([plan_census(q, d, up_to, search_bound)], budget, jobs)[0]
    census.budget = budget
    return census


def _row(q: int, d: int, k: int, x: int, status: str, tried: int = 0, cycles: tuple[int, ...] = ()) -> ClassRow:
    return ClassRow(k, x, _words(k, x), target(q, k, x), class_bound(q, d, k, x).bound, status, tried, cycles)


@functools.lru_cache(maxsize=1 << 16)
def _words(k: int, x: int) -> int:
    """L(k, x), kept: the maps of a family census share every class's count."""
    return aperiodic_necklace_count(k, x)
