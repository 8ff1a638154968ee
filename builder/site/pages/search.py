"""The search page: a form that searches the record in the reader's browser, over data/search-index.js."""

from __future__ import annotations

from builder.site.pages.common import NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KIND"]

SECTION = "search"


def search_pages(site: SiteContext) -> list[Page]:
    return [Page("search/index.html", "search.html", "Search the record", SECTION)]


KIND = PageKind("search", site_pages=search_pages, nav=NavEntry(SECTION, "Search", "search/index.html", place=5))
