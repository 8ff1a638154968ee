"""The heuristic chance of an integer cycle at each length (a model, not a theorem).

For a 2-branch map T(n) = (a_0 n + b_0)/m or (a_1 n + b_1)/m, a word of length
k with x letters 1 gives T^k(n) = (A n + B)/m^k with A = a_0^(k-x) a_1^x, so a
cycle with that word starts at B / (m^k - A).  Distinct cycles correspond to
aperiodic necklaces, L(k, x) of them (Moreau's formula, builder.arith.words).  The
heuristic treats each of the L offsets B as a random residue modulo the
target |m^k - A|: a word gives an integer cycle with probability g/|target|,
where g = gcd(target, d) for qx+d maps (B is always a multiple of d there,
so only divisibility by target/g is left to chance), and 1 otherwise.  The
chance that at least one of the L words does is 1 - (1 - g/|target|)^L.
It is a way to see where cycles could hide, not a probability theorem:
the offsets are not independent and not uniform.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from math import gcd

from builder.arith.dynamics import AffineMap, shortcut_form
from builder.arith.words import necklace_row

__all__ = ["MODEL_MULTIPLIER_BITS", "Odds", "length_odds", "modelled", "odds_table"]

#: The model is computed for maps whose multipliers fit in a machine word: with a multiplier of
#: thousands of digits every target has millions of bits and the chance is zero to any precision
#: a float holds, while computing it would take minutes.
MODEL_MULTIPLIER_BITS = 64


def modelled(mapping: AffineMap) -> bool:
    """Whether the model is computed for ``mapping``: two branches, multipliers of at most 64 bits."""
    return mapping.modulus == 2 and all(abs(a).bit_length() <= MODEL_MULTIPLIER_BITS for a, _ in mapping.branches)


@dataclass(frozen=True, slots=True)
class Odds:
    """The model's numbers for words of length k with x letters 1."""

    k: int
    x: int
    necklaces: int  # L(k, x)
    target: int  # m^k - a_0^(k-x) a_1^x
    share: Fraction  # g / |target|, the chance one word gives an integer cycle (1 when target is 0)
    chance: float  # 1 - (1 - share)^L


def _chance(share: Fraction, count: int) -> float:
    if count == 0:
        return 0.0
    if share >= 1:
        return 1.0
    p = float(share)
    if p == 0.0:
        return 0.0
    return -math.expm1(count * math.log1p(-p))


def odds_table(mapping: AffineMap, k: int) -> list[Odds]:
    """The model for every x = 0..k at length k (2-branch maps only)."""
    if not modelled(mapping):
        raise ValueError(f"expected a map with 2 branches and multipliers of at most {MODEL_MULTIPLIER_BITS} bits")
    (a0, _), (a1, _) = mapping.branches
    # For n/2, (qn + d)/2 maps every offset B is a multiple of d.
    form = shortcut_form(mapping)
    d = abs(form[1]) if form is not None else 1
    rows = []
    necklace_counts = necklace_row(k)
    for x in range(k + 1):
        target = 2**k - a0 ** (k - x) * a1**x
        necklaces = necklace_counts[x]
        # gcd(target, d) = gcd(target, d mod target): one division by the small target first, since
        # d may have thousands of digits (common practice, no source: Euclid's algorithm).
        share = Fraction(1) if target == 0 else Fraction(gcd(target, d % abs(target)), abs(target))
        rows.append(Odds(k, x, necklaces, target, share, _chance(share, necklaces)))
    return rows


def length_odds(mapping: AffineMap, k: int) -> float:
    """The model's chance of at least one integer cycle of length k, over every x."""
    miss = 1.0
    for row in odds_table(mapping, k):
        miss *= 1.0 - row.chance
    return 1.0 - miss
