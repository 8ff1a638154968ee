"""The site's tables in headless Chromium: sorting by the member of least |n| and back to the original
order, wrappers that are regions only while they scroll, tables read on a phone without hidden columns,
numbers kept on one line, and headings with one rule under them.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from .conftest import column_headers, column_values, open_page, sort_by, wait_for

TABLE = "table.sortable"
MAP_3X_PLUS_1 = "maps/3x-plus-1/index.html"
# The five cycles of 3x+1 on the integers by their member of least |n| (J. C. Lagarias, Amer. Math. Monthly
# 92 (1985), via /work/shared/literature.md, status memory), with their shortcut lengths 1, 2, 1, 3, 11.
MEMBERS = {"0": 1, "1": 2, "-1": 1, "-5": 3, "-17": 11}
LEAST = "Member of least |n|"
# The pages with tables that this part of the site writes, one of each kind.
TABLE_PAGES = ["index.html", "maps/index.html", MAP_3X_PLUS_1, "lengths/index.html", "lengths/11/index.html"]
PHONE = 390  # a common phone's width in CSS pixels (common practice, no source)


def by_abs(values: list[str]) -> list[str]:
    """Ascending by absolute value, of n and -n the positive first (arithmetic; common practice, no source)."""
    return sorted(values, key=lambda t: (abs(int(t)), int(t) < 0))


def test_the_least_member_column_sorts_by_absolute_value(browser: Any, shipped_site: Path) -> None:
    open_page(browser, shipped_site, MAP_3X_PLUS_1)
    column = column_headers(browser, TABLE).index(LEAST)
    original = column_values(browser, TABLE, column)
    assert sorted(original) == sorted(MEMBERS)
    assert sort_by(browser, TABLE, "Length") == "ascending"  # rows out of the |n| order first
    assert sort_by(browser, TABLE, LEAST) == "ascending"
    assert column_values(browser, TABLE, column) == by_abs(list(MEMBERS)) == ["0", "1", "-1", "-5", "-17"]
    assert sort_by(browser, TABLE, LEAST) == "descending"
    assert column_values(browser, TABLE, column) == ["-17", "-5", "-1", "1", "0"]


def aria_sorts(browser: Any) -> list[str | None]:
    values: list[str | None] = browser.execute_script(
        "return Array.from(document.querySelectorAll(arguments[0] + ' thead th'), th => th.getAttribute('aria-sort'));",
        TABLE,
    )
    return values


def test_a_third_click_restores_the_original_order(browser: Any, shipped_site: Path) -> None:
    open_page(browser, shipped_site, MAP_3X_PLUS_1)
    headers = column_headers(browser, TABLE)
    member, length = headers.index(LEAST), headers.index("Length")

    def rows() -> list[tuple[str, int]]:
        return list(
            zip(column_values(browser, TABLE, member), map(int, column_values(browser, TABLE, length)), strict=True)
        )

    original = rows()
    assert sorted(original) == sorted(MEMBERS.items())
    assert aria_sorts(browser) == [None] * len(headers)  # nothing claims to be sorted before a click
    assert sort_by(browser, TABLE, "Length") == "ascending"
    assert [n for _, n in rows()] == [1, 1, 2, 3, 11]
    assert sort_by(browser, TABLE, "Length") == "descending"
    assert [n for _, n in rows()] == [11, 3, 2, 1, 1]
    # The third click: the page's own order again, and no header says the rows are sorted (WAI-ARIA 1.2,
    # aria-sort: at most one header has it, "none" or absent when no sort is applied; from memory).
    assert sort_by(browser, TABLE, "Length") == ""
    assert rows() == original
    assert aria_sorts(browser) == [None] * len(headers)
    assert sort_by(browser, TABLE, "Length") == "ascending"  # and round again
    # A sort by another column, then back: the original order is the page's, not the previous sort's.
    assert sort_by(browser, TABLE, LEAST) == "ascending"
    assert sort_by(browser, TABLE, LEAST) == "descending"
    assert sort_by(browser, TABLE, LEAST) == ""
    assert rows() == original
    note = browser.execute_script("return document.querySelector('.sort-note').textContent;")
    assert "a third time for the original order" in note


WRAPPERS = """
return Array.from(document.querySelectorAll('.table-wrap'), w => ({
  role: w.getAttribute('role'), tabindex: w.getAttribute('tabindex'), label: w.getAttribute('aria-label'),
  scrolls: w.scrollWidth > w.clientWidth}));
"""


@pytest.mark.parametrize("width", [1280, PHONE])
@pytest.mark.parametrize("page", TABLE_PAGES)
def test_a_wrapper_is_a_labelled_region_only_while_it_scrolls(
    browser: Any, shipped_site: Path, page: str, width: int
) -> None:
    # axe-core 4.x rules (from memory): scrollable-region-focusable (a region that scrolls must be
    # reachable by keyboard) and landmark-unique (no two regions share a label); a wrapper that does not
    # scroll is no tab stop (issue 14).
    browser.set_window_size(width, 900)
    open_page(browser, shipped_site, page)
    wrappers = browser.execute_script(WRAPPERS)
    assert wrappers
    for w in wrappers:
        if w["scrolls"]:
            assert (w["role"], w["tabindex"]) == ("region", "0") and w["label"], w
        else:
            assert (w["role"], w["tabindex"], w["label"]) == (None, None, None), w
    labels = [w["label"] for w in wrappers if w["role"] == "region"]
    assert len(labels) == len(set(labels))


def test_a_table_that_grows_too_wide_becomes_a_region_and_back(browser: Any, shipped_site: Path) -> None:
    open_page(browser, shipped_site, MAP_3X_PLUS_1)
    wraps = browser.execute_script(WRAPPERS)
    # The branches, the basins of each of its two claims, and the cycles: none scrolls at this width.
    assert [w["role"] for w in wraps] == [None, None, None, None]
    # A member of 300 digits, as a long cycle may have: the cell keeps it on one line and the wrapper scrolls.
    browser.execute_script(
        "const a = document.querySelector(arguments[0] + ' tbody td.num a');"
        "a.dataset.was = a.textContent; a.textContent = '1' + '234'.repeat(100);"
        "window.dispatchEvent(new Event('resize'));",
        TABLE,
    )
    wait_for(browser, "document.querySelectorAll('.table-wrap[role=region]').length === 1", "the wrapper to scroll")
    wraps = browser.execute_script(WRAPPERS)
    assert wraps[-1] == {"role": "region", "tabindex": "0", "label": "Cycles of 3x+1", "scrolls": True}
    assert all(w["role"] is None for w in wraps[:-1])
    browser.execute_script(
        "const a = document.querySelector(arguments[0] + ' tbody td.num a'); a.textContent = a.dataset.was;"
        "window.dispatchEvent(new Event('resize'));",
        TABLE,
    )
    wait_for(browser, "document.querySelectorAll('.table-wrap[role=region]').length === 0", "the wrapper to fit")


CELLS_OFF_SCREEN = """
const width = document.documentElement.clientWidth;
const out = [];
for (const td of document.querySelectorAll('table.data td')) {
  const box = td.getBoundingClientRect();
  if (box.width > 0 && (box.left < 0 || box.right > width + 0.5)) { out.push(td.textContent.trim()); }
}
return out;
"""

# Each number cell's own text (not its label), as the lines it takes: a number on one line has one top.
NUMBER_LINES = """
const out = [];
for (const td of document.querySelectorAll('table.data td.num')) {
  const range = document.createRange();
  range.selectNodeContents(td);
  const tops = new Set(Array.from(range.getClientRects(), r => Math.round(r.top)));
  out.push(tops.size);
}
return out;
"""


@pytest.mark.parametrize("page", TABLE_PAGES + ["families/3x-plus-d/index.html"])
def test_on_a_phone_no_column_is_hidden_and_no_number_wraps(browser: Any, shipped_site: Path, page: str) -> None:
    browser.set_window_size(PHONE, 844)
    open_page(browser, shipped_site, page)
    assert browser.execute_script(CELLS_OFF_SCREEN) == []
    lines = browser.execute_script(NUMBER_LINES)
    assert lines and set(lines) == {1}
    # Each cell of a stacked row shows its column's label before it.
    labels = browser.execute_script(
        "return Array.from(document.querySelectorAll('table.stack tbody td'),"
        " td => getComputedStyle(td, '::before').content);"
    )
    assert all(label not in ("none", "normal", '""') for label in labels)
    assert labels or page == "lengths/index.html"  # three short columns of numbers fit a phone as they are


def test_the_pages_of_maps_are_far_shorter_on_a_phone(browser: Any, shipped_site: Path) -> None:
    # Issue 14: with its table of maps squeezed into narrow columns the home page was 17,000 px long at
    # 390 px.  The home page now lists families, and the maps page, which lists all 70 maps (counted from
    # catalogue/maps), gives each a short block of label / value lines.
    browser.set_window_size(PHONE, 844)
    heights = {}
    for page in ("index.html", "maps/index.html"):
        open_page(browser, shipped_site, page)
        heights[page] = browser.execute_script("return document.documentElement.scrollHeight;")
    assert heights["index.html"] < 8500, heights
    assert heights["maps/index.html"] < 12500, heights


def test_facts_under_a_heading_have_one_rule(browser: Any, shipped_site: Path) -> None:
    # A heading draws a rule under itself; the list of facts right under it drew a second one (issue 14).
    open_page(browser, shipped_site, "maps/3x-plus-1/minus-17/index.html")
    pairs = browser.execute_script(
        "return Array.from(document.querySelectorAll('h2 + dl.facts, h3 + dl.facts'), dl => ["
        " getComputedStyle(dl.previousElementSibling).borderBottomWidth, getComputedStyle(dl).borderTopWidth]);"
    )
    assert len(pairs) >= 2  # "Related cycles", "In the record", "Provenance"
    for heading_rule, facts_rule in pairs:
        assert heading_rule != "0px" and facts_rule == "0px"
