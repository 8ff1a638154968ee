"""Content fingerprints: a short identifier for a cycle that every copy of the record agrees on.

A fingerprint depends only on the mathematics, never on file names or on the member an entry
starts from, so two copies of the record (or two pull requests) can tell at once whether they
hold the same cycle.  The recipe, which catalogue/README.md also states for anyone who wants to
recompute it:

1. Write these lines, each ended by a line feed (U+000A), integers in plain decimal with a
   leading ``-`` for negatives and no ``+``, no leading zeros, no spaces other than those shown:

   - ``collatz-type-cycle/1``
   - the map's modulus ``m``;
   - for each residue ``i = 0 .. m-1`` in order, ``a_i b_i`` (multiplier, one space, offset) of
     the branch ``T(n) = (a_i n + b_i) / m`` for ``n = i (mod m)``, exactly as the map gives it;
   - the cycle's canonical member: the member of least absolute value, the positive one on a tie.

2. Hash the text, encoded as ASCII, with SHA-256 (FIPS 180-4) and keep the first 16 hexadecimal
   digits, in lowercase.

The map is taken as written: the same function written with a larger modulus (splitting each
residue class) is a different definition and gives different fingerprints.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence
from functools import lru_cache

from builder.arith.integers import to_decimal

__all__ = ["FINGERPRINT_DIGITS", "FINGERPRINT_HEADER", "cycle_fingerprint", "fingerprint_text"]

#: The first line of the hashed text; a new recipe would change it.
FINGERPRINT_HEADER = "collatz-type-cycle/1"
#: Hexadecimal digits kept (64 bits: a collision among a million cycles has odds near 3e-8).
FINGERPRINT_DIGITS = 16


def fingerprint_text(modulus: int, branches: Sequence[tuple[int, int]], canonical: int) -> str:
    """The text that is hashed (step 1 of the recipe)."""
    assert modulus >= 2 and len(branches) == modulus, "a map has one branch per residue"
    return _map_lines(modulus, tuple(branches)) + to_decimal(canonical) + "\n"


@lru_cache(maxsize=64)
def _map_lines(modulus: int, branches: tuple[tuple[int, int], ...]) -> str:
    """The lines of the text that name the map (the same for each of its cycles)."""
    lines = [FINGERPRINT_HEADER, to_decimal(modulus)]
    lines += [f"{to_decimal(a)} {to_decimal(b)}" for a, b in branches]
    return "".join(line + "\n" for line in lines)


def cycle_fingerprint(modulus: int, branches: Sequence[tuple[int, int]], canonical: int) -> str:
    """The fingerprint of the cycle through ``canonical`` (its canonical member) under the map."""
    text = fingerprint_text(modulus, branches, canonical)
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:FINGERPRINT_DIGITS]
