"""The lengths pages: how many cycles the record has of each length, and a page per length across maps."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext
from builder.site.paths import length_url

__all__ = ["KIND", "LengthRow"]

SECTION = "lengths"


@dataclass(frozen=True, slots=True)
class LengthRow:
    """One length in the index: how many cycles have it, in how many maps."""

    length: int
    url: str
    count: int
    maps: int


def length_pages(site: SiteContext, earlier: Sequence[Page]) -> list[Page]:
    """The index of lengths, then one page per length (cycles by map, then by least |member|)."""
    by_length: dict[int, list[tuple[str, str]]] = {}
    for key, r in site.records.items():
        by_length.setdefault(r.length, []).append(key)
    crumbs = (*HOME_CRUMBS, Link("Lengths", "lengths/index.html"))
    rows = []
    pages = []
    for k in sorted(by_length):
        keys = sorted(by_length[k], key=lambda kk: (kk[0], abs(site.cycles[kk].canonical)))
        map_names = {site.cat.maps[m].name for m, _ in keys}
        rows.append(LengthRow(k, length_url(k), len(keys), len(map_names)))
        context = {"length": k, "rows": site.cycle_rows(keys, with_map=True)}
        pages.append(Page(length_url(k), "length.html", f"Cycles of length {k}", SECTION, context, crumbs))
    index = Page("lengths/index.html", "lengths.html", "Cycles by length", SECTION, {"rows": rows}, HOME_CRUMBS)
    return [index, *pages]


KIND = PageKind("lengths", site_pages=length_pages, nav=NavEntry(SECTION, "Lengths", "lengths/index.html", place=3))
