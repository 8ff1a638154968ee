"""The site's page kinds, in the order their pages are made, and the navigation they declare.

Each kind lives in a module of its own and declares a ``PageKind`` (builder.site.pages.common).
To add a kind of page: write its module, with a function that makes its pages and, if the
navigation should link to it, a ``NavEntry``; then add the module's name to ``MODULES`` below.  Kinds
made for the whole site get the pages made before them (the site map lists those); kinds made
per map, when they stand next to each other in ``KINDS``, are made map by map, so each map's
page is followed by its cycles' pages.
"""

from __future__ import annotations

from importlib import import_module
from itertools import groupby

from builder.site.pages.common import NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KINDS", "MODULES", "NAV", "all_pages"]

#: The modules of the page kinds, in the order their pages are made: a new kind is one more name here.
MODULES = (
    "home",
    "maps_index",
    "map_entry",
    "cycle_entry",
    "lengths",
    "references",
    "changes",
    "search",
    "data",
    "not_found",
    "site_map",
)


def _kind(name: str) -> PageKind:
    kind = import_module(f"{__name__}.{name}").KIND
    assert isinstance(kind, PageKind), f"{name}: expected a KIND that is a PageKind"
    return kind


KINDS: tuple[PageKind, ...] = tuple(_kind(name) for name in MODULES)

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
