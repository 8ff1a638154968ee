"""The data page: what each export holds, one file per map, and how a cycle's fingerprint is computed."""

from __future__ import annotations

from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KIND"]

SECTION = "data"


def data_pages(site: SiteContext) -> list[Page]:
    files = [Link(site.cat.maps[m].name, f"data/maps/{m}.json") for m in site.map_order]
    return [Page("data/index.html", "data.html", "Data exports", SECTION, {"maps": files}, HOME_CRUMBS)]


KIND = PageKind("data", site_pages=data_pages, nav=NavEntry(SECTION, "Data", "data/index.html", place=6))
