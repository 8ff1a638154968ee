"""Combinatorics of words: periods, rotations and necklace counts.

A cycle of a residue-class map visits residues in a cyclic order, its
*word*.  Rotating the word corresponds to starting the cycle at another
member, so distinct cycles of length k correspond to aperiodic necklaces,
represented by their least rotations (Lyndon words).  Pure Python; this
module imports neither YAML nor Jinja.
"""

from __future__ import annotations

from collections.abc import Sequence
from math import comb, gcd

__all__ = [
    "aperiodic_necklace_count",
    "divisors",
    "is_rotation",
    "least_period",
    "least_rotation_index",
    "mobius",
    "necklace_row",
    "binomial_row",
    "rotate",
    "rotation_key",
    "word_text",
]

Word = Sequence[int]


def least_period(word: Word) -> int:
    """Return the least p >= 1 dividing len(word) with word = u^(len/p), |u| = p.

    An empty word has period 0.
    """
    n = len(word)
    if n == 0:
        return 0
    # The least period of a word w that divides |w| is the first index
    # i >= 1 at which w occurs in ww (a standard fact about conjugacy:
    # w = uv = vu iff u, v are powers of one word; common practice, no source).
    try:
        b = bytes(word)  # raises ValueError unless every letter is in 0..255
    except ValueError:
        pass
    else:
        return (b + b).find(b, 1)
    # Knuth-Morris-Pratt failure function for wide alphabets.
    fail = [0] * n
    k = 0
    for i in range(1, n):
        while k and word[i] != word[k]:
            k = fail[k - 1]
        if word[i] == word[k]:
            k += 1
        fail[i] = k
    p = n - fail[-1]
    return p if n % p == 0 else n


def is_rotation(u: Word, v: Word) -> bool:
    """Return True when u is v read from some position (u = v[r:] + v[:r])."""
    if len(u) != len(v):
        return False
    if all(0 <= c < 256 for c in u) and all(0 <= c < 256 for c in v):
        return bytes(u) in bytes(v) * 2
    return any(tuple(u) == rotate(v, r) for r in range(len(v)))


def least_rotation_index(word: Word) -> int:
    """Return the index r at which word[r:] + word[:r] is lexicographically least.

    Among equal least rotations (periodic words) the smallest r is returned.
    Booth's algorithm, linear time (K. S. Booth, Inf. Process. Lett. 10 (1980)).
    """
    n = len(word)
    if n == 0:
        return 0
    s = list(word) * 2
    f = [-1] * (2 * n)
    k = 0
    for j in range(1, 2 * n):
        sj = s[j]
        i = f[j - k - 1]
        while i != -1 and sj != s[k + i + 1]:
            if sj < s[k + i + 1]:
                k = j - i - 1
            i = f[i]
        if sj != s[k + i + 1]:  # i == -1
            if sj < s[k]:
                k = j
            f[j - k] = -1
        else:
            f[j - k] = i + 1
    return k % n


#: Up to this length the least rotation of a word of byte-sized residues is found by comparing every
#: rotation in C (k slices of k bytes); beyond it, by Booth's linear algorithm in Python.
_SHORT_WORD = 512


def rotation_key(word: Word) -> bytes | tuple[int, ...]:
    """A key that two words share exactly when one is a rotation of the other: their least rotation
    (bytes when every residue is below 256, else a tuple; a key of one kind never equals one of the other)."""
    n = len(word)
    data = _as_bytes(word)
    if data is not None and n <= _SHORT_WORD:
        doubled = data + data
        # Every rotation as a slice of the word written twice, made and compared in C.
        return min(map(doubled.__getitem__, map(slice, range(n), range(n, 2 * n))), default=data)
    least = rotate(word, least_rotation_index(word))
    return bytes(least) if data is not None else least  # a rotation of bytes is bytes


def _as_bytes(word: Word) -> bytes | None:
    """The word as bytes when every residue is below 256 (bytes() checks each, in C), else None."""
    try:
        return bytes(word)
    except ValueError:
        return None


def rotate(word: Word, r: int) -> tuple[int, ...]:
    """Return the word read from position r, as a tuple."""
    t = tuple(word)
    if not t:
        return t
    r %= len(t)
    return t[r:] + t[:r]


def divisors(n: int) -> list[int]:
    """Return the positive divisors of n >= 1 in increasing order."""
    if n < 1:
        raise ValueError(f"expected a positive integer, got {n}")
    small, large = [], []
    d = 1
    while d * d <= n:
        if n % d == 0:
            small.append(d)
            if d * d != n:
                large.append(n // d)
        d += 1
    return small + large[::-1]


def mobius(n: int) -> int:
    """Return the Mobius function mu(n) for n >= 1."""
    if n < 1:
        raise ValueError(f"expected a positive integer, got {n}")
    result = 1
    p = 2
    while p * p <= n:
        if n % p == 0:
            n //= p
            if n % p == 0:
                return 0
            result = -result
        p += 1
    return -result if n > 1 else result


def aperiodic_necklace_count(k: int, x: int) -> int:
    """Return L(k, x), the number of aperiodic binary necklaces of k beads, x marked.

    Moreau's necklace-counting formula:
    L(k, x) = (1/k) * sum over d | gcd(k, x) of mu(d) * C(k/d, x/d).
    For k = 0 the count is 0 (there is no nonempty word).
    """
    if k < 0 or x < 0:
        raise ValueError(f"expected k, x >= 0, got k={k}, x={x}")
    if k == 0 or x > k:
        return 0
    total = sum(mobius(d) * comb(k // d, x // d) for d in divisors(gcd(k, x)))
    count, remainder = divmod(total, k)
    if remainder:
        raise AssertionError(f"Moreau sum {total} not divisible by k={k}")
    return count


def binomial_row(n: int) -> list[int]:
    """C(n, 0), C(n, 1), ..., C(n, n), each from the one before: C(n, j + 1) = C(n, j) (n - j) / (j + 1)."""
    row = [1]
    for j in range(n):
        row.append(row[-1] * (n - j) // (j + 1))
    return row


def necklace_row(k: int) -> list[int]:
    """L(k, x) for x = 0..k at once, by Moreau's formula (as aperiodic_necklace_count) with one row of
    binomials for each divisor of k, so that a whole length costs O(k^2) bit-operations."""
    if k <= 0:
        return [0] * (k + 1) if k == 0 else []
    totals = [0] * (k + 1)
    for d in divisors(k):
        mu = mobius(d)
        if mu:
            for j, c in enumerate(binomial_row(k // d)):
                totals[j * d] += mu * c
    row = []
    for total in totals:
        count, remainder = divmod(total, k)
        if remainder:
            raise AssertionError(f"Moreau sum {total} not divisible by k={k}")
        row.append(count)
    return row


_DIGITS = bytes.maketrans(bytes(range(10)), b"0123456789")


def word_text(word: tuple[int, ...], modulus: int) -> str:
    """Write a word as the catalogue does: digits when m <= 10, else comma-separated residues."""
    if modulus <= 10:
        return bytes(word).translate(_DIGITS).decode("ascii")  # residue r -> the digit r, in C
    return ",".join(map(str, word))
