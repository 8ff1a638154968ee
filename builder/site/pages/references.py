"""The references page: every source the record cites, how sure the record is of it, and what cites it."""

from __future__ import annotations

from dataclasses import dataclass

from builder.catalogue.model import Reference
from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext, reference_href, reference_label
from builder.site.paths import map_url

__all__ = ["KIND", "ReferenceEntry", "reference_order"]

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


def reference_order(ref: Reference) -> tuple[tuple[tuple[str, str], ...], int, str, str]:
    """Sources by their authors' surnames as listed, then year, as a bibliography orders them (common
    practice, no source): each author's (or group's) works in year order."""
    authors = tuple((_surname(author).casefold(), author.casefold()) for author in ref.authors)
    return authors, ref.year, ref.title.casefold(), ref.key


def _surname(author: str) -> str:
    """An author as written ("J. C. Lagarias", "B. de Weger"), without the leading initials."""
    words = author.split()
    while len(words) > 1 and words[0].endswith("."):
        words.pop(0)
    return " ".join(words)


def reference_pages(site: SiteContext) -> list[Page]:
    cited_by: dict[str, list[Link]] = {key: [] for key in site.references}
    for map_id in site.map_order:  # the maps in the order the site lists them (q, then |d|), then their cycles
        entry = site.cat.maps[map_id]
        for key in entry.references:
            cited_by[key].append(Link(entry.name, map_url(map_id), "map"))
    for map_id in site.map_order:
        for cycle in site.cat.cycles.get(map_id, ()):
            for key in cycle.provenance.references:
                cited_by[key].append(site.cycle_link((map_id, cycle.id)))
    ordered = sorted(site.references.values(), key=reference_order)
    entries = [ReferenceEntry(ref, cited_by[ref.key]) for ref in ordered]
    context = {"entries": entries}
    return [Page("references/index.html", "references.html", "References", SECTION, context, HOME_CRUMBS)]


KIND = PageKind(
    "references", site_pages=reference_pages, nav=NavEntry(SECTION, "References", "references/index.html", place=4)
)
