"""Basins in coverage claims: read with positioned messages, counted again when the whole claim is searched
again, attested otherwise, and kept in the cache beside the search.

The facts: the shortcut 3x+1 map on Z; every positive start reaches the cycle {1, 2} (T. Oliveira e Silva,
Math. Comp. 68 (1999) 371-384, far beyond these bounds), the negative starts end in the cycles through -1, -5
and -17 (J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23), and 0 is a fixed point only 0 reaches (common
practice, no source).  How many negative starts end in each of the three is the count of builder.search.basins,
checked against brute force in tests/search/test_basins.py.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from builder.catalogue.cache import VerifyCache
from builder.catalogue.coverage import search_coverage
from builder.catalogue.model import Basin, Basins
from builder.catalogue.verify import Limits, verify_catalogue
from builder.search import basins as basins_module

#: The basins of every start with |n| <= 100 under 3x+1, as a claim writes them.
TRUE_100 = (
    "      - {cycle: 0, starts: 1, first: 0}\n"
    "      - {cycle: 1, starts: 100, first: 1}\n"
    "      - {cycle: -1, starts: 38, first: -1}\n"
    "      - {cycle: -5, starts: 31, first: -5}\n"
    "      - {cycle: -17, starts: 31, first: -17}\n"
)
#: The same for |n| <= 1000.
TRUE_1000 = (
    "      - {cycle: 0, starts: 1, first: 0}\n"
    "      - {cycle: 1, starts: 1000, first: 1}\n"
    "      - {cycle: -1, starts: 349, first: -1}\n"
    "      - {cycle: -5, starts: 306, first: -5}\n"
    "      - {cycle: -17, starts: 345, first: -17}\n"
)


def with_basins(root: Path, bound: int, basins: str, tail: str = "    unknown: 0\n", unresolved: str = "") -> Path:
    """The fixture's 3x+1 map file with one claim (line 13 on) whose basins (line 21 on) are ``basins``."""
    path = root / "maps" / "3x-plus-1.yaml"
    claim = (
        "coverage:\n"
        "  - kind: all-starts\n"
        f"    bound: {bound}\n"
        "    found_on: 2026-12-01\n"
        "    method: exhaustive search in the test\n"
        "    max_steps: 10000\n"
        "    max_bits: 4096\n"
        f"    unresolved: [{unresolved}]\n"
        "    basins:\n"
    )
    path.write_text(path.read_text(encoding="utf-8") + claim + basins + tail, encoding="utf-8")
    return path


def test_a_true_claim_with_basins_is_counted_again_and_holds(catalogue) -> None:
    root = catalogue()
    with_basins(root, 100, TRUE_100)
    report = verify_catalogue(root)
    assert report.ok, [str(p) for p in report.problems]
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert claim.rechecked
    assert claim.basins == Basins(
        (Basin(0, 1, 0), Basin(1, 100, 1), Basin(-1, 38, -1), Basin(-5, 31, -5), Basin(-17, 31, -17)), 0
    )
    # Oliveira e Silva 1999: the 100 positive starts; Lagarias 1985: the 100 negative ones in three cycles.
    assert sum(b.starts for b in claim.basins.basins if b.cycle < 0) == 100


def _replace(text: str, old: str, new: str) -> str:
    assert old in text
    return text.replace(old, new, 1)


# Each case: the basins as written (a change to TRUE_100), what follows them, and the one line verify prints.
READER_CASES = {
    "no-starts": (
        _replace(TRUE_100, "starts: 1, first: 0", "starts: 0, first: 0"), "    unknown: 0\n",
        "21:28: error: coverage[0].basins[0].starts: expected a positive count of starts, got 0",
    ),
    "first-beyond-the-bound": (
        _replace(TRUE_100, "starts: 100, first: 1}", "starts: 100, first: 101}"), "    unknown: 0\n",
        "22:40: error: coverage[0].basins[1].first: expected a start with |n| <= 100 (the bound), got 101",
    ),
    "first-after-the-cycle-s-own-member": (
        _replace(TRUE_100, "first: -5}", "first: -7}"), "    unknown: 0\n",
        "24:40: error: coverage[0].basins[3].first: expected a start no later than -5 in the order 0, 1, -1, 2, "
        "-2, ... (the cycle's own member ends in it), got -7",
    ),
    "a-cycle-twice": (
        TRUE_100 + "      - {cycle: 1, starts: 1, first: 0}\n", "    unknown: 0\n",
        "26:9: error: coverage[0].basins[5]: expected each cycle once, got a second basin of the cycle through 1 "
        "(the first is item 1)",
    ),
    "a-start-in-two-basins": (
        TRUE_100 + "      - {cycle: 1000, starts: 1, first: -17}\n", "    unknown: 0\n",
        "26:9: error: coverage[0].basins[5].first: expected each start in one basin, got -17 as the first start "
        "of item 4 too",
    ),
    "counts-that-miss-a-start": (
        _replace(TRUE_100, "starts: 38", "starts: 37"), "    unknown: 0\n",
        "21:7: error: coverage[0].basins: expected the basins' starts and unknown to add up to 2 bound + 1 = 201, "
        "got 200",
    ),
    "not-an-integer": (
        _replace(TRUE_100, "cycle: -17", "cycle: '-17'"), "    unknown: 0\n",
        "25:17: error: coverage[0].basins[4].cycle: expected an integer, got the quoted text '-17'; write it "
        "without quotes",
    ),
    "a-negative-unknown": (
        TRUE_100, "    unknown: -1\n",
        "26:14: error: coverage[0].unknown: expected a count of at least 0, got -1",
    ),
}  # fmt: skip


@pytest.mark.parametrize("case", sorted(READER_CASES))
def test_bad_basins_are_named_where_they_are(cli, catalogue, case: str) -> None:
    basins, tail, line = READER_CASES[case]
    root = catalogue()
    path = with_basins(root, 100, basins, tail)
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == f"{path}:{line}"


def test_unknown_goes_with_basins_and_counts_the_unresolved_starts(cli, catalogue) -> None:
    root = catalogue()
    path = root / "maps" / "3x-plus-1.yaml"
    text = path.read_text(encoding="utf-8")
    claim = (
        "coverage:\n  - kind: all-starts\n    bound: 100\n    found_on: 2026-12-01\n    method: m\n"
        "    max_steps: 10000\n    max_bits: 4096\n"
    )
    path.write_text(text + claim + "    unknown: 0\n", encoding="utf-8")
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{path}:19:14: error: coverage[0].unknown: expected unknown only beside basins, got it without basins"
    )
    # A listed unresolved start ends in no known cycle, so unknown counts it.
    root = catalogue()
    path = with_basins(root, 100, _replace(TRUE_100, "starts: 38", "starts: 37"), unresolved="-3")
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{path}:26:14: error: coverage[0].unknown: expected at least 1 (the unresolved starts listed), got 0"
    )


def test_basins_only_up_to_the_limit_of_the_count(cli, catalogue) -> None:
    root = catalogue()
    path = with_basins(root, 4_194_305, "      - {cycle: 1, starts: 8388611, first: 1}\n")
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{path}:21:7: error: coverage[0].basins: expected basins only for a bound up to 4,194,304, got them for "
        "the bound 4194305"
    )


def test_a_forged_count_is_caught_by_the_count_again(cli, catalogue) -> None:
    # One start moved from the basin of -1 to that of -5: the total still adds up, only the count can tell.
    root = catalogue()
    path = with_basins(root, 100, _replace(_replace(TRUE_100, "starts: 38", "starts: 37"), "starts: 31, first: -5",
                                           "starts: 32, first: -5"))  # fmt: skip
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{path}:13:5: error: coverage[0].basins[2]: expected 37 starts from -1 ending in the cycle through -1, "
        "got 38 starts from -1 (counted again from the search)"
    )
    assert len([line for line in run.lines if ": error: " in line]) == 1  # the first differing basin alone


def test_a_missing_basin_and_a_wrong_unknown_are_named(cli, catalogue) -> None:
    root = catalogue()
    basins = TRUE_100.replace("      - {cycle: -17, starts: 31, first: -17}\n", "")
    path = with_basins(root, 100, basins, "    unknown: 31\n")
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{path}:13:5: error: coverage[0].basins: expected none ending in the cycle through -17, got 31 starts "
        "from -17 (counted again from the search)"
    )
    root = catalogue()
    basins = _replace(TRUE_100, "starts: 1, first: 0}", "starts: 2, first: 0}")
    path = with_basins(root, 100, _replace(basins, "starts: 100, first: 1}", "starts: 99, first: 1}"))
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{path}:13:5: error: coverage[0].basins[0]: expected 2 starts from 0 ending in the cycle through 0, "
        "got 1 start from 0 (counted again from the search)"
    )


def test_a_cycle_within_the_bound_must_be_listed(cli, catalogue) -> None:
    # Lagarias 1985: the cycle through -17; without its entry, a basin naming it names no listed cycle (and the
    # search finds the cycle missing too).
    root = catalogue()
    path = with_basins(root, 100, TRUE_100)
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    run = cli("verify", str(root))
    assert (
        f"{path}:13:5: error: coverage[0].basins[4].cycle: expected a listed cycle's least |member|, or one beyond "
        "the bound 100, got -17, which no cycle entry of the map has"
    ) in run.lines


def test_basins_beyond_the_recheck_are_attested(cli, catalogue) -> None:
    # A claim to 1,000 searched again only to 100: its basins are not counted again, so a forged count stands,
    # attested like the rest of the claim.
    root = catalogue()
    with_basins(root, 1000, _replace(_replace(TRUE_1000, "starts: 349", "starts: 348"), "starts: 306", "starts: 307"))
    report = verify_catalogue(root, Limits(recheck_up_to=100))
    assert report.ok, [str(p) for p in report.problems]
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert claim.attested and claim.rechecked_up_to == 100
    assert claim.basins is not None and claim.basins.basins[2] == Basin(-1, 348, -1)
    # Searched whole, the same claim fails.
    run = cli("verify", str(root), "--recheck-up-to", "1000")
    assert run.code == 1 and "coverage[0].basins[2]: expected 348 starts from -1" in run.lines[0]


def test_a_warm_verification_does_not_count_again(catalogue, monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    root = catalogue()
    with_basins(root, 100, TRUE_100)
    calls: list[int] = []
    counter = basins_module.basins

    def counted(*args, **kwargs):  # type: ignore[no-untyped-def]
        calls.append(args[1])
        return counter(*args, **kwargs)

    monkeypatch.setattr(basins_module, "basins", counted)
    folder = tmp_path / "cache"
    with VerifyCache.open(folder) as cache:
        assert verify_catalogue(root, Limits(), cache).ok
    assert calls == [100]
    with VerifyCache.open(folder) as cache:
        assert verify_catalogue(root, Limits(), cache).ok
    assert calls == [100]  # the count kept beside the search was used
    # Work done ahead (builder.catalogue.shared's workers) runs the count too, under a key of its own.
    entry = verify_catalogue(root).catalogue.maps["3x-plus-1"]
    kept = search_coverage(entry, Limits())
    assert sorted(type(v).__name__ for v in kept.values()) == ["Basins", "HuntResult"]
    # Without basins the claim's search is the same search under the same key, and nothing is counted.
    root = catalogue()
    path = root / "maps" / "3x-plus-1.yaml"
    with_basins(root, 100, "")
    path.write_text(path.read_text(encoding="utf-8").replace("    basins:\n    unknown: 0\n", ""), encoding="utf-8")
    plain = search_coverage(verify_catalogue(root).catalogue.maps["3x-plus-1"], Limits())
    assert list(plain) == [k for k, v in kept.items() if type(v).__name__ == "HuntResult"]
