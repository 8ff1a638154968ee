"""The page a host shows for an address the site does not have (404.html)."""

from __future__ import annotations

from builder.site.pages.common import Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KIND", "NOT_FOUND"]

NOT_FOUND = "404.html"


def not_found_pages(site: SiteContext) -> list[Page]:
    # A host serves 404.html at any depth: with a --base-url given for this build its links are
    # absolute; otherwise they assume the site root (the record's own address may not be this host).
    return [Page(NOT_FOUND, "404.html", "Page not found", "", fixed_root=site.fixed_root, listed=False)]


KIND = PageKind("not found", site_pages=not_found_pages)
