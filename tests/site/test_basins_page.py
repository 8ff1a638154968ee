"""Basins on the map page and in the exports, from a catalogue the family hunt writes (3x+5 to |n| <= 150).

Facts: under 3x+5 the positive multiples of 5 up to N, N/5 of them, end in the cycle {5, 10} (common practice,
no source: 5 times the cycle {1, 2} of 3x+1, which every positive start reaches, T. Oliveira e Silva, Math.
Comp. 68 (1999) 371-384); the cycles through 187 and 347 are among the positive primitive cycles of 3x+5 (least
members 1, 19, 23, 187, 347: E. Belaga and M. Mignotte, Experimental Mathematics 7 (1998) 145-151, via
../shared/literature.md).
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import jsonschema
import pytest
import yaml
from bs4 import BeautifulSoup, Tag
from conftest import SCHEMAS

from builder.arith.dynamics import DEFAULT_MAX_WORK
from builder.catalogue.family import Target
from builder.commands.family import hunt_family
from builder.search.cluster import Plan
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS
from builder.site.build import build_site
from builder.site.numbers import percent

BOUND = 150
ALL = 2 * BOUND + 1


@pytest.fixture(scope="module")
def built(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    root = tmp_path_factory.mktemp("basins") / "catalogue"
    limits = (HUNT_MAX_STEPS, HUNT_MAX_BITS, DEFAULT_MAX_WORK)
    said = io.StringIO()
    assert hunt_family(3, 5, 5, BOUND, Target.new(root), "the test", limits, Plan(), said, said) == 0, said.getvalue()
    # The cycle through 187 lies beyond the bound (its first start 123 within it): without its entry, its basin
    # names it by its least member alone.
    (root / "cycles" / "3x-plus-5" / "187.yaml").unlink()
    out = root.parent / "site"
    result = build_site(root, out)
    assert result.report.ok, [str(p) for p in result.report.problems]
    return root, out


def _table(out: Path) -> Tag:
    soup = BeautifulSoup((out / "maps" / "3x-plus-5" / "index.html").read_text(encoding="utf-8"), "html.parser")
    table = soup.select_one("table.basins")
    assert isinstance(table, Tag)
    return table


def test_the_map_page_shows_each_basin(built: tuple[Path, Path]) -> None:
    _, out = built
    table = _table(out)
    assert table.caption is not None and table.caption.get_text() == "Basins of the starts with |n| ≤ 150"
    # WCAG 2, technique H63 (from memory): header cells say what they head.
    assert [th.get("scope") for th in table.select("thead th")] == ["col"] * 4
    rows = {tr.th.get_text(strip=True): tr for tr in table.select("tbody tr")}
    assert all(tr.th.get("scope") == "row" for tr in rows.values())
    cells = {key: [td.get_text(strip=True) for td in tr.find_all("td")] for key, tr in rows.items()}
    five = cells["5"]
    assert five == ["30", percent(30, ALL), "5"]  # N/5 = 30 positive multiples of 5
    assert five[1] == "9.97%"  # 30 of 301, rounded to two decimals (common practice, no source)
    link = rows["5"].th.a
    assert link is not None and link["href"] == "../../maps/3x-plus-5/5/index.html"
    # Belaga and Mignotte: the cycle through 187; beyond the bound and not listed, so not linked.
    assert rows["187"].th.a is None and cells["187"][2] == "123"
    assert rows["1"].th.a is not None
    unknown = cells["No known cycle (unresolved, or reaching an unresolved start)"]
    assert unknown == ["0", "0.00%", "—"]
    counts = [int(c[0].replace(",", "")) for c in cells.values()]
    assert sum(counts) == ALL


def test_the_exports_hold_the_basins(built: tuple[Path, Path]) -> None:
    root, out = built
    data = json.loads((out / "data" / "maps" / "3x-plus-5.json").read_text(encoding="utf-8"))
    (claim,) = data["coverage"]
    assert claim["unknown"] == 0
    by_cycle = {b["cycle"]: b for b in claim["basins"]}
    # Numbers of cycles as decimal strings, as every cycle integer of the exports; counts as numbers.
    assert by_cycle["5"] == {"cycle": "5", "starts": 30, "first": "5", "url": "maps/3x-plus-5/5/index.html"}
    assert by_cycle["187"]["url"] is None and by_cycle["187"]["first"] == "123"
    whole = json.loads((out / "data" / "catalogue.json").read_text(encoding="utf-8"))
    (entry,) = [m for m in whole["maps"] if m["id"] == "3x-plus-5"]
    assert entry["coverage"][0]["basins"] == claim["basins"]
    # The map file as written validates against the catalogue's JSON Schema (the jsonschema library).
    schema = json.loads((SCHEMAS / "map.schema.json").read_text(encoding="utf-8"))
    document = yaml.safe_load((root / "maps" / "3x-plus-5.yaml").read_text(encoding="utf-8"))
    jsonschema.Draft202012Validator(schema).validate(document)
    document["coverage"][0]["basins"][0]["starts"] = 0
    assert not jsonschema.Draft202012Validator(schema).is_valid(document)


@pytest.mark.parametrize(
    ("part", "whole", "text"),
    [(1, 2, "50.00%"), (1, 3, "33.33%"), (2, 3, "66.67%"), (1, 8, "12.50%"), (1, 80_000, "< 0.01%"),
     (1, 20_000, "0.01%"), (79_999, 80_000, "> 99.99%"), (5, 5, "100.00%"), (0, 5, "0.00%"), (100_000, 200_001, "50.00%")],
)  # fmt: skip
def test_shares_are_rounded_but_never_to_none_or_all(part: int, whole: int, text: str) -> None:
    # Common practice, no source: rounding half up to hundredths of a percent, by hand.
    assert percent(part, whole) == text
