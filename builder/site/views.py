"""Stage 3: the verified model as plain view objects, built once, for pages and exports.

Every number is turned into text here (any size, through builder.integers),
every relation is resolved to a link, and every piece of entry text that may
hold Markdown is sanitised here; templates only place what they are given.
The same records feed the pages and the machine-readable exports, so the
two can never disagree.
"""

from __future__ import annotations

import posixpath
from collections.abc import Iterable
from dataclasses import dataclass, field, replace
from typing import Any

from markupsafe import Markup

from builder.arith.fingerprint import FINGERPRINT_DIGITS, FINGERPRINT_HEADER
from builder.arith.integers import show, to_decimal
from builder.arith.odds import length_odds
from builder.arith.words import word_text
from builder.catalogue.model import Catalogue, Coverage, Cycle, MapEntry, Record, Reference
from builder.catalogue.relations import Relations, find_relations, qx_plus_d
from builder.diff import KINDS, Change, field_summary
from builder.history.changelog import Changelog, Edition, Step
from builder.history.repo import FileHistory, NoHistory, RepoHistory
from builder.site.markdown import render_notes
from builder.site.mathml import cycle_equation_mathml, map_definition_mathml
from builder.site.metadata import Download, dataset_jsonld, jsonld_script
from builder.site.svg import odds_chart, orbit_plot, word_strip

__all__ = ["Page", "SiteViews", "build_views", "change_url", "cycle_url", "map_url"]

#: Cycles up to this length show every member on their page.
MEMBERS_ON_PAGE = 1000
HEAD_MEMBERS, TAIL_MEMBERS = 500, 100
WORD_ON_PAGE = 4000
RECENT = 12
SAME_WORD_SHOWN = 12
UNRESOLVED_SHOWN = 60
ODDS_MIN_LENGTH, ODDS_MAX_LENGTH = 40, 120
#: The search index lists up to this many members of each cycle.
SEARCH_MEMBERS = 1000


def map_url(map_id: str) -> str:
    return f"maps/{map_id}/index.html"


def cycle_url(map_id: str, cycle_id: str) -> str:
    return f"maps/{map_id}/{cycle_id}/index.html"


def length_url(k: int) -> str:
    return f"lengths/{k}/index.html"


def change_url(version: str | None) -> str:
    """The page of a release's changes (versions are letters, digits, dots, hyphens, underscores)."""
    return f"changes/{version if version is not None else 'unreleased'}/index.html"


@dataclass(frozen=True, slots=True)
class Link:
    label: str
    url: str  # relative to the site root
    note: str = ""


@dataclass(slots=True)
class Page:
    """One HTML page: where it goes, which template draws it, and what it shows."""

    path: str  # relative to the site root, e.g. maps/3x-plus-1/index.html
    template: str
    title: str
    section: str  # which part of the navigation it belongs to
    context: dict[str, Any] = field(default_factory=dict)
    crumbs: tuple[Link, ...] = ()
    fixed_root: str | None = None  # an absolute site address, for pages served from any path (404)

    @property
    def root(self) -> str:
        """The path from this page back to the site root ('' or '../..' style, with a slash)."""
        if self.fixed_root is not None:
            return self.fixed_root
        depth = self.path.count("/")
        return "../" * depth


@dataclass(slots=True)
class SiteViews:
    pages: list[Page]
    records: dict[str, Any]  # the whole verified record, JSON-ready (data/catalogue.json)
    cycle_records: list[dict[str, Any]]  # one per cycle, in catalogue order
    map_records: dict[str, dict[str, Any]]  # map id -> its record with its cycles (data/maps/<id>.json)
    search_index: dict[str, Any]
    feed_entries: list[dict[str, Any]]
    record: Record
    edition: Edition
    base_url: str  # absolute, ending in "/": the --base-url given to the build, else the record's
    history: RepoHistory | NoHistory


def _surname(author: str) -> str:
    """The name without initials or a role: "T. Oliveira e Silva" -> "Oliveira e Silva"."""
    words = [w for w in author.split() if not (w.endswith(".") and len(w) <= 3) and not w.startswith("(")]
    return " ".join(words) or author


def _reference_label(ref: Reference) -> str:
    names = [_surname(a) for a in ref.authors]
    who = names[0] if len(names) == 1 else (" and ".join(names) if len(names) == 2 else f"{names[0]} et al.")
    return f"{who} ({ref.year})"


def _reference_record(ref: Reference) -> dict[str, Any]:
    return {
        "key": ref.key,
        "authors": list(ref.authors),
        "title": ref.title,
        "venue": ref.venue,
        "year": ref.year,
        "doi": ref.doi,
        "url": ref.url,
        "status": ref.status,
        "note": ref.note,
    }


def _counts_text(entry: MapEntry, cycle: Cycle) -> str:
    counts = cycle.residue_counts
    if entry.modulus == 2:
        return f"{counts[1]} odd, {counts[0]} even"
    return ", ".join(f"{r}: {c}" for r, c in enumerate(counts) if c)


def _factors(entry: MapEntry, cycle: Cycle) -> list[tuple[int, int]]:
    """A = product of a_r^count_r, with equal multipliers merged, in order of residue."""
    merged: dict[int, int] = {}
    for (a, _), count in zip(entry.branches, cycle.residue_counts, strict=True):
        if count:
            merged[a] = merged.get(a, 0) + count
    return list(merged.items())


def _equation_text(entry: MapEntry, cycle: Cycle) -> str:
    """The cycle equation in plain text, for print and for readers without MathML."""
    eq = cycle.equation
    powers = [
        f"({show(a)})^{c}" if a < 0 else (f"{show(a)}^{c}" if c > 1 else show(a))
        for a, c in _factors(entry, cycle)
        if a != 1
    ]
    product = " · ".join(powers) or "1"
    head = f"n = B / ({entry.modulus}^{cycle.length} − {product})"
    if eq.target == 0:
        return f"{head}: here {entry.modulus}^k = A and B = 0, so every start following the word is periodic"
    return f"{head} = {show(eq.offset)} / {show(eq.target)} = {show(cycle.canonical)}"


def _history_record(history: RepoHistory | NoHistory, rel: str, names: bool) -> dict[str, Any] | None:
    """When the entry's file was first added and last changed, from git (None outside a repository)."""
    if isinstance(history, NoHistory):
        return None
    found: FileHistory = history.of(rel)
    out: dict[str, Any] = {"file": rel}
    for what, commit in (("added", found.added), ("changed", found.changed)):
        out[what] = commit.date.isoformat() if commit else None
        out[f"{what}_commit"] = commit.id if commit else None
        if names:
            out[f"{what}_by"] = commit.committer if commit else None
    out["uncommitted"] = found.uncommitted
    return out


def _relative(entry_path: Any, root: Any) -> str:
    return str(entry_path.relative_to(root).as_posix())


def _cycle_record(entry: MapEntry, cycle: Cycle, rel: Relations, history: dict[str, Any] | None) -> dict[str, Any]:
    key = (entry.id, cycle.id)
    eq = cycle.equation
    prov = cycle.provenance
    return {
        "map": entry.id,
        "id": cycle.id,
        "fingerprint": cycle.fingerprint,
        "url": cycle_url(entry.id, cycle.id),
        "canonical": to_decimal(cycle.canonical),
        "length": cycle.length,
        "word": word_text(cycle.canonical_word, entry.modulus),
        "members": [to_decimal(n) for n in cycle.canonical_members],
        "residue_counts": list(cycle.residue_counts),
        "min": to_decimal(cycle.minimum),
        "max": to_decimal(cycle.maximum),
        "A": to_decimal(eq.multiplier),
        "B": to_decimal(eq.offset),
        "target": to_decimal(eq.target),
        "standard_length": cycle.standard_length,
        "shared_factor_with_increment": rel.shared_factor.get(key),
        "start_in_entry": to_decimal(cycle.start),
        "provenance": {
            "found_by": prov.found_by,
            "found_on": prov.found_on.isoformat(),
            "method": prov.method,
            "references": list(prov.references),
            "notes": prov.notes,
        },
        "history": history,
    }


def _map_record(
    entry: MapEntry, cycles: list[dict[str, Any]], rel: Relations, history: dict[str, Any] | None
) -> dict[str, Any]:
    return {
        "id": entry.id,
        "name": entry.name,
        "url": map_url(entry.id),
        "modulus": entry.modulus,
        "branches": [
            {"residue": i, "multiplier": to_decimal(a), "increment": to_decimal(b)}
            for i, (a, b) in enumerate(entry.branches)
        ],
        "summary": entry.summary,
        "notes": entry.notes,
        "references": list(entry.references),
        "mirror_map": rel.mirror_map.get(entry.id),
        "coverage": [_coverage_record(c) for c in entry.coverage],
        "history": history,
        "cycles": cycles,
    }


def _coverage_record(claim: Coverage) -> dict[str, Any]:
    return {
        "kind": claim.kind,
        "bound": to_decimal(claim.bound),
        "found_on": claim.found_on.isoformat(),
        "method": claim.method,
        "max_steps": claim.max_steps,
        "max_bits": claim.max_bits,
        "unresolved": [to_decimal(n) for n in claim.unresolved],
        "rechecked_by_this_build": claim.rechecked,
    }


def _record_about(record: Record, edition: Edition, base_url: str) -> dict[str, Any]:
    """The record's own description, as every export carries it."""
    return {
        "title": record.title,
        "description": record.description,
        "maintainers": record.maintainers,
        "licence": record.licence,
        "licence_url": record.licence_url,
        "base_url": base_url,
        "version": record.version,
        "edition": edition.label,
        "release_status": edition.status,
        "commit": edition.commit,
    }


#: How exports describe the fingerprint recipe (catalogue/README.md, "Fingerprints", has it in full).
FINGERPRINT_NOTE = (
    f"SHA-256 of the ASCII lines '{FINGERPRINT_HEADER}', the modulus m, 'a_i b_i' for each residue i = 0..m-1, "
    f"and the canonical member, each ended by a line feed; the first {FINGERPRINT_DIGITS} hexadecimal digits"
)


def build_views(
    catalogue: Catalogue,
    base_url: str | None = None,
    *,
    edition: Edition | None = None,
    changelog: Changelog | None = None,
    history: RepoHistory | NoHistory | None = None,
) -> SiteViews:
    """Build every page's view and every export record from a verified catalogue.

    ``base_url`` (else the record's) makes permalinks, citations and the feed absolute.  ``edition``,
    ``changelog`` and ``history`` come from git (builder.releases, builder.history); without them the
    site says the record has no history.
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
    rel = find_relations(catalogue)
    maps = catalogue.maps
    records_by_key: dict[tuple[str, str], dict[str, Any]] = {}
    cycle_records: list[dict[str, Any]] = []
    for map_id, cycles in catalogue.cycles.items():
        for cycle in cycles:
            past = _history_record(history, _relative(cycle.path, catalogue.root), names)
            cycle_record = _cycle_record(maps[map_id], cycle, rel, past)
            records_by_key[(map_id, cycle.id)] = cycle_record
            cycle_records.append(cycle_record)
    map_records = {
        map_id: _map_record(
            entry,
            [records_by_key[(map_id, c.id)] for c in catalogue.cycles.get(map_id, ())],
            rel,
            _history_record(history, _relative(entry.path, catalogue.root), names),
        )
        for map_id, entry in maps.items()
    }
    about = _record_about(record, edition, base)
    for map_record in map_records.values():
        map_record["record"] = about
    references = {key: _reference_record(ref) for key, ref in catalogue.references.items()}
    builder = _PageBuilder(catalogue, rel, records_by_key, map_records, base, edition, changelog, history)
    builder.fixed_root = base if base_url else None
    pages = builder.all_pages()
    whole = {
        "format": "periplus-record",
        "format_version": 2,
        "record": about,
        "note": "Every integer that belongs to a cycle is a decimal string; JSON numbers lose precision.",
        "fingerprint_recipe": FINGERPRINT_NOTE,
        "maps": [{k: v for k, v in r.items() if k not in ("cycles", "record")} for r in map_records.values()],
        "cycles": cycle_records,
        "references": references,
    }
    search = {
        "cycles": [
            {
                "map": r["map"],
                "map_name": maps[r["map"]].name,
                "cycle": r["id"],
                "fingerprint": r["fingerprint"],
                "url": r["url"],
                "length": r["length"],
                "canonical": r["canonical"],
                "word": r["word"],
                "modulus": maps[r["map"]].modulus,
                "members": r["members"][:SEARCH_MEMBERS],
                "members_truncated": len(r["members"]) > SEARCH_MEMBERS,
            }
            for r in cycle_records
        ]
    }
    feed = sorted(
        (
            {
                "map": r["map"],
                "cycle": r["id"],
                "fingerprint": r["fingerprint"],
                "title": f"{maps[r['map']].name}: cycle through {r['canonical']}",
                "url": r["url"],
                "found_on": r["provenance"]["found_on"],
                "found_by": r["provenance"]["found_by"],
                "summary": f"A cycle of length {r['length']} of {maps[r['map']].name}, least |member| "
                f"{r['canonical']}; found by {r['provenance']['found_by']}; fingerprint {r['fingerprint']}.",
            }
            for r in cycle_records
        ),
        key=lambda e: (e["found_on"], e["map"], e["cycle"]),
        reverse=True,
    )
    return SiteViews(pages, whole, cycle_records, map_records, search, feed, record, edition, base, history)


class _PageBuilder:
    def __init__(
        self,
        catalogue: Catalogue,
        rel: Relations,
        records: dict[tuple[str, str], dict[str, Any]],
        map_records: dict[str, dict[str, Any]],
        base_url: str,
        edition: Edition,
        changelog: Changelog,
        history: RepoHistory | NoHistory,
    ) -> None:
        self.base_url = base_url
        self.fixed_root: str | None = None
        self.edition = edition
        self.changelog = changelog
        self.history = history
        assert catalogue.record is not None
        self.record = catalogue.record
        self.cat = catalogue
        self.rel = rel
        self.records = records
        self.map_records = map_records
        self.cycles = {(map_id, c.id): c for map_id, cycles in catalogue.cycles.items() for c in cycles}
        self.map_order = sorted(catalogue.maps, key=lambda map_id: _display_order(catalogue.maps[map_id]))

    # -- links ---------------------------------------------------------------

    def cycle_link(self, key: tuple[str, str], note: str = "") -> Link:
        record = self.records[key]
        name = self.cat.maps[key[0]].name
        return Link(f"{name}: cycle through {record['canonical']}", record["url"], note)

    def reference_links(self, keys: Iterable[str]) -> list[dict[str, Any]]:
        out = []
        for key in keys:
            ref = self.cat.references[key]
            out.append(
                {
                    "label": _reference_label(ref),
                    "url": f"references/index.html#ref-{key}",
                    "title": ref.title,
                    "doi": ref.doi,
                    "href": f"https://doi.org/{ref.doi}" if ref.doi else ref.url,
                    "status": ref.status,
                }
            )
        return out

    def marks(self, key: tuple[str, str]) -> list[str]:
        out = []
        scaling = self.rel.scaled_from.get(key)
        if scaling is not None:
            out.append(f"{scaling.factor} × a cycle of {self.cat.maps[scaling.base[0]].name}")
        elif self.rel.shared_factor.get(key, 1) > 1:
            out.append(f"members share the factor {self.rel.shared_factor[key]} with d")
        return out

    def cycle_rows(self, keys: Iterable[tuple[str, str]], with_map: bool = False) -> list[dict[str, Any]]:
        rows = []
        for key in keys:
            r = self.records[key]
            entry = self.cat.maps[key[0]]
            rows.append(
                {
                    "url": r["url"],
                    "map_name": entry.name,
                    "map_url": map_url(entry.id),
                    "canonical": r["canonical"],
                    "length": r["length"],
                    "counts": _counts_text(entry, self.cycles[key]),
                    "counts_key": r["residue_counts"][1] if entry.modulus == 2 else r["length"],
                    "min": r["min"],
                    "max": r["max"],
                    "marks": self.marks(key),
                    "with_map": with_map,
                }
            )
        return rows

    def map_summary_rows(self) -> list[dict[str, Any]]:
        rows = []
        for map_id in self.map_order:
            entry = self.cat.maps[map_id]
            cycles = self.cat.cycles.get(map_id, ())
            coprime = None
            form = qx_plus_d(entry)
            if form is not None and abs(form[1]) > 1:
                coprime = sum(1 for c in cycles if self.rel.shared_factor.get((map_id, c.id)) == 1)
            rows.append(
                {
                    "url": map_url(map_id),
                    "name": entry.name,
                    "summary": entry.summary,
                    "modulus": entry.modulus,
                    "cycles": len(cycles),
                    "coprime": coprime,
                }
            )
        return rows

    def dataset(self) -> dict[str, Any]:
        """The schema.org Dataset description of the record, for the home page."""
        head = self.history.head if isinstance(self.history, RepoHistory) else None
        downloads = [
            Download("data/catalogue.json", "application/json", "The whole verified record (JSON)"),
            Download("data/cycles.csv", "text/csv", "One row per cycle (CSV)"),
            Download("feed.xml", "application/atom+xml", "New cycles (Atom feed)"),
        ]
        return dataset_jsonld(
            replace(self.record, base_url=self.base_url),
            release=self.record.version,
            released_on=self.edition.released_on,
            modified_on=head.date if head else None,
            downloads=downloads,
            cycles=len(self.cycles),
            maps=len(self.cat.maps),
        )

    def record_citation(self) -> str:
        r = self.record
        return f"{r.maintainers}. {r.title}, {self.edition.label}. {self.base_url}. Data licence: {r.licence}."

    def history_view(self, past: dict[str, Any] | None) -> dict[str, Any]:
        """What an entry page says of the entry's history: dates and short commit ids, or why there are none."""
        if past is None:
            assert isinstance(self.history, NoHistory)
            return {"unavailable": self.history.reason}
        view = dict(past)
        for what in ("added", "changed"):
            commit = past[f"{what}_commit"]
            view[f"{what}_short"] = commit[:12] if commit else None
        view["shallow"] = isinstance(self.history, RepoHistory) and self.history.shallow
        view["names"] = self.record.credit_committers
        view["unavailable"] = None
        return view

    def changes_pages(self) -> list[Page]:
        log = self.changelog
        crumbs = (Link("Record", "index.html"), Link("Changes", "changes/index.html"))
        rows = []
        pages = []
        for step in reversed(log.steps):
            counts = {
                change: sum(1 for c in step.comparison.changes if c.change == change)
                for change in ("added", "changed", "renamed", "removed")
            }
            title = f"Release {step.version}" if step.version is not None else "Changes not yet released"
            url = change_url(step.version)
            rows.append({"step": step, "title": title, "url": url, "counts": counts})
            pages.append(
                Page(
                    url,
                    "release.html",
                    title,
                    "changes",
                    {"step": step, "counts": counts, "groups": self.change_groups(step)},
                    crumbs,
                )
            )
        index = Page(
            "changes/index.html",
            "changes.html",
            "Releases and changes",
            "changes",
            {"rows": rows, "unavailable": log.unavailable, "shallow": log.shallow},
            (Link("Record", "index.html"),),
        )
        return [index, *pages]

    def change_groups(self, step: Step) -> list[dict[str, Any]]:
        """The step's changes by kind, each with a link to the entry's page while the entry exists."""
        groups = []
        for kind in KINDS:
            changes = [c for c in step.comparison.changes if c.kind == kind and c.change != "unchanged"]
            if not changes:
                continue
            groups.append({"kind": kind, "rows": [self.change_row(c) for c in changes]})
        return groups

    def change_row(self, c: Change) -> dict[str, Any]:
        url = None
        if c.change != "removed":
            if c.kind == "map" and c.key in self.cat.maps:
                url = map_url(c.key)
            elif c.kind == "cycle":
                map_id, _, cycle_id = c.key.partition("/")
                if (map_id, cycle_id) in self.cycles:
                    url = cycle_url(map_id, cycle_id)
            elif c.kind == "reference" and c.key in self.cat.references:
                url = f"references/index.html#ref-{c.key}"
        return {
            "change": c,
            "url": url,
            "fields": field_summary(c, lambda name: name, lambda text: text),
        }

    # -- pages ---------------------------------------------------------------

    def all_pages(self) -> list[Page]:
        pages = [self.home(), self.maps_index()]
        for map_id in self.cat.maps:
            pages.append(self.map_page(map_id))
            for cycle in self.cat.cycles.get(map_id, ()):
                pages.append(self.cycle_page(self.cat.maps[map_id], cycle))
        pages.extend(self.length_pages())
        pages.append(self.references_page())
        pages.extend(self.changes_pages())
        pages.append(Page("search/index.html", "search.html", "Search the record", "search"))
        pages.append(self.data_page())
        # A host serves 404.html for a missing address at any depth, so with a known
        # base address its links are absolute; without one they assume the site root.
        # A host serves 404.html at any depth: with a --base-url given for this build its links are
        # absolute; otherwise they assume the site root (the record's own address may not be this host).
        pages.append(Page("404.html", "404.html", "Page not found", "", fixed_root=self.fixed_root))
        pages.append(self.site_map(pages))
        return pages

    def home(self) -> Page:
        recent = sorted(
            self.records.items(),
            key=lambda kv: (kv[1]["provenance"]["found_on"], kv[0]),
            reverse=True,
        )[:RECENT]
        total = sum(len(c) for c in self.cat.cycles.values())
        return Page(
            "index.html",
            "index.html",
            self.record.title,
            "home",
            {
                "cite": self.record_citation(),
                "dataset_jsonld": Markup(jsonld_script(self.dataset())),  # noqa: S704 - escaped for a script
                "maps": self.map_summary_rows(),
                "total_cycles": total,
                "total_maps": len(self.cat.maps),
                "total_references": len(self.cat.references),
                "recent": [
                    {"link": self.cycle_link(key), "found_on": r["provenance"]["found_on"], "length": r["length"]}
                    for key, r in recent
                ],
            },
        )

    def maps_index(self) -> Page:
        return Page(
            "maps/index.html",
            "maps.html",
            "Maps",
            "maps",
            {"maps": self.map_summary_rows()},
            (Link("Record", "index.html"),),
        )

    def map_page(self, map_id: str) -> Page:
        entry = self.cat.maps[map_id]
        keys = [(map_id, c.id) for c in self.cat.cycles.get(map_id, ())]
        rows = self.cycle_rows(keys)
        form = qx_plus_d(entry)
        coprime = None
        if form is not None and abs(form[1]) > 1:
            coprime = sum(1 for k in keys if self.rel.shared_factor.get(k) == 1)
        mirror = self.rel.mirror_map.get(map_id)
        return Page(
            map_url(map_id),
            "map.html",
            entry.name,
            "maps",
            {
                "map": entry,
                "definition": Markup(map_definition_mathml(entry.modulus, entry.branches, entry.name)),  # noqa: S704
                "branches": [
                    {"residue": i, "multiplier": to_decimal(a), "increment": to_decimal(b)}
                    for i, (a, b) in enumerate(entry.branches)
                ],
                "modulus": entry.modulus,
                "notes": render_notes(entry.notes),
                "references": self.reference_links(entry.references),
                "rows": rows,
                "count": len(keys),
                "coprime": coprime,
                "d": to_decimal(form[1]) if form else None,
                "mirror": Link(self.cat.maps[mirror].name, map_url(mirror)) if mirror and mirror != map_id else None,
                "self_mirror": mirror == map_id,
                "export": f"data/maps/{map_id}.json",
                "coverage": [
                    {**_coverage_record(c), "shown": [to_decimal(n) for n in c.unresolved[:UNRESOLVED_SHOWN]]}
                    for c in entry.coverage
                ],
                "counts_label": "Odd, even steps" if entry.modulus == 2 else "Residue counts",
                "odds_svg": self.odds_svg(entry),
                "history": self.history_view(self.map_records[map_id]["history"]),
                "cite": (
                    f"{entry.name}. {self.record.title}, {self.edition.label}, map {map_id}, "
                    f"{self.base_url}maps/{map_id}/. Data licence: {self.record.licence}."
                ),
            },
            (Link("Record", "index.html"), Link("Maps", "maps/index.html")),
        )

    def odds_svg(self, entry: MapEntry) -> Markup | None:
        """The heuristic chance per length beside the catalogued counts (2-branch maps only)."""
        if entry.modulus != 2:
            return None
        cycles = self.cat.cycles.get(entry.id, ())
        top = min(ODDS_MAX_LENGTH, max([ODDS_MIN_LENGTH, *(c.length for c in cycles)]))
        counts: dict[int, int] = {}
        for c in cycles:
            counts[c.length] = counts.get(c.length, 0) + 1
        rows = [(k, length_odds(entry.dynamics, k), counts.get(k, 0)) for k in range(1, top + 1)]
        title = f"Heuristic chance of a cycle of each length for {entry.name}, with the catalogued cycles"
        return Markup(odds_chart(rows, title, f"odds-{entry.id}"))  # noqa: S704 - built from numbers

    def cycle_page(self, entry: MapEntry, cycle: Cycle) -> Page:
        key = (entry.id, cycle.id)
        r = self.records[key]
        members = r["members"]
        if len(members) <= MEMBERS_ON_PAGE:
            head, tail, hidden = members, [], 0
        else:
            head, tail = members[:HEAD_MEMBERS], members[-TAIL_MEMBERS:]
            hidden = len(members) - HEAD_MEMBERS - TAIL_MEMBERS
        word = r["word"]
        word_shown = word if len(word) <= WORD_ON_PAGE else word[:WORD_ON_PAGE]
        title = f"{entry.name}: cycle through {r['canonical']}"
        related: list[dict[str, Any]] = []
        mirror = self.rel.mirror.get(key)
        if mirror is not None:
            related.append(
                {"kind": "Mirror", "links": [self.cycle_link(mirror, "the negated cycle of the mirror map")]}
            )
        scaled = self.rel.scaled_from.get(key)
        if scaled is not None:
            related.append(
                {"kind": "Scaled copy of", "links": [self.cycle_link(scaled.base, f"times {scaled.factor}")]}
            )
        copies = self.rel.scaled_to.get(key, ())
        if copies:
            related.append(
                {"kind": "Scaled copies", "links": [self.cycle_link(s.copy, f"times {s.factor}") for s in copies]}
            )
        listed = {mirror, scaled.base if scaled else None, *(s.copy for s in copies)}
        same = [k for k in self.rel.same_word.get(key, ()) if k not in listed]
        if same:
            links = [self.cycle_link(k) for k in same[:SAME_WORD_SHOWN]]
            if len(same) > SAME_WORD_SHOWN:
                more = len(same) - SAME_WORD_SHOWN
                links.append(Link(f"{more} more cycles of length {cycle.length}", length_url(cycle.length)))
            related.append({"kind": "Same word in other maps", "links": links})
        prov = cycle.provenance
        counts = [{"residue": i, "count": c} for i, c in enumerate(cycle.residue_counts)]
        svg_id = f"c-{entry.id}-{cycle.id}"
        # The pretty address (absolute with a base URL); links on the page use index.html.
        permalink = self.base_url + posixpath.dirname(r["url"]) + "/"
        where = f"entry {entry.id}/{cycle.id}, fingerprint {cycle.fingerprint}"
        cite = (
            f"{title} (length {cycle.length}). {self.record.title}, {self.edition.label}, {where}, "
            f"{permalink}. Found by {prov.found_by}, {prov.found_on.isoformat()}. "
            f"Data licence: {self.record.licence}."
        )
        bibtex = (
            f"@misc{{periplus:{entry.id}/{cycle.id},\n"
            f"  title        = {{{_bibtex(title)}}},\n"
            f"  howpublished = {{{_bibtex(self.record.title)}, {_bibtex(self.edition.label)}, {_bibtex(where)}}},\n"
            f"  author       = {{{{{_bibtex(self.record.maintainers)}}}}},\n"
            f"  note         = {{Cycle of length {cycle.length}; found by {_bibtex(prov.found_by)}, "
            f"{prov.found_on.isoformat()}; data licence {_bibtex(self.record.licence)}}},\n"
            f"  url          = {{{_bibtex(permalink)}}},\n"
            f"  year         = {{{prov.found_on.year}}}\n}}"
        )
        return Page(
            cycle_url(entry.id, cycle.id),
            "cycle.html",
            title,
            "maps",
            {
                "map": entry,
                "map_url": map_url(entry.id),
                "record": r,
                "head": head,
                "tail": tail,
                "hidden": hidden,
                "tail_start": len(members) - len(tail) + 1,
                "export": f"data/maps/{entry.id}.json",
                "word": word_shown,
                "word_cut": len(word) - len(word_shown),
                "word_svg": Markup(word_strip(cycle.canonical_word, entry.modulus, f"Word of {title}", svg_id + "-w")),  # noqa: S704
                "plot_svg": Markup(orbit_plot(cycle.canonical_members, f"Orbit of {title}", svg_id + "-p")),  # noqa: S704
                "equation": Markup(  # noqa: S704
                    cycle_equation_mathml(
                        entry.modulus,
                        cycle.length,
                        _factors(entry, cycle),
                        cycle.equation.offset,
                        cycle.equation.target,
                        cycle.canonical,
                    )
                ),
                "equation_text": _equation_text(entry, cycle),
                "counts": counts,
                "counts_text": _counts_text(entry, cycle),
                "length_url": length_url(cycle.length),
                "notes": render_notes(prov.notes),
                "references": self.reference_links(prov.references),
                "related": related,
                "marks": self.marks(key),
                "cite": cite,
                "bibtex": bibtex,
                "permalink": permalink,
                "history": self.history_view(r["history"]),
            },
            (Link("Record", "index.html"), Link("Maps", "maps/index.html"), Link(entry.name, map_url(entry.id))),
        )

    def length_pages(self) -> list[Page]:
        by_length: dict[int, list[tuple[str, str]]] = {}
        for key, r in self.records.items():
            by_length.setdefault(r["length"], []).append(key)
        rows = []
        pages = []
        for k in sorted(by_length):
            keys = sorted(by_length[k], key=lambda kk: (kk[0], abs(self.cycles[kk].canonical)))
            map_names = sorted({self.cat.maps[m].name for m, _ in keys})
            rows.append({"length": k, "url": length_url(k), "count": len(keys), "maps": len(map_names)})
            pages.append(
                Page(
                    length_url(k),
                    "length.html",
                    f"Cycles of length {k}",
                    "lengths",
                    {"length": k, "rows": self.cycle_rows(keys, with_map=True)},
                    (Link("Record", "index.html"), Link("Lengths", "lengths/index.html")),
                )
            )
        index = Page(
            "lengths/index.html", "lengths.html", "Cycles by length", "lengths", {"rows": rows},
            (Link("Record", "index.html"),),
        )  # fmt: skip
        return [index, *pages]

    def references_page(self) -> Page:
        cited_by: dict[str, list[Link]] = {key: [] for key in self.cat.references}
        for map_id, entry in self.cat.maps.items():
            for key in entry.references:
                cited_by[key].append(Link(entry.name, map_url(map_id), "map"))
        for map_id, cycles in self.cat.cycles.items():
            for cycle in cycles:
                for key in cycle.provenance.references:
                    cited_by[key].append(self.cycle_link((map_id, cycle.id)))
        entries = []
        for key, ref in self.cat.references.items():
            entries.append(
                {
                    "key": key,
                    "ref": ref,
                    "label": _reference_label(ref),
                    "authors": ", ".join(ref.authors),
                    "href": f"https://doi.org/{ref.doi}" if ref.doi else ref.url,
                    "note": ref.note,
                    "cited_by": cited_by[key],
                }
            )
        return Page(
            "references/index.html", "references.html", "References", "references", {"entries": entries},
            (Link("Record", "index.html"),),
        )  # fmt: skip

    def data_page(self) -> Page:
        return Page(
            "data/index.html",
            "data.html",
            "Data exports",
            "data",
            {"maps": [Link(self.cat.maps[m].name, f"data/maps/{m}.json") for m in self.map_order]},
            (Link("Record", "index.html"),),
        )

    def site_map(self, pages: list[Page]) -> Page:
        links = [Link(p.title, p.path) for p in pages if p.path != "404.html"]
        links.append(Link("Site map", "sitemap/index.html"))
        return Page(
            "sitemap/index.html", "sitemap.html", "Site map", "", {"links": sorted(links, key=lambda link: link.url)},
            (Link("Record", "index.html"),),
        )  # fmt: skip


def _display_order(entry: MapEntry) -> tuple[int, int, int, bool, str]:
    """qx+d maps by q, then |d| (d before -d); every other map after them, by name."""
    form = qx_plus_d(entry)
    if form is None:
        return (1, 0, 0, False, entry.name)
    q, d = form
    return (0, q, abs(d), d < 0, entry.name)


def _bibtex(text: str) -> str:
    """Escape the characters BibTeX and LaTeX treat specially."""
    out = []
    for ch in text:
        if ch in "{}":
            out.append("\\" + ch)
        elif ch in "\\":
            out.append("\\textbackslash{}")
        elif ch in "%&#$_":
            out.append("\\" + ch)
        elif ch in "^~":
            out.append("\\" + ch + "{}")
        else:
            out.append(ch)
    return "".join(out)
