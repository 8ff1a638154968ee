"""Orbits past 64 bits, followed in compiled multi-word arithmetic until event (m) decides them.

When the kernel (builder.search.kernel) sees an orbit pass the int64 bound at step k0, the start
has met no event up to k0 ((a) and (b) need |v| <= |s|, which is within the bound).  Past it,
while v has more bits than |s| (so |v| > |s|), neither (a) nor (b) can happen, so the next event
of the definition (builder.search.definition) is one of:

* (m), a value of more than max_bits bits: decided here, at its step;
* (w), the work passing max_work; "steps", max_steps passing; or (c), a repeated value.

``follow`` takes only (m).  It runs when max_bits <= STEP_FLOOR_BITS, so that every step before
(m) costs mapping.cost.least and the work of steps 1..k is k * least: (w) cannot happen before
step max_work // least, and ``follow`` stops there and at max_steps.  (c) cannot come before (m):
after a first repeat every value repeats one seen before, and none of those had more than
max_bits bits, or (m) would have happened then.  Every other outcome (the orbit coming back to
as few bits as |s| has, or reaching the step cap) hands the start to the exact path, which starts again
from the start.  So a start decided here has the fate the definition gives it.

The numbers are sign and magnitude, the magnitude in 32-bit limbs held in int64 (a product of a
limb and a multiplier below 2^31, plus a carry, stays below 2^63).  A step computes a_r v + b_r
and divides it exactly by m (the map is well defined, so m divides it): a shift by the power of
two in m, then exact division by its odd part, multiplying by that part's inverse mod 2^32.
"""

from __future__ import annotations

import numpy as np
import numpy.typing as npt

from builder.arith.dynamics import STEP_FLOOR_BITS, AffineMap
from builder.search.jit import njit

__all__ = ["follow", "follows"]

I64 = npt.NDArray[np.int64]

_LIMB = 32
_MASK = (1 << _LIMB) - 1
#: Multipliers, increments and the modulus must be below this (a limb times one fits int64).
_CONSTANT_LIMIT = 1 << 31


def follows(mapping: AffineMap, max_bits: int) -> bool:
    """Whether ``follow`` applies to this map and limit (see the module docstring)."""
    m = mapping.modulus
    small = all(abs(a) < _CONSTANT_LIMIT and abs(b) < _CONSTANT_LIMIT for a, b in mapping.branches)
    return small and m < _CONSTANT_LIMIT and 62 <= max_bits <= STEP_FLOOR_BITS


def follow(mapping: AffineMap, escaped: I64, max_steps: int, max_work: int, max_bits: int) -> npt.NDArray[np.bool_]:
    """For each row (start, step k0, value at k0) of ``escaped``: True when event (m) decides the start.

    The caller has checked ``follows(mapping, max_bits)``.
    """
    assert follows(mapping, max_bits)
    m = mapping.modulus
    shift = (m & -m).bit_length() - 1  # m = 2^shift * odd
    odd = m >> shift
    inverse = pow(odd, -1, 1 << _LIMB)
    powers = np.array([pow(2, 16 * j, m) for j in range(2 * (max_bits // _LIMB + 3))], dtype=np.int64)
    mult = np.array([a for a, _ in mapping.branches], dtype=np.int64)
    incr = np.array([b for _, b in mapping.branches], dtype=np.int64)
    cap = min(max_steps, max_work // mapping.cost.least)
    decided = np.zeros(len(escaped), dtype=np.bool_)
    if len(escaped):
        _follow(m, shift, odd, inverse, powers, mult, incr, escaped, cap, max_bits, decided)
    return decided


@njit(cache=True, nogil=True)
def _follow(
    m: int,
    shift: int,
    odd: int,
    inverse: int,
    powers: I64,
    mult: I64,
    incr: I64,
    escaped: I64,
    cap: int,
    max_bits: int,
    decided: npt.NDArray[np.bool_],
) -> None:
    # kept whole: the compiler sees the limb loops at once; the module docstring states what is decided.
    size = max_bits // _LIMB + 3
    inverse_low = inverse & 0xFFFF  # products of a limb and 16 bits stay below 2^48
    inverse_high = inverse >> 16
    limbs = np.zeros(size, dtype=np.int64)
    for row in range(escaped.shape[0]):
        k = escaped[row, 1]
        value = escaped[row, 2]
        sign = 1 if value > 0 else -1
        magnitude = abs(value)
        start = abs(escaped[row, 0])
        floor = 0
        while start:
            floor += 1
            start >>= 1
        limbs[0] = magnitude & _MASK
        limbs[1] = magnitude >> _LIMB
        used = 2 if limbs[1] else 1
        while k < cap:
            # the residue of the value mod m
            if odd == 1:
                low = limbs[0] & (m - 1)
            else:
                # sum of 16-bit halves times 2^(16 j) mod m: each term below 2^47, the sum below 2^56
                low = 0
                for i in range(used):
                    low += (limbs[i] & 0xFFFF) * powers[2 * i] + (limbs[i] >> 16) * powers[2 * i + 1]
                low %= m
            r = low if sign > 0 or low == 0 else m - low
            a = mult[r]
            b = incr[r]
            # |a| * magnitude
            factor = abs(a)
            carry = 0
            for i in range(used):
                t = limbs[i] * factor + carry
                limbs[i] = t & _MASK
                carry = t >> _LIMB
            if carry:
                limbs[used] = carry
                used += 1
            sign = sign if a > 0 else -sign
            # + b: the magnitude is far above |b|, so the sign stays
            if b != 0:
                if (b > 0) == (sign > 0):
                    carry = abs(b)
                    i = 0
                    while carry:
                        t = limbs[i] + carry
                        limbs[i] = t & _MASK
                        carry = t >> _LIMB
                        i += 1
                    used = max(used, i)
                else:
                    borrow = abs(b)
                    i = 0
                    while borrow:
                        t = limbs[i] - borrow
                        if t < 0:  # -2^31 <= t: one borrow from the next limb
                            limbs[i] = t + (1 << _LIMB)
                            borrow = 1
                        else:
                            limbs[i] = t
                            borrow = 0
                        i += 1
            # / m, exactly: a shift by the power of two in m, then the odd part by its inverse mod 2^32
            # (exact division from the low limb up, T. Jebelean, Inform. Process. Lett. 46 (1993) 49-52;
            # from memory): each quotient limb is (limb - borrow) * odd^-1 mod 2^32.
            if shift:
                for i in range(used):
                    upper = limbs[i + 1] if i + 1 < used else 0
                    limbs[i] = (limbs[i] >> shift) | ((upper << (_LIMB - shift)) & _MASK)
            if odd > 1:
                borrow = 0
                for i in range(used):
                    t = limbs[i] - borrow
                    borrow = 0
                    if t < 0:
                        t += 1 << _LIMB
                        borrow = 1
                    digit = (t * inverse_low + (((t * inverse_high) & 0xFFFF) << 16)) & _MASK
                    limbs[i] = digit
                    borrow += (digit * odd) >> _LIMB
            while used > 1 and limbs[used - 1] == 0:
                used -= 1
            k += 1
            top = limbs[used - 1]
            bits = (used - 1) * _LIMB
            for width in (16, 8, 4, 2, 1):  # the bit length of the top limb, by halves
                if top >> width:
                    top >>= width
                    bits += width
            bits += top  # top is now 0 or 1
            if bits > max_bits:
                decided[row] = True
                break
            if bits <= floor:  # |v| may be |s| or less again: (a) or (b) may come
                break
        limbs[:] = 0
