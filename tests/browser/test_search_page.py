"""The search page of the shipped catalogue's site in headless Chromium, opened from disk (issue 14): it
searches as the reader types, once typing pauses; it ties each error to its field; its examples are hint
text under the fields, not placeholders; and it finds a map by its whole name.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from .conftest import console_errors, open_page, page_url, wait_for

PAGE = "search/index.html"
FIELDS = ["q-member", "q-map", "q-length", "q-word"]
# -17 is a member of the 3x+1 cycle through -17 (J. C. Lagarias, "The 3x+1 problem and its generalizations",
# Amer. Math. Monthly 92 (1985), listed in ../shared/literature.md with status memory).
MINUS_17_PAGE = "maps/3x-plus-1/minus-17/index.html"
RESULT_LINKS = "#search-results a"


def result_hrefs(driver: Any) -> list[str]:
    hrefs: list[str] = driver.execute_script(
        "return Array.from(document.querySelectorAll(arguments[0]), a => a.href);", RESULT_LINKS
    )
    return hrefs


def attribute(driver: Any, element_id: str, name: str) -> str | None:
    value: str | None = driver.execute_script(
        "return document.getElementById(arguments[0]).getAttribute(arguments[1]);", element_id, name
    )
    return value


def type_into(driver: Any, element_id: str, text: str) -> None:
    from selenium.webdriver.common.by import By

    driver.find_element(By.ID, element_id).send_keys(text)


def count_submits(driver: Any) -> None:
    """Count the form's submit events in window.submits (the page's own handler stops the navigation)."""
    driver.execute_script(
        "window.submits = 0;"
        "document.getElementById('search-form').addEventListener('submit', () => { window.submits += 1; });"
    )


def test_typing_searches_without_submitting_and_the_address_follows(browser: Any, shipped_site: Path) -> None:
    # Issue 14: "The search runs only on submit"; results must update as the reader types.
    entries = open_page(browser, shipped_site, PAGE)
    count_submits(browser)
    type_into(browser, "q-member", "-17")
    wait_for(browser, f"document.querySelector('{RESULT_LINKS}') !== null", "results without a submit")
    assert browser.execute_script("return window.submits;") == 0
    assert result_hrefs(browser)[0] == page_url(shipped_site, MINUS_17_PAGE)  # 3x+1 first: natural order
    # The query string follows the fields, so the address of the page can be kept or shared.
    assert browser.current_url == page_url(shipped_site, PAGE) + "?member=-17"
    type_into(browser, "q-map", "3x+1")
    wait_for(browser, "location.search === '?member=-17&map=3x%2B1'", "the address to follow the map field")
    wait_for(browser, f"document.querySelectorAll('{RESULT_LINKS}').length === 1", "one result for -17 in 3x+1")
    assert result_hrefs(browser) == [page_url(shipped_site, MINUS_17_PAGE)]
    assert console_errors(entries + list(browser.get_log("browser"))) == []


# Types -, -1, -17 one keystroke every 100 ms, as a reader would, and records when each input event
# came and each time a list of results was put in the page.
_TYPE_SLOWLY = """
const done = arguments[arguments.length - 1];
const input = document.getElementById('q-member');
const results = document.getElementById('search-results');
const typed = [];
const renders = [];
new MutationObserver(function () {
  if (results.querySelector('a')) { renders.push(performance.now()); }
}).observe(results, {childList: true});
['-', '-1', '-17'].forEach(function (value, i) {
  setTimeout(function () {
    input.value = value;
    input.dispatchEvent(new Event('input', {bubbles: true}));
    typed.push(performance.now());
  }, 100 * i);
});
setTimeout(function () { done({typed: typed, renders: renders}); }, 200 + 2000);
"""


def test_the_search_waits_until_typing_pauses(browser: Any, shipped_site: Path) -> None:
    # Debouncing (common practice, no source): a search as one types starts only after a pause of a few
    # hundred milliseconds, so one search runs for -17 and none for the half-typed - and -1.
    open_page(browser, shipped_site, PAGE)
    pause = browser.execute_script("return window.Periplus.search.DEBOUNCE_MS;")
    assert 150 <= pause <= 500
    timing = browser.execute_async_script(_TYPE_SLOWLY)
    typed, renders = timing["typed"], timing["renders"]
    assert len(typed) == 3 and renders, "no results"
    # Timers never fire early; 5 ms allows for the coarsening of the page's clock.
    for shown in renders:
        last_key = max(t for t in typed if t < shown)
        assert shown - last_key >= pause - 5, f"results {shown - last_key:.0f} ms after a keystroke"
    if max(b - a for a, b in zip(typed, typed[1:], strict=False)) < pause - 5:  # a busy machine may delay a key
        assert len(renders) == 1, f"results were put in the page {len(renders)} times"
    assert renders[-1] - typed[-1] <= 2000
    assert result_hrefs(browser)[0] == page_url(shipped_site, MINUS_17_PAGE)


def test_submitting_searches_at_once_and_only_once(browser: Any, shipped_site: Path) -> None:
    # Enter submits the form (HTML, implicit submission); the search then must not run again when the
    # pause after typing ends.
    open_page(browser, shipped_site, PAGE)
    browser.execute_script(
        "window.renders = 0; const r = document.getElementById('search-results');"
        "new MutationObserver(() => { if (r.querySelector('a')) { window.renders += 1; } })"
        ".observe(r, {childList: true});"
    )
    type_into(browser, "q-member", "-17\n")
    wait_for(browser, f"document.querySelector('{RESULT_LINKS}') !== null", "results after Enter")
    browser.execute_async_script("setTimeout(arguments[arguments.length - 1], 800);")
    assert browser.execute_script("return window.renders;") == 1
    assert browser.current_url.endswith("?member=-17")


def error_state(driver: Any, field: str) -> dict[str, Any]:
    """What a reader and a screen reader are told about a field: aria-invalid, the texts of the elements
    its aria-describedby names (visible or not), and the status line."""
    state: dict[str, Any] = driver.execute_script(
        """
        const input = document.getElementById(arguments[0]);
        const ids = (input.getAttribute('aria-describedby') || '').split(/\\s+/).filter(Boolean);
        return {
          invalid: input.getAttribute('aria-invalid'),
          described: ids.map(id => {
            const el = document.getElementById(id);
            return el === null ? [id, null, false] : [id, el.textContent.trim(), el.offsetParent !== null];
          }),
          errorShown: (document.getElementById(arguments[0] + '-error') || {}).offsetParent != null,
          status: document.getElementById('search-status').textContent
        };
        """,
        field,
    )
    return state


def test_an_error_is_tied_to_its_field_and_cleared_when_fixed(browser: Any, shipped_site: Path) -> None:
    # WAI-ARIA 1.2 (aria-invalid, aria-describedby) and WCAG 2.1 SC 3.3.1 "Error Identification" (from
    # memory): the field says it is invalid, and its description holds the message, which is shown.
    from selenium.webdriver.common.keys import Keys

    entries = open_page(browser, shipped_site, PAGE)
    type_into(browser, "q-member", "1x")
    wait_for(browser, "document.getElementById('q-member').getAttribute('aria-invalid') === 'true'", "the mark")
    state = error_state(browser, "q-member")
    ids = [d[0] for d in state["described"]]
    assert ids == ["q-member-error", "q-member-hint"]
    message = state["described"][0][1]
    assert message.startswith("Enter a whole number") and state["described"][0][2]
    assert state["status"].startswith("Not searched: correct the Member field")
    assert browser.find_elements("css selector", RESULT_LINKS) == []
    for other in ("q-map", "q-length", "q-word"):
        assert attribute(browser, other, "aria-invalid") is None
    type_into(browser, "q-member", Keys.BACKSPACE * 2 + "-17")
    wait_for(browser, f"document.querySelector('{RESULT_LINKS}') !== null", "results once the field is fixed")
    fixed = error_state(browser, "q-member")
    assert fixed["invalid"] is None and not fixed["errorShown"]
    assert [d[0] for d in fixed["described"]] == ["q-member-hint"]
    assert console_errors(entries + list(browser.get_log("browser"))) == []


def test_submitting_marks_every_bad_field_and_moves_to_the_first(browser: Any, shipped_site: Path) -> None:
    # Common practice, no source: a submitted form with mistakes takes the reader to the first of them.
    open_page(browser, shipped_site, PAGE)
    type_into(browser, "q-length", "0")
    type_into(browser, "q-word", "ab")
    type_into(browser, "q-member", "-17\n")
    wait_for(browser, "document.activeElement.id === 'q-length'", "focus on the first field that does not parse")
    assert attribute(browser, "q-length", "aria-invalid") == "true"
    assert attribute(browser, "q-word", "aria-invalid") == "true"
    assert attribute(browser, "q-member", "aria-invalid") is None
    assert attribute(browser, "q-word", "aria-describedby") == "q-word-error q-word-hint"
    status = error_state(browser, "q-length")["status"]
    assert status == "Not searched: correct the Length and Word fragment fields (the message is under each)."


def test_a_lone_minus_sign_waits_for_the_digits(browser: Any, shipped_site: Path) -> None:
    # A reader typing -17 pauses after "-": that is the start of a number, not a mistake (common
    # practice, no source). A submitted "-" is a mistake.
    open_page(browser, shipped_site, PAGE)
    type_into(browser, "q-member", "-")
    wait_for(browser, "document.getElementById('search-status').textContent.startsWith('Waiting')", "the pause")
    assert error_state(browser, "q-member")["invalid"] is None
    assert error_state(browser, "q-member")["status"] == "Waiting for the rest of the Member field."
    type_into(browser, "q-member", "\n")
    wait_for(browser, "document.getElementById('q-member').getAttribute('aria-invalid') === 'true'", "the mark")


def test_examples_are_hints_under_the_fields_not_placeholders(browser: Any, shipped_site: Path) -> None:
    # Issue 14: "The grey placeholders look like values already typed." Each field has a label and its
    # examples as visible text tied to it by aria-describedby (WAI-ARIA 1.2; common practice, no source).
    open_page(browser, shipped_site, PAGE)
    fields: list[dict[str, Any]] = browser.execute_script(
        """
        return Array.from(document.querySelectorAll('#search-form input'), input => ({
          id: input.id,
          placeholder: input.getAttribute('placeholder'),
          labels: Array.from(input.labels, l => l.textContent.trim()),
          hints: (input.getAttribute('aria-describedby') || '').split(/\\s+/).filter(Boolean).map(id => {
            const el = document.getElementById(id);
            return el && el.offsetParent !== null ? el.textContent.trim() : null;
          })
        }));
        """
    )
    assert [f["id"] for f in fields] == FIELDS
    for f in fields:
        assert f["placeholder"] is None, f
        assert len(f["labels"]) == 1 and f["labels"][0], f
        assert len(f["hints"]) == 1 and f["hints"][0] is not None and "for example" in f["hints"][0], f
    hints = {f["id"]: f["hints"][0] for f in fields}
    assert "3x+1" in hints["q-map"] and "3x-plus-1" in hints["q-map"]
    # Every id on the page once; one search landmark (WAI-ARIA 1.2, landmark roles; HTML ids are unique).
    ids = browser.execute_script("return Array.from(document.querySelectorAll('[id]'), e => e.id);")
    assert len(ids) == len(set(ids))
    searches = browser.execute_script("return document.querySelectorAll('[role=search], search').length;")
    assert searches == 1


# WCAG 2.1, "relative luminance" and "contrast ratio" (definitions; formula from memory): sRGB channels
# linearised, L = 0.2126 R + 0.7152 G + 0.0722 B, ratio (L1 + 0.05) / (L2 + 0.05); SC 1.4.3 asks 4.5:1.
def luminance(rgb: tuple[float, float, float]) -> float:
    def linear(c: float) -> float:
        c /= 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    r, g, b = (linear(c) for c in rgb)
    return 0.2126 * r + 0.7152 * g + 0.0722 * b


def contrast(a: tuple[float, float, float], b: tuple[float, float, float]) -> float:
    high, low = sorted((luminance(a), luminance(b)), reverse=True)
    return (high + 0.05) / (low + 0.05)


def parse_rgb(css: str) -> tuple[float, float, float]:
    match = re.fullmatch(r"rgba?\(([\d.]+), ([\d.]+), ([\d.]+)(?:, ([\d.]+))?\)", css)
    assert match is not None and (match[4] is None or float(match[4]) == 1), css
    return (float(match[1]), float(match[2]), float(match[3]))


_COLOURS = """
function background(el) {
  for (; el; el = el.parentElement) {
    const c = getComputedStyle(el).backgroundColor;
    if (c !== 'transparent' && !/rgba\\(.*, 0\\)$/.test(c)) { return c; }
  }
  return 'rgb(255, 255, 255)';
}
return Array.from(document.querySelectorAll('#search-form .hint, #search-form .field-error:not([hidden])'),
  el => [el.id, getComputedStyle(el).color, background(el)]);
"""


@pytest.fixture
def colour_scheme(browser: Any) -> Iterator[Any]:
    """The browser, with the page's colour scheme set by ``colour_scheme.set("dark")``; set back afterwards."""

    class Scheme:
        def set(self, scheme: str) -> None:
            browser.execute_cdp_cmd(
                "Emulation.setEmulatedMedia", {"features": [{"name": "prefers-color-scheme", "value": scheme}]}
            )

    yield Scheme()
    browser.execute_cdp_cmd("Emulation.setEmulatedMedia", {"features": []})


@pytest.mark.parametrize("scheme", ["light", "dark"])
def test_hints_and_errors_are_readable_in_both_schemes(
    browser: Any, shipped_site: Path, colour_scheme: Any, scheme: str
) -> None:
    colour_scheme.set(scheme)
    browser.get(page_url(shipped_site, PAGE) + "?member=1x&length=0")  # the fields filled from the address
    wait_for(browser, "document.getElementById('q-member').getAttribute('aria-invalid') === 'true'", "the errors")
    page = parse_rgb(browser.execute_script("return getComputedStyle(document.body).backgroundColor;"))
    assert (luminance(page) < 0.1) == (scheme == "dark"), "the scheme asked for is the one shown"
    colours = browser.execute_script(_COLOURS)
    shown = {element_id for element_id, _, _ in colours}
    assert shown == {f"{f}-hint" for f in FIELDS} | {"q-member-error", "q-length-error"}
    for element_id, colour, back in colours:
        ratio = contrast(parse_rgb(colour), parse_rgb(back))
        assert ratio >= 4.5, f"{element_id}: {colour} on {back} is {ratio:.2f}:1 in the {scheme} scheme"


def test_a_map_is_found_by_its_whole_name(browser: Any, shipped_site: Path) -> None:
    # Issue 14: "A map search for '3x+5' also returns 3x+53, 3x+55 and 3x+59."
    open_page(browser, shipped_site, PAGE)
    type_into(browser, "q-map", "3x+5")
    wait_for(browser, f"document.querySelector('{RESULT_LINKS}') !== null", "the cycles of 3x+5")
    texts: list[str] = browser.execute_script(
        "return Array.from(document.querySelectorAll(arguments[0]), a => a.textContent);", RESULT_LINKS
    )
    files = len(list((Path(__file__).resolve().parents[2] / "catalogue" / "cycles" / "3x-plus-5").glob("*.yaml")))
    assert len(texts) == files > 0
    assert all(t.startswith("3x+5: ") for t in texts), texts
    assert all("/maps/3x-plus-5/" in href for href in result_hrefs(browser))
