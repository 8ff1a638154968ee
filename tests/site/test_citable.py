"""The built site as a citable record: licence and edition everywhere, dataset metadata, CITATION.cff.

Outside checks: schema.org's Dataset type (https://schema.org/Dataset) read back by the general-purpose
metadata extractor ``extruct``; the Citation File Format 1.2.0 schema (tests/external, published by the
format); the SPDX License List's licence pages (https://spdx.org/licenses/<id>.html); RFC 4287 (Atom)
for atom:rights; RFC 9309 for robots.txt; sitemaps.org for the Sitemap line; RFC 2606 for the names reserved
for examples, which a record's placeholder address uses.
"""

from __future__ import annotations

import csv
import io
import json
import shutil
import xml.etree.ElementTree as ET
from pathlib import Path

import extruct
import jsonschema
import pytest
import yaml
from bs4 import BeautifulSoup
from conftest import VALID

from builder.catalogue.record import placeholder_address
from builder.site.build import build_site

ATOM = "{http://www.w3.org/2005/Atom}"
CFF_SCHEMA = Path(__file__).parent.parent / "external" / "citation-file-format-1.2.0.schema.json"
BASE = "http://localhost:8000/record/"


@pytest.fixture(scope="module")
def site(tmp_path_factory: pytest.TempPathFactory) -> Path:
    # A copy outside any git repository: no history, so the edition is "version 1.0, not yet released".
    root = tmp_path_factory.mktemp("citable")
    catalogue = shutil.copytree(VALID, root / "catalogue")
    result = build_site(catalogue, root / "site")
    assert result.report.ok and result.pages > 0
    return root / "site"


def _pages(site: Path) -> list[Path]:
    return sorted(site.rglob("*.html"))


def test_every_page_footer_names_the_licence_and_the_edition(site: Path) -> None:
    pages = _pages(site)
    assert len(pages) > 20
    for path in pages:
        soup = BeautifulSoup(path.read_text(encoding="utf-8"), "html.parser")
        footer = soup.find("footer")
        assert footer is not None, path
        licence = footer.find("a", rel="license")
        # SPDX License List: each identifier has its page at https://spdx.org/licenses/<id>.html.
        assert licence is not None and licence["href"] == "https://spdx.org/licenses/CC0-1.0.html", path
        assert licence.get_text(strip=True) == "CC0-1.0"
        assert "version 1.0, not yet released" in footer.get_text(), path


def test_exports_carry_the_licence_and_the_edition(site: Path) -> None:
    whole = json.loads((site / "data/catalogue.json").read_text(encoding="utf-8"))
    about = whole["record"]
    assert (about["licence"], about["licence_url"], about["version"], about["base_url"]) == (
        "CC0-1.0",
        "https://spdx.org/licenses/CC0-1.0.html",
        "1.0",
        BASE,
    )
    assert about["edition"] == "version 1.0, not yet released (a copy outside git)"
    # A map's own file names the edition without the commit (issue 13: it changes only with its map).
    shown = {**about, "edition": "version 1.0, not yet released", "commit": None}
    for path in (site / "data/maps").glob("*.json"):
        assert json.loads(path.read_text(encoding="utf-8"))["record"] == shown, path
    text = (site / "data/cycles.csv").read_text(encoding="utf-8")
    first, rest = text.split("\n", 1)
    assert first.startswith("# ") and "CC0-1.0" in first and "version 1.0" in first
    rows = list(csv.DictReader(io.StringIO(rest)))  # RFC 4180 reader (Python's csv) after the comment line
    by_key = {(c["map"], c["id"]): c["fingerprint"] for c in whole["cycles"]}
    assert {(r["map"], r["id"]): r["fingerprint"] for r in rows} == by_key
    feed = ET.parse(site / "feed.xml").getroot()
    rights = feed.findtext(f"{ATOM}rights") or ""  # RFC 4287 section 4.2.10: rights held in and over the feed
    assert "CC0-1.0" in rights


def test_cycle_pages_show_the_fingerprint_and_cite_the_edition(site: Path) -> None:
    whole = json.loads((site / "data/catalogue.json").read_text(encoding="utf-8"))
    for c in whole["cycles"]:
        soup = BeautifulSoup((site / c["url"]).read_text(encoding="utf-8"), "html.parser")
        assert soup.select_one("code.fingerprint").get_text() == c["fingerprint"]
        cite = soup.select("pre.cite")
        assert len(cite) == 2
        for block in cite:
            text = block.get_text()
            assert c["fingerprint"] in text and "version 1.0, not yet released" in text and "CC0-1.0" in text
        assert BASE in cite[0].get_text()


def test_the_home_page_describes_the_dataset_in_json_ld(site: Path) -> None:
    html = (site / "index.html").read_text(encoding="utf-8")
    data = extruct.extract(html, base_url=BASE, syntaxes=["json-ld"])["json-ld"]
    datasets = [d for d in data if d.get("@type") == "Dataset"]
    assert len(datasets) == 1
    d = datasets[0]
    # schema.org/Dataset: name, description, license, version, distribution (DataDownload with contentUrl).
    assert d["name"] == "Test record of cycles"
    assert d["description"].startswith("A small catalogue used by the tests")
    assert d["license"] == "https://spdx.org/licenses/CC0-1.0.html"
    assert d["version"] == "1.0"
    downloads = {x["contentUrl"]: x for x in d["distribution"]}
    for rel in ("data/catalogue.json", "data/cycles.csv"):
        assert BASE + rel in downloads, downloads
        assert downloads[BASE + rel]["@type"] == "DataDownload"
        assert (site / rel).is_file()
    assert downloads[BASE + "data/cycles.csv"]["encodingFormat"] == "text/csv"


def test_citation_cff_validates_against_the_format_schema(site: Path) -> None:
    data = yaml.safe_load((site / "CITATION.cff").read_text(encoding="utf-8"))
    schema = json.loads(CFF_SCHEMA.read_text(encoding="utf-8"))
    jsonschema.Draft7Validator(schema, format_checker=jsonschema.FormatChecker()).validate(data)
    assert data["cff-version"] == "1.2.0"
    assert (data["title"], data["license"], data["version"], data["url"]) == (
        "Test record of cycles",
        "CC0-1.0",
        "1.0",
        BASE,
    )
    assert data["authors"] == [{"name": "Test maintainers"}]


def test_robots_txt_allows_crawling_and_names_the_sitemap(site: Path) -> None:
    lines = (site / "robots.txt").read_text(encoding="utf-8").splitlines()
    assert "User-agent: *" in lines  # RFC 9309 section 2.2: a group starts with user-agent lines
    assert f"Sitemap: {BASE}sitemap.xml" in lines  # sitemaps.org protocol: "Specifying the Sitemap location"
    assert (site / "sitemap.xml").is_file()


# --- a record with no published address ---------------------------------------------------------

PLACEHOLDER = "https://cycles.example.org/"  # RFC 2606 section 3: example.org is reserved for examples


@pytest.fixture(scope="module", params=["placeholder", "missing"])
def unpublished(request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, list[str]]:
    """A site whose record.yaml gives no address, or the starter's placeholder; and the build's warnings."""
    root = tmp_path_factory.mktemp("unpublished")
    catalogue = shutil.copytree(VALID, root / "catalogue")
    record = catalogue / "record.yaml"
    lines = record.read_text(encoding="utf-8").splitlines(keepends=True)
    at = next(i for i, line in enumerate(lines) if line.startswith("base_url:"))
    lines[at] = f"base_url: {PLACEHOLDER}\n" if request.param == "placeholder" else ""
    record.write_text("".join(lines), encoding="utf-8")
    result = build_site(catalogue, root / "site")
    assert result.report.ok and result.pages > 0
    return root / "site", [str(p).removeprefix(f"{catalogue}/") for p in result.report.problems]


def test_an_unpublished_record_is_built_with_a_warning(unpublished: tuple[Path, list[str]]) -> None:
    _, warnings = unpublished
    assert len(warnings) == 1 and ": warning: " in warnings[0], warnings
    assert warnings[0].startswith(
        (
            f"record.yaml:8:11: warning: base_url: expected the address the site is published at, got the placeholder "
            f"'{PLACEHOLDER}' (a name reserved for examples, RFC 2606)",
            "record.yaml:2:1: warning: no base_url: ",  # where the record's fields start, after a comment
        )
    )
    assert "relative permalinks" in warnings[0] and "no published address yet" in warnings[0]


def test_an_unpublished_record_cites_no_address(unpublished: tuple[Path, list[str]]) -> None:
    site, _ = unpublished
    every = "\n".join(p.read_text(encoding="utf-8") for p in site.rglob("*") if p.is_file())
    assert "example.org" not in every and "localhost" not in every  # no address is made up
    whole = json.loads((site / "data/catalogue.json").read_text(encoding="utf-8"))
    assert whole["record"]["base_url"] is None
    for c in whole["cycles"]:
        soup = BeautifulSoup((site / c["url"]).read_text(encoding="utf-8"), "html.parser")
        cite, bibtex = (block.get_text() for block in soup.select("pre.cite"))
        path = c["url"].removesuffix("index.html")
        assert f"{path} (relative: the record has no published address yet)" in cite
        # BibTeX (common practice, no source): a field is a line "name = {value}"; there is no url field.
        assert not any(line.strip().startswith("url") for line in bibtex.splitlines())
        permalink = soup.find(string=lambda s: s.startswith("Permalink")).parent
        assert permalink.a.get_text() == path and "no published address yet" in permalink.get_text()
    home = (site / "index.html").read_text(encoding="utf-8")
    assert "No published address yet." in BeautifulSoup(home, "html.parser").select_one("pre.cite").get_text()
    # schema.org/Dataset: url is optional; relative contentUrl values resolve against the home page (JSON-LD 1.1,
    # "IRIs": relative IRI references resolve against the document's base).
    page_url = "file:///site/index.html"
    data = extruct.extract(home, base_url=page_url, syntaxes=["json-ld"])["json-ld"]
    dataset = next(d for d in data if d.get("@type") == "Dataset")
    assert "url" not in dataset
    assert {x["contentUrl"] for x in dataset["distribution"]} == {"data/catalogue.json", "data/cycles.csv", "feed.xml"}


def test_an_unpublished_record_has_no_sitemap_and_a_relative_feed(unpublished: tuple[Path, list[str]]) -> None:
    site, _ = unpublished
    # sitemaps.org protocol: every <loc> is a fully qualified URL, which an unpublished record cannot give.
    assert not (site / "sitemap.xml").exists()
    assert not any(line.startswith("Sitemap:") for line in (site / "robots.txt").read_text().splitlines())
    # RFC 4287 section 2 and RFC 3986 section 5.1: without xml:base, links resolve against the feed's own address.
    feed = ET.parse(site / "feed.xml").getroot()
    assert "{http://www.w3.org/XML/1998/namespace}base" not in feed.attrib
    for link in feed.iter(f"{ATOM}link"):
        assert (site / link.get("href", "")).is_file()
    # Citation File Format 1.2.0: url is optional; the file still validates against the format's schema.
    data = yaml.safe_load((site / "CITATION.cff").read_text(encoding="utf-8"))
    schema = json.loads(CFF_SCHEMA.read_text(encoding="utf-8"))
    jsonschema.Draft7Validator(schema, format_checker=jsonschema.FormatChecker()).validate(data)
    assert "url" not in data


@pytest.mark.parametrize(
    ("address", "placeholder"),
    [
        # RFC 2606 section 3: example.com, example.net and example.org are reserved second-level names.
        ("https://example.org/", True),
        ("https://cycles.example.org/", True),
        ("http://EXAMPLE.COM:8080/a/", True),
        ("https://sub.example.net/", True),
        # RFC 2606 section 2: the top-level names .test, .example and .invalid are reserved.
        ("https://record.test/", True),
        ("https://cycles.example/", True),
        ("https://x.invalid/", True),
        # Names that merely contain the reserved ones are real names.
        ("https://example.org.uk/", False),
        ("https://notexample.org/", False),
        ("https://example-cycles.org/", False),
        ("http://localhost:8000/", False),
        ("https://testing.org/", False),
    ],
)
def test_placeholder_addresses_are_the_names_reserved_for_examples(address: str, placeholder: bool) -> None:
    assert placeholder_address(address) is placeholder
