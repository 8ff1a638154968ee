"""The browser tests' own instruments, checked so that they can fail: the console check sees a
missing file, the in-page stopwatch waits and times out, and the PNG reader reads what Chromium drew.
"""

from __future__ import annotations

import shutil
from pathlib import Path
from typing import Any

import pytest

from .conftest import console_errors, open_page, time_in_page
from .png import read_png


def test_console_check_sees_missing_stylesheet_and_script(browser: Any, shipped_site: Path, tmp_path: Path) -> None:
    # A map page copied out of its site: its relative links to static/style.css and static/sort.js
    # now point at files that do not exist, which is what a broken build would look like.
    shutil.copy(shipped_site / "maps" / "3x-plus-1" / "index.html", tmp_path / "alone.html")
    errors = console_errors(open_page(browser, tmp_path, "alone.html"))
    assert any("style.css" in e and "ERR_FILE_NOT_FOUND" in e for e in errors), errors
    assert any("sort.js" in e and "ERR_FILE_NOT_FOUND" in e for e in errors), errors


def test_console_check_sees_a_script_error(browser: Any, tmp_path: Path) -> None:
    (tmp_path / "throws.html").write_text(
        "<!DOCTYPE html><title>t</title><script>document.body.notAFunction();</script>", encoding="utf-8"
    )
    errors = console_errors(open_page(browser, tmp_path, "throws.html"))
    assert any("notAFunction" in e for e in errors), errors


def test_stopwatch_waits_for_the_condition(browser: Any, tmp_path: Path) -> None:
    (tmp_path / "blank.html").write_text("<!DOCTYPE html><title>t</title><p>x</p>", encoding="utf-8")
    open_page(browser, tmp_path, "blank.html")
    ms = time_in_page(
        browser,
        "setTimeout(function () { const p = document.createElement('p'); p.id = 'late';"
        " document.body.appendChild(p); }, 250);",
        "document.getElementById('late') !== null",
    )
    # A timer fires no sooner than its delay (HTML Standard, timer initialisation steps); 1 ms is
    # left for the coarsening of performance.now() (from memory: Chromium rounds it to 0.1 ms).
    assert ms >= 249, ms
    assert browser.execute_script("return document.getElementById('late') !== null;")


def test_stopwatch_reports_a_condition_that_never_holds(browser: Any, tmp_path: Path) -> None:
    (tmp_path / "blank.html").write_text("<!DOCTYPE html><title>t</title><p>x</p>", encoding="utf-8")
    open_page(browser, tmp_path, "blank.html")
    with pytest.raises(AssertionError, match="did not hold within 0.3 s"):
        time_in_page(browser, "", "document.getElementById('never') !== null", timeout_s=0.3)
    with pytest.raises(AssertionError, match="the action threw"):
        time_in_page(browser, "undefinedFunction();", "true")


# A canvas filled with a pattern whose every pixel is known, at the page's top left corner, one
# canvas pixel to one screen pixel (device scale 1 and the sRGB profile are forced in conftest.py).
CANVAS_PAGE = """<!DOCTYPE html><title>pattern</title>
<style>html, body { margin: 0; background: #fff; } canvas { display: block; }</style>
<canvas id="c" width="256" height="64"></canvas>
<script>
const c = document.getElementById('c').getContext('2d');
const image = c.createImageData(256, 64);
for (let y = 0; y < 64; y++) {
  for (let x = 0; x < 256; x++) {
    const i = 4 * (256 * y + x);
    image.data[i] = x; image.data[i + 1] = (x * y) % 256; image.data[i + 2] = (7 * x + 13 * y) % 256;
    image.data[i + 3] = 255;
  }
}
c.putImageData(image, 0, 0);
</script>"""


def test_png_reader_reads_what_chromium_drew(browser: Any, tmp_path: Path) -> None:
    (tmp_path / "pattern.html").write_text(CANVAS_PAGE, encoding="utf-8")
    open_page(browser, tmp_path, "pattern.html")
    image = read_png(browser.get_screenshot_as_png())
    stride = image.width * image.channels
    for y in range(64):
        for x in range(256):
            at = y * stride + x * image.channels
            assert tuple(image.pixels[at : at + 3]) == (x, (x * y) % 256, (7 * x + 13 * y) % 256), (x, y)
    # Beside the canvas the page is white.
    at = 10 * stride + 300 * image.channels
    assert tuple(image.pixels[at : at + 3]) == (255, 255, 255)


def test_png_reader_refuses_what_is_not_a_png() -> None:
    with pytest.raises(ValueError, match="signature"):
        read_png(b"GIF89a")
