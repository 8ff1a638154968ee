"""Headless Chromium for the browser tests: one driver per session, each catalogue's site built once.

The browser is Debian's ``chromium`` driven by Debian's ``chromium-driver`` (``chromedriver``) through
Selenium. Pages are opened from disk (file:// addresses), as a reader who downloaded the site would
open them, so nothing here starts a server and the browser gets no flag that loosens file access.

Where no browser can be had (Selenium not installed, ``chromium`` or ``chromedriver`` not on PATH,
or the browser not starting) every test here fails with that reason: no test passes unrun, and
``.ci/run`` installs the browser and its driver.

What other browser tests can reuse:

- ``browser``: the session's driver, reset for each test to a 1280 x 900 window, its console drained;
- ``site_of``: ``site_of(catalogue)`` builds that catalogue's site once per session and returns its folder;
- ``shipped_site``: the site of the shipped catalogue;
- ``open_page``, ``console_errors``, ``time_in_page``, ``column_values``, ``sort_by``: helpers below.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any, NoReturn

import pytest

from builder.catalogue import Limits
from builder.site.build import build_site

ROOT = Path(__file__).resolve().parents[2]
WINDOW = (1280, 900)  # the window every test starts with (outer size; the page gets a little less height)
LOAD_TIMEOUT_S = 30
SCRIPT_TIMEOUT_S = 60

# Chromium's flags (common practice, no source): no sandbox because CI runs as root in a container,
# /tmp instead of a small /dev/shm, sRGB and a device scale of 1 so that screenshots have the
# window's size in pixels and the page's exact colours.
CHROMIUM_FLAGS = (
    "--headless=new",
    "--no-sandbox",
    "--disable-dev-shm-usage",
    "--disable-gpu",
    "--force-color-profile=srgb",
    "--force-device-scale-factor=1",
    f"--window-size={WINDOW[0]},{WINDOW[1]}",
)

SiteOf = Callable[..., Path]


def no_browser(reason: str) -> NoReturn:
    """Fail with the reason: the browser tests never pass unrun (.ci/run installs what they need)."""
    pytest.fail(f"the browser tests cannot run: {reason} (.ci/run installs Chromium and its driver)", pytrace=False)


def start_chromium() -> Any:
    """A Selenium driver for headless Chromium, or no_browser() with the reason there is none."""
    try:
        from selenium import webdriver
        from selenium.common.exceptions import WebDriverException
        from selenium.webdriver.chrome.service import Service
    except ImportError:
        no_browser("Selenium is not installed (python -m pip install -e '.[test]')")
    chromium, chromedriver = shutil.which("chromium"), shutil.which("chromedriver")
    if chromium is None or chromedriver is None:
        missing = " and ".join(
            name for name, path in (("chromium", chromium), ("chromedriver", chromedriver)) if not path
        )
        no_browser(f"no {missing} on PATH (on Debian: apt-get install chromium chromium-driver)")
    options = webdriver.ChromeOptions()
    options.binary_location = chromium
    for flag in CHROMIUM_FLAGS:
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    try:
        driver = webdriver.Chrome(options=options, service=Service(executable_path=chromedriver))
    except WebDriverException as error:
        no_browser(f"chromium did not start: {str(error.msg or error).strip().splitlines()[0]}")
    driver.set_page_load_timeout(LOAD_TIMEOUT_S)
    driver.set_script_timeout(SCRIPT_TIMEOUT_S)
    return driver


@pytest.fixture(scope="session")
def chromium_session() -> Iterator[Any]:
    """One driver for the whole session (starting Chromium takes a second or two)."""
    driver = start_chromium()
    yield driver
    driver.quit()


@pytest.fixture
def browser(chromium_session: Any) -> Any:
    """The session's driver at the standard window size, on a blank page, with its console drained."""
    chromium_session.get("about:blank")
    chromium_session.set_window_size(*WINDOW)
    chromium_session.get_log("browser")
    return chromium_session


@pytest.fixture(scope="session")
def site_of(tmp_path_factory: pytest.TempPathFactory, chromium_session: Any) -> SiteOf:
    """``site_of(catalogue, limits=None)``: the folder of that catalogue's site, built once per session.

    It asks for the browser first, so that without one the tests fail before any site is built.
    """
    built: dict[tuple[Path, Limits | None], Path] = {}

    def build(catalogue: Path, limits: Limits | None = None) -> Path:
        key = (catalogue.resolve(), limits)
        if key not in built:
            out = tmp_path_factory.mktemp("site") / "site"
            result = build_site(catalogue, out, limits)
            failures = [str(problem) for problem in result.report.errors][:10]
            assert result.pages > 0, f"{catalogue} did not build: {failures}"
            built[key] = out
        return built[key]

    return build


@pytest.fixture(scope="session")
def shipped_site(site_of: SiteOf) -> Path:
    return site_of(ROOT / "catalogue")


def page_url(site: Path, rel: str) -> str:
    """The file:// address of a page of a built site."""
    return (site / rel).as_uri()


def open_page(driver: Any, site: Path, rel: str) -> list[dict[str, Any]]:
    """Open a page from disk, wait until it has loaded, and return the console entries it logged."""
    driver.get(page_url(site, rel))
    wait_for(driver, "document.readyState === 'complete'", f"{rel} to load")
    return list(driver.get_log("browser"))


def console_errors(entries: list[dict[str, Any]]) -> list[str]:
    """The SEVERE entries: script errors and failed loads (a missing file shows as ERR_FILE_NOT_FOUND)."""
    return [entry["message"] for entry in entries if entry.get("level") == "SEVERE"]


def wait_for(driver: Any, condition: str, what: str, timeout_s: float = 10.0) -> None:
    """Wait until the JavaScript expression ``condition`` holds in the page."""
    from selenium.common.exceptions import TimeoutException
    from selenium.webdriver.support.ui import WebDriverWait

    try:
        WebDriverWait(driver, timeout_s, poll_frequency=0.05).until(
            lambda d: d.execute_script(f"return !!({condition});")
        )
    except TimeoutException:
        raise AssertionError(f"waited {timeout_s} s for {what}: {condition} never held") from None


# The in-page stopwatch. The clock is the page's own performance.now(), so the driver's round trips
# are not counted. The condition is checked at the start of every frame; once it holds, the time is
# read at the start of the next frame, after the frame that shows the change was rendered (so the
# figure can be up to two frames, 33 ms at 60 Hz, late; common practice, no source).
_STOPWATCH = """
const done = arguments[arguments.length - 1];
const limit = arguments[0];
const start = performance.now();
let settled = false;
function finish(value) { if (!settled) { settled = true; done(value); } }
function holds() { return !!(%(until)s); }
try { %(action)s } catch (error) { finish({error: 'the action threw: ' + error}); return; }
setTimeout(function () { finish({timeout: performance.now() - start}); }, limit);
function frame() {
  if (settled) { return; }
  let ok;
  try { ok = holds(); } catch (error) { finish({error: 'the condition threw: ' + error}); return; }
  if (ok) {
    requestAnimationFrame(function () { finish({ms: performance.now() - start}); });
  } else {
    requestAnimationFrame(frame);
  }
}
requestAnimationFrame(frame);
"""


def time_in_page(driver: Any, action: str, until: str, timeout_s: float = 10.0) -> float:
    """Milliseconds from running the JavaScript statements ``action`` in the page until the expression
    ``until`` holds and a frame showing it has been rendered, measured inside the page.

    ``action`` must not leave the page (a navigation ends the script). For example, a member search:
    ``time_in_page(browser, "document.querySelector('#search-form button').click();",
    "document.querySelector('#search-results a') !== null")``; or a column sort, which sort.js does
    within the click: ``time_in_page(browser, "document.querySelector('table.sortable th[data-type=int]
    button.sort').click();", "document.querySelector('table.sortable th[aria-sort]') !== null")``.
    Names the action declares with const or let are not seen by ``until``.
    """
    if timeout_s * 1000 + 5000 > SCRIPT_TIMEOUT_S * 1000:
        raise ValueError(f"timeout_s must leave room within the driver's script timeout of {SCRIPT_TIMEOUT_S} s")
    result = driver.execute_async_script(_STOPWATCH % {"action": action, "until": until}, round(timeout_s * 1000))
    if "error" in result:
        raise AssertionError(f"in-page timing: {result['error']}")
    if "timeout" in result:
        raise AssertionError(f"in-page timing: {until} did not hold within {timeout_s} s")
    return float(result["ms"])


# --- sortable tables (templates/static/sort.js) ---------------------------------------------------


def column_values(driver: Any, table: str, column: int) -> list[str]:
    """Each body row's sort value in one column of the table matched by the CSS selector ``table``:
    the cell's data-value when it has one, else its text (the keys sort.js sorts by)."""
    values: list[str] = driver.execute_script(
        """
        const table = document.querySelector(arguments[0]);
        const column = arguments[1];
        return Array.from(table.tBodies[0].rows, function (row) {
          const cell = row.cells[column];
          return cell.hasAttribute('data-value') ? cell.getAttribute('data-value') : cell.textContent.trim();
        });
        """,
        table,
        column,
    )
    return values


def column_headers(driver: Any, table: str) -> list[str]:
    """The header texts of the table's columns, in order."""
    headers: list[str] = driver.execute_script(
        "return Array.from(document.querySelector(arguments[0]).tHead.rows[0].cells, c => c.textContent.trim());",
        table,
    )
    return headers


def sort_by(driver: Any, table: str, header: str) -> str:
    """Click the sort button in the header of the column named ``header`` as a reader would; return
    that header's aria-sort afterwards ("ascending" or "descending")."""
    from selenium.webdriver.common.by import By

    cells = driver.find_element(By.CSS_SELECTOR, table).find_elements(By.CSS_SELECTOR, "thead th")
    (cell,) = [c for c in cells if c.text.strip() == header]
    cell.find_element(By.CSS_SELECTOR, "button.sort").click()
    state: str = cell.get_attribute("aria-sort") or ""
    return state
