"""The 404 page as a reader meets it: served by a host at whatever address was asked for, or opened from disk.

Static hosts answer a missing address with the site's 404.html, at that address and at any depth (common
practice, no source); ``periplus preview`` does the same (builder.site.preview), so it stands in for the host.
The page must look like the site (its stylesheet applied) and every link on it must lead to a page that exists.
"""

from __future__ import annotations

import threading
import urllib.error
import urllib.request
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from builder.site.preview import open_server

from .conftest import console_errors, open_page, wait_for

# Addresses the shipped site does not have, at the root and deeper (the first is the example).
MISSING = ("maps/3x-plus-1/minus-99/", "maps/3x-plus-1/minus-99/index.html", "no-such-page", "a/b/c/d/e/f.html")

# What the site's stylesheet gives every page: the header's colours and the body's font (read from a real page).
LOOK = """
const header = getComputedStyle(document.querySelector('.site-header'));
const body = getComputedStyle(document.body);
return [header.backgroundColor, header.borderBottomWidth, body.fontFamily, body.maxWidth, body.margin];
"""

# The site's own links (written as relative addresses in the file, whatever the page's script made of them):
# neither a fragment of the page nor an address elsewhere, such as the licence's page.
LINKS = """
return Array.from(document.querySelectorAll('a[href], link[href]'))
  .map(el => el.href)
  .filter(href => !href.includes('#') && (href.startsWith(location.origin + '/') || href.startsWith('file:')));
"""


@pytest.fixture(scope="module")
def host(shipped_site: Path) -> Iterator[str]:
    """The shipped site served at http://127.0.0.1:<port>/, answering missing addresses with its 404 page."""
    server = open_server(shipped_site, 0)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    try:
        yield f"http://127.0.0.1:{server.server_address[1]}/"
    finally:
        server.shutdown()
        server.server_close()


def _load(browser: Any, url: str) -> list[dict[str, Any]]:
    browser.get(url)
    wait_for(browser, "document.readyState === 'complete'", f"{url} to load")
    return list(browser.get_log("browser"))


def _status(url: str) -> int:
    try:
        with urllib.request.urlopen(url, timeout=30) as answer:
            return int(answer.status)
    except urllib.error.HTTPError as error:
        error.close()
        return error.code


def test_the_404_page_served_at_any_depth_looks_like_the_site_and_links_to_real_pages(browser: Any, host: str) -> None:
    _load(browser, host + "index.html")
    look = browser.execute_script(LOOK)
    for missing in MISSING:
        logged = _load(browser, host + missing)
        assert browser.title.startswith("Page not found"), missing
        assert browser.execute_script(LOOK) == look, missing
        # The host answered this address with 404 (that it is the 404 page is the title above); a failed load
        # of a stylesheet, icon or script would be logged as well, so only that one line may be there.
        errors = [e for e in console_errors(logged) if not e.startswith(f"{host}{missing} - ")]
        assert errors == [], (missing, errors)
        links = browser.execute_script(LINKS)
        assert len(links) >= 10, links  # the menu, the footer, the page's own three links
        for url in links:
            assert url.startswith(host), (missing, url)
            assert _status(url) == 200, (missing, url)


def test_the_404_page_opened_from_disk_looks_like_the_site_and_links_to_real_pages(
    browser: Any, shipped_site: Path
) -> None:
    open_page(browser, shipped_site, "index.html")
    look = browser.execute_script(LOOK)
    logged = open_page(browser, shipped_site, "404.html")
    assert console_errors(logged) == []
    assert browser.execute_script(LOOK) == look
    links = browser.execute_script(LINKS)
    assert len(links) >= 10, links
    for url in links:
        assert url.startswith(shipped_site.as_uri() + "/"), url
        target = Path(urllib.request.url2pathname(url.removeprefix("file://").split("#", 1)[0]))
        assert target.is_file(), url
