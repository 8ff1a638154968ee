"""The maps page: every map of the record in one table, in display order."""

from __future__ import annotations

from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext, family_rows

__all__ = ["KIND", "MAPS_CRUMBS", "SECTION"]

#: The maps section: this page, each map's page and each cycle's page.
SECTION = "maps"
#: The breadcrumbs of the pages below this one.
MAPS_CRUMBS = (*HOME_CRUMBS, Link("Maps", "maps/index.html"))


#: The maps page lists every map itself up to this many; a larger record is listed family by family.
MAPS_LISTED = 1000


def maps_index_pages(site: SiteContext) -> list[Page]:
    every = site.map_rows() if len(site.cat.maps) <= MAPS_LISTED else None
    context = {"families": family_rows(site), "maps": every, "count": f"{len(site.cat.maps):,}"}
    return [Page("maps/index.html", "maps.html", "Maps", SECTION, context, HOME_CRUMBS)]


KIND = PageKind("maps index", site_pages=maps_index_pages, nav=NavEntry(SECTION, "Maps", "maps/index.html", place=2))
