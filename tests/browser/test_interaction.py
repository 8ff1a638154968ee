"""What a reader does on the shipped catalogue's site in headless Chromium: search by a member and
follow the result, and sort a map's table of cycles by a column.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from .conftest import ROOT, column_headers, column_values, open_page, page_url, sort_by, time_in_page, wait_for

# The 3x+1 map has a cycle through -17 of shortcut length 11 (Lagarias 1985, "The 3x+1 problem and
# its generalizations", listed in ../shared/literature.md with status memory). Its members, from -17,
# by iterating T(n) = n/2 or (3n+1)/2 by hand:
MINUS_17_MEMBERS = ["-17", "-25", "-37", "-55", "-82", "-41", "-61", "-91", "-136", "-68", "-34"]
MINUS_17_PAGE = "maps/3x-plus-1/minus-17/index.html"
TABLE = "table.sortable"


def test_member_search_finds_the_cycle_through_minus_17(browser: Any, shipped_site: Path) -> None:
    from selenium.webdriver.common.by import By

    open_page(browser, shipped_site, "search/index.html")
    browser.find_element(By.ID, "q-member").send_keys("-17")
    # Submitted as a reader would, by the form's button; time_in_page waits for the first result.
    time_in_page(
        browser,
        "document.querySelector('#search-form button[type=submit]').click();",
        "document.querySelector('#search-results a') !== null",
    )
    links = browser.find_elements(By.CSS_SELECTOR, "#search-results a")
    target = page_url(shipped_site, MINUS_17_PAGE)
    hits = [link for link in links if link.get_attribute("href") == target]
    assert len(hits) == 1, f"no single link to {target} among {[link.get_attribute('href') for link in links]}"
    hit = hits[0]
    assert "-17" in hit.text
    hit.click()
    wait_for(browser, "document.readyState === 'complete'", "the cycle page to load")
    assert browser.current_url == target
    members = [li.text for li in browser.find_elements(By.CSS_SELECTOR, "ol.members li")]
    assert members == MINUS_17_MEMBERS


def ints(values: list[str]) -> list[int]:
    """The keys of a numeric column: plain digits, or numbers written for readers with grouping commas."""
    return [int(v.replace(",", "")) for v in values]


def test_sorting_the_3x_plus_1_table_by_length(browser: Any, shipped_site: Path) -> None:
    # 3x+1 on Z has the cycles through 0, 1, -1, -5, -17 with shortcut lengths 1, 2, 1, 3, 11
    # (Lagarias 1985 via literature.md, memory).
    open_page(browser, shipped_site, "maps/3x-plus-1/index.html")
    headers = column_headers(browser, TABLE)
    member, length = headers.index("Member of least |n|"), headers.index("Length")

    def rows() -> list[tuple[int, int]]:
        return list(
            zip(ints(column_values(browser, TABLE, member)), ints(column_values(browser, TABLE, length)), strict=True)
        )

    before = rows()
    assert sorted(before) == sorted([(0, 1), (1, 2), (-1, 1), (-5, 3), (-17, 11)])
    assert [n for _, n in before] != sorted(n for _, n in before)  # so the click has something to do
    assert sort_by(browser, TABLE, "Length") == "ascending"
    after = rows()
    assert [n for _, n in after] == [1, 1, 2, 3, 11]
    assert sorted(after) == sorted(before)  # rows moved whole
    assert sort_by(browser, TABLE, "Length") == "descending"
    assert [n for _, n in rows()] == [11, 3, 2, 1, 1]


def test_sorting_the_biggest_map_by_every_numeric_column(browser: Any, shipped_site: Path) -> None:
    # The map of the shipped catalogue with the most cycle files.
    biggest = max(
        (p for p in (ROOT / "catalogue" / "cycles").iterdir() if p.is_dir()),
        key=lambda p: (len(list(p.glob("*.yaml"))), p.name),
    )
    open_page(browser, shipped_site, f"maps/{biggest.name}/index.html")
    count = len(list(biggest.glob("*.yaml")))
    numeric = browser.execute_script(
        "return Array.from(document.querySelectorAll(arguments[0] + ' thead th[data-type=int]'), th => th.textContent.trim());",
        TABLE,
    )
    assert len(numeric) >= 4
    headers = column_headers(browser, TABLE)

    def rows() -> list[tuple[str, ...]]:
        return sorted(zip(*(column_values(browser, TABLE, i) for i in range(len(headers))), strict=True))

    rows_before = rows()
    unsorted_somewhere = False
    for header in numeric:
        column = headers.index(header)
        values = ints(column_values(browser, TABLE, column))
        assert len(values) == count
        unsorted_somewhere |= values != sorted(values)
        # Exact integer order (Python's int comparison), which sort.js must match with BigInt.
        assert sort_by(browser, TABLE, header) == "ascending"
        assert ints(column_values(browser, TABLE, column)) == sorted(values)
        assert sort_by(browser, TABLE, header) == "descending"
        assert ints(column_values(browser, TABLE, column)) == sorted(values, reverse=True)
    assert unsorted_somewhere  # at least one click had rows to move
    assert rows() == rows_before  # rows moved whole
