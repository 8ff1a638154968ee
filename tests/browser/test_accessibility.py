"""Accessibility of every page kind, checked by axe-core in Chromium at a desktop and a phone width.

axe-core (the npm package, installed by ``.ci/run`` from tests/browser/package.json) is a general-purpose
accessibility engine: its rules test the WCAG 2 success criteria and common best practice.  Its script is
loaded into each page as the page is opened from disk, and ``axe.run`` must find no violation at all, in
the light and the dark colour scheme (the stylesheet has both: prefers-color-scheme, Media Queries Level 5).

Without the package (``npm ci --prefix tests/browser``) the tests fail, saying what to install.

While each page is open, a screenshot of it (the whole page, up to SHOT_HEIGHT px) is saved into SCREENSHOTS
(``screenshots/`` at the top of the repository, or the folder $PERIPLUS_SCREENSHOTS names), for a reviewer
to look at: ``<page>-<width>-<scheme>.png``.
"""

from __future__ import annotations

import os
import re
from pathlib import Path
from typing import Any

import pytest

from .conftest import ROOT, console_errors, no_browser, wait_for
from .png import read_png

AXE = Path(__file__).resolve().parent / "node_modules" / "axe-core" / "axe.min.js"
SCREENSHOTS = Path(os.environ.get("PERIPLUS_SCREENSHOTS") or ROOT / "screenshots")
SHOT_HEIGHT = 6000  # taller pages are cut there (a screenshot of the 17,000 px home page helped no one)

# One page of each kind a reader meets, with the hardest case of each where it matters: the biggest map
# of qx+1 maps (181x+1, with its coverage claim's unresolved starts), a cycle of 100 steps (its equation
# overflows a phone), a length page with cycles of many maps, a search with results and one with errors.
PAGES = (
    "index.html",
    "maps/3x-plus-1/index.html",
    "maps/181x-plus-1/index.html",
    "maps/3x-plus-1/minus-17/index.html",
    "maps/3x-plus-85/7/index.html",
    "lengths/index.html",
    "lengths/2/index.html",
    "search/index.html",
    "search/index.html?member=-17",
    "search/index.html?member=abc&length=0",
    "references/index.html",
    "changes/index.html",
    "404.html",
)
WIDTHS = (1280, 390)  # a desktop window and a phone (CSS pixels)

RUN = """
const done = arguments[arguments.length - 1];
axe.run(document, {resultTypes: ['violations']}).then(
  r => done(r.violations.map(v => ({id: v.id, help: v.help, nodes: v.nodes.map(n => n.target.join(' '))}))),
  e => done([{id: 'axe-error', help: String(e), nodes: []}]));
"""


@pytest.fixture(scope="module")
def axe_script() -> str:
    if not AXE.is_file():
        no_browser(f"no axe-core at {AXE} (npm ci --prefix tests/browser)")
    return AXE.read_text(encoding="utf-8")


@pytest.mark.parametrize("scheme", ["light", "dark"])
@pytest.mark.parametrize("width", WIDTHS)
@pytest.mark.parametrize("rel", PAGES)
def test_axe_finds_no_violation(
    browser: Any, shipped_site: Path, axe_script: str, rel: str, width: int, scheme: str
) -> None:
    browser.execute_cdp_cmd(
        "Emulation.setEmulatedMedia", {"features": [{"name": "prefers-color-scheme", "value": scheme}]}
    )
    try:
        browser.set_window_size(width, 900)
        path, _, query = rel.partition("?")
        browser.get((shipped_site / path).as_uri() + (f"?{query}" if query else ""))
        wait_for(browser, "document.readyState === 'complete'", f"{rel} to load")
        if query:  # the search page searches what its address asks for as it loads: wait for its answer
            wait_for(browser, "document.querySelector('#search-status').textContent.trim() !== ''", "the search")
        assert console_errors(browser.get_log("browser")) == []
        save_screenshot(browser, rel, width, scheme)
        browser.execute_script(axe_script)
        violations = browser.execute_async_script(RUN)
    finally:
        browser.execute_cdp_cmd("Emulation.setEmulatedMedia", {"features": []})
    assert violations == [], "\n".join(f"{v['id']}: {v['help']}: {v['nodes'][:5]}" for v in violations)


def save_screenshot(browser: Any, rel: str, width: int, scheme: str) -> None:
    """The whole page (up to SHOT_HEIGHT px) as a PNG in SCREENSHOTS, read back to check it is one."""
    height = browser.execute_script("return document.documentElement.scrollHeight;")
    browser.set_window_size(width, min(max(int(height), 400), SHOT_HEIGHT) + 100)
    SCREENSHOTS.mkdir(parents=True, exist_ok=True)
    name = re.sub(r"[^a-z0-9]+", "-", re.sub(r"(index)?\.html", "", rel).lower()).strip("-") or "home"
    shot = SCREENSHOTS / f"{name}-{width}-{scheme}.png"
    assert browser.save_screenshot(str(shot))
    image = read_png(shot.read_bytes())  # PNG specification (W3C / ISO/IEC 15948), through png.py
    assert image.colours(enough=2) > 1, shot  # not a blank page
    browser.set_window_size(width, 900)
