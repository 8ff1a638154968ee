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

__all__ = ["Odds", "length_odds", "odds_table"]


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
    if mapping.modulus != 2:
        raise ValueError(f"expected a map with 2 branches, got modulus {mapping.modulus}")
    (a0, _), (a1, _) = mapping.branches
    # For n/2, (qn + d)/2 maps every offset B is a multiple of d.
    form = shortcut_form(mapping)
    d = abs(form[1]) if form is not None else 1
    rows = []
    necklace_counts = necklace_row(k)
    for x in range(k + 1):
        target = 2**k - a0 ** (k - x) * a1**x
        necklaces = necklace_counts[x]
        share = Fraction(1) if target == 0 else Fraction(gcd(target, d), abs(target))
        rows.append(Odds(k, x, necklaces, target, share, _chance(share, necklaces)))
    return rows


def length_odds(mapping: AffineMap, k: int) -> float:
    """The model's chance of at least one integer cycle of length k, over every x."""
    miss = 1.0
    for row in odds_table(mapping, k):
        miss *= 1.0 - row.chance
    return 1.0 - miss
