"""Pages of the shipped catalogue's site in headless Chromium, opened from disk: they load cleanly,
their MathML is laid out, a cycle page can be photographed, and they fit a phone's width.

The site is built once for the session (browser/conftest.py); each test reuses the one browser.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Any

import pytest

from .conftest import console_errors, open_page
from .png import read_png

CYCLE_THROUGH_1 = "maps/3x-plus-1/1/index.html"
CYCLE_THROUGH_MINUS_17 = "maps/3x-plus-1/minus-17/index.html"
MAP_3X_PLUS_1 = "maps/3x-plus-1/index.html"
MATHML = "http://www.w3.org/1998/Math/MathML"  # MathML namespace (W3C MathML Core)


@pytest.mark.parametrize(
    "page",
    [
        "index.html",  # the home page
        CYCLE_THROUGH_1,  # 3x+1: the cycle 1, 2 (Lagarias 1985 via literature.md, memory)
        CYCLE_THROUGH_MINUS_17,  # 3x+1: the negative cycle through -17 (same source)
        MAP_3X_PLUS_1,  # loads sort.js
        "search/index.html",  # loads the search index and search.js
        "maps/index.html",
        "lengths/11/index.html",
        "references/index.html",
    ],
)
def test_page_loads_with_no_console_error(browser: Any, shipped_site: Path, page: str) -> None:
    # A script error, and any file the page asks for that is not there (stylesheet, script,
    # picture: "net::ERR_FILE_NOT_FOUND" from file://), is a SEVERE console entry in Chromium;
    # test_harness.py shows that this check sees a missing stylesheet and script.
    entries = open_page(browser, shipped_site, page)
    assert console_errors(entries) == []
    assert browser.title  # the page was parsed, not an error page


def box(browser: Any, element: Any) -> dict[str, float]:
    rect: dict[str, float] = browser.execute_script("return arguments[0].getBoundingClientRect().toJSON();", element)
    return rect


def rendered_math(browser: Any, shipped_site: Path, page: str) -> Any:
    """The page's one MathML block, checked to be parsed as MathML and laid out with a size."""
    from selenium.webdriver.common.by import By

    open_page(browser, shipped_site, page)
    (math,) = browser.find_elements(By.CSS_SELECTOR, ".equation math")
    assert browser.execute_script("return arguments[0].namespaceURI;", math) == MATHML
    rect = box(browser, math)
    assert rect["width"] > 0 and rect["height"] > 0, rect
    return math


@pytest.mark.parametrize("page", [CYCLE_THROUGH_MINUS_17, CYCLE_THROUGH_1])
def test_cycle_equation_is_laid_out_as_mathml(browser: Any, shipped_site: Path, page: str) -> None:
    from selenium.webdriver.common.by import By

    math = rendered_math(browser, shipped_site, page)
    # n = B / (m^k - A) is written with mfrac; MathML Core lays a fraction out with its numerator
    # above its denominator (W3C MathML Core, "Fractions <mfrac>"). Unrendered markup would run the
    # two on one line instead.
    fractions = math.find_elements(By.CSS_SELECTOR, "mfrac")
    assert fractions
    for fraction in fractions:
        numerator, denominator = (box(browser, part) for part in fraction.find_elements(By.XPATH, "./*"))
        for part in (numerator, denominator):
            assert part["width"] > 0 and part["height"] > 0
        assert numerator["bottom"] <= denominator["top"] + 0.5, (numerator, denominator)


def test_map_definition_is_laid_out_as_mathml(browser: Any, shipped_site: Path) -> None:
    from selenium.webdriver.common.by import By

    math = rendered_math(browser, shipped_site, MAP_3X_PLUS_1)
    # The 3x+1 shortcut map has two cases, n/2 for even n and (3n+1)/2 for odd n (Lagarias 1985
    # via literature.md, memory): one row of the mtable each, laid out one under the other like the
    # rows of a table (W3C MathML Core, "Tables <mtable>").
    rows = [box(browser, row) for row in math.find_elements(By.CSS_SELECTOR, "mtable > mtr")]
    assert len(rows) == 2
    assert all(row["width"] > 0 and row["height"] > 0 for row in rows)
    assert rows[0]["bottom"] <= rows[1]["top"] + 0.5, rows


def test_screenshot_of_a_cycle_page_is_a_png_of_the_window(browser: Any, shipped_site: Path, tmp_path: Path) -> None:
    open_page(browser, shipped_site, CYCLE_THROUGH_MINUS_17)
    folder = Path(os.environ.get("PERIPLUS_SCREENSHOTS") or tmp_path)
    folder.mkdir(parents=True, exist_ok=True)
    shot = folder / "cycle-3x-plus-1-minus-17.png"
    assert browser.save_screenshot(str(shot))
    # Read back from the file with the decoder of png.py (PNG specification, W3C / ISO/IEC 15948).
    image = read_png(shot.read_bytes())
    width, height, scale = browser.execute_script("return [innerWidth, innerHeight, devicePixelRatio];")
    assert (image.width, image.height) == (round(width * scale), round(height * scale))
    assert image.colours(enough=2) > 1  # not a blank page


@pytest.mark.parametrize(
    "width",
    [
        390,  # a common phone's width in CSS pixels (common practice, no source)
        320,  # the width WCAG 2.1 success criterion 1.4.10 (Reflow) requires content to fit
    ],
)
@pytest.mark.parametrize("page", ["index.html", CYCLE_THROUGH_MINUS_17, MAP_3X_PLUS_1, "search/index.html"])
def test_page_fits_a_phone_width(browser: Any, shipped_site: Path, page: str, width: int) -> None:
    # Reflow (WCAG 2.1 SC 1.4.10): no scrolling sideways at 320 CSS px, except for content that
    # needs two dimensions, such as data tables; the site's tables scroll inside their own region.
    browser.set_window_size(width, 844)
    entries = open_page(browser, shipped_site, page)
    inner, scroll, client = browser.execute_script(
        "const e = document.documentElement; return [innerWidth, e.scrollWidth, e.clientWidth];"
    )
    assert inner == width  # the window really is that narrow
    assert scroll <= client, f"{page} is {scroll} px wide in a {client} px window"
    assert console_errors(entries) == []


@pytest.mark.parametrize("width", [390, 320])  # a phone's width; WCAG 2.1 SC 1.4.10 (Reflow)
def test_a_list_of_numbers_never_breaks_a_number(browser: Any, shipped_site: Path, width: int) -> None:
    # 181x+1 has a coverage claim with hundreds of unresolved starts: the list wraps between numbers, and each
    # number (such as -40 or 91) stays on one line, so that none reads as two (common practice, no source).
    from selenium.webdriver.common.by import By

    browser.set_window_size(width, 844)
    open_page(browser, shipped_site, "maps/181x-plus-1/index.html")
    items = browser.find_elements(By.CSS_SELECTOR, "ul.numbers li")
    assert len(items) >= 50  # the first of them; the data file has all
    lines = browser.execute_script("return arguments[0].map(e => e.getClientRects().length);", items)
    assert set(lines) == {1}
    tops = {round(box(browser, item)["top"]) for item in items}
    assert len(tops) > 1  # the list itself wraps onto several lines
