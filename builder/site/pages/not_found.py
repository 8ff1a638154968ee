"""The page a host shows for an address the site does not have (404.html).

A static host serves 404.html at whatever address was asked for, at any depth, so the page can rely on no
relative address: the site's stylesheet and the script static/not-found.js are inside it (the only inline
style and script of the site, each the static file's text exactly), and its links, relative to the site's
root folder (where the file is, opened from disk), are made absolute by that script when it is served over
http(s): under the path of the record's published address, or under "/" (the site served from a host's root).
"""

from __future__ import annotations

import functools
from importlib import resources
from urllib.parse import urlsplit

from markupsafe import Markup

from builder.site.pages.common import Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KIND", "NOT_FOUND", "not_found_pages"]

NOT_FOUND = "404.html"


@functools.cache
def _inline_assets() -> tuple[Markup, Markup]:
    """The site's stylesheet and the 404 page's script, as the texts of a style and a script element."""
    static = resources.files("builder.templates") / "static"  # builder.site.templating.template_dir()'s
    css = (static / "style.css").read_text(encoding="utf-8")
    script = (static / "not-found.js").read_text(encoding="utf-8")
    # Only "</style" or "</script" could end the element early, and "<!--" opens an escaped state in a script
    # (WHATWG HTML, raw text and script data); the site's own files have none.
    assert "</style" not in css.lower(), "expected a stylesheet that cannot close its style element"
    assert "</script" not in script.lower() and "<!--" not in script, "expected a script that stays one element"
    return Markup(css), Markup(script)


def not_found_pages(site: SiteContext) -> list[Page]:
    css, script = _inline_assets()
    root_path = urlsplit(site.base_url).path if site.base_url is not None else "/"
    context = {"inline_css": css, "inline_script": script, "root_path": root_path}
    return [Page(NOT_FOUND, "404.html", "Page not found", "", context, listed=False)]


KIND = PageKind("not found", site_pages=not_found_pages)
