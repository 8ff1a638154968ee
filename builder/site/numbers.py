"""How the site writes an integer for readers: one format, in one place.

Every integer a reader reads on a page (counts, bounds, lengths, members, in prose, lists,
headings and tables) is written in decimal with a comma between groups of three digits,
counted from the units: 1,000,000 and -6,593, while 999 and -17 need none.  The comma is
what readers of English expect (common practice, no source) and what Python's own ``format(n, ",")``
writes.  A comma between digits is no line-break opportunity (Unicode Standard Annex #14,
rule LB25, from memory), and the stylesheet keeps numbers whole besides.

Texts meant to be copied into a program keep plain digits: the data files, ``data-value``
attributes that tables sort by, code, the plain-text cycle equation, and addresses.

Templates use it as the filter ``grouped`` (builder.site.templating); page code calls it directly.
"""

from __future__ import annotations

from collections.abc import Sequence
from itertools import repeat

from builder.arith.integers import to_decimal

__all__ = ["grouped", "grouped_ints", "percent"]

# Up to this many digits, ``int`` reads the text well within Python's limit on conversions (4,300
# digits) and ``format`` groups it in C; longer numbers are grouped by slicing the text.
_BY_FORMAT = 1000
_BITS_BY_FORMAT = 3000  # an int of fewer bits has fewer than _BY_FORMAT digits


def grouped(value: int | str) -> str:
    """``value`` (an int, or decimal text: digits with an optional leading minus) with its digits
    grouped in threes by commas.  Raises ValueError for text that is not a decimal integer.

    A cycle page lists up to a thousand members, so the usual case is kept short: exact types are tested
    first, text of up to three digits is returned as it is, and other numbers are grouped by ``format`` in C."""
    if type(value) is str:
        # ASCII digits alone (str.isdigit takes other digits too), optionally after a minus, no leading zero.
        digits = value[1:] if value[:1] == "-" else value
        if not (digits.isascii() and digits.isdigit()) or (digits[0] == "0" and len(digits) > 1):
            raise ValueError(f"not a decimal integer: {value[:40]!r}")
        return _grouped_text(value)
    if type(value) is int:
        return format(value, ",") if value.bit_length() < _BITS_BY_FORMAT else _sliced(to_decimal(value))
    if isinstance(value, str):  # a subclass of str or int: as its plain value
        return grouped(str(value))
    if isinstance(value, int) and not isinstance(value, bool):
        return grouped(int(value))
    raise TypeError(f"not an integer: {value!r}")


def grouped_ints(values: Sequence[int]) -> list[str]:
    """``grouped`` of each of ``values``, ints (a cycle's members, which a page lists up to a thousand of:
    grouped by ``format`` in one pass in C when none is too long for it)."""
    if values and max(values).bit_length() < _BITS_BY_FORMAT and min(values).bit_length() < _BITS_BY_FORMAT:
        return list(map(format, values, repeat(",", len(values))))
    return [grouped(n) for n in values]


def _grouped_text(text: str) -> str:
    """Decimal text, grouped: as it is up to three digits, by ``format`` up to _BY_FORMAT characters, else sliced."""
    if len(text) < 4 or len(text) == 4 and text[0] == "-":
        return text
    return format(int(text), ",") if len(text) <= _BY_FORMAT else _sliced(text)


def _sliced(text: str) -> str:
    """Decimal text of any length grouped by slicing (``int`` refuses text beyond 4,300 digits)."""
    negative = text[:1] == "-"
    digits = text[1:] if negative else text
    head = len(digits) % 3 or 3
    groups = [digits[:head], *(digits[i : i + 3] for i in range(head, len(digits), 3))]
    return ("-" if negative else "") + ",".join(groups)


def percent(part: int, whole: int) -> str:
    """``part`` of ``whole`` (0 <= part <= whole, whole > 0) as a percentage with two decimals, rounded half up
    with integers: "49.82%".  A share that is neither none nor all is never written as 0.00% or 100.00%, but
    as "< 0.01%" or "> 99.99%", so that a reader never takes one start for none or most for all."""
    if not 0 <= part <= whole or whole <= 0:
        raise ValueError(f"expected 0 <= part <= whole and whole > 0, got {part} of {whole}")
    hundredths = (part * 20_000 + whole) // (2 * whole)  # round(part / whole * 10,000), half up
    if part and not hundredths:
        return "< 0.01%"
    if part < whole and hundredths == 10_000:
        return "> 99.99%"
    return f"{hundredths // 100}.{hundredths % 100:02d}%"
