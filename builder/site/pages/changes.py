"""The changes pages: every release of the record with its counts, and a page per release of what changed.

A release is compared with the one before it, entry by entry (builder.diff); each changed entry
links to its page while the entry still exists.
"""

from __future__ import annotations

from dataclasses import dataclass

from builder.diff import KINDS, Change, field_summary
from builder.history import Step
from builder.site.pages.common import HOME_CRUMBS, Link, NavEntry, Page, PageKind
from builder.site.pages.context import SiteContext
from builder.site.paths import change_url, cycle_url, map_url, reference_url

__all__ = ["KIND", "ChangeGroup", "ChangeRow", "ReleaseRow"]

SECTION = "changes"
COUNTED = ("added", "changed", "renamed", "removed")


@dataclass(frozen=True, slots=True)
class ReleaseRow:
    """One release (or the changes not yet released) in the index, with how many entries each change touched."""

    step: Step
    title: str
    url: str
    counts: dict[str, int]


@dataclass(frozen=True, slots=True)
class ChangeRow:
    """One changed entry: the change, the entry's page while it exists, the fields that changed."""

    change: Change
    url: str | None
    fields: str


@dataclass(frozen=True, slots=True)
class ChangeGroup:
    kind: str  # map, cycle, reference or record
    rows: list[ChangeRow]


def _entry_url(site: SiteContext, c: Change) -> str | None:
    """The page of the changed entry, while the entry exists in this record."""
    if c.change == "removed":
        return None
    if c.kind == "map" and c.key in site.cat.maps:
        return map_url(c.key)
    if c.kind == "cycle":
        map_id, _, cycle_id = c.key.partition("/")
        if (map_id, cycle_id) in site.cycles:
            return cycle_url(map_id, cycle_id)
    if c.kind == "reference" and c.key in site.cat.references:
        return reference_url(c.key)
    return None


def _groups(site: SiteContext, step: Step) -> list[ChangeGroup]:
    """The step's changes by kind, each with a link to the entry's page while the entry exists."""
    groups = []
    for kind in KINDS:
        changes = [c for c in step.comparison.changes if c.kind == kind and c.change != "unchanged"]
        if changes:
            rows = [
                ChangeRow(c, _entry_url(site, c), field_summary(c, lambda name: name, lambda text: text))
                for c in changes
            ]
            groups.append(ChangeGroup(kind, rows))
    return groups


def change_pages(site: SiteContext) -> list[Page]:
    """The index of releases, newest first, then one page per release."""
    log = site.changelog
    crumbs = (*HOME_CRUMBS, Link("Changes", "changes/index.html"))
    rows = []
    pages = []
    for step in reversed(log.steps):
        counts = {change: sum(1 for c in step.comparison.changes if c.change == change) for change in COUNTED}
        title = f"Release {step.version}" if step.version is not None else "Changes not yet released"
        url = change_url(step.version)
        rows.append(ReleaseRow(step, title, url, counts))
        context = {"step": step, "counts": counts, "groups": _groups(site, step)}
        pages.append(Page(url, "release.html", title, SECTION, context, crumbs))
    context = {"rows": rows, "unavailable": log.unavailable, "shallow": log.shallow}
    index = Page("changes/index.html", "changes.html", "Releases and changes", SECTION, context, HOME_CRUMBS)
    return [index, *pages]


KIND = PageKind("changes", site_pages=change_pages, nav=NavEntry(SECTION, "Changes", "changes/index.html", place=7))
