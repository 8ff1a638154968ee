"""The site map: a link to every page made before it, and to itself, in order of address."""

from __future__ import annotations

from collections.abc import Sequence

from builder.site.pages.common import HOME_CRUMBS, Link, Page, PageKind
from builder.site.pages.context import SiteContext
from builder.site.pages.not_found import NOT_FOUND

__all__ = ["KIND"]


def site_map_pages(site: SiteContext, earlier: Sequence[Page]) -> list[Page]:
    links = [Link(p.title, p.path) for p in earlier if p.path != NOT_FOUND]
    links.append(Link("Site map", "sitemap/index.html"))
    context = {"links": sorted(links, key=lambda link: link.url)}
    return [Page("sitemap/index.html", "sitemap.html", "Site map", "", context, HOME_CRUMBS)]


KIND = PageKind("site map", site_pages=site_map_pages)
