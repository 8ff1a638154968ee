"""The maps page: every map of the record in one table, in display order."""

from __future__ import annotations

from collections.abc import Sequence

from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KIND", "MAPS_CRUMBS", "SECTION"]

#: The maps section: this page, each map's page and each cycle's page.
SECTION = "maps"
#: The breadcrumbs of the pages below this one.
MAPS_CRUMBS = (*HOME_CRUMBS, Link("Maps", "maps/index.html"))


def maps_index_pages(site: SiteContext, earlier: Sequence[Page]) -> list[Page]:
    return [Page("maps/index.html", "maps.html", "Maps", SECTION, {"maps": site.map_rows()}, HOME_CRUMBS)]


KIND = PageKind("maps index", site_pages=maps_index_pages, nav=NavEntry(SECTION, "Maps", "maps/index.html", place=2))
