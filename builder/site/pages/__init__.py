"""The site's page kinds, in the order their pages are made, and the navigation they declare.

Each kind lives in a module of its own and declares a ``PageKind`` (builder.site.pages.common).
To add a kind of page: write its module, with a function that makes its pages and, if the
navigation should link to it, a ``NavEntry``; then add its ``KIND`` to ``KINDS`` below.  Kinds
made for the whole site get the pages made before them (the site map lists those); kinds made
per map, when they stand next to each other in ``KINDS``, are made map by map, so each map's
page is followed by its cycles' pages.
"""

from __future__ import annotations

from itertools import groupby

from builder.site.pages import (
    changes,
    cycle_entry,
    data,
    home,
    lengths,
    map_entry,
    maps_index,
    not_found,
    references,
    search,
    site_map,
)
from builder.site.pages.common import NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KINDS", "NAV", "all_pages"]

KINDS: tuple[PageKind, ...] = (
    home.KIND,
    maps_index.KIND,
    map_entry.KIND,
    cycle_entry.KIND,
    lengths.KIND,
    references.KIND,
    changes.KIND,
    search.KIND,
    data.KIND,
    not_found.KIND,
    site_map.KIND,
)

#: The navigation bar of every page, from the kinds that declare an entry, left to right.
NAV: tuple[NavEntry, ...] = tuple(sorted((k.nav for k in KINDS if k.nav is not None), key=lambda e: e.place))


def all_pages(site: SiteContext) -> list[Page]:
    """Every page of the site, kind by kind in the order of ``KINDS``."""
    pages: list[Page] = []
    for per_map, run in groupby(KINDS, key=lambda k: k.map_pages is not None):
        kinds = list(run)
        if per_map:
            for map_id in site.cat.maps:
                for kind in kinds:
                    assert kind.map_pages is not None
                    pages += kind.map_pages(site, map_id)
        else:
            for kind in kinds:
                assert kind.site_pages is not None
                pages += kind.site_pages(site, tuple(pages))
    return pages
