"""The site's page kinds, in the order their pages are made, and the navigation they declare.

Each kind lives in a module of its own and declares a ``PageKind`` (builder.site.pages.common).
To add a kind of page: write its module, with a function that makes its pages and, if the
navigation should link to it, a ``NavEntry``; then add the module's name to ``MODULES`` below.

Pages are not made all at once: the site is cut into units (``page_units``), each a function that
makes a few pages from the shared ``SiteContext`` when it is rendered, so a build holds one unit's
pages at a time and can hand units to worker processes.  The kinds made per map form one unit per
map (the map's pages, then its cycles' pages); every kind made for the whole site is a unit of
its own.  Kinds that list every page (the site map) are made last, from what was written.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from importlib import import_module

from builder.site.pages.common import NavEntry, Page, PageInfo, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["KINDS", "MODULES", "NAV", "Unit", "index_pages", "page_units"]

#: The modules of the page kinds, in the order their pages are made: a new kind is one more name here.
MODULES = (
    "home",
    "maps_index",
    "families",
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


@dataclass(frozen=True, slots=True)
class Unit:
    """Some pages made together: ``make`` builds them from the site when the unit is rendered."""

    name: str  # unique within a build: "map:<id>" or "site:<kind>"
    cost: int  # a rough measure of its work (a cycle's page costs 1), to share units evenly among processes
    make: Callable[[SiteContext], Iterable[Page]]
    # What its pages are made from (None: unknown, so an incremental build always makes them).
    inputs: Callable[[SiteContext], object] | None = None
    map_id: str | None = None  # for the unit of one map


def _map_unit(kinds: tuple[PageKind, ...], map_id: str, cycles: int) -> Unit:
    def make(site: SiteContext) -> Iterator[Page]:
        for kind in kinds:  # made one at a time as they are rendered: one page's text is held at once
            assert kind.map_pages is not None
            yield from kind.map_pages(site, map_id)

    def inputs(site: SiteContext) -> object:
        parts = []
        for kind in kinds:
            assert kind.map_inputs is not None
            parts.append(kind.map_inputs(site, map_id))
        return parts

    known = all(kind.map_inputs is not None for kind in kinds)
    return Unit(f"map:{map_id}", 4 + cycles, make, inputs if known else None, map_id)


def _site_unit(kind: PageKind, cycles: int) -> Unit:
    assert kind.site_pages is not None
    return Unit(f"site:{kind.name}", 1 + int(kind.cost_per_cycle * cycles), kind.site_pages, kind.site_inputs)


def page_units(site: SiteContext) -> list[Unit]:
    """Every unit of pages of the site: one per map, then one per kind made for the whole site."""
    per_map = tuple(k for k in KINDS if k.map_pages is not None)
    units = [_map_unit(per_map, map_id, len(site.cat.cycles.get(map_id, ()))) for map_id in site.cat.maps]
    units += [_site_unit(k, len(site.records)) for k in KINDS if k.site_pages is not None]
    return units


def index_pages(site: SiteContext, written: Sequence[PageInfo]) -> list[Page]:
    """The pages of the kinds made last, from every page written before them (the site map)."""
    pages: list[Page] = []
    for kind in KINDS:
        if kind.index_pages is not None:
            pages += kind.index_pages(site, written)
    return pages
