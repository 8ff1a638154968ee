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
from functools import lru_cache
from math import gcd
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import numpy as np

from builder.arith.dynamics import AffineMap, shortcut_form
from builder.arith.words import necklace_row

__all__ = ["MODEL_MULTIPLIER_BITS", "Odds", "length_chances", "length_odds", "modelled", "odds_table"]

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


#: ``length_chances`` finds gcd(target, d) with machine words when |d| is below this (products of two
#: residues mod d then stay below 2^62); larger d take the exact path, one gcd per word class.
_WORD_D = 2**31


@lru_cache(maxsize=64)
def _triangle(a0: int, a1: int, top: int) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, tuple[int, ...]]:
    """Every (k, x) with 1 <= k <= top and 0 <= x <= k, shared by the maps with multipliers a0, a1:
    k, x, L(k, x) and |target| as floats, and the targets exactly (maps of one family share them)."""
    import numpy as np  # when first needed: a build that draws no chart does without it

    ks, xs, counts, targets = [], [], [], []
    for k in range(1, top + 1):
        row = necklace_row(k)
        for x in range(k + 1):
            ks.append(k)
            xs.append(x)
            counts.append(float(row[x]))
            targets.append(2**k - a0 ** (k - x) * a1**x)
    size = np.array([_magnitude(t) for t in targets])
    return np.array(ks), np.array(xs), np.array(counts), size, tuple(targets)


def _magnitude(target: int) -> float:
    """|target| as a float, infinity past the float range (the share is then 0 to any precision)."""
    try:
        return float(abs(target))
    except OverflowError:
        return math.inf


def _common_factors(a0: int, a1: int, top: int, d: int, targets: tuple[int, ...]) -> np.ndarray:
    """gcd(target, d) for every (k, x) of the triangle, d > 0."""
    import numpy as np  # when first needed: a build that draws no chart does without it

    if d == 1:
        return np.ones(len(targets))
    if d >= _WORD_D:
        return np.array([float(gcd(t, d % abs(t))) if t else float(d) for t in targets])
    # target mod d = 2^k - a0^(k-x) a1^x mod d, from powers reduced mod d (each below 2^31).
    powers = np.empty((3, top + 1), dtype=np.int64)
    for row, base in enumerate((2, a0, a1)):
        value, b = 1 % d, base % d
        for j in range(top + 1):
            powers[row, j] = value
            value = value * b % d
    ks, xs = _triangle(a0, a1, top)[:2]
    residues = (powers[0, ks] - powers[1, ks - xs] * powers[2, xs] % d) % d
    common: np.ndarray = np.gcd(residues, d).astype(np.float64)
    return common


def length_chances(mapping: AffineMap, top: int) -> list[float]:
    """``length_odds(mapping, k)`` for k = 1..top at once, for charts: the same model, computed with
    whole arrays and gcds in machine words (the words of one family share their targets and counts).

    The chance at length k is 1 - prod_x (1 - share)^L = -expm1(sum_x L log1p(-share)), a sum of
    logarithms instead of a product, so it agrees with ``length_odds`` to rounding (the tests check
    1e-9), which is far below what a chart draws.
    """
    import numpy as np  # when first needed: a build that draws no chart does without it

    if not modelled(mapping):
        raise ValueError(f"expected a map with 2 branches and multipliers of at most {MODEL_MULTIPLIER_BITS} bits")
    if top < 1:
        return []
    (a0, _), (a1, _) = mapping.branches
    form = shortcut_form(mapping)
    d = abs(form[1]) if form is not None else 1
    ks, _, counts, size, targets = _triangle(a0, a1, top)
    common = _common_factors(a0, a1, top, d, targets)
    with np.errstate(divide="ignore", invalid="ignore"):
        share = np.where(size == 0, 1.0, common / np.where(size == 0, 1.0, size))
        # A share of 1 (target 0, or target dividing d) makes the miss chance 0: log of 0 is -inf.
        logs = np.where(counts == 0, 0.0, np.where(share >= 1.0, -np.inf, counts * np.log1p(-np.minimum(share, 1.0))))
    sums = np.zeros(top + 1)
    np.add.at(sums, ks, logs)
    return [float(c) for c in (-np.expm1(sums[1:])).tolist()]
