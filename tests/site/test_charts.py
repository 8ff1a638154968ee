"""The site's charts (builder/site/svg.py) as markup: the odds chart, the orbit plot and the word strip.

Each chart is parsed with the standard library's XML parser (a reference parser: the SVG must be
well-formed XML in the SVG namespace). How the charts look in a browser, on a phone and on a desk,
is tested in tests/browser/test_charts.py.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from builder.site import svg
from builder.site.svg import odds_chart, orbit_plot, word_strip

SVG_NS = "{http://www.w3.org/2000/svg}"  # the SVG namespace (W3C SVG 1.1 / SVG 2)
STYLE = Path(__file__).resolve().parents[2] / "templates" / "static" / "style.css"


def parse(markup: str) -> tuple[ET.Element, str]:
    """The chart's svg element, parsed, and the markup that follows it (the chart's key, if any)."""
    end = markup.index("</svg>") + len("</svg>")
    root = ET.fromstring(markup[:end])
    assert root.tag == f"{SVG_NS}svg"
    return root, markup[end:]


def texts(root: ET.Element) -> list[ET.Element]:
    return list(root.iter(f"{SVG_NS}text"))


def label(element: ET.Element) -> str:
    return "".join(element.itertext())


def shortcut_3x_plus_1(n: int) -> int:
    """The 3x+1 map in its shortcut form T(n) = n/2 for even n, (3n+1)/2 for odd n (Lagarias, Amer. Math.
    Monthly 92 (1985) 3-23, from memory)."""
    return n // 2 if n % 2 == 0 else (3 * n + 1) // 2


def orbit_of(start: int) -> list[int]:
    members = [start]
    while (n := shortcut_3x_plus_1(members[-1])) != start:
        members.append(n)
    return members


# The cycle of 3x+1 through -17 has 11 members (Lagarias 1985, from memory); computed here step by step.
MINUS_17 = orbit_of(-17)


def odds_rows(top: int = 40) -> list[tuple[int, float, int]]:
    # Made-up chances and counts: the most is 7 at length 11, and two lengths have one cycle.
    counts = {2: 1, 3: 1, 11: 7}
    return [(k, min(1.0, 2.0 / k), counts.get(k, 0)) for k in range(1, top + 1)]


def y_of(element: ET.Element) -> float:
    return float(element.get("y", "nan"))


# --- the odds chart -----------------------------------------------------------------------------------


def test_odds_chart_has_titled_axes_and_percentage_ticks_at_quarters() -> None:
    root, _ = parse(odds_chart(odds_rows(), "Odds", "o"))
    labels = [label(t) for t in texts(root)]
    for title in ("Heuristic chance (%)", "Cycles recorded", "Cycle length k"):
        assert title in labels
    # A percentage axis in quarters is readable at a glance (common practice, no source).
    assert [x for x in labels if x.endswith("%") and x[0].isdigit()] == ["0%", "25%", "50%", "75%", "100%"]


def test_odds_chart_marks_lengths_at_a_useful_step() -> None:
    for top, step in ((40, 10), (120, 20)):
        root, _ = parse(odds_chart(odds_rows(top), "Odds", "o"))
        lengths = [int(label(t)) for t in texts(root) if label(t).isdigit() and t.get("text-anchor") == "middle"]
        # Every multiple of a round step, and the first length (1) far from the first multiple.
        assert lengths == [1, *range(step, top + 1, step)]


def test_odds_counts_have_their_own_axis_and_are_not_drawn_as_percentages() -> None:
    root, _ = parse(odds_chart(odds_rows(), "Odds", "o"))
    right = {label(t): y_of(t) for t in texts(root) if t.get("text-anchor") is None and label(t).isdigit()}
    # The most is 7: four intervals of 2 reach 8, on the same gridlines as 0, 25, 50, 75 and 100%.
    assert list(right) == ["0", "2", "4", "6", "8"]
    percent = {label(t): y_of(t) for t in texts(root) if label(t).endswith("%") and label(t)[0].isdigit()}
    assert list(right.values()) == list(percent.values())
    diamonds = list(root.iter(f"{SVG_NS}path"))
    assert len(diamonds) == 3  # one for each length with catalogued cycles
    # Each diamond's centre (the top vertex plus its half height) sits at its count on the count axis.
    zero, eight = right["0"], right["8"]
    for path, count in zip(diamonds, (1, 1, 7), strict=True):
        x, top, half = (float(v) for v in re.findall(r"-?\d+\.\d", path.get("d", ""))[:3])
        assert top + half == pytest.approx(zero + (eight - zero) * count / 8, abs=0.1)


def test_odds_chart_has_a_key_naming_each_series_and_its_shape() -> None:
    _, key = parse(odds_chart(odds_rows(), "Odds", "o"))
    items = re.findall(r"<li>(.*?)</li>", key)
    assert len(items) == 2
    assert "Bars" in items[0] and "left axis" in items[0] and "key-bar" in items[0]
    assert "Diamonds" in items[1] and "right axis" in items[1] and "key-diamond" in items[1]


def test_odds_chart_gives_each_length_a_value_on_hover_and_in_its_description() -> None:
    root, _ = parse(odds_chart(odds_rows(), "Odds", "o"))
    hover = [t.text or "" for g in root.iter(f"{SVG_NS}g") for t in g.findall(f"{SVG_NS}title")]
    assert len(hover) == 40
    assert hover[10] == "length 11: chance 18.18%, 7 cycles recorded"  # 2/11 = 0.1818...
    assert hover[1] == "length 2: chance 100%, 1 cycle recorded"
    desc = root.find(f"{SVG_NS}desc")
    assert desc is not None and "right axis from 0 to 8" in (desc.text or "")
    assert "2 (1), 3 (1), 11 (7)" in (desc.text or "")


def test_odds_chart_columns_show_their_numbers_when_tapped_without_being_keyboard_stops() -> None:
    root, _ = parse(odds_chart(odds_rows(120), "Odds", "o"))
    columns = [g for g in root.iter(f"{SVG_NS}g") if g.get("class") == "col"]
    assert len(columns) == 120
    # tabindex -1: focusable by a click or tap, not in the Tab order (HTML, the tabindex attribute).
    assert {g.get("tabindex") for g in columns} == {"-1"}
    readouts = [label(t) for g in columns for t in g.iter(f"{SVG_NS}text") if t.get("class") == "val"]
    assert readouts[10] == "k = 11: 18.18%, 7 cycles" and readouts[0] == "k = 1: 100%, 0 cycles"


def test_a_big_count_axis_has_round_ticks() -> None:
    # As many cycles of length 20 as binary Lyndon words of length 20 with 12 ones (a map 3x+d with
    # d = 2^20 - 3^12 has them all): (C(20, 12) - C(10, 6)) / 20 = 6,288 by the Moebius count of Lyndon words
    # (Moreau's necklace formula, from memory). Ticks every 2,000 up to 8,000, not every 1,572.
    lyndon = (math.comb(20, 12) - math.comb(10, 6)) // 20
    assert lyndon == 6_288
    rows = [(k, 0.5, lyndon if k == 20 else 0) for k in range(1, 41)]
    root, _ = parse(odds_chart(rows, "Odds", "o"))
    right = [label(t) for t in texts(root) if t.get("text-anchor") is None and label(t)[:1].isdigit()]
    assert right == ["0", "2,000", "4,000", "6,000", "8,000"]


@pytest.mark.parametrize(
    ("chance", "text"),
    [(0.0, "0%"), (1e-9, "under 0.01%"), (0.123456, "12.35%"), (0.9999999, "over 99.99%"), (1.0, "100%")],
)
def test_a_chance_is_never_rounded_to_0_or_100_percent(chance: float, text: str) -> None:
    assert svg._percent(chance) == text


# --- the orbit plot ------------------------------------------------------------------------------------


def y_ticks(root: ET.Element) -> list[ET.Element]:
    return [t for t in texts(root) if t.get("text-anchor") == "end" and "val" not in (t.get("class") or "")]


def test_orbit_ticks_are_numbers_with_thousands_separators_not_carets() -> None:
    root, _ = parse(orbit_plot([1000, 500, 250], "Orbit", "p"))
    shown = [label(t) for t in y_ticks(root)]
    # log2(1000) < 10: powers of 2 every 3, written out: 2^0, 2^3, 2^6, 2^9, 2^12 (arithmetic).
    assert shown == ["1", "8", "64", "512", "4,096"]
    assert not any("^" in label(t) for t in texts(root))


def test_orbit_ticks_of_big_members_are_powers_of_ten_with_superscript_exponents() -> None:
    root, _ = parse(orbit_plot([10**20, 3 * 10**19], "Orbit", "p"))
    ticks = y_ticks(root)
    # 10^0, 10^4, ..., 10^20: at most six ticks, the first written out, the rest with exponents.
    assert [label(t) for t in ticks] == ["1", "104", "108", "1012", "1016", "1020"]
    assert [t.text for t in ticks] == ["1", "10", "10", "10", "10", "10"]
    for tick in ticks[1:]:
        (exponent,) = tick.findall(f"{SVG_NS}tspan")
        # A superscript: raised (negative dy) and smaller (SVG 2, the tspan element; common practice, no source).
        assert exponent.get("dy", "").startswith("-") and exponent.get("font-size") == "0.9em"
    small, _ = parse(orbit_plot([10**5, 10**4], "Orbit", "q"))
    assert [label(t) for t in y_ticks(small)] == ["1", "10", "100", "1,000", "104", "105", "106"][:6]


def test_orbit_has_several_step_ticks_and_a_step_axis_title() -> None:
    root, _ = parse(orbit_plot(MINUS_17, "Orbit", "p"))
    steps = [label(t) for t in texts(root) if t.get("text-anchor") == "middle" and label(t).isdigit()]
    assert steps == ["0", "2", "4", "6", "8", "10"]
    assert "Step (the cycle closes at 11)" in [label(t) for t in texts(root)]


def test_orbit_of_a_negative_cycle_says_it_plots_the_absolute_value() -> None:
    assert len(MINUS_17) == 11 and all(n < 0 for n in MINUS_17)
    root, _ = parse(orbit_plot(MINUS_17, "Orbit", "p"))
    assert "|n| (log scale): every member is negative" in [label(t) for t in texts(root)]
    # The hidden description says the same, and names the axis's ends: |-136| < 2^8 = 256 (arithmetic).
    desc = root.find(f"{SVG_NS}desc")
    assert desc is not None and "each of the 11 negative members" in (desc.text or "")
    assert "on an axis from 1 to 256; the largest |n| is about 2 to the power 7.1" in (desc.text or "")
    assert math.log2(136) == pytest.approx(7.09, abs=0.01)
    positive, _ = parse(orbit_plot(orbit_of(1), "Orbit", "q"))
    assert "n (log scale)" in [label(t) for t in texts(positive)]


def test_orbit_points_are_keyboard_stops_that_give_their_step_and_member() -> None:
    root, _ = parse(orbit_plot(MINUS_17, "Orbit", "p"))
    # Focusable children may not sit inside role=img, whose children are presentational (WAI-ARIA 1.2).
    assert (
        root.get("role") == "group" and root.get("aria-labelledby") == "p-t" and root.get("aria-describedby") == "p-d"
    )
    points = [g for g in root.iter(f"{SVG_NS}g") if g.get("class") == "pt"]
    assert len(points) == len(MINUS_17) + 1  # and step 11, back at the start
    for i, point in enumerate(points):
        n = MINUS_17[i % len(MINUS_17)]
        assert point.get("tabindex") == "0" and point.get("role") == "img"
        assert point.get("aria-label") == f"step {i}: n = {n}"
        (value,) = [t for t in point.iter(f"{SVG_NS}text") if t.get("class") == "val"]
        assert (value.text, label(value[0])) == (f"step {i}", f"n = {n}")  # two lines: step, then member


def test_orbit_values_are_written_as_the_site_writes_numbers() -> None:
    # 2,277,097 and -12,345,678,901 are written with thousands separators, as the site writes every number
    # (Python's format(n, ","), the reference the site's builder.site.numbers follows).
    root, _ = parse(orbit_plot([2_277_097, -12_345_678_901], "Orbit", "p"))
    points = [g for g in root.iter(f"{SVG_NS}g") if g.get("class") == "pt"]
    assert [g.get("aria-label") for g in points] == [
        "step 0: n = 2,277,097",
        "step 1: n = -12,345,678,901",
        "step 2: n = 2,277,097",
    ]


def test_a_long_orbit_stays_small_and_marks_a_bounded_number_of_points() -> None:
    members = [3**40 + 7 * i * (i % 13) for i in range(20_000)]
    members[12_345] = 5**80  # the largest, far above the rest
    markup = orbit_plot(members, "Orbit", "p")
    assert len(markup) < 60_000
    root, _ = parse(markup)
    points = [g for g in root.iter(f"{SVG_NS}g") if g.get("class") == "pt"]
    assert len(points) <= svg.MARKED + 3
    assert any(g.get("aria-label", "").startswith("step 12,345: ") for g in points)
    (line,) = root.iter(f"{SVG_NS}polyline")
    assert len(line.get("points", "").split()) <= svg.MAX_POINTS + 2


def test_a_member_of_many_digits_is_shown_to_four_figures() -> None:
    n = -(12345 * 10**55)  # 60 digits
    root, _ = parse(orbit_plot([n, n // 2], "Orbit", "p"))
    first = next(g for g in root.iter(f"{SVG_NS}g") if g.get("class") == "pt")
    assert first.get("aria-label") == "step 0: n = about -1.234 times 10 to the power 59 (60 digits)"
    (value,) = [t for t in first.iter(f"{SVG_NS}text") if t.get("class") == "val"]
    assert label(value[0]) == "n = ≈ -1.234×1059" and value[0][0].text == "59"  # 59 in a superscript


# --- the word strip -------------------------------------------------------------------------------------


def cells(root: ET.Element) -> list[tuple[str, float, str]]:
    """Each cell's hover title, bar height and the digit above it ('' when none)."""
    found = []
    for g in root.iter(f"{SVG_NS}g"):
        title, rect, digit = g.find(f"{SVG_NS}title"), g.find(f"{SVG_NS}rect"), g.find(f"{SVG_NS}text")
        assert title is not None and rect is not None
        found.append((title.text or "", float(rect.get("height", "nan")), "" if digit is None else label(digit)))
    return found


def test_word_strip_tells_the_residue_by_digit_and_height_as_well_as_colour() -> None:
    word = [n % 2 for n in MINUS_17]  # the parity word of the cycle
    assert "".join(map(str, word)) == "11110111000"
    root, key = parse(word_strip(word, 2, "Word", "w", ((1, 0), (3, 1))))
    drawn = cells(root)
    assert [digit for _, _, digit in drawn] == [str(r) for r in word]
    assert {r: h for r, (_, h, _) in zip(word, drawn, strict=True)} == {0: 18.0, 1: 36.0}
    assert drawn[4][0] == "step 4: residue 0"
    items = re.findall(r"<li>(.*?)</li>", key)
    # The shortcut 3x+1 map: n/2 for even n, (3n+1)/2 for odd n (Lagarias 1985, from memory).
    assert [re.sub(r"<.*?>", "", item) for item in items] == [
        "0 (even n): n ↦ n/2, short",
        "1 (odd n): n ↦ (3n + 1)/2, tall",
    ]


def test_a_long_word_keeps_its_heights_without_digits() -> None:
    word = [(i * i) % 3 for i in range(300)]  # residues 0 and 1 only
    root, key = parse(word_strip(word, 3, "Word", "w", ((2, 0), (4, -1), (4, 1))))
    drawn = cells(root)
    assert len(drawn) == svg.STRIP_CELLS and all(digit == "" for _, _, digit in drawn)
    assert {h for _, h, _ in drawn} == {12.0, 24.0}
    assert (
        re.sub(r"<.*?>", "", key)
        == "0 (n ≡ 0 mod 3): n ↦ 2n/3, 1 of 3 parts high1 (n ≡ 1 mod 3): n ↦ (4n − 1)/3, 2 of 3 parts high"
    )
    desc = root.find(f"{SVG_NS}desc")
    assert desc is not None and "(the first 256 of 300 steps)" in (desc.text or "")


def test_word_strip_digits_are_never_shrunk_on_a_phone() -> None:
    # With digits the strip is at most LETTERS_AT_MOST units wide: under a 390 px phone's content width of
    # about 350 px, so its 14-unit digits are drawn at 14 px there (measured in tests/browser/test_charts.py).
    for length in range(1, 40):
        root, _ = parse(word_strip([1] * length, 2, "Word", "w"))
        if any(digit for _, _, digit in cells(root)):
            assert float(root.get("width", "nan")) <= svg.LETTERS_AT_MOST


# --- all charts -------------------------------------------------------------------------------------------


def relative_luminance(colour: str) -> float:
    """WCAG 2.1, "relative luminance" (sRGB)."""
    channels = [int(colour[i : i + 2], 16) / 255 for i in (1, 3, 5)]
    r, g, b = (c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in channels)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: str, b: str) -> float:
    """WCAG 2.1, "contrast ratio": (L1 + 0.05) / (L2 + 0.05)."""
    la, lb = sorted((relative_luminance(a), relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def test_chart_colours_meet_the_wcag_contrast_minimums() -> None:
    # Graphics need 3:1 against their background (WCAG 2.1 SC 1.4.11), text 4.5:1 (SC 1.4.3).
    for colour in (*svg.PALETTE, svg.LINE, svg.ACCENT, svg.GRID, "#a84a00"):
        assert contrast(colour, svg.BG) >= 3, colour
    assert contrast(svg.INK, svg.BG) >= 4.5


def test_the_stylesheet_draws_charts_and_keys_in_the_charts_colours() -> None:
    css = STYLE.read_text(encoding="utf-8")
    rule = re.search(r"figure\.plot svg \{(.*?)\}", css, re.S)
    assert rule and f"color: {svg.INK};" in rule.group(1) and f"background: {svg.BG};" in rule.group(1)
    key = re.search(r"figure\.plot \.chart-key \{(.*?)\}", css, re.S)
    assert key and f"color: {svg.INK};" in key.group(1) and f"background: {svg.BG};" in key.group(1)
    for r, colour in enumerate(svg.PALETTE):
        assert f"figure.plot .key-cell.c{r} {{ background: {colour}; }}" in css
    assert f"figure.plot .key-bar {{ background: {svg.LINE};" in css
    assert f"figure.plot .key-diamond {{ background: {svg.ACCENT};" in css
    # The phone size of chart text is the one svg.py leaves room for.
    assert re.search(r"svg\.chart \{\s*font-size: " + str(svg.PHONE_FONT) + "px;", css)


def test_phone_text_size_is_at_least_12_px_at_a_phones_content_width() -> None:
    # About 350 CSS px of content on a 390 px phone (measured in tests/browser/test_charts.py); the rule
    # of issue 14 is text of at least 12 px, exponents included.
    scale = 350 / svg.WIDTH
    assert svg.PHONE_FONT * scale >= 12
    assert svg.PHONE_FONT * float(svg.SUP.removesuffix("em")) * scale >= 12
    assert svg.FONT * float(svg.SUP.removesuffix("em")) >= 12


def test_charts_are_the_same_from_build_to_build() -> None:
    for make in (
        lambda: orbit_plot(MINUS_17, "Orbit", "p"),
        lambda: word_strip([1, 0, 1], 2, "Word", "w", ((1, 0), (3, 1))),
        lambda: odds_chart(odds_rows(), "Odds", "o"),
    ):
        assert make() == make()


def test_chart_text_is_escaped() -> None:
    markup = orbit_plot(MINUS_17, "<Orbit & co>", "p")
    root, _ = parse(markup)
    title = root.find(f"{SVG_NS}title")
    assert title is not None and title.text == "<Orbit & co>"


def test_step_ticks_of_a_long_orbit_have_thousands_separators() -> None:
    # Counts of four or more digits have thousands separators, as the site writes counts.
    root, _ = parse(orbit_plot([3**k for k in range(3_000)], "Orbit", "p"))
    steps = [label(t) for t in texts(root) if t.get("text-anchor") == "middle" and label(t)[:1].isdigit()]
    assert steps == ["0", "500", "1,000", "1,500", "2,000", "2,500", "3,000"]
