"""Census claims in map entries: read with positioned messages, proved again by verify within its word budget,
attested beyond it, and failing when the census finds a cycle the catalogue does not list.

The facts: the shortcut 3x+1 map on Z has the cycles through 0, 1, -1, -5 and -17, of shortcut lengths 1, 2, 1,
3 and 11 with 0, 1, 1, 2 and 7 odd steps (J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, as
../shared/literature.md quotes it); every Lyndon word of length at most 20 gives one of those five (common
practice, no source; tests/search/test_census_scan.py checks it by brute force).
"""

from __future__ import annotations

from pathlib import Path

from builder.arith.census import class_bound
from builder.catalogue.census import searched_bound
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.summary import summary
from builder.search.census import words_in_length

COVERAGE_1000 = (
    "coverage:\n"
    "  - {kind: all-starts, bound: 1000, found_on: 2026-12-01, method: exhaustive search in the test, "
    "max_steps: 10000, max_bits: 4096}\n"
)


def with_census(root: Path, *claims: int, extra: str = "") -> Path:
    """The fixture's 3x+1 map file with census claims up to each of ``claims`` (the field on line 12, its items from line 13)."""
    path = root / "maps" / "3x-plus-1.yaml"
    items = "".join(f"  - {{up_to: {k}, found_on: 2026-12-04, method: periplus census in the test}}\n" for k in claims)
    path.write_text(path.read_text(encoding="utf-8") + extra + "census:\n" + items, encoding="utf-8")
    return path


def test_a_true_claim_is_proved_again_from_every_word(catalogue) -> None:
    root = catalogue()
    with_census(root, 20)
    report = verify_catalogue(root)
    assert report.ok, report.problems
    claim = report.catalogue.maps["3x-plus-1"].census[0]
    assert claim.rechecked and claim.check is not None
    assert claim.check.search_bound == -1  # no coverage claim: every class of every length is enumerated
    assert claim.check.words == sum(words_in_length(k) for k in range(1, 21))
    assert sorted(claim.check.cycles) == [-17, -5, -1, 0, 1]
    assert "every claim holds" in summary(report) and "attested" not in summary(report)


def test_a_cycle_the_catalogue_lacks_fails_the_claim_at_its_position(catalogue) -> None:
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    path = with_census(root, 20)
    report = verify_catalogue(root)
    errors = [p for p in report.problems if p.code == "census-cycle-missing"]
    assert [str(p) for p in errors] == [
        f"{path}:13:5: error: census[0]: the census finds the cycle through -17 (11 steps, 7 odd), which the "
        "catalogue does not list; every cycle of at most 20 steps must be listed"
    ]


def test_a_claim_below_the_missing_cycles_length_holds(catalogue) -> None:
    # -17's cycle has 11 steps: a claim up to 10 says nothing of it.
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    with_census(root, 10)
    assert verify_catalogue(root).ok


def test_a_claim_beyond_the_budget_is_attested_and_counted(catalogue) -> None:
    root = catalogue()
    with_census(root, 8, 20)
    budget = sum(words_in_length(k) for k in range(1, 13))
    report = verify_catalogue(root, Limits(census_words=budget))
    assert report.ok, report.problems
    short, long = report.catalogue.maps["3x-plus-1"].census
    assert short.rechecked and not long.rechecked
    assert long.check is not None and long.check.up_to == 12 and long.check.stopped_by is not None
    assert long.check.stopped_by[0] == 13
    assert summary(report).endswith("; 1 census claim attested beyond what this run proved")


def test_the_census_rests_on_the_searched_bound_of_the_coverage_claims(catalogue) -> None:
    # With every start up to 1000 searched again, the classes whose bound is at most 1000 are excluded
    # (builder.arith.census, rule (E)); below the first length with an open class nothing is enumerated.
    # That length comes from the definition here, class by class.
    first_open = next(k for k in range(1, 400) if any(class_bound(3, 1, k, x).bound > 1000 for x in range(1, k)))
    root = catalogue()
    with_census(root, first_open - 1, extra=COVERAGE_1000)
    report = verify_catalogue(root)
    assert report.ok, report.problems
    entry = report.catalogue.maps["3x-plus-1"]
    assert searched_bound(entry.coverage) == 1000
    check = entry.census[0].check
    assert check is not None and check.search_bound == 1000 and check.words == 0 and check.rows == ()
    assert entry.census[0].rechecked


def test_a_census_on_a_map_of_another_shape_is_refused(catalogue) -> None:
    root = catalogue()
    path = root / "maps" / "3x-plus-1.yaml"
    text = path.read_text(encoding="utf-8").replace(
        "{residue: 1, multiplier: 3, increment: 1}", "{residue: 1, multiplier: -3, increment: 1}"
    )
    path.write_text(text + "census:\n  - {up_to: 5, found_on: 2026-12-04, method: m}\n", encoding="utf-8")
    report = verify_catalogue(root)
    messages = [p.message for p in report.problems if p.code == "census-map-shape"]
    assert messages == [
        "census: expected census claims only for a map whose multipliers are all positive (such as n/2, (qn+d)/2 "
        "with q > 0), got modulus 2 with branches (1, 0), (-3, 1)"
    ]


def test_a_length_out_of_range_is_refused_with_the_range(catalogue) -> None:
    root = catalogue()
    path = with_census(root, 0)
    report = verify_catalogue(root)
    assert [str(p) for p in report.problems if "up_to" in p.message] == [
        f"{path}:13:13: error: census[0].up_to: expected a length from 1 to 10,000, got 0"
    ]


def _mod_3_catalogue(tmp_path: Path) -> Path:
    """The shipped catalogue's mod-3 permutation map with its cycles, alone in a catalogue."""
    import shutil

    from conftest import REPO

    shipped, root = REPO / "catalogue", tmp_path / "mod-3"
    (root / "maps").mkdir(parents=True)
    for name in ("record.yaml", "references.yaml", "maps/mod-3-permutation.yaml"):
        shutil.copyfile(shipped / name, root / name)
    shutil.copytree(shipped / "cycles" / "mod-3-permutation", root / "cycles" / "mod-3-permutation")
    path = root / "maps" / "mod-3-permutation.yaml"
    text = path.read_text(encoding="utf-8").partition("\ncensus:\n")[0].rstrip("\n") + "\n"  # the shipped claim out
    path.write_text(text + "census:\n  - {up_to: 12, found_on: 2026-12-04, method: m}\n")
    return root


def test_a_claim_on_a_map_by_residue_classes_is_proved_from_every_word(tmp_path: Path) -> None:
    # The mod-3 permutation's cycles through 0, +-1, +-2, +-4 and +-44 (lengths 1, 1, 2, 5, 12: M. S. Klamkin,
    # SIAM Review 5 (1963) 275-276, as ../shared/literature.md quotes it, and the mirror images) are listed.
    root = _mod_3_catalogue(tmp_path)
    report = verify_catalogue(root)
    assert report.ok, [str(p) for p in report.errors]
    claim = report.catalogue.maps["mod-3-permutation"].census[0]
    assert claim.rechecked and claim.check is not None
    assert sorted(claim.check.cycles) == [-44, -4, -2, -1, 0, 1, 2, 4, 44]
    (root / "cycles" / "mod-3-permutation" / "44.yaml").unlink()
    messages = [p.message for p in verify_catalogue(root).problems if p.code == "census-cycle-missing"]
    assert messages == [
        "census[0]: the census finds the cycle through 44 (12 steps), which the catalogue does not list; every cycle "
        "of at most 12 steps must be listed"
    ]
