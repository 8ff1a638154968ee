"""Every aperiodic necklace of a length, once, compiled: the word enumeration of the census by length.

For n/2, (qn + d)/2 a parity vector v_0 .. v_{k-1} (v_j = 1 when step j is odd) with x ones fixes
T^k(n) = (q^x n + d B)/2^k with B = sum_j v_j 2^j q^(o_j), o_j the ones after position j
(builder.arith.dynamics.cycle_equation).  So the rational cycle of the word starts at d B / D with
the target D = 2^k - q^x, and it is an integer cycle of qx + d exactly when D / gcd(B, D) divides d
(J. C. Lagarias, Acta Arith. 56 (1990) 33-53, for q = 3: the words and the rational cycles of 3x + 1
correspond one to one; the same algebra holds for every odd q).  ``scan_length`` tries every word
class of a length once, and keeps the words whose e = D / gcd(B, D) (with D's sign) is in a set of
admissible |e| given per class.

Words.  Each aperiodic necklace is met once as the reverse of its Lyndon word (reversing a word maps
necklaces onto necklaces and keeps them aperiodic, so the reverses of the Lyndon words are one word
from each class).  The Lyndon words of length n come from the prenecklaces of length n in
lexicographic order, by the algorithm of Fredricksen, Kessler and Maiorana as Ruskey, Savage and
Wang describe it (J. Algorithms 13 (1992) 414-430; from memory): from a_1 .. a_n with period p, take
the last position i with a_i = 0, set it to 1, repeat a_1 .. a_i periodically to length n; the result
has period i, and it is a Lyndon word when i = n.  The prenecklaces sharing a prefix of length t
are consecutive; the first of them is the prefix repeated with its own period, and the block ends
when a step would change a position up to t.  So a *unit* of work is a prefix (a prenecklace of
length t with its period) and units of a length are independent.

B in one pass.  Read as the parity vector reversed, a_i = v_(n-i), so the term of position i is
a_i 2^(n-i) q^(ones among a_1 .. a_(i-1)): it depends on the prefix only.  The kernel keeps the
prefix sums of B and of the ones, and a step that rewrites positions i..n recomputes those alone,
so the cost per word is constant on average, as is the enumeration's.  B is exact in int64: the
caller uses the kernel for a length n only when q^n < 2^62, and then B < q^n (B is at most its value
for the all-ones word, (q^n - 2^n)/(q - 2) for q >= 3, 2^n - 1 for q = 1).
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from builder.search.jit import njit

__all__ = ["I64", "scan_unit"]

I64 = npt.NDArray[np.int64]


@njit(cache=True, nogil=True)
def scan_unit(
    n: int,
    prefix: int,
    t: int,
    period: int,
    tables: tuple[I64, I64, I64, I64, I64, I64, I64],
    out: tuple[I64, I64],
    counts: I64,
) -> int:
    """Every Lyndon word of length n with the given prefix (t letters, a prenecklace of that period): count it in
    ``counts[x]``, and when an e of its class divides it (see the module docstring) write its reverse's bits
    (bit j = v_j) and e with D's sign to ``out``.  Returns the number written, or -1 when ``out`` is full."""
    # kept whole: the enumeration and the sums advance together, as the module docstring states.
    powers_q, powers_2, targets, signs, offsets, divisors, quotients = tables
    out_bits, out_e = out
    a = np.zeros(n + 1, dtype=np.int64)
    sums = np.zeros(n + 1, dtype=np.int64)  # sums[i]: B's terms of positions 1..i
    ones = np.zeros(n + 1, dtype=np.int64)  # ones[i]: ones among a_1..a_i
    for i in range(1, t + 1):
        a[i] = (prefix >> (t - i)) & 1
    for i in range(t + 1, n + 1):
        a[i] = a[i - period]
    p = period
    changed = 1
    found = 0
    while True:
        for i in range(changed, n + 1):
            ones[i] = ones[i - 1] + a[i]
            sums[i] = sums[i - 1] + a[i] * powers_2[n - i] * powers_q[ones[i - 1]]
        if p == n:
            x = ones[n]
            counts[x] += 1
            if offsets[x] < offsets[x + 1]:
                r = sums[n] % targets[x]
                for j in range(offsets[x], offsets[x + 1]):
                    if r % quotients[j] == 0:
                        if found == out_bits.size:
                            return -1
                        bits = 0
                        for i in range(1, n + 1):
                            bits |= a[i] << (n - i)  # v_j = a_(n-j): bit j of the parity vector
                        out_bits[found] = bits
                        out_e[found] = divisors[j] * signs[x]
                        found += 1
                        break
        i = n
        while i > t and a[i] == 1:
            i -= 1
        if i <= t:
            return found
        a[i] = 1
        for j in range(i + 1, n + 1):
            a[j] = a[j - i]
        p = i
        changed = i
