"""Stage 3: the verified model as typed records and pages, built once, for the pages and the exports.

Every number is turned into text in the records (builder.site.records), every relation is
resolved to a link and every piece of entry text that may hold Markdown is sanitised by the
page kinds (builder.site.pages); templates only place what they are given.  The same records
feed the pages and the machine-readable exports, so the two can never disagree.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from builder.catalogue.cache import VerifyCache
from builder.catalogue.model import Catalogue, Record, Reference
from builder.catalogue.relations import find_relations, relations_key
from builder.history import Changelog, Edition, NoHistory, RepoHistory
from builder.site.pages import Unit, page_units
from builder.site.pages.context import SiteContext, Sources
from builder.site.records import AboutRecord, CycleRecord, HistoryRecord, MapRecord

__all__ = ["SiteViews", "build_views"]


@dataclass(frozen=True, slots=True)
class SiteViews:
    """Everything a build writes: the units of pages, and the typed records the exports are written from."""

    site: SiteContext  # what the pages are made from
    units: list[Unit]  # every page of the site, in units made when they are rendered
    about: AboutRecord  # the record's description, as every export carries it
    maps: Mapping[str, MapRecord]  # map id -> its record with its cycles, in catalogue order
    cycles: tuple[CycleRecord, ...]  # every cycle, in catalogue order
    references: Mapping[str, Reference]  # by key, as the references file gives them
    record: Record
    edition: Edition
    base_url: str | None  # absolute, ending in "/": --base-url, else the record's; None: unpublished
    history: RepoHistory | NoHistory


def _relative(entry_path: Path, root: Path) -> str:
    # On the text (entry paths are made by joining onto the root): relative_to() costs ~20 us a path.
    text, base = str(entry_path), str(root)
    if text.startswith(base + os.sep):
        return text[len(base) + 1 :].replace(os.sep, "/")
    return entry_path.relative_to(root).as_posix()


def _history(history: RepoHistory | NoHistory, path: Path, root: Path, names: bool) -> HistoryRecord | None:
    """The git history of the entry at ``path``; None outside a repository (its path is not even written out)."""
    if isinstance(history, NoHistory):
        return None
    return HistoryRecord.of(history, _relative(path, root), names)


def build_views(
    catalogue: Catalogue,
    base_url: str | None = None,
    *,
    edition: Edition | None = None,
    changelog: Changelog | None = None,
    history: RepoHistory | NoHistory | None = None,
    cache: VerifyCache | None = None,
    digests: Mapping[str, bytes] | None = None,
) -> SiteViews:
    """Build every page's view and every export record from a verified catalogue.

    ``base_url`` (else the record's) makes permalinks, citations and the feed absolute; with neither, the
    record has no published address and they are relative.  A ``cache`` keeps
    the relations among the cycles between builds (builder.catalogue.relations.find_relations).  ``edition``,
    ``changelog`` and ``history`` come from git (builder.history); without them the site says the
    record has no history.  ``digests`` (the report's: a SHA-256 of each folder of cycle files) tell an incremental
    build which maps' pages may have changed without reading them (SiteContext.map_sources).
    """
    record = catalogue.record
    assert record is not None, "a site is built only from a catalogue whose record verifies"
    base = (base_url.rstrip("/") + "/") if base_url else record.base_url
    history = history if history is not None else NoHistory("the build did not read the repository's history")
    edition = edition if edition is not None else Edition(record.version, "unreleased", None, False)
    if changelog is None:
        reason = history.reason if isinstance(history, NoHistory) else "the build did not read the releases"
        changelog = Changelog((), "no changelog: " + reason)
    names = record.credit_committers
    relations = relations_key(catalogue)
    rel = find_relations(catalogue, cache, relations)
    maps = catalogue.maps
    by_key: dict[tuple[str, str], CycleRecord] = {}
    for map_id, cycles in catalogue.cycles.items():
        for cycle in cycles:
            past = _history(history, cycle.path, catalogue.root, names)
            by_key[rel.keys[(map_id, cycle.id)]] = CycleRecord.of(maps[map_id], cycle, rel, past)
    about = AboutRecord.of(record, edition, base)
    map_records = {
        map_id: MapRecord.of(
            entry,
            tuple(by_key[(map_id, c.id)] for c in catalogue.cycles.get(map_id, ())),
            rel,
            _history(history, entry.path, catalogue.root, names),
            about,
        )
        for map_id, entry in maps.items()
    }
    cycle_records = tuple(by_key.values())
    site = SiteContext(
        catalogue,
        rel,
        map_records,
        by_key,
        base_url=base,
        edition=edition,
        changelog=changelog,
        history=history,
        sources=Sources(relations, digests or {}),
    )
    return SiteViews(
        site, page_units(site), about, map_records, cycle_records, catalogue.references, record, edition, base, history
    )
