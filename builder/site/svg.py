"""Inline SVG pictures: the orbit of a cycle on a log scale, and its word as a strip.

Coordinates are plotting only (floats never decide anything about a
cycle); every number is formatted with a fixed precision so the output is
byte-identical from build to build.  Every text is escaped here, and each
picture is returned as ``markupsafe.Markup``, safe to place in a page as it is.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from html import escape

from markupsafe import Markup

__all__ = ["odds_chart", "orbit_plot", "word_strip"]

WIDTH, HEIGHT = 640, 240
LEFT, RIGHT, TOP, BOTTOM = 56, 12, 12, 32
MAX_POINTS = 1500  # longer orbits are drawn as the range of each run of steps
STRIP_CELLS = 256
STRIP_HEIGHT = 28
# Residue colours: distinct in hue and lightness, each dark enough for 3:1 against white.
PALETTE = ("#4a5d7e", "#c0692b", "#2e7d5b", "#8e3b72", "#7a6a1f", "#356f8a", "#a23b3b", "#5b5196", "#60753a", "#8a5a2e")


def _fmt(v: float) -> str:
    return f"{v:.1f}"


_PLOT_W = WIDTH - LEFT - RIGHT
_PLOT_H = HEIGHT - TOP - BOTTOM


def _x(step: int, steps: int) -> str:
    """The x coordinate of a step of an orbit of ``steps`` steps (a fixed point's one step in the middle)."""
    return f"{LEFT + _PLOT_W * (step / steps if steps else 0.5):.1f}"


@functools.lru_cache(maxsize=64)
def _x_positions(steps: int) -> tuple[str, ...]:
    """The x coordinate of each step 0..steps of an orbit drawn point by point (many cycles share a length)."""
    return tuple(_x(i, steps) for i in range(steps + 1))


@functools.lru_cache(maxsize=64)
def _grid(tick: int, span: float) -> str:
    """The gridlines at whole powers of two, every ``tick`` up to ``span``, with their labels."""

    def y(v: float) -> float:
        return TOP + _PLOT_H * (1 - v / span)

    ticks = []
    for j in range(int(span) // tick + 1):
        v = float(j * tick)
        ticks.append(
            f'<line x1="{LEFT}" x2="{WIDTH - RIGHT}" y1="{_fmt(y(v))}" y2="{_fmt(y(v))}" stroke="#999" '
            f'stroke-width="0.5" stroke-dasharray="2 3"/>'
            f'<text x="{LEFT - 6}" y="{_fmt(y(v) + 4)}" text-anchor="end" font-size="11" fill="currentColor">'
            f"2^{v:.0f}</text>"
        )
    return "".join(ticks)


def orbit_plot(members: Sequence[int], title: str, svg_id: str) -> Markup:
    """The size of each member, step by step, back to the start: a polyline on a log2 scale."""
    log2 = math.log2
    # The height of each member: log2 |n| (0 for n = 0 or +-1).
    values = [log2(n if n > 0 else -n) if not -1 <= n <= 1 else 0.0 for n in members]
    values.append(values[0])
    steps = len(values) - 1
    if len(values) > MAX_POINTS:
        # Keep each bucket's extremes, so spikes survive the reduction.
        size = math.ceil(len(values) / (MAX_POINTS // 2))
        points = []
        for lo in range(0, len(values), size):
            chunk = values[lo : lo + size]
            points.append((lo, min(chunk)))
            points.append((lo + len(chunk) - 1, max(chunk)))
        xs = [_x(i, steps) for i, _ in points]
        heights = [v for _, v in points]
    else:
        xs, heights = list(_x_positions(steps)), values
    top = max(values)
    # Gridlines at whole powers of two, at most five of them.
    tick = max(1, math.ceil(top / 4))
    span = float(tick * max(1, math.ceil(top / tick)))
    # y = TOP + plot height * (1 - v / span), written out, as the plot's points are many.
    ys = [f"{TOP + _PLOT_H * (1 - v / span):.1f}" for v in heights]
    path = " ".join([f"{x},{y}" for x, y in zip(xs, ys, strict=True)])
    sign = "negative " if members[0] < 0 else ""
    desc = f"Size of the {sign}members on a log2 scale over the {steps} steps of the cycle, from 2^0 to 2^{top:.1f}."
    marker = ""
    if len(xs) <= 200:
        marker = "".join([f'<circle cx="{x}" cy="{y}" r="2.2" fill="#c0692b"/>' for x, y in zip(xs, ys, strict=True)])
    return Markup(
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {HEIGHT}" width="{WIDTH}" height="{HEIGHT}" '
        f'role="img" aria-labelledby="{svg_id}-t {svg_id}-d">'
        f'<title id="{svg_id}-t">{escape(title)}</title><desc id="{svg_id}-d">{escape(desc)}</desc>'
        f"{_grid(tick, span)}{_AXIS}"
        f"step {steps}</text>"
        f'<polyline points="{path}" fill="none" stroke="#4a5d7e" stroke-width="1.6"/>{marker}</svg>'
    )


_AXIS = (
    f'<line x1="{LEFT}" x2="{WIDTH - RIGHT}" y1="{HEIGHT - BOTTOM}" y2="{HEIGHT - BOTTOM}" stroke="currentColor"/>'
    f'<text x="{LEFT}" y="{HEIGHT - 8}" font-size="11" fill="currentColor">step 0</text>'
    f'<text x="{WIDTH - RIGHT}" y="{HEIGHT - 8}" font-size="11" text-anchor="end" fill="currentColor">'
)


def word_strip(word: Sequence[int], modulus: int, title: str, svg_id: str) -> Markup:
    """The word as a row of coloured cells, one per step (the first STRIP_CELLS steps)."""
    shown = tuple(word[:STRIP_CELLS])
    width = _cell_width(len(shown)) * len(shown)
    cells = _cells(len(shown), modulus)
    rects = "".join([cells[i][r] for i, r in enumerate(shown)])
    more = f" (the first {len(shown)} of {len(word)} steps)" if len(word) > len(shown) else ""
    desc = f"One cell per step, coloured by the residue mod {modulus} of the member{more}."
    return Markup(
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {_fmt(width)} {STRIP_HEIGHT}" width="{_fmt(width)}" '
        f'height="{STRIP_HEIGHT}" role="img" aria-labelledby="{svg_id}-t {svg_id}-d">'
        f'<title id="{svg_id}-t">{escape(title)}</title><desc id="{svg_id}-d">{escape(desc)}</desc>{rects}</svg>'
    )


def _cell_width(count: int) -> float:
    """The width of each of ``count`` cells of a word strip."""
    return max(2.0, min(24.0, 640 / max(count, 1)))


@functools.lru_cache(maxsize=32)  # up to 256 cells of a few residues each, ~110 bytes a cell: a few MB at most
def _cells(count: int, modulus: int) -> tuple[tuple[str, ...], ...]:
    """For each of ``count`` cells of a word strip, its rectangle for each residue (many cycles share a length)."""
    cell = _cell_width(count)
    return tuple(
        tuple(
            f'<rect x="{_fmt(i * cell)}" y="0" width="{_fmt(cell)}" height="{STRIP_HEIGHT}" '
            f'fill="{PALETTE[r % len(PALETTE)]}"><title>step {i}: residue {r}</title></rect>'
            for r in range(modulus)
        )
        for i in range(count)
    )


def odds_chart(rows: Sequence[tuple[int, float, int]], title: str, svg_id: str) -> Markup:
    """Bars: the heuristic chance of an integer cycle at each length k; dots: catalogued cycles of that length."""
    plot_w = WIDTH - LEFT - RIGHT
    plot_h = HEIGHT - TOP - BOTTOM
    n = len(rows)
    slot = plot_w / max(n, 1)
    most = max((count for _, _, count in rows), default=0)
    bars = []
    dots = []
    for i, (k, chance, count) in enumerate(rows):
        h = plot_h * chance
        x0 = LEFT + i * slot
        bars.append(
            f'<rect x="{_fmt(x0 + slot * 0.1)}" y="{_fmt(TOP + plot_h - h)}" width="{_fmt(slot * 0.8)}" '
            f'height="{_fmt(h)}" fill="#4a5d7e"><title>length {k}: chance {100 * chance:.2f}%, '
            f"{count} catalogued</title></rect>"
        )
        if count:
            cy = TOP + plot_h * (1 - count / most) if most else TOP + plot_h
            dots.append(f'<circle cx="{_fmt(x0 + slot / 2)}" cy="{_fmt(cy)}" r="3" fill="#c0692b"/>')
    labels = []
    step = max(1, math.ceil(n / 10))
    for i in range(0, n, step):
        labels.append(
            f'<text x="{_fmt(LEFT + (i + 0.5) * slot)}" y="{HEIGHT - 14}" font-size="11" text-anchor="middle" '
            f'fill="currentColor">{rows[i][0]}</text>'
        )
    desc = (
        f"Bars: the heuristic chance, from 0 to 100%, that some word of each length from {rows[0][0]} to "
        f"{rows[-1][0]} gives an integer cycle. Dots: how many catalogued cycles have that length "
        f"(scaled so the most, {most}, is at the top)."
        if rows
        else "No lengths."
    )
    return Markup(
        f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {WIDTH} {HEIGHT}" width="{WIDTH}" height="{HEIGHT}" '
        f'role="img" aria-labelledby="{svg_id}-t {svg_id}-d">'
        f'<title id="{svg_id}-t">{escape(title)}</title><desc id="{svg_id}-d">{escape(desc)}</desc>'
        f'<line x1="{LEFT}" x2="{WIDTH - RIGHT}" y1="{TOP + plot_h}" y2="{TOP + plot_h}" stroke="currentColor"/>'
        f'<text x="{LEFT - 6}" y="{TOP + 4}" text-anchor="end" font-size="11" fill="currentColor">100%</text>'
        f'<text x="{LEFT - 6}" y="{TOP + plot_h + 4}" text-anchor="end" font-size="11" fill="currentColor">0%</text>'
        f'<text x="{WIDTH - RIGHT}" y="{HEIGHT - 1}" text-anchor="end" font-size="11" fill="currentColor">length k</text>'
        f"{''.join(bars)}{''.join(dots)}{''.join(labels)}</svg>"
    )
