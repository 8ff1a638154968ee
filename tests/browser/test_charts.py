"""The charts of the shipped catalogue's site in headless Chromium: text size on a phone and on a desk,
nothing clipped or overlapping, values on hover and keyboard focus, and contrast in both colour schemes.

Sizes are CSS pixels as the browser lays them out (CSSOM View: getBoundingClientRect; SVG 2: getScreenCTM),
in a 390 px window (a common phone's width, common practice, no source) and the standard 1280 px one.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from .conftest import console_errors, open_page

CYCLE_THROUGH_MINUS_17 = "maps/3x-plus-1/minus-17/index.html"  # 3x+1: 11 negative members (Lagarias 1985, memory)
CYCLE_WITH_BIG_MEMBERS = "maps/3x-plus-29/3811/index.html"  # members past 10^4: exponents on the axis
MAP_3X_PLUS_1 = "maps/3x-plus-1/index.html"  # the odds chart
MOD_3 = "maps/mod-3-permutation/44/index.html"  # a word of three residues
PAGES = [CYCLE_THROUGH_MINUS_17, CYCLE_WITH_BIG_MEMBERS, MAP_3X_PLUS_1, MOD_3]
PHONE, DESK = 390, 1280
MIN_TEXT_PX = 12  # issue 14: chart text at least 12 px on a phone

# Each text and tspan of every chart: its rendered font size (computed size times the svg's scale), its box,
# and whether it shows only on hover or focus; and the chart's own box.
_TEXTS = """
return Array.from(document.querySelectorAll('figure.plot svg'), function (svg) {
  const scale = svg.getScreenCTM().a;
  const texts = Array.from(svg.querySelectorAll('text, tspan'), function (t) {
    const r = t.getBoundingClientRect();
    return {text: t.textContent, tag: t.tagName, px: parseFloat(getComputedStyle(t).fontSize) * scale,
            hidden: !!t.closest('.val'), left: r.left, right: r.right, top: r.top, bottom: r.bottom};
  });
  return {cls: svg.getAttribute('class'), box: svg.getBoundingClientRect().toJSON(), texts: texts};
});
"""


def charts(browser: Any) -> list[dict[str, Any]]:
    found: list[dict[str, Any]] = browser.execute_script(_TEXTS)
    return found


@pytest.mark.parametrize("width", [PHONE, DESK])
@pytest.mark.parametrize("page", PAGES)
def test_chart_text_is_at_least_12_px(browser: Any, shipped_site: Path, page: str, width: int) -> None:
    browser.set_window_size(width, 900)
    assert console_errors(open_page(browser, shipped_site, page)) == []
    found = charts(browser)
    assert found, page
    for chart in found:
        assert chart["texts"] or chart["cls"] == "strip", chart["cls"]  # a long word's strip has no digits
        for text in chart["texts"]:
            # Exponents and the values that show on hover are text too.
            assert text["px"] >= MIN_TEXT_PX, (chart["cls"], text)
            if width == DESK:
                assert text["px"] <= 16, (chart["cls"], text)  # not blown up on a desk


def overlap(a: dict[str, float], b: dict[str, float]) -> bool:
    return (
        a["left"] < b["right"] - 0.5
        and b["left"] < a["right"] - 0.5
        and a["top"] < b["bottom"] - 0.5
        and b["top"] < a["bottom"] - 0.5
    )


@pytest.mark.parametrize("width", [PHONE, DESK])
@pytest.mark.parametrize("page", PAGES)
def test_chart_text_is_neither_clipped_nor_overlapping(browser: Any, shipped_site: Path, page: str, width: int) -> None:
    browser.set_window_size(width, 900)
    open_page(browser, shipped_site, page)
    for chart in charts(browser):
        box = chart["box"]
        for text in chart["texts"]:
            inside = (
                text["left"] >= box["left"] - 0.5
                and text["right"] <= box["right"] + 0.5
                and text["top"] >= box["top"] - 0.5
                and text["bottom"] <= box["bottom"] + 0.5
            )
            assert inside, (chart["cls"], text, box)  # an svg clips what lies outside its viewBox
        shown = [t for t in chart["texts"] if t["tag"] == "text" and not t["hidden"]]
        for i, a in enumerate(shown):
            for b in shown[i + 1 :]:
                assert not overlap(a, b), (chart["cls"], a["text"], b["text"])


def test_the_charts_fit_a_phone_without_scrolling_sideways(browser: Any, shipped_site: Path) -> None:
    browser.set_window_size(PHONE, 900)
    for page in PAGES:
        open_page(browser, shipped_site, page)
        for chart in charts(browser):
            assert chart["box"]["right"] <= PHONE, (page, chart["cls"])
        # Reflow (WCAG 2.1 SC 1.4.10): the page is no wider than the window.
        assert browser.execute_script("const e = document.documentElement; return e.scrollWidth <= e.clientWidth;")


_POINT_STATE = """
const g = arguments[0];
return {focused: document.activeElement === g, value: g.querySelector('.val').textContent,
        label: g.getAttribute('aria-label'),
        shown: getComputedStyle(g.querySelector('.val')).opacity === '1',
        ring: getComputedStyle(g.querySelector('.ring')).opacity === '1'};
"""


@pytest.mark.parametrize("width", [PHONE, DESK])
def test_orbit_points_give_their_value_on_keyboard_focus_and_hover(
    browser: Any, shipped_site: Path, width: int
) -> None:
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    browser.set_window_size(width, 900)
    open_page(browser, shipped_site, CYCLE_THROUGH_MINUS_17)
    members = [li.text for li in browser.find_elements(By.CSS_SELECTOR, "ol.members li")]
    assert members[:3] == ["-17", "-25", "-37"]  # 3x+1 from -17: (3(-17)+1)/2 = -25, (3(-25)+1)/2 = -37
    points = browser.find_elements(By.CSS_SELECTOR, "figure.plot svg.orbit .pt")
    assert len(points) == len(members) + 1
    state = [browser.execute_script(_POINT_STATE, p) for p in points]
    assert not any(s["shown"] for s in state)  # values are hidden until asked for
    # Keyboard: focus the tab stop before the chart, then Tab from point to point (HTML: sequential focus navigation).
    browser.execute_script(
        "const stops = Array.from(document.querySelectorAll('a[href], button, input, [tabindex]:not([tabindex=\"-1\"])'));"
        "const chart = document.querySelector('svg.orbit');"
        "stops.filter(a => a.compareDocumentPosition(chart) & Node.DOCUMENT_POSITION_FOLLOWING).pop().focus();"
    )
    # (A scroller between them, such as a long equation on a phone, may take a Tab of its own.)
    for _ in range(5):
        ActionChains(browser).send_keys(Keys.TAB).perform()
        if browser.execute_script("return !!document.activeElement.closest('svg.orbit');"):
            break
    for i in range(3):
        if i:
            ActionChains(browser).send_keys(Keys.TAB).perform()
        now = browser.execute_script(_POINT_STATE, points[i])
        assert now["focused"] and now["shown"] and now["ring"], (i, now)
        assert now["label"] == f"step {i}: n = {members[i]}"  # its name, and the same in two lines on screen
        assert now["value"] == f"step {i}n = {members[i]}"
        if i:
            assert not browser.execute_script(_POINT_STATE, points[i - 1])["shown"]
    # Hover (the pointer over a point shows its value).
    browser.execute_script("document.activeElement.blur(); arguments[0].scrollIntoView({block: 'center'});", points[8])
    dot = points[8].find_elements(By.CSS_SELECTOR, "circle")[-1]
    ActionChains(browser).move_to_element(dot).perform()
    hovered = browser.execute_script(_POINT_STATE, points[8])
    assert hovered["shown"] and hovered["value"] == f"step 8n = {members[8]}"


@pytest.mark.parametrize("width", [PHONE, DESK])
def test_odds_columns_give_their_numbers_on_hover_and_tap(browser: Any, shipped_site: Path, width: int) -> None:
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By

    browser.set_window_size(width, 900)
    open_page(browser, shipped_site, MAP_3X_PLUS_1)
    columns = browser.find_elements(By.CSS_SELECTOR, "figure.plot svg.chart .col")
    assert len(columns) >= 40
    shown = "return getComputedStyle(arguments[0].querySelector('.val')).opacity === '1';"
    assert not any(browser.execute_script(shown, c) for c in columns)
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'});", columns[10])
    # The 3x+1 record has the cycle through -17 of length 11 (Lagarias 1985, from memory).
    hit = columns[10].find_element(By.CSS_SELECTOR, "rect.hit")
    ActionChains(browser).move_to_element(hit).perform()
    assert browser.execute_script(shown, columns[10])
    assert columns[10].find_element(By.CSS_SELECTOR, ".val").get_attribute("textContent").startswith("k = 11: ")
    # A click (a tap on a phone) focuses the column, which keeps its numbers shown once the pointer leaves.
    caption = browser.find_element(By.CSS_SELECTOR, "figure.plot:has(svg.chart) figcaption")
    ActionChains(browser).click(hit).move_to_element(caption).perform()
    assert browser.execute_script("return document.activeElement === arguments[0];", columns[10])
    assert browser.execute_script(shown, columns[10])
    assert not browser.execute_script(shown, columns[11])


_COLOURS = """
function rgb(c) { return c.match(/[\\d.]+/g).slice(0, 3).map(Number); }
const fig = arguments[0];
const svg = fig.querySelector('svg'), key = fig.querySelector('.chart-key');
return {
  page: rgb(getComputedStyle(document.body).backgroundColor),
  ink: rgb(getComputedStyle(svg).color), paper: rgb(getComputedStyle(svg).backgroundColor),
  keyInk: key ? rgb(getComputedStyle(key).color) : null, keyPaper: key ? rgb(getComputedStyle(key).backgroundColor) : null,
  swatches: key ? Array.from(key.querySelectorAll('.key'), s => rgb(getComputedStyle(s).backgroundColor)) : [],
  fills: Array.from(svg.querySelectorAll('rect[fill]:not([fill-opacity]), path[fill], circle[fill]:not([fill="none"]):not([fill-opacity])'), e => rgb(getComputedStyle(e).fill)),
};
"""


def luminance(rgb: list[float]) -> float:
    """WCAG 2.1, "relative luminance" (sRGB)."""
    r, g, b = (c / 255 / 12.92 if c / 255 <= 0.04045 else ((c / 255 + 0.055) / 1.055) ** 2.4 for c in rgb)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: list[float], b: list[float]) -> float:
    """WCAG 2.1, "contrast ratio"."""
    high, low = sorted((luminance(a), luminance(b)), reverse=True)
    return (high + 0.05) / (low + 0.05)


@pytest.mark.parametrize("scheme", ["light", "dark"])
def test_charts_and_keys_keep_their_contrast_in_both_schemes(browser: Any, shipped_site: Path, scheme: str) -> None:
    from selenium.webdriver.common.by import By

    if scheme == "dark":
        browser.execute_cdp_cmd(
            "Emulation.setEmulatedMedia", {"features": [{"name": "prefers-color-scheme", "value": "dark"}]}
        )
    try:
        for page in (CYCLE_THROUGH_MINUS_17, MAP_3X_PLUS_1, MOD_3):
            open_page(browser, shipped_site, page)
            for figure in browser.find_elements(By.CSS_SELECTOR, "figure.plot"):
                c = browser.execute_script(_COLOURS, figure)
                assert (luminance(c["page"]) < 0.05) == (scheme == "dark")  # the scheme really is in force
                # Text 4.5:1 (WCAG 2.1 SC 1.4.3); graphics and keys' swatches 3:1 (SC 1.4.11).
                assert contrast(c["ink"], c["paper"]) >= 4.5
                for fill in c["fills"]:
                    assert contrast(fill, c["paper"]) >= 3, (page, fill)
                if c["keyInk"]:
                    assert contrast(c["keyInk"], c["keyPaper"]) >= 4.5
                    assert c["swatches"]
                    for swatch in c["swatches"]:
                        assert contrast(swatch, c["keyPaper"]) >= 3, (page, swatch)
    finally:
        browser.execute_cdp_cmd("Emulation.setEmulatedMedia", {"features": []})


def test_word_strip_key_names_each_residue_shown(browser: Any, shipped_site: Path) -> None:
    from selenium.webdriver.common.by import By

    browser.set_window_size(PHONE, 900)
    open_page(browser, shipped_site, MOD_3)
    word = browser.find_element(By.CSS_SELECTOR, "p.word code").text
    strip = browser.find_element(By.CSS_SELECTOR, "figure.plot svg.strip")
    digits = [t.text for t in strip.find_elements(By.CSS_SELECTOR, "text")]
    assert "".join(digits) == word[: len(digits)] and digits  # the digits drawn are the word's
    keys = [li.text for li in browser.find_elements(By.CSS_SELECTOR, "figure.plot .chart-key li")]
    assert [k[0] for k in keys] == sorted(set(word))
    assert all(k.is_displayed() for k in browser.find_elements(By.CSS_SELECTOR, "figure.plot .chart-key li"))
