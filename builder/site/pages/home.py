"""The home page: what the record is, its size and edition, its families of maps, the latest cycles, how to cite it.

The page also carries the record's schema.org description (builder.site.metadata) for search
engines, with the exports as its downloads.
"""

from __future__ import annotations

import operator
from dataclasses import dataclass, replace
from datetime import date
from typing import Any

from builder.history import RepoHistory
from builder.site.metadata import Download, dataset_jsonld, jsonld_script
from builder.site.pages.common import Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext, family_rows
from builder.site.records import newest

__all__ = ["KIND", "RECENT", "RecentCycle"]

SECTION = "home"
#: How many of the latest cycles the home page lists.
RECENT = 12


@dataclass(frozen=True, slots=True)
class RecentCycle:
    link: Link
    found_on: date
    length: int


_found_on = operator.attrgetter("provenance.found_on")


def _dataset(site: SiteContext) -> dict[str, Any]:
    """The schema.org Dataset description of the record."""
    head = site.history.head if isinstance(site.history, RepoHistory) else None
    downloads = [
        Download("data/catalogue.json", "application/json", "The whole verified record (JSON)"),
        Download("data/cycles.csv", "text/csv", "One row per cycle (CSV)"),
        Download("feed.xml", "application/atom+xml", "New cycles (Atom feed)"),
    ]
    return dataset_jsonld(
        replace(site.record, base_url=site.base_url),
        release=site.record.version,
        released_on=site.edition.released_on,
        modified_on=head.date if head else None,
        downloads=downloads,
        cycles=len(site.cycles),
        maps=len(site.cat.maps),
    )


def _citation(site: SiteContext) -> str:
    r = site.record
    where = site.base_url or "No published address yet"
    return f"{r.maintainers}. {r.title}, {site.edition.shown}. {where}. Data licence: {r.licence}."


def home_pages(site: SiteContext) -> list[Page]:
    records = site.records
    latest = newest(RECENT, zip(map(_found_on, reversed(records.values())), reversed(records), strict=True))
    recent = [(key, records[key]) for _, key in latest]
    context = {
        "cite": _citation(site),
        "dataset_jsonld": jsonld_script(_dataset(site)),
        "families": family_rows(site),
        "total_cycles": sum(len(c) for c in site.cat.cycles.values()),
        "total_maps": len(site.cat.maps),
        "recent": [RecentCycle(site.cycle_link(key), r.provenance.found_on, r.length) for key, r in recent],
    }
    return [Page("index.html", "index.html", site.record.title, SECTION, context)]


KIND = PageKind("home", site_pages=home_pages, nav=NavEntry(SECTION, "Record", "index.html", place=1))
