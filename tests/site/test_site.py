"""``periplus build`` on the shipped catalogue: links, page structure, the pages of a published cycle,
the machine-readable exports, and the command line (build, ``python -m builder``, preview).

The site is built once for the module (about a second) and every page is parsed once with
BeautifulSoup's html.parser; the checks below read those parses.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import posixpath
import re
import socket
import subprocess
import sys
import urllib.request
import xml.etree.ElementTree as ET
from collections import Counter
from dataclasses import dataclass
from pathlib import Path
from urllib.parse import unquote, urlsplit

import pytest
import yaml
from bs4 import BeautifulSoup, Tag
from conftest import REPO, VALID, VALID_SUMMARY
from test_search_index import crc32_bitwise, read_shard

from builder.site.build import build_site
from builder.site.exports import FEED_ENTRIES

SHIPPED = REPO / "catalogue"
BASE_URL = "https://example.org/record/"
ATOM = "{http://www.w3.org/2005/Atom}"
SITEMAP = "{http://www.sitemaps.org/schemas/sitemap/0.9}"
# Schemes that leave the site (common practice, no source: RFC 3986 section 3.1 defines the scheme
# part; http, https and mailto are the ones a record's pages may link out with).
EXTERNAL_SCHEMES = ("http", "https", "mailto")
HEADING = re.compile(r"^h[1-6]$")


# --- helpers shared with test_site_safety.py ---------------------------------------------------


@dataclass
class Site:
    root: Path
    pages: dict[str, BeautifulSoup]  # path relative to the root (posix) -> parsed page

    def page(self, rel: str) -> BeautifulSoup:
        return self.pages[rel]

    def files(self) -> set[str]:
        return {p.relative_to(self.root).as_posix() for p in self.root.rglob("*") if p.is_file()}


def parse_site(root: Path) -> Site:
    pages = {
        p.relative_to(root).as_posix(): BeautifulSoup(p.read_text(encoding="utf-8"), "html.parser")
        for p in sorted(root.rglob("*.html"))
    }
    return Site(root, pages)


def url_attributes(soup: BeautifulSoup) -> list[tuple[Tag, str, str]]:
    """Every (element, attribute, value) of the page that holds a URL."""
    out = []
    for tag in soup.find_all(True):
        for attr in ("href", "src", "action", "poster", "data", "formaction", "srcset", "xlink:href"):
            value = tag.get(attr)
            if isinstance(value, str):
                out.append((tag, attr, value))
    return out


def is_external(url: str) -> bool:
    return urlsplit(url.strip()).scheme.lower() in EXTERNAL_SCHEMES


def resolve(page: str, url: str) -> tuple[str, str]:
    """(site-relative path, fragment) of a relative URL found on ``page``; the path is '' for '#x'."""
    parts = urlsplit(url)
    assert not parts.scheme and not parts.netloc, f"{page}: {url!r} is not a relative URL"
    if not parts.path:
        return page, parts.fragment
    assert not parts.path.startswith("/"), f"{page}: {url!r} is root-relative; it breaks when opened from disk"
    joined = posixpath.normpath(posixpath.join(posixpath.dirname(page), unquote(parts.path)))
    assert joined != ".." and not joined.startswith("../"), f"{page}: {url!r} leaves the site"
    return joined, unquote(parts.fragment)


def ids_of(soup: BeautifulSoup) -> list[str]:
    return [tag["id"] for tag in soup.find_all(id=True)]


def check_links(site: Site) -> int:
    """Every internal href/src of every page resolves to a built file, and every #fragment to an id."""
    files = site.files()
    ids = {rel: set(ids_of(soup)) for rel, soup in site.pages.items()}
    checked = 0
    for rel, soup in site.pages.items():
        for tag, attr, url in url_attributes(soup):
            if is_external(url):
                continue
            scheme = urlsplit(url.strip()).scheme
            assert not scheme, f"{rel}: <{tag.name} {attr}={url!r}> uses the scheme {scheme!r}"
            # Common practice, no source: a folder link needs a server to map it to index.html,
            # and the site must also work opened from disk.
            assert not urlsplit(url).path.endswith("/"), f"{rel}: <{tag.name} {attr}={url!r}> ends in '/'"
            target, fragment = resolve(rel, url)
            if (site.root / target).is_dir():
                target = posixpath.join(target, "index.html")
            assert target in files, f"{rel}: <{tag.name} {attr}={url!r}> points to {target}, which was not built"
            if fragment:
                assert target in ids, f"{rel}: {url!r} has a fragment but {target} is not a page"
                assert fragment in ids[target], f"{rel}: {url!r}: no element with id {fragment!r} in {target}"
            checked += 1
    return checked


def check_structure(rel: str, soup: BeautifulSoup) -> None:
    """Page-level checks every page must pass (each names its source)."""
    # Common practice, no source: WCAG 2, success criterion 3.1.1 "Language of Page".
    html = soup.find("html")
    assert isinstance(html, Tag) and html.get("lang"), f"{rel}: <html> has no lang"
    # Common practice, no source: WCAG 2, success criterion 2.4.2 "Page Titled".
    title = soup.find("title")
    assert isinstance(title, Tag) and title.get_text(strip=True), f"{rel}: empty or missing <title>"
    # Common practice, no source: one h1 per page naming it, and WCAG 2 "Info and Relationships"
    # (1.3.1): heading levels never skip on the way down.
    headings = [int(h.name[1]) for h in soup.find_all(HEADING)]
    assert headings.count(1) == 1, f"{rel}: expected exactly one <h1>, got {headings.count(1)}"
    assert headings[0] == 1, f"{rel}: the first heading is h{headings[0]}, not h1"
    for before, after in zip(headings, headings[1:], strict=False):
        assert after <= before + 1, f"{rel}: heading h{after} follows h{before} (levels {headings})"
    # HTML Living Standard, "the id attribute" (from memory): an id is unique in its document.
    duplicated = [i for i, n in Counter(ids_of(soup)).items() if n > 1]
    assert not duplicated, f"{rel}: ids used more than once: {duplicated}"
    known = set(ids_of(soup))
    # Common practice, no source: WAI-ARIA aria-labelledby and <label for> refer to ids in the page.
    for tag in soup.find_all(attrs={"aria-labelledby": True}):
        for ref in tag["aria-labelledby"].split():
            assert ref in known, f"{rel}: aria-labelledby names {ref!r}, which is not an id in the page"
    for label in soup.find_all("label", attrs={"for": True}):
        assert label["for"] in known, f"{rel}: <label for={label['for']!r}> names no element"
    # Common practice, no source: WCAG 2, 1.1.1 "Non-text Content": images have a text alternative.
    for img in soup.find_all("img"):
        assert img.has_attr("alt"), f"{rel}: <img src={img.get('src')!r}> has no alt"
    for svg in soup.find_all("svg"):
        # A chart with keyboard stops inside is a named group (WAI-ARIA 1.2: an img's children are presentational).
        assert svg.get("role") in ("img", "group"), f"{rel}: an <svg> lacks role=img or group"
        svg_title = svg.find("title", recursive=False)
        assert isinstance(svg_title, Tag) and svg_title.get_text(strip=True), f"{rel}: an <svg> has no <title>"
    # Common practice, no source: WCAG 2, 1.3.1: data tables mark their header cells with <th>.
    for table in soup.find_all("table"):
        assert table.find("th"), f"{rel}: a table has no <th> header cells"


# --- the shipped catalogue, built once ------------------------------------------------------------


@pytest.fixture(scope="module")
def shipped(tmp_path_factory: pytest.TempPathFactory) -> Site:
    out = tmp_path_factory.mktemp("shipped") / "site"
    result = build_site(SHIPPED, out, base_url=BASE_URL)
    assert result.report.ok, [str(p) for p in result.report.problems]
    return parse_site(out)


def shipped_maps() -> list[str]:
    return sorted(p.stem for p in (SHIPPED / "maps").glob("*.yaml"))


def shipped_cycles(map_id: str) -> list[str]:
    return sorted(p.stem for p in (SHIPPED / "cycles" / map_id).glob("*.yaml"))


def text_of(tag: Tag) -> str:
    return " ".join(tag.get_text(" ").split())


# --- 1. links and structure -----------------------------------------------------------------------


def test_every_internal_link_and_fragment_resolves(shipped: Site) -> None:
    checked = check_links(shipped)
    # Common practice, no source: a site of 800 pages with navigation on each has thousands of links;
    # a count near zero would mean the checker found nothing to check.
    assert checked > 10 * len(shipped.pages)


def test_every_page_is_well_formed_and_accessible(shipped: Site) -> None:
    # Counted from the shipped catalogue: one page per map and per cycle, besides the indexes.
    cycles = sum(len(shipped_cycles(m)) for m in shipped_maps())
    assert len(shipped.pages) > len(shipped_maps()) + cycles
    for rel, soup in shipped.pages.items():
        check_structure(rel, soup)


def test_the_link_checker_catches_a_broken_link(tmp_path: Path) -> None:
    # Common practice, no source: a checker is itself checked on an input it must reject.
    (tmp_path / "a").mkdir()
    (tmp_path / "index.html").write_text('<a href="a/missing.html">x</a><a href="#nope">y</a>', encoding="utf-8")
    with pytest.raises(AssertionError, match="was not built"):
        check_links(parse_site(tmp_path))
    (tmp_path / "index.html").write_text('<a href="a/">x</a>', encoding="utf-8")
    with pytest.raises(AssertionError, match="ends in '/'"):
        check_links(parse_site(tmp_path))
    (tmp_path / "index.html").write_text('<a href="#nope">y</a>', encoding="utf-8")
    with pytest.raises(AssertionError, match="no element with id 'nope'"):
        check_links(parse_site(tmp_path))


# --- 2. the 3x+1 cycle through -17 -------------------------------------------------------------


def cycle_offset_from_word(word: str) -> int:
    """B = sum_j v_j 3^(v_{j+1}+...+v_{k-1}) 2^j for the parity vector v_0..v_{k-1}.

    J. C. Lagarias, "The set of rational cycles for the 3x+1 problem", Acta Arith. 56 (1990) 33-53,
    Thm 2.1 (via /work/shared/literature.md, status read); written out here, apart from the engine.
    """
    v = [int(c) for c in word]
    k = len(v)
    return sum(v[j] * 3 ** sum(v[j + 1 : k]) * 2**j for j in range(k))


def mn_values(tag: Tag) -> list[str]:
    return [mn.get_text() for mn in tag.find_all("mn")]


def signed_number(tag: Tag) -> str:
    """A MathML number as Periplus writes it: <mn>, or <mrow><mo>−</mo><mn>..</mn></mrow>."""
    if tag.name == "mn":
        return tag.get_text()
    assert tag.name == "mrow", tag
    mo, mn = tag.find_all(recursive=False)
    assert mo.name == "mo" and mo.get_text() == "\u2212" and mn.name == "mn", tag
    return "-" + mn.get_text()


def test_the_cycle_through_minus_17(shipped: Site) -> None:
    # J. C. Lagarias, Amer. Math. Monthly 92 (1985), via /work/shared/literature.md (status memory):
    # 3x+1 has a cycle through -17 of shortcut length 11 with 7 odd steps. Its members, by iterating
    # T(n) = n/2 or (3n+1)/2 by hand from -17:
    members = ["-17", "-25", "-37", "-55", "-82", "-41", "-61", "-91", "-136", "-68", "-34"]
    word = "".join("1" if int(n) % 2 else "0" for n in members)
    assert word == "11110111000"
    assert word.count("1") == 7 and len(word) == 11  # the odd steps and length of literature.md
    b = cycle_offset_from_word(word)
    assert b == -17 * (2**11 - 3**7) == 2363  # Lagarias 1990 Thm 2.1: n = B / (2^k - 3^x)
    target = 2**11 - 3**7
    assert target == -139

    soup = shipped.page("maps/3x-plus-1/minus-17/index.html")
    shown = [li.get_text(strip=True) for li in soup.select("ol.members li")]
    assert shown == members
    assert soup.select_one("p.word code").get_text() == word

    math = soup.select_one("div.equation math")
    assert math is not None
    powers = {tuple(mn_values(sup)) for sup in math.find_all("msup") if len(mn_values(sup)) == 2}
    assert ("2", "11") in powers and ("3", "7") in powers
    fracs = math.find_all("mfrac", recursive=True)
    numerators = [signed_number(f.find_all(recursive=False)[0]) for f in fracs if f.find("mn")]
    # B over 2^11 - 3^7, and B over the target, grouped by commas as every number (builder.site.numbers).
    assert numerators and all(n == f"{b:,}" for n in numerators)
    last = fracs[-1].find_all(recursive=False)
    assert [signed_number(last[0]), signed_number(last[1])] == [f"{b:,}", f"{target:,}"]
    top = math.find("mrow").find_all(recursive=False)
    assert signed_number(top[-1]) == "-17"  # ... = n

    facts = {text_of(dt): text_of(dt.find_next_sibling("dd")) for dt in soup.select("dl.facts dt")}
    # Written for readers with commas between groups of three digits (builder.site.numbers).
    assert facts["B"] == f"{b:,}" == "2,363"
    assert facts["A"] == f"{3**7:,}" == "2,187"
    assert facts["Target 2 k − A"] == str(target)
    assert facts["Member of least |n|"] == "-17"  # the member of least absolute value, with its sign


def cycle_links(site: Site, map_id: str) -> Counter[str]:
    """Cycle pages linked from the map page's cycle table, as site-relative paths."""
    rel = f"maps/{map_id}/index.html"
    table = site.page(rel).select_one("#cycles ~ div table") or site.page(rel).find("table", class_="sortable")
    links: Counter[str] = Counter()
    if table is None:
        return links
    for a in table.select("tbody a[href]"):
        links[resolve(rel, a["href"])[0]] += 1
    return links


def _surname_key(author: str) -> tuple[str, str]:
    # A bibliography orders works by the authors' surnames, each author's in year order (common practice,
    # no source); written out here from the names as the record lists them (initials first).
    words = author.split()
    while len(words) > 1 and words[0].endswith("."):
        words = words[1:]
    return " ".join(words).casefold(), author.casefold()


def test_the_references_are_in_bibliography_order_and_cited_by_maps_in_the_site_s_order(shipped: Site) -> None:
    listed = yaml.safe_load((SHIPPED / "references.yaml").read_text(encoding="utf-8"))
    expected = sorted(
        listed,
        key=lambda k: (
            [_surname_key(a) for a in listed[k]["authors"]],
            listed[k]["year"],
            listed[k]["title"].casefold(),
            k,
        ),
    )
    page = shipped.page("references/index.html")
    sections = page.select("section.reference")
    assert [str(s["id"]).removeprefix("ref-") for s in sections] == expected
    # Lagarias's works, for one, come in year order (1985, 1990, 2003).
    years = [listed[k]["year"] for k in expected if listed[k]["authors"] == ["J. C. Lagarias"]]
    assert years == sorted(years) and len(years) >= 3
    # The maps citing a source come in the order of the maps index (3x+1 before 3x-1, 3x+5 before 3x+13...).
    index = [a["href"].split("/")[-2] for a in shipped.page("maps/index.html").select("table a[href$='/index.html']")]
    for section in sections:
        cited = [
            a["href"].split("/")[-2]
            for a in section.select("ul.link-list a")
            if a.find_parent("li") and "(map)" in text_of(a.find_parent("li"))
        ]
        assert cited == [m for m in index if m in cited]


def test_the_3x_plus_1_map_page_lists_every_cycle(shipped: Site) -> None:
    # The shipped catalogue's own files, read with PyYAML (outside the engine's event-stream loader).
    entries = {}
    for path in sorted((SHIPPED / "cycles" / "3x-plus-1").glob("*.yaml")):
        entries[path.stem] = yaml.safe_load(path.read_text(encoding="utf-8"))
    # Lagarias 1985 via literature.md (memory): 3x+1 on Z has the cycles through 0, 1, -1, -5, -17.
    assert len(entries) == 5
    links = cycle_links(shipped, "3x-plus-1")
    assert set(links) == {f"maps/3x-plus-1/{cid}/index.html" for cid in entries}
    assert all(n == 1 for n in links.values())
    rows = shipped.page("maps/3x-plus-1/index.html").select("table.sortable tbody tr")
    assert len(rows) == len(entries)
    for cid, entry in entries.items():
        assert entry["map"] == "3x-plus-1"
        row = next(r for r in rows if resolve("maps/3x-plus-1/index.html", r.a["href"])[0].split("/")[2] == cid)
        members = [int(n) for n in entry.get("members", [entry["start"]])]
        # The provenance says each file's start is the cycle's least |member|; the table's first column.
        assert row.a.get_text() == str(entry["start"]) == str(min(members, key=lambda n: (abs(n), -n)))


def test_every_map_page_links_each_of_its_cycles(shipped: Site) -> None:
    maps = shipped_maps()
    assert len(maps) == 70  # counted from catalogue/maps
    total = 0
    for map_id in maps:
        expected = {f"maps/{map_id}/{cid}/index.html" for cid in shipped_cycles(map_id)}
        links = cycle_links(shipped, map_id)
        assert set(links) == expected, map_id
        total += len(expected)
    assert total == 702  # counted from catalogue/cycles


# --- 3. exports ----------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def record(shipped: Site) -> dict:
    return json.loads((shipped.root / "data" / "catalogue.json").read_text(encoding="utf-8"))


def test_catalogue_json_holds_every_number_as_a_string(shipped: Site, record: dict) -> None:
    # JSON, RFC 8259 section 6 (from memory): numbers beyond 2^53 lose precision in common readers,
    # so the export writes every cycle integer as a decimal string.
    assert len(record["cycles"]) == 702
    assert {m["id"] for m in record["maps"]} == set(shipped_maps())
    for c in record["cycles"]:
        for key in ("canonical", "min", "max", "A", "B", "target", "start_in_entry"):
            assert isinstance(c[key], str), (c["map"], c["id"], key)
        assert c["members"] and all(isinstance(n, str) for n in c["members"])
        assert len(c["members"]) == c["length"]
        # Exact, with Python's integers: the record's own numbers satisfy the cycle equation.
        assert int(c["B"]) == int(c["canonical"]) * int(c["target"])


def test_catalogue_json_agrees_with_the_pages(shipped: Site, record: dict) -> None:
    sample = [c for c in record["cycles"] if c["map"] in ("3x-plus-1", "5x-plus-1", "181x-plus-1")]
    sample += record["cycles"][::50]
    assert len(sample) > 20
    for c in sample:
        soup = shipped.page(c["url"])
        # The pages write numbers for readers (commas between groups of three digits), the export plainly.
        members = [li.get_text(strip=True) for li in soup.select("ol.members li")]
        assert members == [f"{int(n):,}" for n in c["members"]], c["url"]
        facts = {text_of(dt): text_of(dt.find_next_sibling("dd")) for dt in soup.select("dl.facts dt")}
        assert facts["A"] == f"{int(c['A']):,}" and facts["B"] == f"{int(c['B']):,}", c["url"]
        assert [v for k, v in facts.items() if k.startswith("Target") and k.endswith("− A")] == [
            f"{int(c['target']):,}"
        ], c["url"]
        assert soup.select_one("p.word code").get_text() == c["word"]
    # The -17 cycle again, against the values derived in test_the_cycle_through_minus_17.
    minus_17 = next(c for c in record["cycles"] if (c["map"], c["id"]) == ("3x-plus-1", "minus-17"))
    assert (minus_17["B"], minus_17["target"], minus_17["word"]) == ("2363", "-139", "11110111000")


def test_cycles_csv_has_one_row_per_cycle(shipped: Site, record: dict) -> None:
    text = (shipped.root / "data" / "cycles.csv").read_text(encoding="utf-8")
    first, rest = text.split("\n", 1)
    assert first.startswith("#")
    rows = list(csv.DictReader(io.StringIO(rest)))
    assert len(rows) == 702
    by_key = {(r["map"], r["id"]): r for r in rows}
    assert len(by_key) == len(rows)
    for c in record["cycles"]:
        row = by_key[(c["map"], c["id"])]
        assert (row["B"], row["target"], row["length"], row["word"]) == (
            c["B"],
            c["target"],
            str(c["length"]),
            c["word"],
        )


def test_one_json_file_per_map(shipped: Site) -> None:
    for map_id in shipped_maps():
        data = json.loads((shipped.root / "data" / "maps" / f"{map_id}.json").read_text(encoding="utf-8"))
        assert data["id"] == map_id
        assert sorted(c["id"] for c in data["cycles"]) == shipped_cycles(map_id)


def test_feed_is_atom(shipped: Site) -> None:
    root = ET.parse(shipped.root / "feed.xml").getroot()
    assert root.tag == f"{ATOM}feed"
    # RFC 4287 section 4.1.1: atom:feed contains exactly one atom:id, atom:title and atom:updated.
    for name in ("id", "title", "updated"):
        found = root.findall(f"{ATOM}{name}")
        assert len(found) == 1 and (found[0].text or "").strip(), name
    entries = root.findall(f"{ATOM}entry")
    # Issue 13: the feed carries the newest FEED_ENTRIES cycles, not the whole record.
    assert len(entries) == FEED_ENTRIES < 702
    found_on = [e.findtext(f"{ATOM}updated") for e in entries]
    assert found_on == sorted(found_on, reverse=True)
    # RFC 4287 section 4.1.1: a feed without an author element needs one in every entry.
    feed_has_author = root.find(f"{ATOM}author") is not None
    ids = []
    for entry in entries:
        # RFC 4287 section 4.1.2: each entry has atom:id, atom:title, atom:updated, and an
        # alternate link when it has no atom:content.
        for name in ("id", "title", "updated"):
            assert (entry.findtext(f"{ATOM}{name}") or "").strip(), name
        links = entry.findall(f"{ATOM}link")
        assert any(link.get("rel", "alternate") == "alternate" and link.get("href") for link in links)
        assert feed_has_author or entry.find(f"{ATOM}author") is not None
        # RFC 3339 (from memory): a date-time is YYYY-MM-DDThh:mm:ss with a zone.
        assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(Z|[+-]\d\d:\d\d)", entry.findtext(f"{ATOM}updated"))
        ids.append(entry.findtext(f"{ATOM}id"))
        href = next(link.get("href") for link in links if link.get("rel", "alternate") == "alternate")
        assert (shipped.root / href).is_file(), href
    # RFC 4287 section 4.2.6: an entry's id is universally unique.
    assert len(set(ids)) == len(ids)


def test_sitemap_lists_absolute_addresses_of_built_pages(shipped: Site) -> None:
    root = ET.parse(shipped.root / "sitemap.xml").getroot()
    assert root.tag == f"{SITEMAP}urlset"  # sitemaps.org protocol 0.9
    locs = [loc.text or "" for loc in root.iter(f"{SITEMAP}loc")]
    assert len(locs) == len(set(locs)) > 800
    for loc in locs:
        parts = urlsplit(loc)
        assert parts.scheme == "https" and parts.netloc == "example.org", loc  # sitemaps.org: fully qualified
        assert loc.startswith(BASE_URL), loc
        rel = loc[len(BASE_URL) :]
        assert rel in shipped.pages, loc
    assert "404.html" not in {loc[len(BASE_URL) :] for loc in locs}


def test_search_index_lists_every_cycle_once(shipped: Site) -> None:
    # The layout is tested in full in test_search_index.py; here, the index a real build writes.
    data = shipped.root / "data"
    manifest = read_shard(data / "search-index.js", "index")
    assert manifest["cycles"] == 702
    rows = [row for i in range(len(manifest["rows"])) for row in read_shard(data / "search" / f"r{i}.js", f"r{i}")]
    assert len(rows) == 702 and len({(row[1], row[3]) for row in rows}) == 702
    for row in rows:
        url = manifest["cycle_url"].replace("{map}", row[1]).replace("{cycle}", row[3])
        assert (shipped.root / url).is_file()
    # Lagarias 1985 via literature.md: -17, -25 and -37 are members of the 3x+1 cycle through -17.
    for member in ("-17", "-25", "-37"):
        name = f"m{crc32_bitwise(member.encode()) % manifest['members']}"
        entry = read_shard(data / "search" / f"{name}.js", name)[member]
        assert ["3x-plus-1", "minus-17"] in [[row[1], row[3]] for row in entry]


def test_without_base_url_the_records_address_is_used(tmp_path: Path) -> None:
    # sitemaps.org protocol: <loc> must be a full URL; record.yaml's base_url gives it.
    result = build_site(VALID, tmp_path / "site")
    assert result.pages > 0
    root = ET.parse(tmp_path / "site" / "sitemap.xml").getroot()
    locs = [loc.text or "" for loc in root.iter(f"{SITEMAP}loc")]
    assert locs and all(loc.startswith("http://localhost:8000/record/") for loc in locs)
    assert (tmp_path / "site" / "feed.xml").is_file()


# --- 4. nothing from another host ---------------------------------------------------------------


REMOTE = re.compile(r"^\s*(https?:)?//", re.IGNORECASE)
CSS_REMOTE = re.compile(r"""(url\(\s*['"]?\s*(https?:)?//|@import\s+(url\(\s*)?['"]?\s*(https?:)?//)""", re.IGNORECASE)


def check_no_remote_resources(site: Site) -> None:
    """No page, stylesheet or script loads anything from another host (links in <a href> may leave)."""
    for rel, soup in site.pages.items():
        for tag, attr, url in url_attributes(soup):
            if tag.name == "a" and attr == "href":
                continue
            assert not REMOTE.match(url), f"{rel}: <{tag.name} {attr}={url!r}> loads from another host"
        for style in soup.find_all("style"):
            assert not CSS_REMOTE.search(style.get_text()), f"{rel}: a <style> loads from another host"
        for tag in soup.find_all(style=True):
            assert not CSS_REMOTE.search(tag["style"]), f"{rel}: a style attribute loads from another host"
    for path in site.root.rglob("*.css"):
        assert not CSS_REMOTE.search(path.read_text(encoding="utf-8")), path
    for path in site.root.rglob("*.js"):
        text = path.read_text(encoding="utf-8")
        # Common practice, no source: a script pulls code or data from a host by an import, an
        # importScripts, a fetch or an XMLHttpRequest, all of which name an address.
        assert not re.search(r"""(import\s*\(|importScripts|fetch\s*\(|XMLHttpRequest)""", text), path
        assert not re.search(r"""['"](https?:)?//""", text), path


def test_nothing_is_loaded_from_another_host(shipped: Site) -> None:
    check_no_remote_resources(shipped)
    # Each page uses the site's own stylesheet (the 404 page, served at any address, carries its text).
    inline = shipped.page("404.html").find_all("style")
    assert [s.get_text().strip() for s in inline] == [(shipped.root / "static/style.css").read_text().strip()]
    for rel, soup in shipped.pages.items():
        if rel == "404.html":
            assert not soup.find_all("link", rel="stylesheet")
            continue
        sheets = [link["href"] for link in soup.find_all("link", rel="stylesheet")]
        assert sheets and all(resolve(rel, h)[0] == "static/style.css" for h in sheets), rel


def test_every_page_names_the_site_s_own_icon(shipped: Site) -> None:
    # A page without an icon makes the browser ask for /favicon.ico, which a static site answers with 404
    # (common practice, no source); each page names the site's own SVG icon.
    for rel, soup in shipped.pages.items():
        icons = [link["href"] for link in soup.find_all("link", rel="icon")]
        assert [resolve(rel, h)[0] for h in icons] == ["static/favicon.svg"], rel
    icon = ET.parse(shipped.root / "static" / "favicon.svg").getroot()  # well-formed XML
    assert icon.tag == "{http://www.w3.org/2000/svg}svg"


def test_the_fingerprint_recipe_s_worked_example_gives_the_fingerprint_on_the_cycle_s_page(shipped: Site) -> None:
    # SHA-256 (FIPS 180-4) through hashlib, of the example text exactly as the data page shows it, as ASCII.
    page = shipped.page("data/index.html")
    text = page.select_one("pre.fingerprint-text").get_text()
    shown = [code.get_text() for code in page.select("code.fingerprint")]
    assert text.endswith("\n") and text.count("\n") == 5
    assert shown == [hashlib.sha256(text.encode("ascii")).hexdigest()[:16]]
    cycle = shipped.page("maps/3x-plus-1/1/index.html")  # 3x+1's cycle 1 -> 2 -> 1 (Lagarias 1985 via literature.md)
    assert cycle.select_one("code.fingerprint").get_text() == shown[0]
    # No page writes a line feed as a symbol most fonts lack (U+2424).
    assert not [rel for rel, soup in shipped.pages.items() if "\u2424" in soup.get_text()]


def test_the_changes_page_speaks_to_readers_not_maintainers(shipped: Site) -> None:
    # How releases are tagged is the maintainers' business (DEVELOPERS.md, "Releases"); a reader is told
    # what a release is and what the page compares.
    lead = text_of(shipped.page("changes/index.html").select_one("p.lead"))
    assert "record-<version>" not in lead and "tag" not in lead
    assert lead.startswith("A release is a fixed state of the record, with a version number of its own")


def test_the_remote_check_catches_a_remote_stylesheet(tmp_path: Path) -> None:
    # Common practice, no source: the checker is checked on an input it must reject.
    (tmp_path / "index.html").write_text('<link rel="stylesheet" href="https://cdn.example/x.css">', encoding="utf-8")
    with pytest.raises(AssertionError, match="another host"):
        check_no_remote_resources(parse_site(tmp_path))
    (tmp_path / "index.html").write_text("<p>x</p>", encoding="utf-8")
    (tmp_path / "s.css").write_text("@import url('//cdn.example/y.css');", encoding="utf-8")
    with pytest.raises(AssertionError):
        check_no_remote_resources(parse_site(tmp_path))


# --- 7. the command line -------------------------------------------------------------------------


def test_build_prints_the_summary_and_the_page_count(cli, tmp_path: Path) -> None:
    out = tmp_path / "site"
    run = cli("build", str(VALID), "--out", str(out))
    assert run.code == 0, run.err
    assert run.lines[0] == VALID_SUMMARY
    line = next(line for line in run.lines if line.startswith("wrote "))
    match = re.fullmatch(r"wrote (\d+) pages to (.+): (release|version) .+", line)
    assert match and match.group(2) == str(out)
    assert int(match.group(1)) == len(list(out.rglob("*.html")))


def test_build_refuses_a_base_url_that_is_not_http(cli, tmp_path: Path) -> None:
    run = cli("build", str(VALID), "--out", str(tmp_path / "site"), "--base-url", "javascript:alert(1)")
    assert run.code == 2
    assert "--base-url" in run.err
    assert not (tmp_path / "site").exists()


def test_python_m_builder_build(tmp_path: Path) -> None:
    out = tmp_path / "site"
    proc = subprocess.run(
        [sys.executable, "-m", "builder", "build", str(VALID), "--out", str(out)],
        capture_output=True,
        text=True,
        timeout=120,  # a guard against a hang, not a timing test
        cwd=tmp_path,
    )
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.splitlines()[0] == VALID_SUMMARY
    assert proc.stdout.splitlines()[-1].startswith("wrote ")
    assert (out / "maps" / "3x-plus-1" / "through-minus-17" / "index.html").is_file()


def test_preview_serves_the_site_on_loopback(tmp_path: Path) -> None:
    out = tmp_path / "site"
    assert build_site(VALID, out).pages > 0
    proc = subprocess.Popen(
        [sys.executable, "-m", "builder", "preview", str(out), "--port", "0"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        assert proc.stdout is not None
        line = proc.stdout.readline()
        match = re.search(r"http://127\.0\.0\.1:(\d+)/", line)
        assert match, (line, proc.poll())
        port = int(match.group(1))
        assert port > 0
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/index.html", timeout=30) as response:
            assert response.status == 200
            body = response.read().decode("utf-8")
        assert body == (out / "index.html").read_text(encoding="utf-8")
        with urllib.request.urlopen(f"http://127.0.0.1:{port}/data/catalogue.json", timeout=30) as response:
            assert json.loads(response.read())["format"] == "periplus-record"
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=30)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=30)
        for stream in (proc.stdout, proc.stderr):
            if stream is not None:
                stream.close()


def test_preview_of_a_folder_that_is_not_a_site(cli, tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("not a site\n", encoding="utf-8")
    run = cli("preview", str(tmp_path), "--port", "0")
    assert run.code == 2
    assert str(tmp_path) in run.err and "periplus build" in run.err
    missing = tmp_path / "missing"
    run = cli("preview", str(missing), "--port", "0")
    assert run.code == 2
    assert str(missing) in run.err


def test_preview_refuses_a_bad_or_busy_port(cli, tmp_path: Path) -> None:
    out = tmp_path / "site"
    assert build_site(VALID, out).pages > 0
    run = cli("preview", str(out), "--port", "70000")
    assert run.code == 2 and "--port" in run.err
    # A port someone else listens on (loopback only): a clear error, not a traceback. Run apart,
    # with a guard against a hang, since a bind that wrongly succeeded would serve forever.
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as busy:
        busy.bind(("127.0.0.1", 0))
        busy.listen()
        port = busy.getsockname()[1]
        proc = subprocess.run(
            [sys.executable, "-m", "builder", "preview", str(out), "--port", str(port)],
            capture_output=True,
            text=True,
            timeout=60,
        )
    assert proc.returncode == 2, proc.stderr
    assert f"127.0.0.1:{port}" in proc.stderr and "Traceback" not in proc.stderr


def test_preview_lists_no_folder_and_answers_a_nul_path_with_400(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A static host neither lists folders nor crashes on a path it cannot map to a file; RFC 9110
    # section 15.5.1: 400 Bad Request for a request the server cannot process (common practice, no source).
    import threading
    import urllib.error

    from builder.site.preview import open_server

    out = tmp_path / "site"
    assert build_site(VALID, out).pages > 0
    server = open_server(out, 0)
    thread = threading.Thread(target=server.serve_forever, daemon=True)
    thread.start()
    port = server.server_address[1]
    try:
        with pytest.raises(urllib.error.HTTPError) as listing:
            urllib.request.urlopen(f"http://127.0.0.1:{port}/static/", timeout=30)
        with listing.value:
            assert listing.value.code == 404
            assert listing.value.read() == (out / "404.html").read_bytes()
        with pytest.raises(urllib.error.HTTPError) as nul:
            urllib.request.urlopen(f"http://127.0.0.1:{port}/%00", timeout=30)
        with nul.value:
            assert nul.value.code == 400
    finally:
        server.shutdown()
        server.server_close()
        thread.join(timeout=30)
    assert "Traceback" not in capsys.readouterr().err


# --- what a build rechecked and what it only reports (issue 12, item 5) ------------------------------


def _coverage_sections(site: Site, map_id: str) -> list[Tag]:
    return site.page(f"maps/{map_id}/index.html").find_all("section", class_="coverage")


def test_the_map_page_says_which_range_this_build_rechecked(shipped: Site) -> None:
    # The shipped 3x+1 map has claims to 10^5 (searched again by every build) and 10^6 (beyond the
    # default --recheck-up-to of 100,000): README.md, "Starter catalogue".
    texts = [" ".join(s.get_text(" ").split()) for s in _coverage_sections(shipped, "3x-plus-1")]
    full, partial = texts
    assert "rechecked by this build" in full and "attested" not in full
    # Numbers are written with commas between groups of three digits (builder.site.numbers).
    assert "This build followed every integer n with |n| ≤ 100,000 again under this map" in full
    assert "rechecked up to 100,000, attested beyond" in partial
    assert "This build followed every integer n with |n| ≤ 100,000 again" in partial
    assert (
        "This build did not search the claim beyond 100,000: builds search claims again only as far as their "
        "recheck limit. The rest is attested, not checked: the claim states that every integer n with "
        "100,000 < |n| ≤ 1,000,000 was followed"
    ) in partial
    # No sentence states the attested range as fact.
    assert "every cycle whose least |member| is at most 1,000,000 is listed" not in partial
    assert "so that every cycle whose least |member| is at most 1,000,000 would be listed" in partial


def test_the_export_says_how_far_each_claim_was_rechecked(record: dict) -> None:
    (three,) = [m for m in record["maps"] if m["id"] == "3x-plus-1"]
    claims = [(c["bound"], c["rechecked_by_this_build"], c["rechecked_up_to_by_this_build"]) for c in three["coverage"]]
    assert claims == [("100000", True, "100000"), ("1000000", False, "100000")]
