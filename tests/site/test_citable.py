"""The built site as a citable record: licence and edition everywhere, dataset metadata, CITATION.cff.

Outside checks: schema.org's Dataset type (https://schema.org/Dataset) read back by the general-purpose
metadata extractor ``extruct``; the Citation File Format 1.2.0 schema (tests/external, published by the
format); the SPDX License List's licence pages (https://spdx.org/licenses/<id>.html); RFC 4287 (Atom)
for atom:rights; RFC 9309 for robots.txt; sitemaps.org for the Sitemap line.
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

from builder.site.build import build_site

ATOM = "{http://www.w3.org/2005/Atom}"
CFF_SCHEMA = Path(__file__).parent.parent / "external" / "citation-file-format-1.2.0.schema.json"
BASE = "https://test.example.org/record/"


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
