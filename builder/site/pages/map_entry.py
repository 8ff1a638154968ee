"""Each map's page: its definition in MathML, its branches, notes, completeness claims (by start and by length)
and cycles.

For a map of two branches the page also draws the heuristic chance of a cycle at each length
beside the catalogued counts (builder.arith.odds), and shades the lengths a census claim proved complete.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

from markupsafe import Markup

from builder.arith.integers import to_decimal
from builder.arith.odds import length_chances, modelled
from builder.catalogue.model import Cycle, MapEntry
from builder.catalogue.relations import qx_plus_d
from builder.site.markdown import render_notes
from builder.site.mathml import map_definition_mathml
from builder.site.pages.common import Link, Page, PageKind, Pager, pagers
from builder.site.pages.context import SiteContext
from builder.site.pages.maps_index import MAPS_CRUMBS, SECTION
from builder.site.paths import map_table_url, map_url
from builder.site.svg import odds_chart

__all__ = ["KIND", "UNRESOLVED_SHOWN"]

#: A completeness claim lists at most this many of its unresolved starts on the page.
UNRESOLVED_SHOWN = 60
ODDS_MIN_LENGTH, ODDS_MAX_LENGTH = 40, 120


def _odds_svg(site: SiteContext, entry: MapEntry) -> Markup | None:
    """The heuristic chance per length beside the catalogued counts (2-branch maps only)."""
    if not modelled(entry.dynamics):
        return None
    cycles = site.cat.cycles.get(entry.id, ())
    top = min(ODDS_MAX_LENGTH, max([ODDS_MIN_LENGTH, *(c.length for c in cycles)]))
    counts: dict[int, int] = {}
    for c in cycles:
        counts[c.length] = counts.get(c.length, 0) + 1
    chances = length_chances(entry.dynamics, top)
    rows = [(k, chances[k - 1], counts.get(k, 0)) for k in range(1, top + 1)]
    title = f"Heuristic chance of a cycle of each length for {entry.name}, with the catalogued cycles"
    proved = max((claim.rechecked_up_to for claim in entry.census), default=0)  # what this build proved
    return odds_chart(rows, title, f"odds-{entry.id}", proved)


BY_LEAST, BY_LENGTH = "by member of least |n|", "by length, then member of least |n|"


def _table_pages(site: SiteContext, map_id: str) -> tuple[list[tuple[str, slice, Pager | None]], list[str]]:
    """The map's table pages, (order, rows, pager) each, and its cycle ids by length.

    A map with more cycles than one page holds has its table on pages of its own, in two orders
    across the whole map: by least |member| (the first page is the map's page) and by length.
    """
    cycles = site.cat.cycles.get(map_id, ())
    by_length = [c.id for c in sorted(cycles, key=lambda c: (c.length, abs(c.canonical), c.canonical < 0))]
    to_length = (Link("Order the whole map by length", map_table_url(map_id, "length", 1)),)
    least = pagers(len(cycles), BY_LEAST, lambda n: map_table_url(map_id, "least", n), to_length)
    pages: list[tuple[str, slice, Pager | None]] = [("least", rows, pager) for rows, pager in least]
    if len(least) > 1:
        to_least = (Link("Order the whole map by member of least |n|", map_url(map_id)),)
        length = pagers(len(cycles), BY_LENGTH, lambda n: map_table_url(map_id, "length", n), to_least)
        pages += [("length", rows, pager) for rows, pager in length]
    return pages, by_length


def map_pages(site: SiteContext, map_id: str, cycles: Sequence[Cycle]) -> list[Page]:
    """The map's page and its table pages, which list all its cycles (``cycles`` are all of them)."""
    entry = site.cat.maps[map_id]
    record = site.maps[map_id]
    tables, by_length = _table_pages(site, map_id)
    (_, first_rows, first_pager), more = tables[0], tables[1:]
    form = qx_plus_d(entry)
    mirror = record.mirror_map
    context = {
        "map": entry,
        "definition": map_definition_mathml(entry.modulus, entry.branches, entry.name),
        "branches": record.branches,
        "modulus": entry.modulus,
        "notes": render_notes(entry.notes),
        "references": site.reference_links(entry.references),
        "rows": site.cycle_rows((map_id, c.id) for c in record.cycles[first_rows]),
        "pager": first_pager,
        "count": len(record.cycles),
        "coprime": site.coprime_count(map_id),
        "d": to_decimal(form[1]) if form else None,
        "mirror": Link(site.cat.maps[mirror].name, map_url(mirror)) if mirror and mirror != map_id else None,
        "self_mirror": mirror == map_id,
        "export": f"data/maps/{map_id}.json",
        "coverage": [(claim, claim.unresolved[:UNRESOLVED_SHOWN]) for claim in record.coverage],
        "census": record.census,
        "counts_label": "Odd, even steps" if entry.modulus == 2 else "Residue counts",
        "odds_svg": _odds_svg(site, entry),
        "history": site.history_view(record.history),
        "cite": (
            f"{entry.name}. {site.record.title}, {site.edition.shown}, map {map_id}, "
            f"{site.cited_address(f'maps/{map_id}/')}. Data licence: {site.record.licence}."
        ),
    }
    pages = [Page(map_url(map_id), "map.html", entry.name, SECTION, context, MAPS_CRUMBS)]
    crumbs = (*MAPS_CRUMBS, Link(entry.name, map_url(map_id)))
    for order, rows, pager in more:
        assert pager is not None
        ids = [c.id for c in record.cycles[rows]] if order == "least" else by_length[rows]
        table = {
            "map": entry,
            "map_url": map_url(map_id),
            "rows": site.cycle_rows((map_id, cycle_id) for cycle_id in ids),
            "pager": pager,
            "counts_label": context["counts_label"],
        }
        title = f"{entry.name}: cycles {pager.span}, {pager.order}"
        url = pager.pages[pager.current].url
        pages.append(Page(url, "map_table.html", title, SECTION, table, crumbs, in_site_map=False))
    return pages


def map_inputs(site: SiteContext, map_id: str, cycles: Sequence[Cycle]) -> object:
    """What the map's pages and its table pages show: the entry, its history and mirror, the sources it
    cites, and for each cycle what its row shows (the fingerprint fixes the members, length and word)."""
    entry = site.cat.maps[map_id]
    mirror = site.maps[map_id].mirror_map
    rows = [(c.id, c.fingerprint, site.marks((map_id, c.id))) for c in cycles]
    return (
        replace(entry, path=entry.path.relative_to(site.cat.root)),  # where the catalogue lies is not shown
        site.maps[map_id].history,
        (mirror, site.cat.maps[mirror].name) if mirror else None,
        site.reference_links(entry.references),
        site.coprime_count(map_id),
        rows,
    )


KIND = PageKind("map", map_pages=map_pages, map_inputs=map_inputs)
