"""MathML Core markup for map definitions and cycle equations.

Numbers are grouped in threes by commas, as everywhere on the pages (builder.site.numbers).  Only numbers and fixed symbols go into the markup; numbers are written by
``builder.arith.integers`` (any size) and every text node is escaped, so nothing
from an entry's free text can reach it.  The functions that make a whole
formula return it as ``markupsafe.Markup``, safe to place in a page as it is.
"""

from __future__ import annotations

from collections.abc import Sequence
from html import escape

from markupsafe import Markup

from builder.arith.integers import to_decimal
from builder.site.numbers import grouped

__all__ = ["cycle_equation_mathml", "map_definition_mathml", "number"]

#: Longest number written out in full in an equation; longer ones are abbreviated
#: (the exports hold every digit).
FULL_DIGITS = 2000
_SHORT_BITS = 6000  # a number of fewer bits has fewer than FULL_DIGITS digits (2^6000 < 10^1807)


def number(n: int) -> Markup:
    """A signed integer as MathML (a minus sign operator before the digits)."""
    return Markup(_number(n))


def _number(n: int) -> str:
    # The text of number(n), for the formulas made here (a Markup for each number would cost more than it).
    size = -n if n < 0 else n
    if size.bit_length() < _SHORT_BITS:  # fewer than FULL_DIGITS digits: the usual case, written at once
        body = f"<mn>{grouped(size)}</mn>"  # as the page writes every number for readers
    else:
        text = to_decimal(size)
        if len(text) > FULL_DIGITS:
            body = f"<mtext>{text[:24]}…{text[-12:]} ({len(text):,} digits)</mtext>"
        else:
            body = f"<mn>{grouped(text)}</mn>"
    return f"<mrow><mo>−</mo>{body}</mrow>" if n < 0 else body


def _affine(a: int, b: int) -> str:
    """a n + b with the usual simplifications (1 n is n, + 0 is dropped, + -5 is - 5)."""
    if a == 1:
        head = "<mi>n</mi>"
    elif a == -1:
        head = "<mo>−</mo><mi>n</mi>"
    else:
        head = f"{_number(a)}<mo>&#x2062;</mo><mi>n</mi>"  # invisible times
    if b == 0:
        return f"<mrow>{head}</mrow>"
    sign = "+" if b > 0 else "−"
    return f"<mrow>{head}<mo>{sign}</mo>{_number(abs(b))}</mrow>"


def map_definition_mathml(modulus: int, branches: Sequence[tuple[int, int]], name: str) -> Markup:
    """T(n) as cases, one per residue class: (a_i n + b_i)/m if n = i (mod m)."""
    rows = []
    for i, (a, b) in enumerate(branches):
        rows.append(
            "<mtr>"
            f"<mtd><mfrac>{_affine(a, b)}{_number(modulus)}</mfrac></mtd>"
            "<mtd><mtext>if&#xa0;</mtext><mi>n</mi><mo>≡</mo>"
            f'{_number(i)}<mspace width="0.4em"/><mo>(</mo><mi>mod</mi><mspace width="0.2em"/>{_number(modulus)}<mo>)</mo>'
            "</mtd></mtr>"
        )
    label = escape(f"Definition of {name}", quote=True)
    # T(n) in a row of its own, so that its parentheses fit n and not the cases; the brace stretches over
    # the cases (an operator that is a fence stretches to its row, MathML Core 3.2.4), whose fractions are
    # drawn at the size of the text (displaystyle, MathML Core 2.1.3) instead of the smaller size of a table.
    return Markup(
        f'<math display="block" aria-label="{label}"><mrow><mrow><mi>T</mi><mo>(</mo><mi>n</mi><mo>)</mo></mrow>'
        f'<mo>=</mo><mrow><mo stretchy="true">{{</mo><mtable class="cases" displaystyle="true">{"".join(rows)}'
        "</mtable></mrow></mrow></math>"
    )


def _power(base: int, exponent: int) -> str:
    body = _number(base)
    if base < 0:
        body = f"<mrow><mo>(</mo>{body}<mo>)</mo></mrow>"
    return body if exponent == 1 else f"<msup>{body}<mn>{exponent}</mn></msup>"


def cycle_equation_mathml(
    modulus: int,
    length: int,
    factors: Sequence[tuple[int, int]],
    offset: int,
    target: int,
    start: int,
) -> Markup:
    """n = B / (m^k - A) = B / (m^k - a^c ...) = B / target = n, with this cycle's numbers.

    ``factors`` are (multiplier, count) pairs whose product of powers is A.
    """
    product = "<mo>&#x2062;</mo>".join(_power(a, c) for a, c in factors if a != 1 and c) or "<mn>1</mn>"
    general = "<mfrac><mi>B</mi><mrow><msup><mi>m</mi><mi>k</mi></msup><mo>−</mo><mi>A</mi></mrow></mfrac>"
    specific = f"<mfrac>{_number(offset)}<mrow>{_power(modulus, length)}<mo>−</mo>{product}</mrow></mfrac>"
    if target == 0:
        tail = "<mtext>&#xa0;(m^k = A: the equation is satisfied by every start following the word, as B = 0)</mtext>"
        return Markup(
            f'<math display="block"><mrow><mi>n</mi><mo>=</mo>{general}<mo>=</mo>{specific}{tail}</mrow></math>'
        )
    return Markup(
        '<math display="block"><mrow><mi>n</mi><mo>=</mo>'
        f"{general}<mo>=</mo>{specific}<mo>=</mo><mfrac>{_number(offset)}{_number(target)}</mfrac>"
        f"<mo>=</mo>{_number(start)}</mrow></math>"
    )
