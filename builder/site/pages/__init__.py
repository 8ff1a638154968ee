"""The site's page kinds, in the order their pages are made, and the navigation they declare.

Each kind lives in a module of its own and declares a ``PageKind`` (builder.site.pages.common).
To add a kind of page: write its module, with a function that makes its pages and, if the
navigation should link to it, a ``NavEntry``; then add the module's name to ``MODULES`` below.

Pages are not made all at once: the site is cut into units (``page_units``), each a function that
makes a few pages from the shared ``SiteContext`` when it is rendered, so a build holds one unit's
pages at a time and can hand units to worker processes.  The kinds made per map form one unit per
map (the map's pages, then its cycles' pages), and a big map's cycle pages are made in parts, each a
unit of its own; every kind made for the whole site is a unit of its own.  Kinds that list every page (the site map) are made last, from what was written.
"""

from __future__ import annotations

import math
import zlib
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from importlib import import_module

from builder.catalogue.model import Cycle
from builder.site.pages.common import NavEntry, Page, PageInfo, PageKind
from builder.site.pages.context import SiteContext

__all__ = ["CYCLES_PER_PART", "KINDS", "MODULES", "NAV", "Unit", "index_pages", "page_units"]

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


#: A map with more cycles than this has the pages of its kinds made per cycle made in parts of about this
#: many cycles, each a unit: a note edited in a map of thousands of cycles makes one part's pages again,
#: not the map's.  A cycle's part follows from a hash of its id and the number of parts (a power of two),
#: so a cycle added or removed changes one part, until the map doubles in size or halves.
CYCLES_PER_PART = 256


@dataclass(frozen=True, slots=True)
class Unit:
    """Some pages made together: ``make`` builds them from the site when the unit is rendered."""

    name: str  # unique within a build: "map:<id>", "map:<id>:data", "map:<id>:part-<n>" or "site:<kind>"
    cost: int  # a rough measure of its work (a cycle's page costs 1), to share units evenly among processes
    make: Callable[[SiteContext], Iterable[Page]]
    # What its pages are made from (None: unknown, so an incremental build always makes them).
    inputs: Callable[[SiteContext], object] | None = None
    map_id: str | None = None  # for the units of one map
    # For the map's unit that writes its data file (data/maps/<id>.json): its inputs are what that file
    # and the map's pieces of the whole-record exports are made from.
    data: bool = False
    # What its inputs are made from, besides what every map's are (SiteContext.shared_sources), as
    # digests of files: cheaper to read than the inputs, which are not read when the sources are the
    # same as the site's it replaces (None, or None returned: unknown, so the inputs are read).
    sources: Callable[[SiteContext], object | None] | None = None


def _map_units(kinds: tuple[PageKind, ...], map_id: str, cycles: Sequence[Cycle]) -> list[Unit]:
    """The units of one map: one, or for a big map, its own pages, its data, and one per part of its cycles'.

    The unit with the map's data reads the inputs of every kind for all its cycles, whatever pages it
    makes: they are what its data file and its pieces of the exports are made from."""
    if len(cycles) <= CYCLES_PER_PART:
        return [_unit(f"map:{map_id}", kinds, kinds, map_id, cycles, 4 + len(cycles), data=True)]
    whole = tuple(kind for kind in kinds if not kind.per_cycle)
    per_cycle = tuple(kind for kind in kinds if kind.per_cycle)
    units = [
        _unit(f"map:{map_id}", whole, whole, map_id, cycles, 4 + len(cycles) // 8),
        _unit(f"map:{map_id}:data", (), kinds, map_id, cycles, 1 + len(cycles) // 8, data=True),
    ]
    count = 1 << math.ceil(math.log2(len(cycles) / CYCLES_PER_PART))
    parts: list[list[Cycle]] = [[] for _ in range(count)]
    for cycle in cycles:
        parts[zlib.crc32(cycle.id.encode()) % count].append(cycle)
    for n, part in enumerate(parts):
        if part:
            units.append(_unit(f"map:{map_id}:part-{n}", per_cycle, per_cycle, map_id, part, len(part)))
    return units


def _unit(
    name: str,
    kinds: tuple[PageKind, ...],
    read: tuple[PageKind, ...],
    map_id: str,
    cycles: Sequence[Cycle],
    cost: int,
    data: bool = False,
) -> Unit:
    """A unit that makes the pages of ``kinds`` for ``cycles`` of the map, from the inputs of the kinds ``read``."""

    def make(site: SiteContext) -> Iterator[Page]:
        for kind in kinds:  # made one at a time as they are rendered: one page's text is held at once
            assert kind.map_pages is not None
            yield from kind.map_pages(site, map_id, cycles)

    def inputs(site: SiteContext) -> object:
        parts = []
        for kind in read:
            assert kind.map_inputs is not None
            parts.append(kind.map_inputs(site, map_id, cycles))
        return parts

    def sources(site: SiteContext) -> object | None:
        return site.map_sources(map_id, cycles)

    known = all(kind.map_inputs is not None for kind in read)
    return Unit(name, cost, make, inputs if known else None, map_id, data, sources if known else None)


def _site_unit(kind: PageKind, cycles: int) -> Unit:
    assert kind.site_pages is not None
    return Unit(f"site:{kind.name}", 1 + int(kind.cost_per_cycle * cycles), kind.site_pages, kind.site_inputs)


def page_units(site: SiteContext) -> list[Unit]:
    """Every unit of pages of the site: one per map, then one per kind made for the whole site."""
    per_map = tuple(k for k in KINDS if k.map_pages is not None)
    units = [unit for map_id in site.cat.maps for unit in _map_units(per_map, map_id, site.cat.cycles.get(map_id, ()))]
    units += [_site_unit(k, len(site.records)) for k in KINDS if k.site_pages is not None]
    return units


def index_pages(site: SiteContext, written: Sequence[PageInfo]) -> list[Page]:
    """The pages of the kinds made last, from every page written before them (the site map)."""
    pages: list[Page] = []
    for kind in KINDS:
        if kind.index_pages is not None:
            pages += kind.index_pages(site, written)
    return pages
