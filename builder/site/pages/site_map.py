"""The site map: a link to every page but the cycles' own (each map's page lists those) and the later
pages of long tables, in order of address, a thousand links a page."""

from __future__ import annotations

from collections.abc import Sequence

from builder.site.pages.common import HOME_CRUMBS, Link, Page, PageInfo, PageKind, pagers
from builder.site.pages.context import SiteContext
from builder.site.pages.not_found import NOT_FOUND
from builder.site.paths import site_map_url

__all__ = ["KIND"]


def site_map_pages(site: SiteContext, written: Sequence[PageInfo]) -> list[Page]:
    links = [Link(p.title, p.path) for p in written if p.in_site_map and p.path != NOT_FOUND]
    links.append(Link("Site map", site_map_url()))
    links.sort(key=lambda link: link.url)
    pages = []
    for part, pager in pagers(len(links), "in order of address", site_map_url):
        title = "Site map" + (f", {pager.span}" if pager and pager.current else "")
        context = {"links": links[part], "pager": pager}
        url = site_map_url(1 + (pager.current if pager else 0))
        pages.append(Page(url, "sitemap.html", title, "", context, HOME_CRUMBS, in_site_map=False))
    return pages


KIND = PageKind("site map", index_pages=site_map_pages)
