"""The maps page: every map of the record in one table, in display order."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

from builder.catalogue.relations import qx_plus_d
from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import MapRow, SiteContext, family_rows

__all__ = ["KIND", "MAPS_CRUMBS", "SECTION", "map_table_rows"]

#: The maps section: this page, each map's page and each cycle's page.
SECTION = "maps"
#: The breadcrumbs of the pages below this one.
MAPS_CRUMBS = (*HOME_CRUMBS, Link("Maps", "maps/index.html"))


#: The maps page lists every map itself up to this many; a larger record is listed family by family.
MAPS_LISTED = 1000


def map_table_rows(site: SiteContext, map_ids: Sequence[str]) -> list[MapRow]:
    """The rows of a table of maps.  Its column "Coprime to d" counts, for a map n/2, (qn + d)/2, the cycles
    whose members are coprime to d: for d = 1 or -1 that is every cycle (``SiteContext.coprime_count``
    gives None there, as the map's page says nothing of it); for a map of another form it stays None."""
    rows = []
    for map_id, row in zip(map_ids, site.map_rows(map_ids), strict=True):
        form = qx_plus_d(site.cat.maps[map_id])
        if row.coprime is None and form is not None and abs(form[1]) == 1:
            row = replace(row, coprime=row.cycles)
        rows.append(row)
    return rows


def maps_index_pages(site: SiteContext) -> list[Page]:
    every = map_table_rows(site, site.map_order) if len(site.cat.maps) <= MAPS_LISTED else None
    context = {"families": family_rows(site), "maps": every, "count": f"{len(site.cat.maps):,}"}
    return [Page("maps/index.html", "maps.html", "Maps", SECTION, context, HOME_CRUMBS)]


KIND = PageKind("maps index", site_pages=maps_index_pages, nav=NavEntry(SECTION, "Maps", "maps/index.html", place=2))
