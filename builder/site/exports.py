"""Machine-readable exports of the verified record: JSON, CSV, the search index, Atom, sitemap.

Each export is written here from the typed records of builder.site.records, which the pages
read too: the JSON field names, the CSV columns and the feed's entries are spelled in this
module alone.  Every text is produced deterministically (sorted keys, fixed formatting, no
build time): the same catalogue always gives the same bytes.
"""

from __future__ import annotations

import csv
import io
import json
import operator
import uuid
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any, Protocol

from builder.arith.fingerprint import FINGERPRINT_DIGITS, FINGERPRINT_HEADER
from builder.arith.integers import to_decimal
from builder.catalogue.model import Reference
from builder.site.numbers import grouped
from builder.site.records import AboutRecord, CycleRecord, HistoryRecord, MapRecord, newest
from builder.site.search_index import DEFAULT_LIMITS, ListedMap, SearchLimits, search_index
from builder.site.views import SiteViews

__all__ = [
    "CSV_COLUMNS",
    "FEED_ENTRIES",
    "FINGERPRINT_NOTE",
    "SITEMAP_BYTES",
    "SITEMAP_URLS",
    "atom_feed",
    "json_text",
    "map_exports",
    "search_files",
    "sitemap_files",
    "MapPieces",
    "Spans",
    "map_pieces",
    "write_record_exports",
]

CSV_COLUMNS = (
    "map", "id", "fingerprint", "canonical", "length", "word", "residue_counts", "min", "max", "A", "B", "target",
    "standard_length", "found_by", "found_on", "url",
)  # fmt: skip
_FEED_NAMESPACE = uuid.UUID("6f1e3a52-8d1b-4c55-9a53-5c2f0e9b7d11")  # fixed, so entry ids never change
#: How exports describe the fingerprint recipe (catalogue/README.md, "Fingerprints", has it in full).
FINGERPRINT_NOTE = (
    f"SHA-256 of the ASCII lines '{FINGERPRINT_HEADER}', the modulus m, 'a_i b_i' for each residue i = 0..m-1, "
    f"and the canonical member, each ended by a line feed; the first {FINGERPRINT_DIGITS} hexadecimal digits"
)


#: The feed lists this many of the newest cycles (a feed is read for what is new, and every reader
#: fetches it whole).
FEED_ENTRIES = 100
#: The sitemap protocol's limits for one file (sitemaps.org, "Sitemaps XML format"): 50,000 addresses
#: and 50 MB (52,428,800 bytes) uncompressed; a site with more gets a sitemap index.
SITEMAP_URLS = 50_000
SITEMAP_BYTES = 52_428_800

# Compact separators keep Python's C encoder (an indent turns it off) and the files small.
_ENCODER = json.JSONEncoder(ensure_ascii=False, sort_keys=True, separators=(",", ":"))


def _xml_text(text: str) -> str:
    """``text`` as XML character data: &, < and > written as entities (XML 1.0, section 2.4)."""
    return text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _xml_attribute(text: str) -> str:
    """``text`` as a double-quoted XML attribute value: escaped as character data, with the quote and
    the white space that attribute normalisation would change written as character references (XML 1.0,
    sections 2.3 and 3.3.3).  Its own: the standard library's helper for this imports an HTTP client."""
    value = _xml_text(text).replace('"', "&quot;").replace("\n", "&#10;").replace("\r", "&#13;").replace("\t", "&#9;")
    return f'"{value}"'


def json_text(data: Any) -> str:
    """Compact JSON with sorted keys and a final line feed."""
    return _ENCODER.encode(data) + "\n"


def _pick(obj: object, names: str, **renamed: str) -> dict[str, Any]:
    """The attributes ``names`` (space-separated) of ``obj`` under their own names, and each attribute
    named in ``renamed`` under its JSON key (a tuple is written as a JSON array, as a list is)."""
    out = {name: getattr(obj, name) for name in names.split()}
    out.update({key: getattr(obj, name) for key, name in renamed.items()})
    return out


def _about(about: AboutRecord, *, whole: bool = True) -> dict[str, Any]:
    """The record's description; a file of one map (``whole`` False) names the edition without the
    commit, so that it changes only when its map does, or at a release."""
    out = _pick(
        about, "title description maintainers licence licence_url base_url version edition release_status commit"
    )
    if not whole:
        out.update(edition=about.edition_shown, commit=None)
    return out


def _reference(ref: Reference) -> dict[str, Any]:
    return _pick(ref, "key authors title venue year doi url status note")


def _history(past: HistoryRecord | None) -> dict[str, Any] | None:
    if past is None:
        return None
    out = _pick(past, "file added added_commit changed changed_commit uncommitted")
    if past.names:
        out.update(_pick(past, "added_by changed_by"))
    return out


def _cycle(c: CycleRecord) -> tuple[str, list[object]]:
    """A cycle's item of the JSON exports, as JSON text, and its row of the CSV table: each number written
    out once for both (a map of 6,000 cycles writes 70,000 numbers)."""
    cycle, prov = c.cycle, c.provenance
    equation = cycle.equation
    minimum, maximum = to_decimal(cycle.minimum), to_decimal(cycle.maximum)
    multiplier, offset, target = (
        to_decimal(equation.multiplier),
        to_decimal(equation.offset),
        to_decimal(equation.target),
    )
    found_on, url = prov.found_on.isoformat(), c.url
    item = {
        "id": c.id,
        "fingerprint": c.fingerprint,
        "url": url,
        "canonical": c.canonical,
        "length": c.length,
        "word": c.word,
        "members": c.members,
        "residue_counts": c.residue_counts,
        "target": target,
        "standard_length": c.standard_length,
        "map": c.map_id,
        "min": minimum,
        "max": maximum,
        "A": multiplier,
        "B": offset,
        "shared_factor_with_increment": c.shared_factor,
        "start_in_entry": c.start,
        "provenance": {
            "found_by": prov.found_by,
            "method": prov.method,
            "references": prov.references,
            "notes": prov.notes,
            "found_on": found_on,
        },
        "history": _history(c.history),
    }
    row: list[object] = [
        c.map_id, c.id, c.fingerprint, c.canonical, c.length, c.word,
        " ".join(map(str, c.residue_counts)), minimum, maximum, multiplier, offset, target,
        "" if c.standard_length is None else c.standard_length,
        _cell(prov.found_by), found_on, url,
    ]  # fmt: skip
    return _ENCODER.encode(item), row


def _map(m: MapRecord) -> dict[str, Any]:
    """A map's fields without its cycles and the record (catalogue.json lists those once)."""
    coverage = [
        _pick(
            claim,
            "kind bound found_on method max_steps max_bits unresolved unknown",
            rechecked_by_this_build="rechecked",
            rechecked_up_to_by_this_build="rechecked_up_to",
        )
        | {"basins": None if claim.basins is None else [_pick(b, "cycle url starts first") for b in claim.basins]}
        for claim in m.coverage
    ]
    census = [
        _pick(
            claim,
            "up_to found_on method search_bound excluded words",
            proved_by_this_build="rechecked",
            proved_up_to_by_this_build="proved_up_to",
        )
        | {
            "stopped_by": None if claim.stopped_by is None else list(claim.stopped_by),
            "classes": [
                _pick(r, "k x words target bound status tried")
                | {"cycles": [{"cycle": n, "url": url} for n, url in r.cycles]}
                for r in claim.classes
            ],
        }
        for claim in m.census
    ]
    branches = [{"residue": i, "multiplier": a, "increment": b} for i, (a, b) in enumerate(m.branches)]
    return {
        **_pick(m, "id name url modulus summary notes references mirror_map"),
        "branches": branches,
        "coverage": coverage,
        "census": census,
        "history": _history(m.history),
    }


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _cell(text: str) -> str:
    """Free text for a CSV cell: a leading = + - @ would be read as a formula by spreadsheets
    (OWASP, "CSV Injection"), so such text gets a leading apostrophe."""
    return "'" + text if text[:1] in _FORMULA_START else text


def _comment(text: str) -> str:
    """Free text for the comment line, which a spreadsheet reads as cells split at commas: each piece
    whose text (after spaces and an opening quote) would start a formula gets the apostrophe too."""
    pieces = []
    for piece in text.split(","):
        body = piece.lstrip(" ")
        if body.lstrip('"')[:1] in _FORMULA_START:
            piece = piece[: len(piece) - len(body)] + "'" + body
        pieces.append(piece)
    return ",".join(pieces)


@dataclass(frozen=True, slots=True)
class MapPieces:
    """One map's part of the whole-record exports, as UTF-8: its cycles' items and its own item in
    data/catalogue.json (each after a line feed, the cycles' separated by commas), and its rows of
    data/cycles.csv.  The exports are these pieces, map after map, between parts written once."""

    cycles: bytes
    line: bytes
    rows: bytes


def map_pieces(m: MapRecord) -> MapPieces:
    """The map's pieces of the whole-record exports."""
    return _pieces(_map(m), [_cycle(c) for c in m.cycles])


def _pieces(fields: dict[str, Any], cycles: list[tuple[str, list[object]]]) -> MapPieces:
    """The map's pieces, from its own fields (``_map``) and each cycle's JSON text and CSV row (``_cycle``)."""
    rows = io.StringIO()
    csv.writer(rows, lineterminator="\n").writerows(row for _, row in cycles)
    return MapPieces(
        "".join(f",\n{text}" for text, _ in cycles)[1:].encode(),
        ("\n" + _ENCODER.encode(fields)).encode(),
        rows.getvalue().encode(),
    )


def map_exports(m: MapRecord) -> tuple[str, MapPieces]:
    """data/maps/<id>.json (one map with its cycles in full and the record it belongs to), and the map's
    pieces of the whole-record exports, which hold the same text of each cycle: made together, each
    cycle's JSON once."""
    fields = _map(m)
    cycles = [_cycle(c) for c in m.cycles]
    # The map's file as json_text writes it (keys sorted), with the cycles' texts made above in place.
    items = {key: _ENCODER.encode(value) for key, value in fields.items()}
    items["record"] = _ENCODER.encode(_about(m.about, whole=False))
    items["cycles"] = "[" + ",".join(text for text, _ in cycles) + "]"
    text = "{" + ",".join(f"{_ENCODER.encode(key)}:{items[key]}" for key in sorted(items)) + "}\n"
    return text, _pieces(fields, cycles)


#: Where a map's pieces lie in the exports: byte offsets (end excluded) of its cycles' items and its own
#: item in data/catalogue.json, then of its rows in data/cycles.csv.
Spans = tuple[int, int, int, int, int, int]


class Sink(Protocol):
    def write(self, data: bytes, /) -> int: ...


def write_record_exports(
    views: SiteViews, catalogue: Sink, table: Sink, kept: Callable[[str], MapPieces | None]
) -> dict[str, Spans]:
    """Write data/catalogue.json (the whole verified record, one map and one cycle a line) and
    data/cycles.csv (one row per cycle, after one comment line); return where each map's pieces lie.

    ``kept(map_id)`` gives the pieces of a map as an earlier build wrote them, when its inputs are the
    same (builder.site.render); the others are made here.  The JSON's keys are sorted, as json_text
    sorts them, so the bytes do not depend on how the pieces were had.
    """
    record, edition = views.record, views.edition
    # One comment line first (RFC 4180 has none; readers skip it with comment='#' or skiprows=1).
    header = (
        f"{record.title}, {edition.label}; data licence {record.licence} ({record.licence_url}); every verified "
        f"cycle, one per row; members are in data/catalogue.json"
    )
    head = io.StringIO()
    head.write("# " + _comment(" ".join(header.split())) + "\n")
    csv.writer(head, lineterminator="\n").writerow(CSV_COLUMNS)
    at_table = table.write(head.getvalue().encode())
    at = catalogue.write(b'{"cycles":[')
    lines: list[tuple[str, bytes]] = []
    spans: dict[str, Spans] = {}
    first = True
    for map_id, m in views.maps.items():
        pieces = kept(map_id) or map_pieces(m)
        if pieces.cycles and not first:
            at += catalogue.write(b",")
        first = first and not pieces.cycles
        start = at
        at += catalogue.write(pieces.cycles)
        rows = at_table
        at_table += table.write(pieces.rows)
        spans[map_id] = (start, at, 0, 0, rows, at_table)
        lines.append((map_id, pieces.line))
    fields = {
        "fingerprint_recipe": FINGERPRINT_NOTE,
        "format": "periplus-record",
        "format_version": 2,
    }
    at += catalogue.write(
        ("\n]," + ",".join(f"{_ENCODER.encode(k)}:{_ENCODER.encode(v)}" for k, v in fields.items())).encode()
    )
    at += catalogue.write(b',"maps":[')
    for n, (map_id, line) in enumerate(lines):
        if n:
            at += catalogue.write(b",")
        c0, c1, _, _, r0, r1 = spans[map_id]
        spans[map_id] = (c0, c1, at, at + len(line), r0, r1)
        at += catalogue.write(line)
    tail = {
        "note": "Every integer that belongs to a cycle is a decimal string; JSON numbers lose precision.",
        "record": _about(views.about),
        "references": {key: _reference(ref) for key, ref in views.references.items()},
    }
    catalogue.write(
        ("\n]," + ",".join(f"{_ENCODER.encode(k)}:{_ENCODER.encode(v)}" for k, v in tail.items()) + "}\n").encode()
    )
    return spans


def search_files(views: SiteViews, limits: SearchLimits = DEFAULT_LIMITS) -> Iterator[tuple[str, str]]:
    """Every file of the search index as (path relative to the site root, text), made one at a time.

    The layout is builder.site.search_index's; results come in the natural order of maps
    (builder.catalogue.relations.natural_order, as the site lists them), then by least |member|.
    """
    maps = [views.maps[map_id] for map_id in views.site.map_order]
    return search_index([ListedMap(m, limits.members) for m in maps], limits)


def _entry_id(*parts: str) -> str:
    return f"urn:uuid:{uuid.uuid5(_FEED_NAMESPACE, '/'.join(parts))}"


_found_on = operator.attrgetter("provenance.found_on")


def atom_feed(views: SiteViews) -> str:
    """An Atom feed (RFC 4287) of the newest ``FEED_ENTRIES`` cycles by found_on, newest first; entry ids
    follow fingerprints."""
    # Pairs (found_on, record): records are named tuples, ordered by map id then id (which tell them apart).
    cycles = views.cycles
    entries = [c for _, c in newest(FEED_ENTRIES, zip(map(_found_on, reversed(cycles)), reversed(cycles), strict=True))]
    record = views.record
    updated = f"{entries[0].provenance.found_on.isoformat()}T00:00:00Z" if entries else "1970-01-01T00:00:00Z"
    rights = f"Data licence {record.licence} ({record.licence_url}); {views.edition.label}"
    lines = [
        '<?xml version="1.0" encoding="utf-8"?>',
        # Without a published address, relative links resolve against the feed's own (RFC 4287, section 2).
        '<feed xmlns="http://www.w3.org/2005/Atom"'
        + (f" xml:base={_xml_attribute(views.base_url)}>" if views.base_url is not None else ">"),
        f"  <title>{_xml_text(record.title)}</title>",
        f"  <id>{_entry_id('feed')}</id>",
        f"  <updated>{updated}</updated>",
        '  <link rel="alternate" type="text/html" href="index.html"/>',
        '  <link rel="self" type="application/atom+xml" href="feed.xml"/>',
        f"  <rights>{_xml_text(rights)}</rights>",
        f"  <author><name>{_xml_text(record.maintainers)}</name></author>",
        '  <generator uri="https://pypi.org/project/periplus/">Periplus</generator>',
    ]
    for c in entries:
        name, found_by = views.maps[c.map_id].name, c.provenance.found_by
        summary = (
            f"A cycle of length {grouped(c.length)} of {name}, member of least |n| {grouped(c.canonical)}; "
            f"found by {found_by}; fingerprint {c.fingerprint}."
        )
        lines += [
            "  <entry>",
            f"    <title>{_xml_text(f'{name}: cycle through {grouped(c.canonical)}')}</title>",
            f"    <id>{_entry_id('cycle', c.fingerprint)}</id>",
            f"    <updated>{c.provenance.found_on.isoformat()}T00:00:00Z</updated>",
            f'    <link rel="alternate" type="text/html" href={_xml_attribute(c.url)}/>',
            f"    <author><name>{_xml_text(found_by)}</name></author>",
            f"    <summary>{_xml_text(summary)}</summary>",
            "  </entry>",
        ]
    lines.append("</feed>")
    return "\n".join(lines) + "\n"


def _urlset(rows: Sequence[str]) -> str:
    return (
        '<?xml version="1.0" encoding="utf-8"?>\n<urlset xmlns="http://www.sitemaps.org/schemas/sitemap/0.9">\n'
        f"{''.join(rows)}</urlset>\n"
    )


def sitemap_files(
    paths: Sequence[str], base_url: str, *, max_urls: int = SITEMAP_URLS, max_bytes: int = SITEMAP_BYTES
) -> list[tuple[str, str]]:
    """sitemap.xml (sitemaps.org protocol; it needs absolute addresses, hence a base URL), as
    (address, text) pairs.  Within one file's limits it is one urlset; beyond them, sitemap.xml is a
    sitemap index of sitemaps/<n>.xml, each within the limits."""
    base = base_url if base_url.endswith("/") else base_url + "/"
    parts: list[list[str]] = [[]]
    empty = len(_urlset([]).encode())
    size = empty
    for path in sorted(paths):
        row = f"  <url><loc>{_xml_text(base + path)}</loc></url>\n"
        length = len(row) if row.isascii() else len(row.encode())
        if parts[-1] and (len(parts[-1]) >= max_urls or size + length > max_bytes):
            parts.append([])
            size = empty
        parts[-1].append(row)
        size += length
    if len(parts) == 1:
        return [("sitemap.xml", _urlset(parts[0]))]
    files = [(f"sitemaps/{n}.xml", _urlset(part)) for n, part in enumerate(parts, start=1)]
    rows = "".join(f"  <sitemap><loc>{_xml_text(base + path)}</loc></sitemap>\n" for path, _ in files)
    index = (
        '<?xml version="1.0" encoding="utf-8"?>\n'
        f'<sitemapindex xmlns="http://www.sitemaps.org/schemas/sitemap/0.9">\n{rows}</sitemapindex>\n'
    )
    return [("sitemap.xml", index), *files]
