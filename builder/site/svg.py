"""Inline SVG pictures: the orbit of a cycle on a log scale, its word as a strip, and a map's odds per length.

Coordinates are plotting only (floats never decide anything about a cycle); every number is formatted
with a fixed precision so the output is byte-identical from build to build.  Every text is escaped here,
and each picture is returned as ``markupsafe.Markup``, safe to place in a page as it is.

Text size.  An inline SVG with a viewBox is scaled to the width it is given, its text with it.  The
charts are drawn WIDTH units wide with FONT-unit text, which is FONT pixels on a desk; the stylesheet
(``/* charts */`` in style.css) sets PHONE_FONT units on narrow screens, so that the text still reads
at least 12 pixels when the chart is shrunk to a phone's width.  Every margin here leaves room for
PHONE_FONT-unit text, and text is placed below a line with ``dy`` in em, so it follows the size.

Values.  The orbit's marked points are keyboard stops: each shows its step and member on hover, tap and
focus (style.css), and names them to assistive technology, so that svg is a named group (an img's
children are presentational).  The odds chart's columns show their numbers on hover and tap (no
keyboard stops: a map has up to 120 lengths) and its description lists every length that has cycles;
the word strip gives each cell's step and residue on hover and spells the word in its description.

Colour is never the only cue: the odds chart's series differ in shape (bars, diamonds) and each has an
axis and a key; a strip cell's residue is also its height and, when there is room, its digit.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from html import escape

from markupsafe import Markup

from builder.arith.integers import to_decimal
from builder.site.numbers import grouped

__all__ = ["odds_chart", "orbit_plot", "word_strip"]

WIDTH = 560  # viewBox width of the orbit plot and the odds chart
FONT, PHONE_FONT = 14, 22  # text size in viewBox units: on a desk, and on a phone (set by style.css)
SUP = "0.9em"  # an exponent's size: over 12 px wherever the text is 14 px
HEIGHT = 300
TOP, BOTTOM = 54, 64  # room for an axis title above the plot, and tick labels and a title below it
MAX_POINTS = 1500  # longer orbits are drawn as the range of each run of steps
MARKED = 40  # an orbit with more members marks this many of them (and its largest and smallest)
STRIP_CELLS = 256
STRIP_HEIGHT = 36  # the tallest cell; a cell of residue r is (r + 1) / m of it
LETTER_ROW = 20  # the row of residue digits above the cells, when the cells are wide enough
LETTERS_AT_MOST = 350  # a strip with digits is at most this wide, so a phone never shrinks them
INK, BG = "#1c1d1f", "#fbfaf6"  # the charts' ink and paper (style.css: figure.plot svg)
LINE, ACCENT, GRID = "#4a5d7e", "#c0692b", "#8c8c8c"  # on BG: 6.4:1, 3.8:1, 3.2:1
PROVED = "#2e7d5b"  # a band under proved lengths, at 16% opacity: the bars and text on it keep their contrast
# Residue colours: distinct in hue and lightness, each at least 3:1 against BG.
PALETTE = ("#4a5d7e", "#c0692b", "#2e7d5b", "#8e3b72", "#7a6a1f", "#356f8a", "#a23b3b", "#5b5196", "#60753a", "#8a5a2e")


def _fmt(v: float) -> str:
    return f"{v:.1f}"


def _sup(base: str, exponent: int) -> str:
    """``base`` to the power ``exponent``, the exponent a raised, smaller tspan (the last thing in its text)."""
    return f'{base}<tspan dy="-0.45em" font-size="{SUP}">{exponent}</tspan>'


def _open(svg_id: str, title: str, desc: str, height: int, role: str = "img", extra: str = "") -> str:
    """The start of a chart's svg element: its size, role, name and description."""
    names = f'aria-labelledby="{svg_id}-t {svg_id}-d"' if role == "img" else f'aria-labelledby="{svg_id}-t"'
    if role != "img":
        names += f' aria-describedby="{svg_id}-d"'
    return (
        f'<svg xmlns="http://www.w3.org/2000/svg" class="chart{extra}" viewBox="0 0 {WIDTH} {height}" '
        f'width="{WIDTH}" height="{height}" font-size="{FONT}" role="{role}" {names}>'
        f'<title id="{svg_id}-t">{escape(title)}</title><desc id="{svg_id}-d">{escape(desc)}</desc>'
    )


def _count(n: int, noun: str) -> str:
    """``n`` of ``noun``: 1 step, 2 steps, 1,000 steps."""
    return f"1 {noun}" if n == 1 else f"{n:,} {noun}s"


def _nice_step(span: float, most: int) -> int:
    """The least of 1, 2, 5, 10, 20, 50, ... that cuts ``span`` into at most ``most`` intervals."""
    step = 1
    while span / step > most:
        step = step * 5 // 2 if str(step)[0] == "2" else step * 2
    return step


# --- the orbit -----------------------------------------------------------------------------------

LEFT, RIGHT = 80, 34
_PLOT_W = WIDTH - LEFT - RIGHT
_PLOT_H = HEIGHT - TOP - BOTTOM
_BASE = HEIGHT - BOTTOM


def _x(step: int, steps: int) -> str:
    """The x coordinate of a step of an orbit of ``steps`` steps (a fixed point's one step in the middle)."""
    return f"{LEFT + _PLOT_W * (step / steps if steps else 0.5):.1f}"


@functools.lru_cache(maxsize=64)
def _x_commas(steps: int) -> tuple[str, ...]:
    """The x coordinate of each step 0..steps of an orbit drawn point by point, each followed by the comma
    before its y (many cycles share a length)."""
    return tuple(_x(i, steps) + "," for i in range(steps + 1))


_PER_TEN = math.log2(10)


def _log_axis(top: float) -> tuple[bool, int, int]:
    """The log2 axis for members up to 2^top: (in powers of ten?, exponent step, number of steps).

    Up to 2^12 the ticks are powers of two, written out (1, 4, 16, ..., 4,096); above, powers of ten,
    written out below 10^4 and with an exponent from 10^4 on.  At most six ticks."""
    if top <= 12:
        step = max(1, math.ceil(top / 4))
        return False, step, max(1, math.ceil(top / step))
    tens = top / _PER_TEN - 1e-6  # 10^20 is 20 tens, not a hair more
    step = max(1, math.ceil(tens / 5))
    return True, step, math.ceil(tens / step)


def _log_ticks(axis: tuple[bool, int, int]) -> tuple[float, tuple[tuple[float, str], ...]]:
    """The top of a log2 axis (see _log_axis) and its ticks: (log2 value, label)."""
    tens, step, count = axis
    if not tens:
        return float(step * count), tuple((float(j * step), f"{2 ** (j * step):,}") for j in range(count + 1))
    ticks = tuple(
        (j * step * _PER_TEN, f"{10 ** (j * step):,}" if j * step < 4 else _sup("10", j * step))
        for j in range(count + 1)
    )
    return count * step * _PER_TEN, ticks


@functools.lru_cache(maxsize=256)
def _orbit_frame(axis: tuple[bool, int, int], steps: int, y_title: str) -> tuple[float, str]:
    """The orbit plot's axes, gridlines, ticks and titles, for a log axis (see _log_axis) over ``steps`` steps."""
    span, ticks = _log_ticks(axis)
    parts = [f'<text x="4" y="26" fill="currentColor">{escape(y_title)}</text>']
    for v, label in ticks:
        y = _fmt(TOP + _PLOT_H * (1 - v / span))
        parts.append(
            f'<line x1="{LEFT}" x2="{WIDTH - RIGHT}" y1="{y}" y2="{y}" stroke="{GRID}" stroke-dasharray="2 3"/>'
            f'<text x="{LEFT - 10}" y="{y}" dy="0.35em" text-anchor="end" fill="currentColor">{label}</text>'
        )
    step = _nice_step(steps, 6)
    for s in range(0, steps + 1, step):
        x = _x(s, steps)
        parts.append(
            f'<line x1="{x}" x2="{x}" y1="{_BASE}" y2="{_BASE + 5}" stroke="currentColor"/>'
            f'<text x="{x}" y="{_BASE + 8}" dy="0.8em" text-anchor="middle" fill="currentColor">{s:,}</text>'
        )
    parts.append(
        f'<line x1="{LEFT}" x2="{WIDTH - RIGHT}" y1="{_BASE}" y2="{_BASE}" stroke="currentColor"/>'
        f'<line x1="{LEFT}" x2="{LEFT}" y1="{TOP}" y2="{_BASE}" stroke="currentColor"/>'
        f'<text x="{LEFT + _PLOT_W / 2:.1f}" y="{_BASE + 8}" dy="2.2em" text-anchor="middle" fill="currentColor">'
        f"Step (the cycle closes at {steps:,})</text>"
    )
    return span, "".join(parts)


def _member_text(n: int) -> tuple[str, str]:
    """A member as the page writes it (builder.site.numbers), and as spoken; over 12 digits, to four figures.
    (orbit_plot writes a member of up to 12 digits itself, with ``format``, as grouped() does.)"""
    text = grouped(n)
    if len(text) <= 16 or len(text) == 17 and n < 0:  # up to 12 digits, 3 commas and a sign
        return text, text
    digits = to_decimal(abs(n))  # str() refuses integers of over 4,300 digits
    mantissa = f"{'-' if n < 0 else ''}{digits[0]}.{digits[1:4]}"
    exponent = len(digits) - 1
    return (
        f"≈ {mantissa}×{_sup('10', exponent)}",
        f"about {mantissa} times 10 to the power {exponent} ({len(digits):,} digits)",
    )


@functools.lru_cache(maxsize=64)
def _all_mark_parts(steps: int) -> tuple[tuple[str, str, str, str], ...]:
    """_mark_parts of every step 0..steps (many cycles share a length, and a short cycle marks every step)."""
    return tuple(_mark_parts(i, steps) for i in range(steps + 1))


def _mark_parts(step: int, steps: int) -> tuple[str, str, str, str]:
    """The fixed text of the marked point at ``step`` of ``steps`` around its name, its height and its value
    (the value's two lines above the point, or below it near the top of the plot).

    The ring (also the pointer's target) and the value show on hover and focus (style.css); the point's
    name is the value: digits, signs and words, nothing to escape."""
    third = step * 3 // steps
    x, anchor = (
        ("8", "") if third < 1 else ("0", ' text-anchor="middle"') if third < 2 else ("-8", ' text-anchor="end"')
    )
    text = f'<text class="val" x="{x}"{anchor} y='
    lines = f'>step {step:,}<tspan x="{x}" dy="1.2em">n = '
    return (
        f'<g class="pt" tabindex="0" role="img" aria-label="step {step:,}: n = ',
        f'" transform="translate({_x(step, steps)} ',
        f')"><circle class="ring" r="8" fill-opacity="0"/><circle r="3"/>{text}"-12" dy="-1.2em"{lines}',
        f')"><circle class="ring" r="8" fill-opacity="0"/><circle r="3"/>{text}"12" dy="0.8em"{lines}',
    )


def _marked(sizes: Sequence[int]) -> list[int]:
    """The steps whose members are marked: all of them, or MARKED spread evenly and the largest and smallest."""
    k = len(sizes)
    if k <= MARKED:
        return list(range(k + 1))
    picked = {round(j * k / MARKED) for j in range(MARKED + 1)}
    picked.add(max(range(k), key=sizes.__getitem__))
    picked.add(min(range(k), key=sizes.__getitem__))
    return sorted(picked)


def orbit_plot(members: Sequence[int], title: str, svg_id: str) -> Markup:
    """The size of each member, step by step, back to the start: a polyline on a log scale, with marked points.

    A build draws one for each of 50,000 cycles, so the work per point is kept small: the x coordinates
    come made for each length, a marked point reuses its point's y, and members of up to 12 digits are
    written in place."""
    log2 = math.log2
    sizes = list(map(abs, members))
    # The height of each member: log2 |n| (0 for n = 0 or +-1).
    values = [log2(s) if s > 1 else 0.0 for s in sizes]
    values.append(values[0])
    steps = len(values) - 1
    reduced = len(values) > MAX_POINTS
    if reduced:
        # Keep each bucket's extremes, so spikes survive the reduction.
        size = math.ceil(len(values) / (MAX_POINTS // 2))
        points = []
        for lo in range(0, len(values), size):
            chunk = values[lo : lo + size]
            points.append((lo, min(chunk)))
            points.append((lo + len(chunk) - 1, max(chunk)))
        xs: Sequence[str] = [_x(i, steps) + "," for i, _ in points]
        heights = [v for _, v in points]
    else:
        xs, heights = _x_commas(steps), values
    top = max(values)
    if max(members) < 0:
        y_title, sign = "|n| (log scale): every member is negative", "negative "
    elif min(members) < 0:
        y_title, sign = "|n| (log scale): some members are negative", ""
    else:
        y_title, sign = "n (log scale)", ""
    axis = _log_axis(top)
    span, frame = _orbit_frame(axis, steps, y_title)
    # y = TOP + plot height * (1 - v / span), written out, as the plot's points are many.
    base, scale = TOP + _PLOT_H, _PLOT_H / span
    ys = [f"{base - v * scale:.1f}" for v in heights]
    path = " ".join(map(str.__add__, xs, ys))
    marks = []
    parts = _all_mark_parts(steps) if steps <= MARKED else None
    k = len(members)
    high_point = span * (1 - 40 / _PLOT_H)  # a value above it is written below its point, not above
    for i in _marked(sizes):
        n = members[i % k]
        if -(10**12) < n < 10**12:
            shown = spoken = format(n, ",")
        else:
            shown, spoken = _member_text(n)
        head, at, above, below = parts[i] if parts else _mark_parts(i, steps)
        v = values[i]
        y = ys[i] if not reduced else f"{base - v * scale:.1f}"
        marks.append(f"{head}{spoken}{at}{y}{above if v <= high_point else below}{shown}</tspan></text></g>")
    high = f"2 to the power {top:.1f}" if top > 0 else "1"
    tens, step, count = axis
    span_text = f"10 to the power {step * count}" if tens else f"{2 ** (step * count):,}"
    who = f"the {sign}member" if len(members) == 1 else f"each of the {len(members):,} {sign}members"
    desc = (
        f"The size |n| of {who} on a log scale, step by step over the {_count(steps, 'step')} of the cycle "
        f"and back to the start, on an axis from 1 to {span_text}; the largest |n| is about {high}. "
        f"{_count(len(marks), 'point')} marked; each gives its step and member on hover or focus."
    )
    return Markup(
        f"{_open(svg_id, title, desc, HEIGHT, 'group', ' orbit')}{frame}"
        f'<polyline points="{path}" fill="none" stroke="{LINE}" stroke-width="1.6"/>'
        f'<g fill="{ACCENT}">{"".join(marks)}</g></svg>'
    )


# --- the word --------------------------------------------------------------------------------------


def _branch_text(modulus: int, a: int, b: int) -> str:
    """The branch n -> (a n + b) / m as plain text, its numbers as the site writes them (a minus sign)."""
    an = "n" if a == 1 else "−n" if a == -1 else f"{grouped(a)}n".replace("-", "−")
    if not b:
        return f"{an}/{grouped(modulus)}"
    return f"({an} {'+' if b > 0 else '−'} {grouped(abs(b))})/{grouped(modulus)}"


@functools.lru_cache(maxsize=STRIP_CELLS + 1)
def _strip_layout(count: int) -> tuple[float, bool]:
    """The width of each of ``count`` cells of a word strip, and whether the residue digits are written."""
    if count * 16 <= LETTERS_AT_MOST:
        return min(24.0, float(LETTERS_AT_MOST // max(count, 1))), True
    return max(2.0, min(24.0, WIDTH / max(count, 1))), False


@functools.lru_cache(maxsize=32)  # up to 256 cells of a few residues each, ~160 bytes a cell: a few MB at most
def _cells(count: int, modulus: int) -> tuple[tuple[str, ...], ...]:
    """For each of ``count`` cells of a word strip, its drawing for each residue (many cycles share a length):
    a bar (r + 1) / m of the full height in the residue's colour, and the digit r above it when there is room."""
    cell, letters = _strip_layout(count)
    gap = 1.0 if cell >= 6 else 0.0
    top = LETTER_ROW if letters else 0
    drawn = []
    for i in range(count):
        row = []
        for r in range(modulus):
            h = STRIP_HEIGHT * (r + 1) / modulus
            text = (
                f'<text x="{_fmt((i + 0.5) * cell)}" y="15" text-anchor="middle" fill="currentColor">{r}</text>'
                if letters
                else ""
            )
            row.append(
                f'<g><title>step {i}: residue {r}</title><rect x="{_fmt(i * cell)}" y="{_fmt(top + STRIP_HEIGHT - h)}" '
                f'width="{_fmt(cell - gap)}" height="{_fmt(h)}" fill="{PALETTE[r % len(PALETTE)]}"/>{text}</g>'
            )
        drawn.append(tuple(row))
    return tuple(drawn)


def word_strip(
    word: Sequence[int], modulus: int, title: str, svg_id: str, branches: Sequence[tuple[int, int]] = ()
) -> Markup:
    """The word as a row of cells, one per step (the first STRIP_CELLS steps), and a key to the residues.

    A cell's residue r is told three ways: its colour, its height ((r + 1) / m of the tallest) and, when
    the cells are wide enough, the digit r above it.  ``branches`` (multiplier, increment) per residue
    name the step each residue takes in the key."""
    shown = tuple(word[:STRIP_CELLS])
    cell, letters = _strip_layout(len(shown))
    width = cell * len(shown)
    height = STRIP_HEIGHT + (LETTER_ROW if letters else 0)
    cells = _cells(len(shown), modulus)
    drawn = "".join([cells[i][r] for i, r in enumerate(shown)])
    more = f" (the first {len(shown):,} of {len(word):,} steps)" if len(word) > len(shown) else ""
    how = "its digit above it, " if letters else ""
    desc = (
        f"One cell per step{more}, showing the residue r of the member mod {modulus} by {how}its height "
        f"(r + 1 of {modulus} parts) and its colour. The word: {''.join(map(str, shown))}."
    )
    svg = (
        f'<svg xmlns="http://www.w3.org/2000/svg" class="strip" viewBox="0 0 {_fmt(width)} {height}" '
        f'width="{_fmt(width)}" height="{height}" font-size="{FONT}" role="img" '
        f'aria-labelledby="{svg_id}-t {svg_id}-d"><title id="{svg_id}-t">{escape(title)}</title>'
        f'<desc id="{svg_id}-d">{escape(desc)}</desc>{drawn}</svg>'
    )
    keys = "".join([_key_item(modulus, r, branches[r] if r < len(branches) else None) for r in sorted(set(shown))])
    return Markup(f'{svg}<ul class="chart-key">{keys}</ul>')


@functools.lru_cache(maxsize=1024)  # the maps of a record share a few steps per residue
def _key_item(modulus: int, r: int, branch: tuple[int, int] | None) -> str:
    """The word strip's key for residue ``r``: its swatch, its class of n, the step it takes, its height."""
    parity = ("even n" if r == 0 else "odd n") if modulus == 2 else f"n ≡ {r} mod {modulus}"
    step = f": n ↦ {_branch_text(modulus, *branch)}" if branch is not None else ""
    size = ("short" if r == 0 else "tall") if modulus == 2 else f"{r + 1} of {modulus} parts high"
    return (
        f'<li><span class="key key-cell c{r % len(PALETTE)}" aria-hidden="true"></span>'
        f"{r} ({parity}){escape(step)}, {size}</li>"
    )


# --- the odds of a cycle per length -------------------------------------------------------------------

ODDS_LEFT, ODDS_RIGHT, ODDS_TOP = 80, 78, 66  # above the plot: the axis titles, then a column's numbers


def _percent(chance: float) -> str:
    """A chance as a percentage with two decimals, never rounded to 0% or 100% when it is neither."""
    if chance <= 0:
        return "0%"
    if chance >= 1:
        return "100%"
    if chance < 0.00005:
        return "under 0.01%"
    if chance > 0.99995:
        return "over 99.99%"
    return f"{100 * chance:.2f}%"


@functools.lru_cache(maxsize=1024)  # maps with the same lengths share most columns (those with no cycles above all)
def _odds_column(x0: float, slot: float, k: int, chance: float, count: int, most: int, proved: bool) -> str:
    """One length's column of the odds chart, from x0 and ``slot`` wide: its bar (the chance), its diamond
    (``count`` of at most ``most`` on the count axis), and its numbers.  A column shows its numbers on
    hover (its title, and a line above the plot) and when tapped (tabindex -1: focusable by a pointer,
    no keyboard stop; style.css)."""
    top = ODDS_TOP
    plot_h = HEIGHT - top - BOTTOM
    h = plot_h * chance
    diamond = ""
    if count:
        cx, cy = x0 + slot / 2, top + plot_h * (1 - count / most)
        d = _fmt(max(3.5, min(6.0, slot * 0.45)))
        diamond = (
            f'<path d="M{_fmt(cx)} {_fmt(cy - float(d))}l{d} {d}l-{d} {d}l-{d} -{d}z" '
            f'fill="{ACCENT}" stroke="#ffffff" stroke-width="1"/>'
        )
    cycles = _count(count, "cycle")
    status = ", proved complete" if proved else ""
    return (
        f'<g class="col" tabindex="-1"><title>length {k}: chance {_percent(chance)}, {cycles} recorded{status}</title>'
        f'<rect class="hit" x="{_fmt(x0)}" y="{top}" width="{_fmt(slot)}" height="{plot_h}" fill-opacity="0"/>'
        f'<rect x="{_fmt(x0 + slot * 0.1)}" y="{_fmt(top + plot_h - h)}" width="{_fmt(slot * 0.8)}" '
        f'height="{_fmt(h)}" fill="{LINE}"/>{diamond}<text class="val" x="{WIDTH // 2}" y="{top - 10}" '
        f'text-anchor="middle">k = {k}: {_percent(chance)}, {cycles}{", proved complete" if proved else ""}</text></g>'
    )


def odds_chart(
    rows: Sequence[tuple[int, float, int]], title: str, svg_id: str, proved_to: int = 0
) -> Markup:  # kept whole: one chart, its parts in drawing order
    """Bars: the heuristic chance of an integer cycle at each length k (left axis, %); diamonds: the number of
    catalogued cycles of that length (right axis, its own scale); a band under the lengths up to ``proved_to``,
    which a census claim proved complete (the heuristic beside what is certain); and a key naming them."""
    plot_w = WIDTH - ODDS_LEFT - ODDS_RIGHT
    top = ODDS_TOP
    plot_h = HEIGHT - top - BOTTOM
    right = WIDTH - ODDS_RIGHT
    n = len(rows)
    slot = plot_w / max(n, 1)
    most = max((count for _, _, count in rows), default=0)
    # The count axis has four intervals, as the percentage axis does, so its ticks sit on the same gridlines.
    quarter = _nice_step(most, 4)
    parts = [
        f'<text x="4" y="26" fill="currentColor">Heuristic chance (%)</text>'
        f'<text x="{WIDTH - 4}" y="26" text-anchor="end" fill="currentColor">Cycles recorded</text>'
    ]
    for j in range(5):
        y = _fmt(top + plot_h * (1 - j / 4))
        parts.append(
            f'<line x1="{ODDS_LEFT}" x2="{right}" y1="{y}" y2="{y}" stroke="{GRID}" stroke-dasharray="2 3"/>'
            f'<text x="{ODDS_LEFT - 10}" y="{y}" dy="0.35em" text-anchor="end" fill="currentColor">{25 * j}%</text>'
            f'<text x="{right + 10}" y="{y}" dy="0.35em" fill="currentColor">{quarter * j:,}</text>'
        )
    proved = sum(1 for k, _, _ in rows if k <= proved_to)
    if proved:
        parts.append(
            f'<rect x="{ODDS_LEFT}" y="{top}" width="{_fmt(proved * slot)}" height="{plot_h}" fill="{PROVED}" '
            'fill-opacity="0.16"/>'
            f'<text x="{ODDS_LEFT + 6}" y="{top + 14}" fill="currentColor">proved complete to k = {proved_to:,}</text>'
        )
    columns = [
        _odds_column(ODDS_LEFT + i * slot, slot, k, chance, count, 4 * quarter, k <= proved_to)
        for i, (k, chance, count) in enumerate(rows)
    ]
    ticks = []
    if rows:
        step = _nice_step(rows[-1][0] - rows[0][0], 6)
        first = rows[0][0]
        for i, (k, _, _) in enumerate(rows):
            # Every multiple of the step, and the first length unless a multiple follows it closely.
            if k % step == 0 or (i == 0 and step - first % step > step // 2):
                x = _fmt(ODDS_LEFT + (i + 0.5) * slot)
                ticks.append(
                    f'<line x1="{x}" x2="{x}" y1="{top + plot_h}" y2="{top + plot_h + 5}" stroke="currentColor"/>'
                    f'<text x="{x}" y="{top + plot_h + 8}" dy="0.8em" text-anchor="middle" fill="currentColor">{k}</text>'
                )
    parts.append(
        f'<line x1="{ODDS_LEFT}" x2="{right}" y1="{top + plot_h}" y2="{top + plot_h}" stroke="currentColor"/>'
        f'<line x1="{ODDS_LEFT}" x2="{ODDS_LEFT}" y1="{top}" y2="{top + plot_h}" stroke="currentColor"/>'
        f'<line x1="{right}" x2="{right}" y1="{top}" y2="{top + plot_h}" stroke="currentColor"/>'
        f'<text x="{ODDS_LEFT + plot_w / 2:.1f}" y="{top + plot_h + 8}" dy="2.2em" text-anchor="middle" '
        f'fill="currentColor">Cycle length k</text>'
    )
    band = f"A shaded band covers the lengths up to {proved_to:,}, which a census claim proved complete. "
    if rows:
        lengths = ", ".join(f"{k} ({count:,})" for k, _, count in rows if count) or "none"
        desc = (
            f"Bars, on the left axis from 0 to 100%: the heuristic chance that some word of each length k from "
            f"{rows[0][0]} to {rows[-1][0]} gives an integer cycle. Diamonds, on the right axis from 0 to "
            f"{4 * quarter:,}: how many catalogued cycles have that length. {band if proved else ''}Lengths with "
            f"catalogued cycles (and how many): {lengths}."
        )
    else:
        desc = "No lengths."
    shaded = '<li><span class="key key-band" aria-hidden="true"></span>Shaded band: lengths proved complete</li>'
    key = (
        '<ul class="chart-key"><li><span class="key key-bar" aria-hidden="true"></span>Bars: the heuristic chance of '
        'a cycle of length k (left axis, %)</li><li><span class="key key-diamond" aria-hidden="true"></span>'
        f"Diamonds: the cycles of length k in the record (right axis, a count)</li>{shaded if proved else ''}</ul>"
    )
    return Markup(
        f'{_open(svg_id, title, desc, HEIGHT)}{"".join(parts)}<g fill="currentColor">{"".join(columns)}</g>'
        f"{''.join(ticks)}</svg>{key}"
    )
