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

from collections.abc import Iterable

from builder.arith.integers import to_decimal

__all__ = ["grouped", "grouped_decimals"]

# Up to this many digits, ``int`` reads the text well within Python's limit on conversions (4,300
# digits) and ``format`` groups it in C; longer numbers are grouped by slicing the text.
_BY_FORMAT = 1000
_BITS_BY_FORMAT = 3000  # an int of fewer bits has fewer than _BY_FORMAT digits


def grouped(value: int | str) -> str:
    """``value`` (an int, or decimal text: digits with an optional leading minus) with its digits
    grouped in threes by commas.  Raises ValueError for text that is not a decimal integer.

    A cycle page lists up to a thousand members, so the usual case is kept short: text of up to three
    characters is returned as it is, and other numbers are grouped by ``format`` in C."""
    kind = value.__class__  # exact types first: a cycle page asks this for every member it lists
    if kind is str:
        text: str = value  # type: ignore[assignment]
        # ASCII digits alone (str.isdigit takes other digits too), optionally after a minus, no leading zero.
        digits = text[1:] if text[:1] == "-" else text
        if not (digits.isascii() and digits.isdigit()) or (digits[0] == "0" and len(digits) > 1):
            raise ValueError(f"not a decimal integer: {text[:40]!r}")
        if len(digits) < 4:
            return text
        return format(int(text), ",") if len(text) <= _BY_FORMAT else _sliced(text)
    if kind is int:
        number: int = value  # type: ignore[assignment]
        return format(number, ",") if number.bit_length() < _BITS_BY_FORMAT else _sliced(to_decimal(number))
    if isinstance(value, str):
        return grouped(str(value))
    if isinstance(value, int) and not isinstance(value, bool):
        return grouped(int(value))
    raise TypeError(f"not an integer: {value!r}")


def grouped_decimals(texts: Iterable[str]) -> list[str]:
    """``grouped`` of each of ``texts``, decimal text that builder.arith.integers wrote (checked by the caller:
    a cycle page lists up to a thousand members, and this skips the check of each)."""
    return [t if len(t) < 4 else format(int(t), ",") if len(t) <= _BY_FORMAT else _sliced(t) for t in texts]


def _sliced(text: str) -> str:
    """Decimal text of any length grouped by slicing (``int`` refuses text beyond 4,300 digits)."""
    negative = text[:1] == "-"
    digits = text[1:] if negative else text
    head = len(digits) % 3 or 3
    groups = [digits[:head], *(digits[i : i + 3] for i in range(head, len(digits), 3))]
    return ("-" if negative else "") + ",".join(groups)
