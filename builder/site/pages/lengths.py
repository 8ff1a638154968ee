"""The lengths pages: how many cycles the record has of each length, and a page per length across maps."""

from __future__ import annotations

import operator
from collections.abc import Iterator
from dataclasses import dataclass
from functools import partial
from itertools import chain

from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind, pagers
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


def _least(n: int) -> tuple[int, bool]:
    """The order of a table of cycles by their member of least |n|: by |n|, the positive member first."""
    return abs(n), n < 0


def length_pages(site: SiteContext) -> Iterator[Page]:
    """The index of lengths, then one page per length (cycles by map, then by member of least |n|), each made
    as it is rendered: the rows of all 50,000 cycles are never held at once."""
    by_length: dict[int, list[tuple[str, str]]] = {}
    for key, r in site.records.items():
        by_length.setdefault(r.length, []).append(key)
    crumbs = (*HOME_CRUMBS, Link("Lengths", "lengths/index.html"))
    rows = [
        LengthRow(k, length_url(k), len(keys), len({site.cat.maps[m].name for m, _ in keys}))
        for k, keys in sorted(by_length.items())
    ]
    yield Page("lengths/index.html", "lengths.html", "Cycles by length", SECTION, {"rows": rows}, HOME_CRUMBS)
    place = site.map_place
    for k in sorted(by_length):
        # Maps in natural order, then cycles by their member of least |n|, positive first.
        keys = sorted(by_length[k], key=lambda kk: (place[kk[0]], *_least(site.cycles[kk].canonical), kk[1]))
        order = "by map, then member of least |n|"
        for part, pager in pagers(len(keys), order, partial(length_url, k)):
            title = f"Cycles of length {k:,}" + (f", {pager.span}" if pager and pager.current else "")
            context = {
                "length": k,
                "count": f"{len(keys):,}",
                "rows": site.cycle_rows(keys[part], with_map=True),
                "pager": pager,
            }
            page = Page(
                length_url(k, 1 + (pager.current if pager else 0)), "length.html", title, SECTION, context, crumbs
            )
            page.in_site_map = pager is None or pager.current == 0
            yield page


_fingerprint = operator.attrgetter("fingerprint")


def length_inputs(site: SiteContext) -> object:
    """What the length pages show: each cycle's row (its fingerprint fixes the numbers), and the maps' names and order."""
    names = [(map_id, site.cat.maps[map_id].name) for map_id in site.map_order]
    # Each cycle's map id, id and fingerprint as lines of text, joined in C: ids and fingerprints hold
    # no line break (ids are [a-z0-9-]), and text is digested far faster than 50,000 tuples.
    keys = "\n".join(chain.from_iterable(site.records))
    prints = "\n".join(map(_fingerprint, site.records.values()))
    return names, keys, prints, sorted(site.marked.items())


KIND = PageKind(
    "lengths",
    site_pages=length_pages,
    site_inputs=length_inputs,
    cost_per_cycle=0.12,  # a row per cycle: about an eighth of a cycle's page (measured at 50,000 cycles)
    nav=NavEntry(SECTION, "Lengths", "lengths/index.html", place=3),
)
