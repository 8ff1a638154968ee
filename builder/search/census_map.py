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
classes of the length that need it are *over budget*, and so is every later length's.

The census claims the lengths up to the last one before its first unsettled class, and names that class.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import gmpy2

from builder.arith.census import class_bound, class_side
from builder.arith.dynamics import CycleFound
from builder.arith.words import divisors, necklace_row
from builder.search.census import Scan, class_divisors, close, scan_words, target

__all__ = ["ClassRow", "MapCensus", "map_census"]

EXCLUDED = "excluded"
ENUMERATED = "enumerated"
OVER_BUDGET = "over budget"
NO_WORDS = "no words"


@dataclass(frozen=True, slots=True)
class ClassRow:
    """One class (k, x): its number of words L(k, x), its target 2^k - q^x, bound(k, x) (rule (B)), its status,
    the words tried and the cycles found (canonical first members), when enumerated."""

    k: int
    x: int
    words: int
    target: int
    bound: int
    status: str
    tried: int = 0
    cycles: tuple[int, ...] = ()


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


def _excluded(q: int, d: int, n: int, k: int, x: int) -> bool:
    """bound(k, x) <= n, by rule (B)'s inequality at M = n + 1 (see the module docstring)."""
    if x == 0:
        return True  # bound 0: the only cycle is {0}
    e = abs(d)
    if class_side(q, d, k, x) == (1 if d > 0 else -1):  # the positive side of qx + |d|
        m = gmpy2.mpz(n + 1)
        return not (m**x << k) <= (q * m + e) ** x
    # side -1: rule (B)'s segment of M starts at |d| // q + 1, so bound <= n when it fails at the larger of
    # that and n + 1 (at the first, the segment is empty: bound 0)
    m = gmpy2.mpz(max(n + 1, e // q + 1))
    return not (q * m - e) ** x <= (m**x << k)


def _open_classes(q: int, d: int, n: int, k: int) -> list[int]:
    """The x of length k that the search bound does not exclude: a segment on each side of k / log2 q."""
    # the last x with q^x < 2^k (side +1 of qx + |d|): proposed by a float, settled by integers
    split = min(k, int(k / math.log2(q))) if q > 1 else k
    while split < k and q ** (split + 1) < (1 << k):
        split += 1
    while split > 0 and q**split > (1 << k):
        split -= 1
    found: list[int] = []
    # side +1 (x = 0..split): excluded for small x, open from some x on
    low, high = 0, split + 1  # excluded(low) holds (x = 0); find the first open x in 1..split
    while high - low > 1:
        middle = (low + high) // 2
        if _excluded(q, d, n, k, middle):
            low = middle
        else:
            high = middle
    found += range(high, split + 1)
    # side -1 (x = split+1..k): open up to some x, excluded from there on
    low, high = split, k + 1  # find the last open x
    while high - low > 1:
        middle = (low + high) // 2
        if _excluded(q, d, n, k, middle):
            high = middle
        else:
            low = middle
    found += range(split + 1, low + 1)
    return found


def map_census(q: int, d: int, up_to: int, search_bound: int, budget: int, jobs: int = 1) -> MapCensus:
    """The census of n/2, (qn + d)/2 (q, d odd) for every length 1..up_to (see the module docstring)."""
    census = MapCensus(q, d, up_to, search_bound, budget)
    left = budget
    pending: list[tuple[int, list[int]]] = []  # lengths to scan, with their open classes
    admissible = divisors(abs(d))
    for k in range(1, up_to + 1):
        row = necklace_row(k)
        open_x = [x for x in _open_classes(q, d, search_bound, k) if row[x]]
        census.excluded[k] = sum(1 for x in range(k + 1) if row[x]) - len(open_x)
        if not open_x:
            continue
        cost = sum(row)
        if census.stopped_by is None and cost <= left:
            left -= cost
            pending.append((k, open_x))
        else:
            census.stopped_by = census.stopped_by or (k, open_x[0])
            census.rows += [_row(q, d, k, x, row[x], OVER_BUDGET) for x in open_x]
    scanned = _scan(q, d, pending, admissible, jobs)
    census.words = scanned.words
    found: dict[tuple[int, int], list[CycleFound]] = {}
    for hit in scanned.hits:
        cycle = close(q, d, hit)
        if cycle is not None:
            found.setdefault((hit.k, sum(cycle.word)), []).append(cycle)
            census.cycles.append(cycle)
    for k, open_x in pending:
        row = necklace_row(k)
        for x in open_x:
            cycles = tuple(sorted(c.members[0] for c in found.get((k, x), [])))
            census.rows.append(_row(q, d, k, x, row[x], ENUMERATED, scanned.tried[k, x], cycles))
    census.rows.sort(key=lambda r: (r.k, r.x))
    census.cycles.sort(key=lambda c: (len(c.members), abs(c.members[0]), c.members[0] < 0))
    census.complete_to = up_to if census.stopped_by is None else census.stopped_by[0] - 1
    return census


def _row(
    q: int, d: int, k: int, x: int, words: int, status: str, tried: int = 0, cycles: tuple[int, ...] = ()
) -> ClassRow:
    return ClassRow(k, x, words, target(q, k, x), class_bound(q, d, k, x).bound, status, tried, cycles)


def _scan(q: int, d: int, pending: list[tuple[int, list[int]]], admissible: list[int], jobs: int) -> Scan:
    wanted_classes = {(k, x) for k, open_x in pending for x in open_x}

    def wanted(k: int, x: int) -> tuple[int, ...]:
        return class_divisors(q, k, x, admissible) if (k, x) in wanted_classes else ()

    return scan_words(q, [k for k, _ in pending], wanted, jobs)
