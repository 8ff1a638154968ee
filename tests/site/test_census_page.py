"""Census claims on the map page and in the map's data file: the claim, whether this build proved it, the table of
classes it did not exclude, and the odds chart's band over the lengths proved complete.

The facts: the cycles of the shortcut 3x+1 map on Z pass through 0, 1, -1, -5 and -17, the last of 11 steps with
7 odd (J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, as ../shared/literature.md quotes it); L(11, 7) = 30
aperiodic necklaces (Moreau's formula, builder.arith.words, checked against sympy in tests/arith).
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

from bs4 import BeautifulSoup

from builder.catalogue.verify import Limits
from builder.search.census import words_in_length
from builder.site.build import build_site
from builder.site.svg import odds_chart


def _site(catalogue: Callable[..., Path], tmp_path: Path, limits: Limits | None = None) -> tuple[BeautifulSoup, dict]:
    root = catalogue()
    path = root / "maps" / "3x-plus-1.yaml"
    claim = "census:\n  - {up_to: 14, found_on: 2026-12-04, method: periplus census in the test}\n"
    path.write_text(path.read_text(encoding="utf-8") + claim, encoding="utf-8")
    out = tmp_path / "site"
    result = build_site(root, out, limits, jobs=1)
    assert result.report.ok, result.report.problems
    page = BeautifulSoup((out / "maps" / "3x-plus-1" / "index.html").read_text(encoding="utf-8"), "html.parser")
    data = json.loads((out / "data" / "maps" / "3x-plus-1.json").read_text(encoding="utf-8"))
    return page, data


def test_a_proved_claim_shows_its_classes_and_cycles_and_shades_its_lengths(catalogue, tmp_path: Path) -> None:
    page, data = _site(catalogue, tmp_path)
    section = page.find("section", class_="census")
    assert section is not None
    assert section.h3.get_text(" ", strip=True) == "Cycles of at most 14 steps proved by this build"
    words = sum(words_in_length(k) for k in range(1, 15))
    assert f"and {words:,} words tried for the others" in section.get_text(" ", strip=True)
    rows = {(int(r.th.text), int(r.find_all("td")[0].text)): r for r in section.find("tbody").find_all("tr")}
    row = rows[11, 7]
    cells = [td.get_text(" ", strip=True) for td in row.find_all("td")]
    assert cells[1] == "30" and cells[4] == "every word tried" and cells[5] == "-17"
    assert row.find_all("td")[5].a["href"] == "../../maps/3x-plus-1/through-minus-17/index.html"
    desc = page.find("desc", id="odds-3x-plus-1-d").text
    assert "A shaded band covers the lengths up to 14, which a census claim proved complete." in desc
    claim = data["census"][0]
    assert claim["proved_by_this_build"] is True and claim["proved_up_to_by_this_build"] == 14
    assert claim["words"] == words and claim["search_bound"] is None
    row11 = next(c for c in claim["classes"] if (c["k"], c["x"]) == (11, 7))
    assert row11["status"] == "enumerated" and [c["cycle"] for c in row11["cycles"]] == ["-17"]


def test_a_claim_beyond_the_budget_says_where_the_proof_stopped(catalogue, tmp_path: Path) -> None:
    budget = sum(words_in_length(k) for k in range(1, 11))
    page, data = _site(catalogue, tmp_path, Limits(census_words=budget))
    section = page.find("section", class_="census")
    assert section.h3.get_text(" ", strip=True) == "Cycles of at most 14 steps proved up to 10 steps, attested beyond"
    assert "The class (11, 1) needs more words than this build's census budget allows" in section.get_text(" ")
    statuses = {td.get_text(strip=True) for td in section.select("td[data-label=Status]")}
    assert statuses == {"every word tried", "over this build's budget"}
    desc = page.find("desc", id="odds-3x-plus-1-d").text
    assert "up to 10, which a census claim proved complete" in desc


def test_the_odds_chart_shades_only_the_lengths_proved() -> None:
    # The band spans the columns of lengths 1..proved_to, and the key names it only when there is one.
    rows = [(k, 0.5, 0) for k in range(1, 41)]
    shaded = str(odds_chart(rows, "Odds", "o", 10))
    plain = str(odds_chart(rows, "Odds", "o"))
    assert "proved complete to k = 10" in shaded and "key-band" in shaded
    assert "key-band" not in plain and "proved complete" not in plain
    assert shaded.count(", proved complete</title>") == 10
