"""Each map's page: its definition in MathML, its branches, notes, completeness claims and cycles.

For a map of two branches the page also draws the heuristic chance of a cycle at each length
beside the catalogued counts (builder.arith.odds).
"""

from __future__ import annotations

from markupsafe import Markup

from builder.arith.integers import to_decimal
from builder.arith.odds import length_chances, modelled
from builder.catalogue.model import MapEntry
from builder.catalogue.relations import qx_plus_d
from builder.site.markdown import render_notes
from builder.site.mathml import map_definition_mathml
from builder.site.pages.common import Link, Page, PageKind
from builder.site.pages.context import SiteContext
from builder.site.pages.maps_index import MAPS_CRUMBS, SECTION
from builder.site.paths import map_url
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
    return odds_chart(rows, title, f"odds-{entry.id}")


def map_pages(site: SiteContext, map_id: str) -> list[Page]:
    entry = site.cat.maps[map_id]
    record = site.maps[map_id]
    form = qx_plus_d(entry)
    mirror = record.mirror_map
    context = {
        "map": entry,
        "definition": map_definition_mathml(entry.modulus, entry.branches, entry.name),
        "branches": record.branches,
        "modulus": entry.modulus,
        "notes": render_notes(entry.notes),
        "references": site.reference_links(entry.references),
        "rows": site.cycle_rows((map_id, c.id) for c in record.cycles),
        "count": len(record.cycles),
        "coprime": site.coprime_count(map_id),
        "d": to_decimal(form[1]) if form else None,
        "mirror": Link(site.cat.maps[mirror].name, map_url(mirror)) if mirror and mirror != map_id else None,
        "self_mirror": mirror == map_id,
        "export": f"data/maps/{map_id}.json",
        "coverage": [(claim, claim.unresolved[:UNRESOLVED_SHOWN]) for claim in record.coverage],
        "counts_label": "Odd, even steps" if entry.modulus == 2 else "Residue counts",
        "odds_svg": _odds_svg(site, entry),
        "history": site.history_view(record.history),
        "cite": (
            f"{entry.name}. {site.record.title}, {site.edition.label}, map {map_id}, "
            f"{site.base_url}maps/{map_id}/. Data licence: {site.record.licence}."
        ),
    }
    return [Page(map_url(map_id), "map.html", entry.name, SECTION, context, MAPS_CRUMBS)]


KIND = PageKind("map", map_pages=map_pages)
