"""Exact conversion between integers and decimal text, of any size.

Python refuses ``int(text)`` and ``str(n)`` beyond 4,300 digits by default
(CVE-2020-10735 mitigation, ``sys.int_info.str_digits_check_threshold``).
Catalogue members may be far longer, so every conversion in Periplus goes
through these two functions, which hand large values to GMP (via gmpy2),
whose conversions are sub-quadratic and unlimited.  The process-wide limit
is left untouched.
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import gmpy2

__all__ = ["DECIMAL_INTEGER", "MPZ_BITS", "decimals", "parse_decimal", "show", "to_decimal"]

#: A decimal integer as the catalogue accepts it: optional sign, no leading
#: zeros (YAML 1.1 reads ``017`` as octal), no underscores.
DECIMAL_INTEGER = re.compile(r"[-+]?(?:0|[1-9][0-9]*)")

#: Past this many bits gmpy2's arithmetic beats Python's: iteration switches to mpz there.
MPZ_BITS = 4096

# Safely below CPython's default limit of 4,300 digits (about 14,284 bits).
_SMALL_DIGITS = 4000
_SMALL_BITS = 13000


def parse_decimal(text: str) -> int:
    """Return the integer written in ``text`` (which must match DECIMAL_INTEGER).

    Raises ValueError for anything else.
    """
    if DECIMAL_INTEGER.fullmatch(text) is None:
        raise ValueError(f"not a decimal integer: {text[:40]!r}")
    if len(text) < _SMALL_DIGITS:
        return int(text)
    # int(mpz) converts in binary, so it is not subject to the str limit.
    return int(gmpy2.mpz(text))


_SHARED_COUNT = 1024
_SHARED = tuple(str(i) for i in range(_SHARED_COUNT))


def to_decimal(n: int) -> str:
    """Return the decimal text of ``n``, however many digits it has."""
    if 0 <= n < _SHARED_COUNT:
        return _SHARED[n]  # one string for each small number, not one each time it is written
    if n.bit_length() < _SMALL_BITS:
        return str(int(n))
    return str(gmpy2.mpz(n))


def decimals(ns: Sequence[int]) -> tuple[str, ...]:
    """The decimal text of each of ``ns``, in order, as :func:`to_decimal` gives it.  When every number has
    fewer than _SMALL_BITS bits (as a cycle's members do), ``str`` writes them all in one pass in C: a
    cycle's members are written for its page and the exports, a million numbers at 50,000 cycles."""
    if ns and max(ns).bit_length() < _SMALL_BITS and min(ns).bit_length() < _SMALL_BITS:
        return tuple(map(str, ns))
    return tuple(map(to_decimal, ns))


def show(n: int) -> str:
    """A number for a message: in full when short, else its ends and its digit count."""
    text = to_decimal(n)
    digits = len(text.lstrip("-"))
    if digits <= 60:
        return text
    return f"{text[:20]}...{text[-10:]} ({digits} digits)"
