"""The census's word scan: every aperiodic necklace of the lengths asked, once, and the words that close.

``scan_words`` tries each word class of each length once (builder.search.necklaces: compiled, in
units spread over processes; the exact path below for lengths whose numbers pass int64) and keeps
the words whose e = D / gcd(B, D) is admissible for their class (``wanted``).  ``close`` turns such a
word into the integer cycle of qx + d it gives for a d that e divides, by exact iteration: a word
only counts once the cycle it predicts has been followed around.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from math import gcd

import numpy as np
import numpy.typing as npt

from builder.arith.census import lyndon_words
from builder.arith.dynamics import AffineMap, CycleFound, cycle_equation, from_canonical
from builder.arith.words import divisors, mobius
from builder.processes import share_work

__all__ = [
    "Scan",
    "WordHit",
    "class_divisors",
    "close",
    "fits_kernel",
    "prenecklaces",
    "scan_words",
    "word_of",
    "words_in_length",
]

#: Positions a unit leaves free: about 2^UNIT_BITS / UNIT_BITS words in each unit of a long length.
UNIT_BITS = 20
#: Room for the words one unit keeps; a unit that finds more is run again with more room.
ROOM = 1 << 12


#: Lengths with q^n below this run in the kernel (builder.search.necklaces says why B then fits int64).
KERNEL_LIMIT = 1 << 62


def fits_kernel(q: int, n: int) -> bool:
    """Whether words of length n of n/2, (qn + d)/2 run in the kernel (B and the targets fit int64)."""
    return 1 <= n <= 62 and max(q, 2) ** n < KERNEL_LIMIT


def prenecklaces(t: int) -> list[tuple[int, int]]:
    """The binary prenecklaces of length t as (bits, period), a_1 the highest of t bits; for t = 0 the empty word
    with period 1.  These are the prefixes of every prenecklace longer than t, in lexicographic order."""
    if t == 0:
        return [(0, 1)]
    a = [0] * (t + 1)
    p = 1
    found = []
    while True:
        found.append((sum(a[i] << (t - i) for i in range(1, t + 1)), p))
        i = t
        while i >= 1 and a[i] == 1:
            i -= 1
        if i == 0:
            return found
        a[i] = 1
        for j in range(i + 1, t + 1):
            a[j] = a[j - i]
        p = i


@dataclass(frozen=True, slots=True)
class WordHit:
    """A word of length k (bit j: step j odd) whose rational cycle is an integer cycle of qx + e (e with sign)."""

    k: int
    bits: int
    e: int


@dataclass
class Scan:
    """What a scan met: the kept words, and the words tried in each class (k, x)."""

    hits: list[WordHit] = field(default_factory=list)
    tried: dict[tuple[int, int], int] = field(default_factory=dict)

    @property
    def words(self) -> int:
        return sum(self.tried.values())


def word_of(bits: int, k: int) -> tuple[int, ...]:
    """The parity vector (v_0 .. v_(k-1)) of ``bits`` (bit j is v_j)."""
    return tuple((bits >> j) & 1 for j in range(k))


def target(q: int, k: int, x: int) -> int:
    """D = 2^k - q^x, the target of class (k, x)."""
    return (1 << k) - int(q**x)


def class_divisors(q: int, k: int, x: int, admissible: Iterable[int]) -> tuple[int, ...]:
    """The admissible |e| dividing |D| of class (k, x), ascending: the only denominators its words can reduce to."""
    magnitude = abs(target(q, k, x))
    return tuple(sorted(e for e in set(admissible) if e >= 1 and magnitude % e == 0))


def words_in_length(k: int) -> int:
    """The aperiodic necklaces of length k, all x together (what a scan of the length tries): Witt's formula
    (1/k) sum over j | k of mu(j) 2^(k/j), Moreau's count summed over x."""
    total = sum(mobius(j) * (1 << (k // j)) for j in divisors(k))
    assert total % k == 0, k
    return total // k


Wanted = Callable[[int, int], tuple[int, ...]]
I64 = npt.NDArray[np.int64]
Tables = tuple[I64, I64, I64, I64, I64, I64, I64]


def scan_words(q: int, lengths: Iterable[int], wanted: Wanted, jobs: int = 1) -> Scan:
    """Try every word of each length once; keep those whose e (up to sign) is among ``wanted(k, x)``
    (ascending divisors of |D|, class_divisors).  ``jobs`` processes share the units of the compiled lengths."""
    scan = Scan()
    compiled: list[tuple[int, int, int, int]] = []  # (k, prefix, t, period) units
    for k in lengths:
        for x in range(k + 1):
            scan.tried[k, x] = 0
        if fits_kernel(q, k):
            t = max(0, k - UNIT_BITS)
            compiled += [(k, prefix, t, period) for prefix, period in prenecklaces(t)]
        else:
            _scan_exact(q, k, wanted, scan)
    if compiled:
        tables = {k: _tables(q, k, wanted) for k in {unit[0] for unit in compiled}}
        results = share_work(range(len(compiled)), jobs, lambda i: _run_unit(compiled[i], tables[compiled[i][0]]))
        for i in range(len(compiled)):
            k = compiled[i][0]
            hits, counts = results[i]
            scan.hits += [WordHit(k, bits, e) for bits, e in hits]
            for x, c in enumerate(counts):
                scan.tried[k, x] += c
    scan.hits.sort(key=lambda h: (h.k, h.bits, h.e))
    return scan


def _tables(q: int, k: int, wanted: Wanted) -> Tables:
    powers_q = np.array([q**c for c in range(k + 1)], dtype=np.int64)
    powers_2 = np.array([1 << j for j in range(k + 1)], dtype=np.int64)
    targets = np.array([abs(target(q, k, x)) or 1 for x in range(k + 1)], dtype=np.int64)
    signs = np.array([1 if target(q, k, x) > 0 else -1 for x in range(k + 1)], dtype=np.int64)
    offsets = [0]
    divisors: list[int] = []
    for x in range(k + 1):
        divisors += wanted(k, x)
        offsets.append(len(divisors))
    quotients = [0] * len(divisors)
    for x in range(k + 1):
        for j in range(offsets[x], offsets[x + 1]):
            quotients[j] = int(targets[x]) // divisors[j]
    return (powers_q, powers_2, targets, signs, _array(offsets), _array(divisors), _array(quotients))


def _array(values: list[int]) -> I64:
    return np.array(values, dtype=np.int64)


def _run_unit(unit: tuple[int, int, int, int], tables: Tables) -> tuple[list[tuple[int, int]], list[int]]:
    from builder.search.necklaces import scan_unit  # numba, loaded when a length is scanned

    k, prefix, t, period = unit
    room = ROOM
    while True:
        bits = np.zeros(room, dtype=np.int64)
        es = np.zeros(room, dtype=np.int64)
        counts = np.zeros(k + 1, dtype=np.int64)
        found = scan_unit(k, prefix, t, period, tables, (bits, es), counts)
        if found >= 0:
            return list(zip(bits[:found].tolist(), es[:found].tolist(), strict=True)), counts.tolist()
        room *= 4


def _scan_exact(q: int, k: int, wanted: Wanted, scan: Scan) -> None:
    """The same scan in Python integers, for a length whose numbers pass int64: each Lyndon word read backwards
    (as the kernel reads it), its B from the cycle equation."""
    mapping = AffineMap(2, ((1, 0), (q, 1)))
    for lyndon in lyndon_words(k):
        word = lyndon[::-1]
        x = sum(word)
        scan.tried[k, x] += 1
        divisors = wanted(k, x)
        if not divisors:
            continue
        equation = cycle_equation(mapping, word)
        d = equation.target
        reduced = abs(d) // gcd(equation.offset, d)
        for e in divisors:
            if e % reduced == 0:
                scan.hits.append(WordHit(k, sum(v << j for j, v in enumerate(word)), reduced * (1 if d > 0 else -1)))
                break


def close(q: int, d: int, hit: WordHit) -> CycleFound | None:
    """The integer cycle of n/2, (qn + d)/2 that ``hit``'s word gives, followed around exactly; None when e does not
    divide d (the word's cycle of this map is not an integer one).

    The start is d B / D (builder.search.necklaces); it is followed for k steps, each step's parity checked
    against the word, and must come back to itself with no shorter period."""
    if d % hit.e:
        return None
    word = word_of(hit.bits, hit.k)
    mapping = AffineMap(2, ((1, 0), (q, d)))
    equation = cycle_equation(AffineMap(2, ((1, 0), (q, 1))), word)
    numerator = d * equation.offset
    if numerator % equation.target:
        raise AssertionError(f"word {word}: e = {hit.e} divides d = {d}, but D does not divide d B")
    start = numerator // equation.target
    members = [start]
    n = start
    for v in word:
        if n % 2 != v:
            raise AssertionError(f"word {word}: the orbit of {start} leaves it")
        n = mapping(n)
        members.append(n)
    if n != start or start in members[1:-1]:
        raise AssertionError(f"word {word}: the orbit of {start} does not close after exactly {hit.k} steps")
    return from_canonical(CycleFound(tuple(members[:-1]), word))
