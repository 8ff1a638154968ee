"""What every page kind reads: the verified catalogue, its records, and the pieces several pages share.

``SiteContext`` is built once per build from the verified catalogue and its typed records.
Besides the data it holds the pieces more than one page kind shows: links to cycles and
references, the rows of the cycle and map tables, the badges of a cycle, and what an entry
page says of the entry's history.
"""

from __future__ import annotations

import functools
import operator
import os
from collections.abc import Callable, Hashable, Iterable, Mapping, Sequence
from dataclasses import dataclass, fields
from pathlib import Path
from typing import NamedTuple, TypeVar

from builder.arith.integers import to_decimal
from builder.catalogue.files import CYCLES_FOLDER
from builder.catalogue.model import Catalogue, Cycle, MapEntry, Record, Reference
from builder.catalogue.relations import Relations, natural_order, qx_plus_d
from builder.history import Changelog, Edition, NoHistory, RepoHistory
from builder.site.numbers import grouped
from builder.site.pages.common import Link
from builder.site.paths import family_url, map_url, reference_url
from builder.site.records import CycleRecord, HistoryRecord, MapRecord

T = TypeVar("T")

__all__ = [
    "CycleRow",
    "Family",
    "FamilyRow",
    "HistoryView",
    "MapRow",
    "ReferenceLink",
    "SiteContext",
    "counts_text",
    "family_rows",
    "reference_href",
    "reference_label",
]


@dataclass(frozen=True, slots=True)
class ReferenceLink:
    """A cited source as an entry page lists it: a short label, its place on the references page, where to read it."""

    label: str
    url: str
    title: str
    doi: str | None
    href: str | None
    status: str | None


class CycleRow(NamedTuple):
    """One row of a table of cycles (a named tuple, made in C: the tables of a big record have 100,000 rows)."""

    url: str
    map_name: str
    map_url: str
    canonical: int  # the numbers as integers: the template groups their digits (builder.site.numbers)
    length: int
    counts: str
    counts_key: int  # what the counts column sorts by
    minimum: int
    maximum: int
    marks: tuple[str, ...]
    with_map: bool  # whether the table has a column for the map
    map_place: int  # the map's place in the natural order of maps, which the map column sorts by


@dataclass(frozen=True, slots=True)
class MapRow:
    """One row of a table of maps."""

    url: str
    name: str
    summary: str
    modulus: int
    cycles: int
    coprime: int | None  # cycles whose members are coprime to d, for qx+d maps with |d| > 1
    place: int  # the map's place in the natural order of maps, which the map column sorts by


@dataclass(frozen=True, slots=True)
class HistoryView:
    """What an entry page says of the entry's history: the dates and commits, or why there are none."""

    past: HistoryRecord | None
    unavailable: str | None
    shallow: bool  # read from a shallow clone: the entry may be older than it says


def _surname(author: str) -> str:
    """The name without initials or a role: "T. Oliveira e Silva" -> "Oliveira e Silva"."""
    words = [w for w in author.split() if not (w.endswith(".") and len(w) <= 3) and not w.startswith("(")]
    return " ".join(words) or author


def reference_label(ref: Reference) -> str:
    """A short label for a source: "Ames (1985)", "Ames and Bell (2001)", "Ames et al. (2010)"."""
    names = [_surname(a) for a in ref.authors]
    who = names[0] if len(names) == 1 else (" and ".join(names) if len(names) == 2 else f"{names[0]} et al.")
    return f"{who} ({ref.year})"


def reference_href(ref: Reference) -> str | None:
    """Where a reader finds a source: its DOI resolved, else its URL."""
    return f"https://doi.org/{ref.doi}" if ref.doi else ref.url


def counts_text(entry: MapEntry, cycle: Cycle) -> str:
    """How often each residue occurs in the cycle's word: "3 odd, 5 even", or "0: 2, 2: 1" for m > 2."""
    counts = cycle.residue_counts
    if entry.modulus == 2:
        return f"{counts[1]:,} odd, {counts[0]:,} even"
    return ", ".join(f"{r}: {c:,}" for r, c in enumerate(counts) if c)


@dataclass(frozen=True, slots=True)
class Family:
    """Maps grouped as readers look for them: the qx+d maps of one q, or the other maps of one modulus."""

    key: str  # part of its address: "3x-plus-d", "minus-3x-plus-d", "mod-3"
    label: str  # "3x+d", "maps mod 3"
    description: str
    order: tuple[int, int]  # qx+d families first, by |q| then sign; then moduli


#: qx+d maps whose |q| reaches this share one family (a family's key is part of an address).
LARGE_Q = 10**18


def family_of(entry: MapEntry) -> Family:
    form = qx_plus_d(entry)
    if form is not None and abs(form[0]) >= LARGE_Q:
        what = f"n/2 for even n and (qn + d)/2 for odd n, with |q| of more than {len(str(LARGE_Q)) - 1} digits"
        return Family("large-qx-plus-d", "qx+d, large q", what, (1, 0))
    if form is not None:
        q = form[0]
        sign = "minus-" if q < 0 else ""
        label = f"{to_decimal(q)}x+d"
        what = f"n/2 for even n and ({to_decimal(q)}n + d)/2 for odd n, for odd d"
        return Family(f"{sign}{to_decimal(abs(q))}x-plus-d", label, what, (0, 2 * abs(q) + (q < 0)))
    m = entry.modulus
    return Family(f"mod-{m}", f"maps mod {m}", f"maps acting by the residue of n mod {m}, other than qx+d", (2, m))


@dataclass(frozen=True, slots=True)
class Sources:
    """Digests of what the verified catalogue was made from, for :meth:`SiteContext.map_sources`."""

    relations: bytes  # builder.catalogue.relations.relations_key of the catalogue
    folders: Mapping[str, bytes]  # a digest of each folder of cycle files (builder.catalogue.model.Report.digests)


#: Every field of a map's entry but its path, read as one tuple (in C).
_entry_fields = operator.attrgetter(*(f.name for f in fields(MapEntry) if f.name != "path"))


class SiteContext:
    """The verified catalogue with its records, and the site's shared pieces of pages."""

    def __init__(
        self,
        catalogue: Catalogue,
        rel: Relations,
        maps: Mapping[str, MapRecord],
        records: dict[tuple[str, str], CycleRecord],
        *,
        base_url: str | None,
        edition: Edition,
        changelog: Changelog,
        history: RepoHistory | NoHistory,
        sources: Sources | None = None,
    ) -> None:
        assert catalogue.record is not None
        self.record: Record = catalogue.record
        self.cat = catalogue
        self.rel = rel
        self.maps = maps
        self.references: Mapping[str, Reference] = catalogue.references
        self.base_url = base_url  # None: the record has no published address yet (relative permalinks)
        self.edition = edition
        self.changelog = changelog
        self.history = history
        # In the catalogue's order of cycles, which the lengths pages keep for cycles of equal |member|.
        # Keyed by the tuples the relations hold (builder.catalogue.relations.Relations.keys), not copies.
        self.records = records
        self.cycles: dict[tuple[str, str], Cycle] = {key: r.cycle for key, r in records.items()}
        self.map_order = sorted(catalogue.maps, key=lambda map_id: natural_order(catalogue.maps[map_id]))
        self.map_place = {map_id: place for place, map_id in enumerate(self.map_order)}
        self._made: dict[str, tuple[Hashable, object]] = {}
        self._links: dict[tuple[str, str], Link] = {}
        self._sources = sources
        self._root = str(catalogue.root) + os.sep

    def shared_sources(self) -> object:
        """What the pages of every map may read of the whole catalogue, for :meth:`map_sources`: every map's
        entry as verified (its coverage claims as rechecked included), the references, and the key of
        the relations (every map's definition, and every cycle's map, id and least member)."""
        relations = self._sources.relations if self._sources is not None else None
        entries = [(_entry_fields(entry), self._relative(entry.path)) for entry in self.cat.maps.values()]
        return (relations, entries, dict(self.references))

    def _relative(self, path: Path | None) -> str | None:
        """A path from the catalogue root (POSIX), as text; None for a path outside it (or none).  Where the
        catalogue lies is no source of a page: two copies of one catalogue make the same site."""
        text, root = str(path), self._root
        return text[len(root) :].replace(os.sep, "/") if path is not None and text.startswith(root) else None

    def map_sources(self, map_id: str, cycles: Sequence[Cycle]) -> object | None:
        """What the pages and data of ``cycles`` of the map are made from, besides :meth:`shared_sources`,
        as digests of the files read: None when the digest of a folder of their files is not known.

        Why that is all: a map's pages and data show its entry, its cycles and the history of their
        files, and of other entries only what the relations give (which cycles are related, and each
        linked cycle's map, name and least member) and the references cited.  A cycle as verified
        follows from its file's path and bytes and its map's entry (and the references it may cite):
        the digest of the folder of its map's files fixes them all; the entries, references and relations are
        the shared sources.  Equal sources give equal inputs (builder.site.render: a task whose sources
        are those of the site it replaces keeps its files without its inputs being read); a test makes
        incremental builds after edits of each kind and compares them with clean builds."""
        if self._sources is None:
            return None
        # A cycle's file is in the folder of its map (builder.catalogue.cycles refuses any other): the
        # cycles' paths are not read, which in a worker process would copy the memory of every one.
        folder = f"{CYCLES_FOLDER}/{map_id}"
        digest = self._sources.folders.get(folder)
        if digest is None and cycles:
            return None
        rows = [(cycle.id, self.records[map_id, cycle.id].history) for cycle in cycles]
        return (map_id, self.maps[map_id].history, digest, rows)

    def made_once(self, name: str, key: Hashable, make: Callable[[], T]) -> T:
        """``make()``, made once for the unit at hand (``key`` tells units apart): a unit reads some pieces
        twice (for the digest of its inputs, then for its pages), and only the latest unit's are kept."""
        kept = self._made.get(name)
        if kept is None or kept[0] != key:
            kept = self._made[name] = (key, make())
        return kept[1]  # type: ignore[return-value]

    def cycle_link(self, key: tuple[str, str], note: str = "") -> Link:
        if note:
            return self._link(key, note)
        # A link without a note is made once: the first cycles of a word shared by thousands of maps are
        # linked from every one of them.
        link = self._links.get(key)
        if link is None:
            link = self._links[key] = self._link(key, "")
        return link

    def _link(self, key: tuple[str, str], note: str) -> Link:
        record = self.records[key]
        name = self.cat.maps[key[0]].name
        return Link(f"{name}: cycle through {grouped(record.cycle.canonical)}", record.url, note)

    def reference_links(self, keys: Iterable[str]) -> list[ReferenceLink]:
        out = []
        for key in keys:
            ref = self.references[key]
            out.append(
                ReferenceLink(
                    reference_label(ref), reference_url(key), ref.title, ref.doi, reference_href(ref), ref.status
                )
            )
        return out

    def marks(self, key: tuple[str, str]) -> tuple[str, ...]:
        """The badges of a cycle: a scaled copy, or members sharing a factor with d."""
        return self.marked.get(key, ())

    @functools.cached_property
    def marked(self) -> Mapping[tuple[str, str], tuple[str, ...]]:
        """The badges of every cycle that has any, made once for the site."""
        out: dict[tuple[str, str], tuple[str, ...]] = {}
        # Thousands of cycles have the same badge: each text is made (and held) once.
        shared: dict[int, tuple[str, ...]] = {}
        for key, factor in self.rel.shared_factor.items():
            if factor > 1:
                if factor not in shared:
                    shared[factor] = (f"members share the factor {to_decimal(factor)} with d",)
                out[key] = shared[factor]
        scaled: dict[tuple[int, str], tuple[str, ...]] = {}
        for key, scaling in self.rel.scaled_from.items():  # a scaled copy says so instead
            at = (scaling.factor, scaling.base[0])
            if at not in scaled:
                scaled[at] = (f"{to_decimal(scaling.factor)} × a cycle of {self.cat.maps[scaling.base[0]].name}",)
            out[key] = scaled[at]
        return out

    def cycle_rows(self, keys: Iterable[tuple[str, str]], with_map: bool = False) -> list[CycleRow]:
        rows = []
        for key in keys:
            r = self.records[key]
            entry = self.cat.maps[key[0]]
            cycle = r.cycle
            rows.append(
                CycleRow(
                    r.url,
                    entry.name,
                    map_url(entry.id),
                    cycle.canonical,
                    r.length,
                    counts_text(entry, cycle),
                    r.residue_counts[1] if entry.modulus == 2 else r.length,
                    cycle.minimum,
                    cycle.maximum,
                    self.marks(key),
                    with_map,
                    self.map_place[entry.id],
                )
            )
        return rows

    def permalink(self, path: str) -> str:
        """The address to cite for the site-relative ``path``: absolute under the record's published address,
        else ``path`` itself, relative to the site's root."""
        return (self.base_url or "") + path

    def cited_address(self, path: str) -> str:
        """The site-relative ``path`` as a citation gives it: its permalink, said to be relative while the
        record has no published address."""
        if self.base_url is None:
            return f"{path} (relative: the record has no published address yet)"
        return self.base_url + path

    def coprime_count(self, map_id: str) -> int | None:
        """How many cycles of a qx+d map with |d| > 1 have members coprime to d (None for other maps)."""
        form = qx_plus_d(self.cat.maps[map_id])
        if form is None or abs(form[1]) <= 1:
            return None
        return sum(1 for c in self.cat.cycles.get(map_id, ()) if self.rel.shared_factor.get((map_id, c.id)) == 1)

    def families(self) -> list[tuple[Family, list[str]]]:
        """Every family with its maps in display order, families in their own order."""
        found: dict[str, tuple[Family, list[str]]] = {}
        for map_id in self.map_order:
            family = family_of(self.cat.maps[map_id])
            found.setdefault(family.key, (family, []))[1].append(map_id)
        return sorted(found.values(), key=lambda pair: pair[0].order)

    def map_rows(self, map_ids: Iterable[str] | None = None) -> list[MapRow]:
        """The rows of a table of maps.  Its column "Coprime to d" counts, for a map n/2, (qn + d)/2, the cycles
        whose members are coprime to d: for d = 1 or -1 that is every cycle (coprime_count gives None there,
        as the map's page says nothing of it); for a map of another form it is None."""
        rows = []
        for map_id in self.map_order if map_ids is None else map_ids:
            entry = self.cat.maps[map_id]
            count = len(self.cat.cycles.get(map_id, ()))
            form = qx_plus_d(entry)
            coprime = count if form is not None and abs(form[1]) == 1 else self.coprime_count(map_id)
            rows.append(
                MapRow(
                    map_url(map_id),
                    entry.name,
                    entry.summary,
                    entry.modulus,
                    count,
                    coprime,
                    self.map_place[map_id],
                )
            )
        return rows

    def history_view(self, past: HistoryRecord | None) -> HistoryView:
        if past is None:
            assert isinstance(self.history, NoHistory)
            return HistoryView(None, self.history.reason, False)
        shallow = isinstance(self.history, RepoHistory) and self.history.shallow
        return HistoryView(past, None, shallow)


@dataclass(frozen=True, slots=True)
class FamilyRow:
    """One family in a table of families: its page and its counts, as text."""

    url: str
    label: str
    description: str
    maps: str
    cycles: str


def family_rows(site: SiteContext) -> list[FamilyRow]:
    """Every family of the record, with its counts."""
    rows = []
    for family, map_ids in site.families():
        cycles = sum(len(site.cat.cycles.get(m, ())) for m in map_ids)
        rows.append(
            FamilyRow(family_url(family.key), family.label, family.description, f"{len(map_ids):,}", f"{cycles:,}")
        )
    return rows
