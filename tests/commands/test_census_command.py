"""``periplus census``: one map's census from its searched bound, and a whole family's from one scan of the words.

The facts: the cycles of the shortcut 3x+1 map on Z pass through 0, 1, -1, -5 and -17, of shortcut lengths 1, 2,
1, 3 and 11 (J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, as ../shared/literature.md quotes it); the
positive primitive cycles of 3x+d for small d are those of ../shared/literature.md, "Cycles of 3x+d by length and
odd steps" (Lagarias 1990, Table 3.1; Belaga and Mignotte, HAL hal-00129727, 2006).
"""

from __future__ import annotations

import re
from pathlib import Path

from builder.catalogue.verify import verify_catalogue
from builder.search.census import words_in_length


def test_a_map_census_that_finds_every_cycle_listed_writes_its_claim(catalogue, cli) -> None:
    root = catalogue()
    run = cli("census", "3x-plus-1", "--up-to", "20", "--write", "--catalogue", str(root), "--no-cache", "--jobs", "1")
    assert run.code == 0, run.err
    assert "from its searched bound: no coverage claim searched again" in run.out
    assert f"words tried: {sum(words_in_length(k) for k in range(1, 21)):,}" in run.out
    assert "every cycle of at most 20 steps is listed" in run.out
    for member in ("-1 (catalogued)", "-5 (catalogued)", "-17 (catalogued)"):
        assert member in run.out
    assert "(new)" not in run.out
    text = (root / "maps" / "3x-plus-1.yaml").read_text(encoding="utf-8")
    assert re.search(r"census:\n  - up_to: 20\n    found_on: \d{4}-\d\d-\d\d\n    method: ", text), text
    report = verify_catalogue(root)
    assert report.ok and report.catalogue.maps["3x-plus-1"].census[0].rechecked


def test_a_map_census_that_finds_a_missing_cycle_names_it_and_writes_nothing(catalogue, cli) -> None:
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    before = (root / "maps" / "3x-plus-1.yaml").read_text(encoding="utf-8")
    run = cli("census", "3x-plus-1", "--up-to", "12", "--write", "--catalogue", str(root), "--no-cache")
    assert run.code == 0, run.err
    assert "-17 (new)" in run.out
    assert "1 cycle the catalogue lacks: -17" in run.out
    assert (root / "maps" / "3x-plus-1.yaml").read_text(encoding="utf-8") == before


def test_a_map_census_over_its_budget_claims_only_the_lengths_below_the_class_that_stopped_it(catalogue, cli) -> None:
    root = catalogue()
    budget = sum(words_in_length(k) for k in range(1, 13))
    run = cli(
        "census", "3x-plus-1", "--up-to", "16", "--write", "--census-words", str(budget), "--catalogue", str(root),
        "--no-cache",
    )  # fmt: skip
    assert run.code == 0, run.err
    assert re.search(r"stopped by the class \(13, \d+\): its words pass what is left of --census-words", run.out)
    assert "every cycle of at most 12 steps is listed" in run.out
    assert "census:\n  - up_to: 12\n" in (root / "maps" / "3x-plus-1.yaml").read_text(encoding="utf-8")


def test_a_family_census_lists_the_published_cycles_and_writes_a_catalogue_that_proves_itself(
    cli, tmp_path: Path
) -> None:
    into = tmp_path / "family"
    run = cli(
        "census", "--qx", "3", "--d", "-29..29", "--up-to", "24", "--into", str(into),
        "--catalogue", str(tmp_path / "none"), "--no-cache",
    )  # fmt: skip
    assert run.code == 0, run.err
    lines = {line.split(":")[0]: line for line in run.out.splitlines() if line.startswith("3x")}
    positive = {
        name: sorted(int(m) for m in re.findall(r"(?<![-\d])(\d+) \(\d+, \d+\)", line)) for name, line in lines.items()
    }
    # ../shared/literature.md, lengths at most 24 (187 and 347 of 3x+5 have 27 steps; 41 of 3x+23 has 43)
    assert positive["3x+5"] == [1, 19, 23]
    assert positive["3x+7"] == [5]
    assert positive["3x+11"] == [1, 13]
    assert positive["3x+13"] == [1, 131, 211, 227, 251, 259, 283, 287, 319]
    assert positive["3x+23"] == [5, 7]
    assert positive["3x+29"] == [1, 11]
    assert positive["3x-1"] == [0, 1, 5, 17]  # the mirror images of 0, -1, -5, -17 of 3x+1
    assert "3x+3" not in lines and "3x+9" not in lines  # 3 divides d: not in the family
    assert re.search(r"wrote 20 new maps, \d+ new cycle entries and 20 census claims into ", run.out)
    report = verify_catalogue(into)
    assert report.ok, report.problems
    claims = [c for entry in report.catalogue.maps.values() for c in entry.census]
    assert len(claims) == 20 and all(c.rechecked and c.up_to == 24 for c in claims)
    # 3x+5 holds its primitive cycles and 5 times the cycles of 3x+1 through 0, 1, -1, -5 and -17
    listed = sorted(c.canonical for c in report.catalogue.cycles["3x-plus-5"])
    assert listed == sorted([0, 5, -5, -25, -85, 1, 19, 23])


def test_the_two_forms_are_told_apart(cli) -> None:
    assert (
        "expected either MAP (with --write) or --qx Q --d A..B (with --into), got both"
        in cli("census", "3x-plus-1", "--qx", "3", "--d", "1..5", "--up-to", "5").err
    )
    assert "expected --qx Q and --d A..B together" in cli("census", "--qx", "3", "--up-to", "5").err
    assert "--into applies to a family" in cli("census", "3x-plus-1", "--up-to", "5", "--into", "x").err
    assert "expected a length from 1 to 10,000, got 0" in cli("census", "3x-plus-1", "--up-to", "0").err


def test_every_class_of_a_map_is_reported_with_its_status(cli) -> None:
    # The shipped 3x+13 searched again only to 200: the seven cycles 211 .. 319 of class (8, 5)
    # (../shared/literature.md, d = 13) lie beyond it, so that class is enumerated; every other class of
    # lengths 1..8 is excluded by the bound 200.
    from conftest import REPO

    run = cli(
        "census", "3x-plus-13", "--up-to", "8", "--every-class", "--recheck-up-to", "200",
        "--catalogue", str(REPO / "catalogue"), "--no-cache", "--jobs", "1",
    )  # fmt: skip
    assert run.code == 0, run.err
    rows = [line.split() for line in run.out.splitlines() if re.match(r"^\s+\d+\s+\d+\s", line)]
    assert len(rows) == 2 + sum(k - 1 for k in range(2, 9))  # both classes of length 1, then 0 < x < k
    enumerated = [r for r in rows if "enumerated:" in r]
    assert [r[:2] for r in enumerated] == [["8", "5"]]
    assert " ".join(enumerated[0]).endswith(
        "7 words, 211 (catalogued), 227 (catalogued), 251 (catalogued), 259 (catalogued), 283 (catalogued), "
        "287 (catalogued), 319 (catalogued)"
    )
    assert all(r[-1] == "excluded" and r[-2] == "200" for r in rows if r not in enumerated)
    assert "every cycle of at most 8 steps is listed" in run.out
