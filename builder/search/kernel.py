"""The hunt's compiled kernel: the fates of builder.search.definition decided one start at a time in machine words.

``decide`` follows each start of a magnitude range in int64 arithmetic compiled by numba and
takes, for each, only the decisions the definition takes at the very step it takes them:

* event (a), the orbit returns to the start (the cycle is read again exactly by the caller);
* event (b), the orbit reaches a value that precedes the start;
* event (m), when max_bits is below 62, a value has more than max_bits bits.

Every other start is handed on, so nothing done here can change its fate:

* a value beyond the overflow bound L of ``builder.search.engine.int64_bound`` (the next step
  could leave int64): reported with its step and value (``Decided.escaped``), for the multi-word
  follower (builder.search.wide) or the exact path;

and the rest to the exact reference (builder.search.definition.settle), which restarts each from
scratch:

* an orbit still undecided after ``steps`` steps, a bound chosen by the caller that keeps the work
  of those steps under max_work (``engine.hunt_range``);
* an orbit that repeats a value without returning to its start (Brent's comparison with the value
  at the last power of two): it has entered a cycle that does not contain its start, event (c),
  which only the exact path reads out.

The sieve
---------
For the maps T(n) = n/2 (n even), (q n + d)/2 (n odd) with q and d odd, and a depth j, write
A_i, C_i (i <= j) for the affine form of the first i steps of the residue class r mod 2^j:

    T^i(s) = (A_i s + C_i) / 2^i   for every s = r (mod 2^j), with A_i = q^(x_i),

where x_i counts the odd values among v_0, ..., v_(i-1).  Proof, by induction on i (common
practice for 3x+1 since R. Terras, Acta Arith. 30 (1976) 241-252): if s = r + t 2^j then
T^i(s) = T^i(r) + t A_i 2^(j-i), which for i < j differs from T^i(r) by an even number, so s and
r take the same branch at step i + 1; then A_(i+1) = q A_i, C_(i+1) = q C_i + d 2^i on the odd
branch and A_(i+1) = A_i, C_(i+1) = C_i on the even one.

Let i_r be the first i <= j with 2^i > A_i, and M_r = max(|C_1|, ..., |C_(i_r)|).  Claim: every
start s = r (mod 2^j) with |s| > M_r is decided by event (b) at step i_r, and by no earlier event,
provided that no value of its first i_r steps leaves the int64 bound (then neither (m) nor (w)
can happen first; ``sieve_applies`` checks this for the whole range).  Proof: put D_i = 2^i - A_i,
so |D_i| >= 1 (2^i is even, A_i odd) and 2^i + A_i >= 1.
  For s > 0: (a) at step i means D_i s = C_i, impossible as |D_i s| >= s > |C_i|.  (b) at step i
  means -s < T^i(s) < s, that is D_i s > C_i and (2^i + A_i) s > -C_i.  For i < i_r, D_i < 0,
  so D_i s <= -s < -|C_i| <= C_i: no (b).  At i_r, D s >= s > |C| >= C and (2^i + A) s >= s >
  |C| >= -C: (b).
  For s < 0, "precedes" is s < v <= -s, that is D_i s < C_i and (2^i + A_i) s <= -C_i.  (a) is
  impossible as before.  For i < i_r, D_i s >= |s| > |C_i| >= C_i: no (b).  At i_r, D s <= -|s|
  < -|C| <= C and (2^i + A) s <= -|s| < -|C| <= -C: (b).
So a sieved start records nothing, and its stopping time is i_r; ``decide`` adds i_r to the
total and follows no orbit.  ``tests/search/test_kernel.py`` checks the table against brute force
and sieved against unsieved hunts.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

from builder.arith.dynamics import AffineMap
from builder.search.batch import Decided
from builder.search.jit import njit

__all__ = ["Sieve", "Tables", "decide", "sieve_applies", "sieve_depth", "sieve_of", "step_of", "tables"]

I64 = npt.NDArray[np.int64]

#: The deepest sieve: 2^16 classes, three tables of 512 KiB.
SIEVE_DEPTH = 16
HALVING, POWER_OF_TWO, GENERAL = 0, 1, 2


@dataclass(frozen=True, slots=True)
class Sieve:
    """For each residue r mod 2^depth: the step i_r at which the class falls below (0: never within depth),
    and the least magnitude from which the claim of the module docstring holds."""

    depth: int
    step: I64
    threshold: I64
    #: (G, K) with |T^i(s)| <= G |s| + K for every sieved class and i <= its step.
    growth: tuple[int, int]


def sieve_depth(high: int) -> int:
    """The sieve's depth for magnitudes up to ``high``: 2^depth classes, about high / 16 of them (4 to 16)."""
    return max(4, min(SIEVE_DEPTH, high.bit_length() - 4))


@functools.lru_cache(maxsize=64)
def sieve_of(mapping: AffineMap, depth: int = SIEVE_DEPTH) -> Sieve | None:
    """The sieve of depth at most ``depth`` of a map n/2, (q n + d)/2 with q, d odd (None for other maps, or
    constants too large)."""
    if mapping.modulus != 2 or mapping.branches[0] != (1, 0):
        return None
    q, d = mapping.branches[1]
    if q % 2 == 0 or d % 2 == 0 or q < 3:
        return None
    # |C_i| <= |d| (q^i - 2^i)/(q - 2) < |d| q^i, and |A_i r| < q^i 2^j: all below 2^62 at this depth.
    while depth >= 4 and (abs(d) + (1 << depth)) * q**depth >= 1 << 61:
        depth -= 1
    if depth < 4:
        return None
    step, threshold, ratio, offset = _sieve_tables(q, d, depth)
    sieved = step > 0
    if not sieved.any():
        return None
    growth = (int(ratio[sieved].max()), int(offset[sieved].max()))
    return Sieve(depth, step, threshold, growth)


def sieve_applies(sieve: Sieve, high: int, steps: int, limit: int) -> bool:
    """Whether the claim of the module docstring holds for every start with |s| <= high.

    Every value of a sieved class's first i_r steps has |T^i(s)| = |A_i s + C_i| / 2^i <= G |s| + K
    (``Sieve.growth``), which must stay within ``limit`` (the int64 bound, and the magnitude limit when max_bits < 62, so
    no (m) and, below 2^4096, every step costs the least work: no (w) within ``steps`` steps).
    """
    ratio, offset = sieve.growth
    return sieve.depth <= steps and ratio * high + offset <= limit


Tables = tuple[int, int, int, I64, I64, int, int]


def tables(mapping: AffineMap) -> Tables:
    """What ``step_of`` needs: the kind of map (HALVING: n/2, (a1 n + b1)/2; POWER_OF_TWO: m = 2^shift;
    GENERAL), m, shift, the multipliers and increments by residue, a1 and b1."""
    m = mapping.modulus
    a1, b1 = mapping.branches[1] if m == 2 else (0, 0)
    if m == 2 and mapping.branches[0] == (1, 0):
        kind, shift = HALVING, 1
    elif m & (m - 1) == 0:
        kind, shift = POWER_OF_TWO, m.bit_length() - 1
    else:
        kind, shift = GENERAL, 0
    mult = np.array([a for a, _ in mapping.branches], dtype=np.int64)
    incr = np.array([b for _, b in mapping.branches], dtype=np.int64)
    return kind, m, shift, mult, incr, a1, b1


def decide(
    mapping: AffineMap, low: int, high: int, steps: int, limit: int, magnitude_limit: int, use_sieve: bool
) -> Decided:
    """Decide the starts with low <= |s| <= high, 1 <= low or low = 0, as the module docstring says.

    ``limit`` bounds |values| kept in int64 (at most int64_bound and, when max_bits < 62, at most
    ``magnitude_limit`` = 2^max_bits - 1, else ``magnitude_limit`` is 0); high <= limit.
    """
    assert 0 <= low <= high <= limit < 1 << 62
    kind, m, shift, mult, incr, a1, b1 = tables(mapping)
    sieve = sieve_of(mapping, sieve_depth(high)) if use_sieve else None
    if sieve is not None and not sieve_applies(sieve, high, steps, limit):
        sieve = None
    size = 2 * (high - low + 1)
    found = np.empty(2 * min(size, 1 << 12), dtype=np.int64)
    magnitude = np.empty(size, dtype=np.int64)
    exact = np.empty(size, dtype=np.int64)
    escaped = np.empty(3 * size, dtype=np.int64)
    empty = np.zeros(1, dtype=np.int64)
    counts = _run(
        kind,
        m,
        shift,
        mult,
        incr,
        a1,
        b1,
        low,
        high,
        steps,
        limit,
        magnitude_limit,
        sieve.depth if sieve is not None else 0,
        sieve.step if sieve is not None else empty,
        sieve.threshold if sieve is not None else empty,
        found,
        magnitude,
        exact,
        escaped,
    )
    n_found, n_magnitude, n_exact, n_escaped, stopping, kernel_steps = (int(x) for x in counts)
    pairs = found[: 2 * n_found].tolist()
    return Decided(
        list(zip(pairs[0::2], pairs[1::2], strict=True)),
        magnitude[:n_magnitude].tolist(),
        exact[:n_exact].tolist(),
        escaped[: 3 * n_escaped].reshape(n_escaped, 3),
        stopping,
        kernel_steps,
    )


@njit(cache=True, nogil=True)
def _sieve_tables(q: int, d: int, depth: int) -> tuple[I64, I64, I64, I64]:
    """Per class r mod 2^depth: i_r (0 when none), 1 + M_r, and the largest ceil(A_i / 2^i), ceil(|C_i| / 2^i)
    for i <= i_r (``sieve_of`` keeps every number here below 2^62)."""
    size = 1 << depth
    step = np.zeros(size, dtype=np.int64)
    threshold = np.zeros(size, dtype=np.int64)
    ratio = np.ones(size, dtype=np.int64)
    offset = np.zeros(size, dtype=np.int64)
    for r in range(size):
        v, a, c, largest = r, 1, 0, 0
        for i in range(1, depth + 1):
            if v & 1:
                v = (q * v + d) >> 1
                c = q * c + d * (1 << (i - 1))
                a = q * a
            else:
                v >>= 1
            largest = max(largest, abs(c))
            ratio[r] = max(ratio[r], (a + (1 << i) - 1) >> i)
            offset[r] = max(offset[r], (abs(c) + (1 << i) - 1) >> i)
            if a < 1 << i:
                step[r] = i
                threshold[r] = largest + 1
                break
    return step, threshold, ratio, offset


@njit(cache=True, nogil=True, inline="always")
def step_of(kind: int, m: int, shift: int, mult: I64, incr: I64, a1: int, b1: int, n: int) -> int:
    """T(n) in int64, for |n| within the overflow bound (``kind``, ``shift``, ``a1``, ``b1``: see ``tables``)."""
    if kind == HALVING:
        if n & 1:
            return (a1 * n + b1) >> 1
        return n >> 1
    if kind == POWER_OF_TWO:
        r = n & (m - 1)
        return int((mult[r] * n + incr[r]) >> shift)
    r = n % m
    return int((mult[r] * n + incr[r]) // m)


@njit(cache=True, nogil=True)
def _run(
    kind: int,
    m: int,
    shift: int,
    mult: I64,
    incr: I64,
    a1: int,
    b1: int,
    low: int,
    high: int,
    steps: int,
    limit: int,
    magnitude_limit: int,
    depth: int,
    sieve_step: I64,
    sieve_threshold: I64,
    found: I64,
    magnitude: I64,
    exact: I64,
    escaped: I64,
) -> tuple[int, int, int, int, int, int]:
    # kept whole: one loop the compiler sees at once; the module docstring states what it decides.
    n_found = 0
    n_magnitude = 0
    n_exact = 0
    n_escaped = 0
    stopping = 0
    taken = 0
    mask = (1 << depth) - 1
    mag = low
    sign = 1
    while mag <= high:
        s = mag * sign
        # the next start: 0, 1, -1, 2, -2, ...
        if sign == 1 and mag != 0:
            sign = -1
        else:
            sign = 1
            mag += 1
        if depth > 0:
            r = s & mask
            i_r = sieve_step[r]
            if i_r > 0 and abs(s) >= sieve_threshold[r]:
                stopping += i_r
                continue
        n = s
        tortoise = s
        power = 1
        k = 0
        while True:
            n = step_of(kind, m, shift, mult, incr, a1, b1, n)
            k += 1
            if n == s:
                if 2 * n_found < found.size:
                    found[2 * n_found] = s
                    found[2 * n_found + 1] = k
                    n_found += 1
                    stopping += k
                else:  # no room: the exact path reads it (rare: a range with thousands of cycles)
                    exact[n_exact] = s
                    n_exact += 1
                break
            if (s > 0 and -s < n < s) or (s < 0 and s < n <= -s):
                stopping += k
                break
            if n > limit or n < -limit:
                if magnitude_limit > 0 and (n > magnitude_limit or n < -magnitude_limit):
                    magnitude[n_magnitude] = s
                    n_magnitude += 1
                else:  # the value at step k, for builder.search.wide to follow on
                    escaped[3 * n_escaped] = s
                    escaped[3 * n_escaped + 1] = k
                    escaped[3 * n_escaped + 2] = n
                    n_escaped += 1
                break
            if n == tortoise or k >= steps:
                exact[n_exact] = s
                n_exact += 1
                break
            if k == power:
                tortoise = n
                power <<= 1
        taken += k
    return n_found, n_magnitude, n_exact, n_escaped, stopping, taken
