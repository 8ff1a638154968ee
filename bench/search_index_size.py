"""Benchmark: the search index of a big record, its files, what each kind of query downloads, and its cost.

    python bench/search_index_size.py [--scale S] [--catalogue DIR] [--out DIR]

Verifies the catalogue (the big demo catalogue of bench/big_catalogue.py at scale S, default 1.0,
or DIR), builds its views, and then, in the same run:

- the index as the search page reads it now (builder.site.exports.search_files), written file by
  file, and the peak memory of the process before and after it;
- the floor: the index as one script, as builds wrote it before (every cycle with its first 1,000
  members in one JSON text), encoded and written; the ratio of the two times;
- its files: how many of each kind, their total and largest sizes;
- what queries download, from the sizes on disk: every script a query loads, the page's own
  search.js and the manifest included.  A member query loads one member shard (and, for a member
  in many cycles, shards of its own until they hold a page of results); the figure is the worst over
  every member shard, and the median over a sample of members.  A map query loads one key shard and
  the rows of that map; a length query the rows of that length; a word fragment alone every word
  shard and the rows of the first results.

Figures, not pass/fail: timings on a shared machine vary, so no test depends on them.
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import statistics
import sys
import tempfile
import time
import zlib
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.catalogue.limits import NO_RECHECK, Limits  # noqa: E402
from builder.catalogue.verify import verify_catalogue  # noqa: E402
from builder.site.exports import search_files  # noqa: E402
from builder.site.search_index import INDEX_FILE, SEARCH_MEMBERS, SHARD_FOLDER, shard_wrapper  # noqa: E402
from builder.site.views import SiteViews, build_views  # noqa: E402

SEARCH_JS = ROOT / "templates" / "static" / "search.js"
KINDS = {
    "m": "members",
    "x": "members' own rows",
    "r": "rows",
    "w": "words",
    "l": "lengths",
    "k": "map keys",
    "t": "long cycles",
}


def peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


def old_index(views: SiteViews) -> str:
    """The floor: every cycle with its listed members in one script, as the index was written before."""
    maps = views.maps
    cycles = [
        {
            "map": c.map_id,
            "map_name": maps[c.map_id].name,
            "cycle": c.id,
            "url": c.url,
            "length": c.length,
            "canonical": c.canonical,
            "word": c.word,
            "modulus": maps[c.map_id].modulus,
            "members": c.members[:SEARCH_MEMBERS],
            "members_truncated": len(c.members) > SEARCH_MEMBERS,
        }
        for c in views.cycles
    ]
    data = json.dumps({"cycles": cycles}, ensure_ascii=True, separators=(",", ":"))
    return "window.PERIPLUS_SEARCH = " + data.replace("<", "\\u003c").replace(">", "\\u003e") + ";\n"


class Site:
    def __init__(self, root: Path) -> None:
        self.root = root
        self.cache: dict[str, Any] = {}

    def path(self, name: str) -> Path:
        return self.root / (INDEX_FILE if name == "index" else f"{SHARD_FOLDER}/{name}.js")

    def size(self, name: str) -> int:
        return self.path(name).stat().st_size

    def data(self, name: str) -> Any:
        if name not in self.cache:
            head, tail = shard_wrapper(name)
            self.cache[name] = json.loads(self.path(name).read_text(encoding="ascii")[len(head) : -len(tail)])
        return self.cache[name]


def member_bytes(site: Site, shard: str, entry: Any) -> int:
    """A member query's own files: its member shard, and its own rows until a page of results."""
    cost = site.size(shard)
    if isinstance(entry, dict):
        rows = 0
        for x in range(*entry["x"]):
            if rows >= 200:
                break
            cost += site.size(f"x{x}")
            rows += len(site.data(f"x{x}"))
    return cost


def query_figures(site: Site, views: SiteViews) -> list[tuple[str, int]]:
    man = site.data("index")
    fixed = SEARCH_JS.stat().st_size + site.size("index")
    worst = 0
    for i in range(man["members"]):
        shard = f"m{i}"
        heavy = [member_bytes(site, shard, e) for e in site.data(shard).values() if isinstance(e, dict)]
        worst = max(worst, site.size(shard), *heavy)
        site.cache.pop(shard)
    sample = [c.members[len(c.members) // 2] for c in views.cycles[:: max(1, len(views.cycles) // 400)]]
    typical = []
    for member in sample:
        shard = f"m{zlib.crc32(member.encode()) % man['members']}"
        typical.append(member_bytes(site, shard, site.data(shard)[member]))
    biggest = max(views.maps.values(), key=lambda m: len(m.cycles))
    key = biggest.name.replace(" ", "").lower()
    key_shard = f"k{zlib.crc32(key.encode()) % man['keys']}"
    first, count = next(e[2:] for e in site.data(key_shard)[key] if e[0] == biggest.id)
    starts = man["rows"] + [man["cycles"]]
    row_files = [i for i in range(len(man["rows"])) if starts[i] < first + count and starts[i + 1] > first]
    common = max(man["lengths"], key=lambda s: s[2] - s[1])
    words = sum(site.size(f"w{i}") for i in range(len(man["words"])))
    return [
        ("member query, worst member shard", fixed + worst),
        ("member query, median of a sample", fixed + int(statistics.median(typical))),
        (
            f"map query {biggest.name} ({count:,} cycles)",
            fixed + site.size(key_shard) + sum(site.size(f"r{i}") for i in row_files),
        ),
        (f"length query {common[0]}", fixed + sum(site.size(f"l{i}") for i in range(common[1], common[2] + 1))),
        ("word query alone (words, then the first rows)", fixed + words + site.size("r0")),
    ]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--scale", type=float, default=1.0)
    parser.add_argument("--catalogue", type=Path, help="a catalogue (default: the big demo catalogue of this scale)")
    parser.add_argument("--out", type=Path, help="keep the index in this new folder (default: a temporary one)")
    args = parser.parse_args(argv)
    if args.catalogue is None:
        from big_catalogue import cached_catalogue  # beside this script

        args.catalogue = cached_catalogue(args.scale)
    t0 = time.perf_counter()
    report = verify_catalogue(args.catalogue, Limits(recheck_up_to=NO_RECHECK))
    if not report.ok:
        print(f"{args.catalogue} does not verify")
        return 1
    views = build_views(report.catalogue)
    print(
        f"{args.catalogue}: {len(views.cycles):,} cycles in {len(views.maps):,} maps (read in {time.perf_counter() - t0:.1f} s)"
    )
    work = Path(tempfile.mkdtemp(prefix="search-index-"))
    out = args.out or work / "site"
    try:
        before = peak_mb()
        t0 = time.perf_counter()
        for rel, text in search_files(views):
            path = out / rel
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_text(text, encoding="utf-8", newline="\n")
        made = time.perf_counter() - t0
        after = peak_mb()
        t0 = time.perf_counter()
        floor_text = old_index(views)
        (work / "old-index.js").write_text(floor_text, encoding="utf-8")
        floor = time.perf_counter() - t0
        print(
            f"floor (one script): {floor:.2f} s, {len(floor_text) / 2**20:.1f} MB, peak memory {peak_mb():.0f} MB after it"
        )
        del floor_text
        print(f"sharded index:      {made:.2f} s, ratio {made / floor:.2f} to the floor")
        print(f"peak memory: {before:.0f} MB after reading the record, {after:.0f} MB after the sharded index")
        site = Site(out)
        files = [p for p in (out / SHARD_FOLDER).iterdir()]
        total = sum(p.stat().st_size for p in files) + site.size("index")
        print(f"files: {len(files) + 1:,}, {total / 2**20:.1f} MB; manifest {site.size('index') / 1024:.1f} KB")
        for prefix, kind in KINDS.items():
            sizes = [p.stat().st_size for p in files if p.stem[0] == prefix]
            if sizes:
                print(
                    f"  {kind:18} {len(sizes):6,} files, {sum(sizes) / 2**20:7.2f} MB, largest {max(sizes) / 1024:6.1f} KB"
                )
        print(f"search.js: {SEARCH_JS.stat().st_size / 1024:.1f} KB; downloads, every script included:")
        for what, size in query_figures(site, views):
            print(f"  {what:48} {size / 1024:8.1f} KB")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
