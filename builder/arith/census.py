"""Cycles by length and odd steps: which classes (k, x) a map n/2, (qn + d)/2 can still hide a cycle in.

Notation.  T(n) = n/2 for even n and (qn + d)/2 for odd n, with q and d odd (the shortcut form of
qx + d; builder.arith.dynamics.shortcut_form).  A cycle of k members, x of them odd, is in the class
(k, x); its parity vector is a word of length k with x letters 1.  Every rule below is decided on
integers, exactly; each states its proof.

(S) Signs.  Let d > 0.  Every cycle other than {0} has all its members of one sign.  Proof: for
n > 0, T(n) > 0.  So once an orbit is positive it stays positive, and a cycle that had a negative
member and a positive one could not come back to the negative one.  T(n) = 0 only for n = 0 and
n = -d/q, and T(0) = 0, so the only cycle through 0 is {0}.

(P) Product identity.  Around a cycle n_1 .. n_k without 0, T(n)/n is 1/2 for even n and
(q + d/n)/2 for odd n, and the product of T(n_i)/n_i over the cycle is 1 (each member is divided by
itself once), so 2^k = prod over the odd members of (q + d/n_i).  (Common practice, no source; also
../shared/literature.md, "Product identity".)

(D) Direction.  Let d > 0.  In a positive cycle every factor q + d/n_i exceeds q, so 2^k > q^x.  In
a negative cycle every odd member has q n_i + d < 0 (else T(n_i) >= 0, against (S)), so every factor
lies strictly between 0 and q and 2^k < q^x.  So the class alone says the sign of its cycles: the
``side`` of (k, x) is +1 when 2^k > q^x, -1 when 2^k < q^x (equality is impossible for x >= 1:
q^x is odd and greater than 1, when q > 1; for q = 1 every class has side +1).  For d < 0, n -> -n
maps the cycles of qx + d onto those of qx - d, class by class: the side flips.

(B) Bound on the least member.  Let d > 0, side +1, and M the least odd member of a cycle of class
(k, x), x >= 1.  Every factor is at most q + d/M, so 2^k <= (q + d/M)^x, that is
2^k M^x <= (q M + d)^x.  The left side grows faster in M than the right (2^k > q^x), so the set of
M >= 1 where it holds is an initial segment 1..bound(k, x), found by exact comparisons.  Side -1:
with M the least |odd member|, every factor is at least q - d/M > 0, so (q M - d)^x <= 2^k M^x with
q M > d; again an initial segment of M ending at bound(k, x).  Either way, every cycle of the
class has a member of magnitude at most bound(k, x).  For x = 0 the only word with a Lyndon
rotation is "0" (k = 1), the cycle {0}: bound 0.

(E) Exclusion by a search.  A rechecked coverage claim of bound N lists every cycle with a member
of magnitude at most N.  So when bound(k, x) <= N, every cycle of the class is listed already: the
class is *excluded by the search bound*.

The literature states the same window with every member above n: q^x < 2^k < (q + d/n)^x
(``window_admits``; S. Eliahou, Discrete Math. 118 (1993) 45-56).  ``first_admitted`` finds the
least class inside it by a descent of the Stern-Brocot tree (common practice, no source: the first
node of the tree inside an interval has the least denominator and numerator there).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import gmpy2

__all__ = [
    "ClassBound",
    "ClassRow",
    "class_bound",
    "class_side",
    "first_admitted",
    "last_holding",
    "lyndon_words",
    "lyndon_words_up_to",
    "window_admits",
]


def class_side(q: int, d: int, k: int, x: int) -> int:
    """+1 when the cycles of class (k, x) of n/2, (qn + d)/2 are positive, -1 when negative (rule (D))."""
    _check_map(q, d)
    if k < 1 or not 0 <= x <= k:
        raise ValueError(f"expected 0 <= x <= k and k >= 1, got k={k}, x={x}")
    side = 1 if (1 << k) > q**x else -1
    return side if d > 0 else -side


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


@dataclass(frozen=True, slots=True)
class ClassBound:
    """Rule (B) for one class: every cycle of class (k, x) has a member of magnitude at most ``bound``
    and, when x >= 1, the sign ``side``."""

    k: int
    x: int
    side: int
    bound: int


def class_bound(q: int, d: int, k: int, x: int) -> ClassBound:
    """Rule (B): the largest M with 2^k M^x <= (qM + |d|)^x (side +1, for |d|) or (qM - |d|)^x <= 2^k M^x
    (side -1), found by doubling and bisection on the exact predicate."""
    side = class_side(q, d, k, x)
    if x == 0:
        return ClassBound(k, x, side, 0)
    e = abs(d)
    growing = side == (1 if d > 0 else -1)  # the positive side of qx + |d|
    two_k = gmpy2.mpz(1) << k

    def holds(m: int) -> bool:
        mm = gmpy2.mpz(m)
        if growing:
            return bool(two_k * mm**x <= (q * mm + e) ** x)
        return bool(q * mm > e and (q * mm - e) ** x <= two_k * mm**x)

    low = 1 if growing else e // q + 1  # side -1 needs q M > |d|
    if not holds(low):  # no M at all: the class has no cycle
        return ClassBound(k, x, side, 0)
    # a float's proposal, taken only when integers confirm it
    return ClassBound(k, x, side, last_holding(holds, low, guess=_proposed_bound(q, e, k, x, growing)))


def last_holding(holds: Callable[[int], bool], low: int, high: int | None = None, guess: int | None = None) -> int:
    """The last m >= low (and <= high, when given) where ``holds``, given holds(low) and that it holds on an
    initial segment.  A ``guess`` (a float's proposal, say) is taken when holds confirms it on both sides;
    otherwise, without ``high``, doubling from low >= 1 finds an m where it fails, then bisection."""
    if (
        guess is not None
        and low <= guess
        and (high is None or guess <= high)
        and holds(guess)
        and (guess == high or not holds(guess + 1))
    ):
        return guess
    if high is None:
        assert low >= 1, "doubling needs a positive start"
        high = low * 2
        while holds(high):
            low, high = high, high * 2
    else:
        high += 1  # beyond the range: treated as failing
    while high - low > 1:  # holds(low), not holds(high)
        middle = (low + high) // 2
        if holds(middle):
            low = middle
        else:
            high = middle
    return low


def _proposed_bound(q: int, e: int, k: int, x: int, growing: bool) -> int | None:
    """Where rule (B)'s inequality stops holding, as floats see it: |d| / (2^(k/x) - q) on the positive side,
    |d| / (q - 2^(k/x)) on the other; None when the floats cannot say (class_bound then bisects)."""
    try:
        gap = 2 ** (k / x) - q if growing else q - 2 ** (k / x)
        return math.floor(e / gap) if gap > 0 and e / gap < 2**62 else None
    except (OverflowError, ZeroDivisionError):
        return None


def window_admits(q: int, d: int, n: int, k: int, x: int) -> bool:
    """The literature's window for positive cycles with every member above n (d > 0): q^x < 2^k < (q + d/n)^x,
    compared as integers: q^x < 2^k and 2^k n^x < (q n + d)^x."""
    _check_map(q, d)
    if d < 0 or n < 1:
        raise ValueError(f"expected d > 0 and n >= 1, got d={d}, n={n}")
    power = gmpy2.mpz(q) ** x
    if not power < (gmpy2.mpz(1) << k):
        return False
    nn = gmpy2.mpz(n)
    return bool((nn**x << k) < (q * nn + d) ** x)


def first_admitted(q: int, d: int, n: int) -> tuple[int, int]:
    """The class (k, x) with the least x (and so the least k) inside ``window_admits`` (every member above n).

    The window is the interval log2 q < k/x < log2(q + d/n), so this is the fraction of least
    denominator strictly inside it: a descent of the Stern-Brocot tree, which takes runs of equal
    turns at once (doubling, then bisection).  Each comparison of a fraction with an end is decided
    exactly (``_side_of``).
    """
    _check_map(q, d)
    if d < 0 or n < 1 or q < 3:
        raise ValueError(f"expected q >= 3, d > 0 and n >= 1, got q={q}, d={d}, n={n}")
    left, right = (0, 1), (1, 0)  # 0/1 and 1/0, the tree's bounds; fractions are (k, x)
    window = (q, d, n)
    while True:
        where = _side_of(window, left[0] + right[0], left[1] + right[1])
        if where == 0:
            return left[0] + right[0], left[1] + right[1]
        if where < 0:  # at or below the window: go right while the nodes stay there
            t = _longest_run(window, left, right, -1)
            left = (left[0] + t * right[0], left[1] + t * right[1])
        else:
            t = _longest_run(window, right, left, 1)
            right = (right[0] + t * left[0], right[1] + t * left[1])


def _longest_run(window: tuple[int, int, int], base: tuple[int, int], step: tuple[int, int], where: int) -> int:
    """The largest t >= 1 with the node base + t step on the same side ``where`` of the window, given that t = 1 is;
    the nodes of a run move monotonically, so they are on that side for an initial segment of t."""

    def keeps(t: int) -> bool:
        return _side_of(window, base[0] + t * step[0], base[1] + t * step[1]) == where

    return last_holding(keeps, 1)


def _side_of(window: tuple[int, int, int], k: int, x: int) -> int:
    """-1 when k/x <= log2 q (2^k <= q^x), +1 when k/x >= log2(q + d/n) (2^k n^x >= (qn + d)^x), 0 inside:
    both compared as integers (GMP), so nothing rests on a rounded logarithm."""
    q, d, n = window
    if x == 0:
        return 1  # k/0 is infinite
    if (gmpy2.mpz(1) << k) <= gmpy2.mpz(q) ** x:
        return -1
    nn = gmpy2.mpz(n)
    return 1 if (nn**x << k) >= (q * nn + d) ** x else 0


def lyndon_words(k: int, x: int | None = None) -> list[tuple[int, ...]]:
    """The binary Lyndon words of length exactly k (with exactly x letters 1, when given), in lexicographic order."""
    return [w for w in lyndon_words_up_to(k) if len(w) == k and (x is None or sum(w) == x)]


def lyndon_words_up_to(n: int, letters: int = 2) -> list[tuple[int, ...]]:
    """Every Lyndon word over 0..letters-1 (binary unless said) of length 1..n, in lexicographic order, by Duval's
    algorithm
    (J.-P. Duval, "Generation d'une section des classes de conjugaison et arbre des mots de Lyndon de longueur
    bornee", Theoret. Comput. Sci. 60 (1988) 255-283; from memory): increment the last letter, then repeat the
    word periodically to length n and drop trailing maximal letters."""
    if n < 1:
        return []
    words = []
    w = [-1]
    while w:
        w[-1] += 1
        words.append(tuple(w))
        m = len(w)
        while len(w) < n:
            w.append(w[-m])
        while w and w[-1] == letters - 1:
            w.pop()
    return words


def _check_map(q: int, d: int) -> None:
    if q < 1 or q % 2 == 0 or d % 2 == 0:
        raise ValueError(f"expected q >= 1 odd and d odd, got q={q}, d={d}")
