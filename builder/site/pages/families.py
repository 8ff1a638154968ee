"""The family pages: the maps of one family (the qx+d maps of one q, the other maps of one modulus).

A record of thousands of maps cannot list them all on one page; the home page and the maps page
list the families with their counts, and each family's pages list its maps, a page at a time.
"""

from __future__ import annotations

from functools import partial

from builder.site.pages.common import Page, PageKind, pagers
from builder.site.pages.context import SiteContext
from builder.site.pages.maps_index import MAPS_CRUMBS, SECTION
from builder.site.paths import family_url

__all__ = ["KIND"]


def family_pages(site: SiteContext) -> list[Page]:
    pages = []
    for family, map_ids in site.families():
        order = "in order of q and |d|" if family.key.endswith("x-plus-d") else "by name"
        for part, pager in pagers(len(map_ids), order, partial(family_url, family.key)):
            title = f"Maps: {family.label}" + (f", {pager.span}" if pager and pager.current else "")
            context = {
                "family": family,
                "count": f"{len(map_ids):,}",
                "maps": site.map_rows(map_ids[part]),
                "pager": pager,
            }
            url = family_url(family.key, 1 + (pager.current if pager else 0))
            page = Page(url, "family.html", title, SECTION, context, MAPS_CRUMBS)
            page.in_site_map = pager is None or pager.current == 0
            pages.append(page)
    return pages


def family_inputs(site: SiteContext) -> object:
    """What the family pages show: every map's row, family by family."""
    return [(family, site.map_rows(map_ids)) for family, map_ids in site.families()]


KIND = PageKind("families", site_pages=family_pages, site_inputs=family_inputs)
