"""The search index: small scripts that the search page loads as a query needs them.

The page opens ``data/search-index.js`` (the manifest) and loads the rest from ``data/search/``
by inserting script elements, which work from a web host and from a folder on disk alike (pages
opened from disk cannot fetch JSON).  Every file is one statement that hands its data to the page::

    (window.PeriplusSearchData=window.PeriplusSearchData||[]).push(["m12",{...}]);

Cycles are numbered by rank, their order in results: maps in natural order (qx+d maps by |q|,
then |d| with d before -d, then every other map by name: builder.catalogue.relations.natural_order), and
within a map by least |member|.
A cycle's row is ``[rank, map id, map name, cycle id, canonical member, length, modulus,
truncated]`` (truncated is 1 when the cycle has more members than the index lists).  The files:

- ``index`` (the manifest): the counts, the address pattern of cycle pages, and how each series
  below is cut;
- ``m<i>``: members, each listed member of each cycle under shard CRC-32(decimal text) mod the
  number of member shards, with the rows of every cycle that has it; a member whose CRC-32 more
  than ``spill_rows`` entries share (a member in many cycles, such as 0) has its rows in shards
  ``x<a>`` .. ``x<b-1>`` of its own, and the member shard gives ``{"x": [a, b], "hits": n,
  "truncated": t}`` (t of the n cycles have truncated members);
- ``r<i>``: the rows, by rank range (a map's cycles are one range);
- ``w<i>``: the words, by rank range (a word, or ``[word, modulus]`` for moduli above 10);
- ``l<i>``: the rows by length, each with its word appended;
- ``k<i>``: maps by key (id and name with spaces removed and ASCII letters in lower case), under
  shard CRC-32(UTF-8 of the key) mod the number of key shards: ``[id, name, first rank, count]``;
- ``t<i>``: the rows of the cycles whose members are truncated.

Each series is cut so that no file passes its limit unless a single entry alone does.  Every
text is JSON with ``<``, ``>`` and ``&`` escaped, so no data can close the script element or
open a comment in it; the names of files are computed, never taken from data.
"""

from __future__ import annotations

import json
import re
import zlib
from array import array
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from itertools import repeat
from typing import TYPE_CHECKING, Any, Protocol

if TYPE_CHECKING:
    import numpy as np

from builder.arith.integers import decimals
from builder.site.paths import cycle_url
from builder.site.records import CycleRecord, MapRecord

__all__ = [
    "DEFAULT_LIMITS",
    "INDEX_FILE",
    "SEARCH_MEMBERS",
    "SHARD_FOLDER",
    "IndexedCycle",
    "IndexedMap",
    "ListedCycle",
    "ListedMap",
    "SearchLimits",
    "map_key",
    "search_index",
    "shard_wrapper",
]

#: The search index lists up to this many members of each cycle.
SEARCH_MEMBERS = 1000
#: The manifest, loaded by the search page's own script element.
INDEX_FILE = "data/search-index.js"
#: Where the shards are.
SHARD_FOLDER = "data/search"
FORMAT = "periplus-search/1"
_CYCLE_URL = cycle_url("{map}", "{cycle}")
# What map keys drop: the spaces a reader may type (those the search script ignores in numbers).
_SPACES = dict.fromkeys(map(ord, " \t\n\r\f\v\u00a0\u2007\u2009\u200a\u202f"), None)
_PLAIN = re.compile(r"[A-Za-z0-9_.,-]*")
_FOLD = {**_SPACES, **{ord(c): c.lower() for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZ"}, 0x2212: "-"}


@dataclass(frozen=True, slots=True)
class SearchLimits:
    """How the index is cut: members listed per cycle, and the most bytes a file may hold."""

    members: int = SEARCH_MEMBERS
    shard_bytes: int = 64 * 1024  # members, rows, lengths, keys, truncated cycles
    word_bytes: int = 16 * 1024  # words, so a query with a member and a word loads little
    spill_rows: int = 64  # a member in more cycles has its rows in shards of its own


#: The limits a build uses.
DEFAULT_LIMITS = SearchLimits()


class IndexedCycle(Protocol):
    """What the index reads of a cycle (builder.site.records.CycleRecord has it)."""

    @property
    def id(self) -> str: ...
    @property
    def canonical(self) -> str: ...
    @property
    def length(self) -> int: ...
    @property
    def word(self) -> str: ...
    @property
    def members(self) -> Sequence[str]: ...


class IndexedMap(Protocol):
    """What the index reads of a map (builder.site.records.MapRecord has it)."""

    @property
    def id(self) -> str: ...
    @property
    def name(self) -> str: ...
    @property
    def modulus(self) -> int: ...
    @property
    def cycles(self) -> Iterable[IndexedCycle]: ...


@dataclass(frozen=True, slots=True)
class ListedCycle:
    """A cycle with only the members the index lists written out (a record writes out all of them)."""

    id: str
    canonical: str
    length: int
    word: str
    members: tuple[str, ...]

    @classmethod
    def of(cls, record: CycleRecord, listed: int) -> ListedCycle:
        members = decimals(record.cycle.canonical_members[:listed])
        return cls(record.id, record.canonical, record.length, record.word, members)


@dataclass(frozen=True, slots=True)
class ListedMap:
    """A map whose cycles are made into ListedCycles one at a time, as the index reads them."""

    record: MapRecord
    listed: int

    @property
    def id(self) -> str:
        return self.record.id

    @property
    def name(self) -> str:
        return self.record.name

    @property
    def modulus(self) -> int:
        return self.record.modulus

    @property
    def cycles(self) -> Iterator[ListedCycle]:
        return (ListedCycle.of(c, self.listed) for c in self.record.cycles)


def map_key(text: str) -> str:
    """A map's id or name as the map field compares it: spaces removed, ASCII letters in lower case, U+2212 as '-'."""
    return text.translate(_FOLD)


def _js(value: Any) -> str:
    """JSON that is safe inside a script element: no '<', '>' or '&' (escaped as \\u003c ...)."""
    text = json.dumps(value, ensure_ascii=True, separators=(",", ":"))
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def _plain(text: str) -> str:
    """A JSON string for text that is usually made of letters, digits and ``-.,_`` alone (ids, numbers, words)."""
    return f'"{text}"' if _PLAIN.fullmatch(text) else _js(text)


def shard_wrapper(name: str) -> tuple[str, str]:
    """The text before and after a shard's data."""
    return f'(window.PeriplusSearchData=window.PeriplusSearchData||[]).push(["{name}",', "]);\n"


def _file(name: str, data: str) -> tuple[str, str]:
    head, tail = shard_wrapper(name)
    path = INDEX_FILE if name == "index" else f"{SHARD_FOLDER}/{name}.js"
    return path, head + data + tail


def _overhead(name: str) -> int:
    head, tail = shard_wrapper(name)
    return len(head) + len(tail) + 2  # and the brackets of the list or object


def _cuts(sizes: Iterable[int], limit: int) -> list[int]:
    """Where each file of a series starts: greedy, each item costing its size and a comma."""
    starts: list[int] = []
    used = limit
    for i, size in enumerate(sizes):
        if used + size + 1 > limit:
            starts.append(i)
            used = 0
        used += size + 1
    return starts


def _spans(starts: Sequence[int], total: int) -> list[tuple[int, int]]:
    """Each file's [first, end) of a series that starts its files at ``starts``."""
    return list(zip(starts, [*starts[1:], total], strict=True)) if starts else []


@dataclass(slots=True)
class _Listed:
    """Every listed member of every cycle, one entry each, kept compactly: the texts joined into one
    string, and for each entry the length of its text, its cycle's rank and the CRC-32 of its text."""

    pieces: list[str] = field(default_factory=list)  # each cycle's members joined, until text is asked for
    sizes: array[int] = field(default_factory=lambda: array("I"))
    owners: array[int] = field(default_factory=lambda: array("I"))
    hashes: array[int] = field(default_factory=lambda: array("I"))

    def add(self, rank: int, members: Sequence[str]) -> None:
        self.pieces.append("".join(members))
        self.sizes.extend(map(len, members))
        self.owners.extend(repeat(rank, len(members)))
        self.hashes.extend(zlib.crc32(m.encode("ascii")) for m in members)

    def text(self) -> str:
        whole = "".join(self.pieces)
        self.pieces = [whole]
        return whole


@dataclass(slots=True)
class _Table:
    """Every cycle by rank: its row, word, length and listed members; each map's key entry."""

    rows: list[str]
    words: list[str]
    lengths: list[int]
    members: _Listed
    truncated: list[int]  # ranks
    cut: bytearray  # 1 for each rank whose members are truncated
    keys: dict[str, list[str]]  # map key -> the JSON of [id, name, first rank, count] of each map

    @classmethod
    def of(cls, maps: Sequence[IndexedMap], listed: int) -> _Table:
        table = cls([], [], [], _Listed(), [], bytearray(), {})
        for m in maps:
            first = len(table.rows)
            head = f"{_js(m.id)},{_js(m.name)}"  # once a map: names are free text, escaped by _js
            for c in m.cycles:
                rank = len(table.rows)
                cut = c.length > listed  # a cycle of length k has k members
                fields = f"{_plain(c.id)},{_plain(c.canonical)},{c.length},{m.modulus},{int(cut)}"
                table.rows.append(f"[{rank},{head},{fields}]")
                table.words.append(_plain(c.word) if m.modulus <= 10 else _js([c.word, m.modulus]))
                table.lengths.append(c.length)
                table.members.add(rank, c.members[:listed])
                table.cut.append(cut)
                if cut:
                    table.truncated.append(rank)
            count = len(table.rows) - first  # a map without cycles is at rank 0, wherever it would sort
            entry = _js([m.id, m.name, first if count else 0, count])
            for key in sorted({map_key(m.id), map_key(m.name)}):
                table.keys.setdefault(key, []).append(entry)
        return table


def _series(
    prefix: str, items: Sequence[str], limit: int, first: int = 0
) -> tuple[list[int], Iterator[tuple[str, str]]]:
    """Items cut into files ``<prefix><first>``, ``<prefix><first + 1>``, ...: where each starts, and the
    files, made as they are taken."""
    starts = _cuts((len(s) for s in items), limit - _overhead(prefix + "999999"))
    spans = _spans(starts, len(items))
    return starts, (_file(f"{prefix}{first + i}", "[" + ",".join(items[a:b]) + "]") for i, (a, b) in enumerate(spans))


def _length_series(table: _Table, limit: int) -> tuple[list[list[int]], Iterator[tuple[str, str]]]:
    """Rows by length, each with its word: for each length [length, first file, last file], and the files."""
    by_length: dict[int, list[int]] = {}
    for rank, k in enumerate(table.lengths):
        by_length.setdefault(k, []).append(rank)
    items: list[str] = []
    owner: list[int] = []
    for k in sorted(by_length):
        for rank in by_length[k]:
            items.append(table.rows[rank][:-1] + "," + table.words[rank] + "]")
            owner.append(k)
    starts, files = _series("l", items, limit)
    spans: dict[int, list[int]] = {}
    for i, (a, b) in enumerate(_spans(starts, len(items))):
        for k in sorted(set(owner[a:b])):
            spans.setdefault(k, [k, i, i])[2] = i
    return [spans[k] for k in sorted(spans)], files


def _bucket_count(hashes: np.ndarray[Any, Any], weights: np.ndarray[Any, Any], limit: int) -> int:
    """The fewest buckets (from an estimate up) whose every bucket, by weight, stays within ``limit``.

    Gives up at eight times the estimate: only entries that alone pass the limit keep it from fitting.
    """
    import numpy as np  # when first needed: a build that keeps its index does without

    total = int(weights.sum())
    count = max(1, -(-total * 5 // (limit * 4)))
    ceiling = 8 * count
    while count < ceiling:
        if int(np.bincount(hashes % count, weights=weights, minlength=count).max()) <= limit:
            return count
        count += max(1, count // 16)
    return ceiling


def _key_series(table: _Table, limit: int) -> tuple[int, list[tuple[str, str]]]:
    import numpy as np  # when first needed: a build that keeps its index does without

    keys = sorted(table.keys)
    texts = [_js(key) + ":[" + ",".join(table.keys[key]) + "]" for key in keys]
    hashes = np.array([zlib.crc32(key.encode("utf-8")) for key in keys], dtype=np.int64)
    weights = np.array([len(t) + 1 for t in texts], dtype=np.int64)
    count = _bucket_count(hashes, weights, limit - _overhead("k999999"))
    buckets: list[list[str]] = [[] for _ in range(count)]
    for h, text in zip(hashes.tolist(), texts, strict=True):
        buckets[h % count].append(text)
    return count, [_file(f"k{i}", "{" + ",".join(b) + "}") for i, b in enumerate(buckets)]


@dataclass(slots=True)
class _Members:
    """The listed members as arrays, one entry each: where its text is, its rank, CRC-32 and cost in bytes."""

    text: str  # every listed member's text, one after another
    starts: np.ndarray[Any, Any]
    ends: np.ndarray[Any, Any]
    ranks: np.ndarray[Any, Any]
    hashes: np.ndarray[Any, Any]  # uint32
    weights: np.ndarray[Any, Any]  # bytes in its shard, counted generously
    heavy: frozenset[int]  # the hashes whose members spill

    @classmethod
    def of(cls, table: _Table, spill_rows: int) -> _Members:
        import numpy as np  # when first needed: a build that keeps its index does without

        listed = table.members
        sizes = np.frombuffer(listed.sizes, dtype=np.uint32)
        ends = np.cumsum(sizes, dtype=np.int64)
        ranks = np.frombuffer(listed.owners, dtype=np.uint32)
        hashes = np.frombuffer(listed.hashes, dtype=np.uint32)
        rows = np.array([len(r) + 1 for r in table.rows], dtype=np.uint32)
        # "m":[row] and a comma: the key is counted for every entry, though a shard writes it once.
        weights = sizes + 6 + rows[ranks]
        text = listed.text()
        # A hash shared by more entries than spill_rows spills: the rows of each member with that hash
        # go to shards of their own, and its member shard keeps a stub (80 bytes at most) for it.
        values, counts = np.unique(hashes, return_counts=True)
        heavy = frozenset(int(v) for v in values[counts > spill_rows].tolist())
        if heavy:
            seen: set[str] = set()
            for i in np.flatnonzero(np.isin(hashes, np.array(sorted(heavy), dtype=np.uint32))).tolist():
                name = text[int(ends[i] - sizes[i]) : int(ends[i])]
                weights[i] = 0 if name in seen else len(name) + 80
                seen.add(name)
        return cls(text, ends - sizes, ends, ranks, hashes, weights, heavy)


def _member_files(table: _Table, limits: SearchLimits) -> tuple[int, Iterator[tuple[str, str]]]:
    """The number of member shards, and the member and spill shards (made as they are taken)."""
    found = _Members.of(table, limits.spill_rows)
    limit = limits.shard_bytes - _overhead("m999999")
    count = _bucket_count(found.hashes, found.weights, limit)
    return count, _member_shards(table, found, count, limits)


def _member_shards(table: _Table, found: _Members, count: int, limits: SearchLimits) -> Iterator[tuple[str, str]]:
    import numpy as np  # when first needed: a build that keeps its index does without

    buckets = found.hashes % np.uint32(count)
    order = np.argsort(buckets, kind="stable")  # ranks stay ascending within a bucket
    edges = np.searchsorted(buckets[order], np.arange(count + 1)).tolist()
    text, rows, spilled = found.text, table.rows, 0
    for b in range(count):
        grouped: dict[str, list[int]] = {}
        chosen = order[edges[b] : edges[b + 1]]
        places = zip(found.starts[chosen].tolist(), found.ends[chosen].tolist(), strict=True)
        for (start, end), rank in zip(places, found.ranks[chosen].tolist(), strict=True):
            grouped.setdefault(text[start:end], []).append(rank)
        entries = []
        for member, ranks in grouped.items():
            if not found.heavy or zlib.crc32(member.encode("ascii")) not in found.heavy:
                entries.append(f'"{member}":[' + ",".join([rows[r] for r in ranks]) + "]")
                continue
            starts, files = _series("x", [rows[r] for r in ranks], limits.shard_bytes, spilled)
            yield from files
            stub = {
                "x": [spilled, spilled + len(starts)],
                "hits": len(ranks),
                "truncated": sum(table.cut[r] for r in ranks),
            }
            entries.append(f'"{member}":' + _js(stub))
            spilled += len(starts)
        yield _file(f"m{b}", "{" + ",".join(entries) + "}")


def search_index(maps: Sequence[IndexedMap], limits: SearchLimits = DEFAULT_LIMITS) -> Iterator[tuple[str, str]]:
    """Every file of the search index as (path relative to the site root, text); ``maps`` in result order.

    The manifest comes first; the shards follow as they are made, so a caller that writes each
    file as it comes never holds more than one shard's text.
    """
    table = _Table.of(maps, limits.members)
    row_starts, row_files = _series("r", table.rows, limits.shard_bytes)
    word_starts, word_files = _series("w", table.words, limits.word_bytes)
    lengths, length_files = _length_series(table, limits.shard_bytes)
    key_count, key_files = _key_series(table, limits.shard_bytes)
    long_starts, long_files = _series("t", [table.rows[r] for r in table.truncated], limits.shard_bytes)
    member_count, member_files = _member_files(table, limits)
    manifest = {
        "format": FORMAT,
        "cycles": len(table.rows),
        "listed": limits.members,
        "truncated": len(table.truncated),
        "cycle_url": _CYCLE_URL,
        "members": member_count,
        "keys": key_count,
        "rows": row_starts,
        "words": word_starts,
        "lengths": lengths,
        "long": len(long_starts),
    }
    yield _file("index", _js(manifest))
    yield from row_files
    yield from word_files
    yield from length_files
    yield from key_files
    yield from long_files
    yield from member_files
