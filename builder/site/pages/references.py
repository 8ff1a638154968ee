"""The references page: every source the record cites, how sure the record is of it, and what cites it."""

from __future__ import annotations

from dataclasses import dataclass

from builder.catalogue.model import Reference
from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext, reference_href, reference_label
from builder.site.paths import map_url

__all__ = ["KIND", "ReferenceEntry"]

SECTION = "references"


@dataclass(frozen=True, slots=True)
class ReferenceEntry:
    """One source on the references page, with the maps and cycles that cite it."""

    ref: Reference
    cited_by: list[Link]

    @property
    def label(self) -> str:
        return reference_label(self.ref)

    @property
    def authors(self) -> str:
        return ", ".join(self.ref.authors)

    @property
    def href(self) -> str | None:
        return reference_href(self.ref)


def reference_pages(site: SiteContext) -> list[Page]:
    cited_by: dict[str, list[Link]] = {key: [] for key in site.references}
    for map_id, entry in site.cat.maps.items():
        for key in entry.references:
            cited_by[key].append(Link(entry.name, map_url(map_id), "map"))
    for map_id, cycles in site.cat.cycles.items():
        for cycle in cycles:
            for key in cycle.provenance.references:
                cited_by[key].append(site.cycle_link((map_id, cycle.id)))
    entries = [ReferenceEntry(ref, cited_by[key]) for key, ref in site.references.items()]
    context = {"entries": entries}
    return [Page("references/index.html", "references.html", "References", SECTION, context, HOME_CRUMBS)]


KIND = PageKind(
    "references", site_pages=reference_pages, nav=NavEntry(SECTION, "References", "references/index.html", place=4)
)
