"""Coverage claims: 'every start with |n| up to a bound was iterated' is rechecked, not trusted."""

from __future__ import annotations

from pathlib import Path

from builder.arith.dynamics import DEFAULT_MAX_WORK
from builder.catalogue.model import Recheck
from builder.catalogue.verify import Limits, verify_catalogue

CLAIM = (
    "coverage:\n"
    "  - kind: all-starts\n"
    "    bound: {bound}\n"
    "    found_on: 2026-12-01\n"
    "    method: exhaustive search in the test\n"
    "    max_steps: {steps}\n"
    "    max_bits: {bits}\n"
    "{unresolved}"
)


FIVE_X_PLUS_1 = (
    "name: 5x+1\nmodulus: 2\nbranches:\n  - {residue: 0, multiplier: 1, increment: 0}\n"
    "  - {residue: 1, multiplier: 5, increment: 1}\nsummary: s\n"
)


def with_claim(
    root: Path, map_id: str, bound: int, steps: int = 10_000, bits: int = 4096, unresolved: str = ""
) -> None:
    path = root / "maps" / f"{map_id}.yaml"
    path.write_text(
        path.read_text(encoding="utf-8") + CLAIM.format(bound=bound, steps=steps, bits=bits, unresolved=unresolved),
        encoding="utf-8",
    )


def test_a_true_claim_is_rechecked_and_holds(catalogue):
    # 3x+1 on Z: every cycle with least |member| <= 1000 passes through 0, 1, -1, -5 or -17
    # (Lagarias 1985 via literature.md, status memory); the fixture lists all five.
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    report = verify_catalogue(root)
    assert report.ok, [str(p) for p in report.problems]
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert claim.rechecked and claim.bound == 1000


def test_removing_a_covered_cycle_fails_and_names_it(cli, catalogue):
    # Same fact: the cycle through -17 (length 11) has least |member| 17 <= 1000.
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{root}/maps/3x-plus-1.yaml:13:5: error: coverage[0]: expected every cycle with least |member| up to 1000 "
        "to be listed, got none for the cycle through -17 (length 11), which the search finds; add "
        "cycles/3x-plus-1/<id>.yaml with start -17"
    )


# --- claims beyond what a verification searches again (issue 12, item 5) ----------------------------
# The facts: 3x+1 on Z has the cycle through -17 (length 11), and every cycle with least |member| up to
# 1000 passes through 0, 1, -1, -5 or -17 (Lagarias 1985 via literature.md).


def test_a_claim_just_above_the_recheck_limit_still_catches_a_missing_cycle(cli, catalogue):
    # The finding: bound 100,001 against the default 100,000 was kept as stated, and "every claim holds".
    root = catalogue()
    with_claim(root, "3x-plus-1", 100_001)
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    run = cli("verify", str(root))
    assert run.code == 1
    assert "got none for the cycle through -17 (length 11), which the search finds" in run.lines[0]
    assert run.lines[-1].endswith("; 1 coverage claim attested beyond what this run searched again")


def test_the_part_beyond_the_recheck_limit_is_attested_and_said_to_be(cli, catalogue):
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    report = verify_catalogue(root, Limits(recheck_up_to=999))
    assert report.ok, [str(p) for p in report.problems]
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert not claim.rechecked and claim.attested
    assert claim.recheck == Recheck(999, 10_000, 4096, DEFAULT_MAX_WORK, "recheck-up-to")
    run = cli("verify", str(root), "--recheck-up-to", "999")
    assert run.code == 0
    assert run.lines[-1] == (
        "verified 2 maps, 8 cycles and 2 references in 12 files: every claim holds as far as it was checked; "
        "1 coverage claim attested beyond what this run searched again"
    )


def test_below_the_recheck_limit_a_missing_cycle_is_caught_whatever_the_bound(catalogue):
    root = catalogue()
    with_claim(root, "3x-plus-1", 10**30)
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    report = verify_catalogue(root, Limits(recheck_up_to=20))
    assert [p.code for p in report.errors] == ["coverage-missing-cycle"]
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert claim.rechecked_up_to == 20


def test_a_claims_own_limits_are_capped_by_the_commands_and_reported(catalogue):
    # The finding: a claim asking for max_steps 10^9 and max_bits 300,000 made verify follow 5x+1
    # orbits for minutes.  7 under 5x+1 looks divergent (common practice, no source), so the capped
    # search leaves it unresolved; the claim lists it, so the claim holds as far as it was checked.
    root = catalogue(files={"maps/5x-plus-1.yaml": FIVE_X_PLUS_1})
    with_claim(root, "5x-plus-1", 7, steps=10**9, bits=300_000, unresolved="    unresolved: [7, -7]\n")
    report = verify_catalogue(root, Limits(max_steps=2000, max_bits=512, recheck_up_to=100))
    capped = [p.message for p in report.problems if p.code == "coverage-limits-capped"]
    assert capped == [
        "coverage[0]: max_steps is 1000000000, more than this verification follows an orbit (--max-steps 2,000): "
        "the claim is searched again with 2,000, and its starts left unresolved there that it does not list "
        "are not checked",
        "coverage[0]: max_bits is 300000, more than this verification follows an orbit (--max-bits 512): "
        "the claim is searched again with 512, and its starts left unresolved there that it does not list "
        "are not checked",
    ]
    (claim,) = report.catalogue.maps["5x-plus-1"].coverage
    assert claim.recheck is not None and (claim.recheck.max_steps, claim.recheck.max_bits) == (2000, 512)


def test_an_unlisted_start_the_capped_limits_cannot_decide_ends_the_checked_part(catalogue):
    # 7 is not listed: under the claim's larger limits it might resolve, so it is no error, but the
    # claim is checked only below it.
    root = catalogue(files={"maps/5x-plus-1.yaml": FIVE_X_PLUS_1})
    with_claim(root, "5x-plus-1", 7, steps=10**9, bits=300_000)
    report = verify_catalogue(root, Limits(max_steps=2000, max_bits=512))
    assert not [p for p in report.errors if p.code == "coverage-unlisted-start"]
    (claim,) = report.catalogue.maps["5x-plus-1"].coverage
    assert (claim.rechecked_up_to, claim.recheck.stopped_by if claim.recheck else None) == (6, "limits")


def test_when_the_maps_work_budget_runs_out_the_rest_is_attested(catalogue):
    # 5x+1 with max_bits 4096: the looking-divergent starts (7, 9, ...) each take thousands of steps
    # of growing members, far more than a budget of 10^7 bit-operations for the map.
    root = catalogue(files={"maps/5x-plus-1.yaml": FIVE_X_PLUS_1})
    with_claim(root, "5x-plus-1", 1000, steps=100_000, bits=4096)
    report = verify_catalogue(root, Limits(max_work=2_500_000))
    (claim,) = report.catalogue.maps["5x-plus-1"].coverage
    assert claim.recheck is not None and claim.recheck.stopped_by == "work"
    assert 0 <= claim.rechecked_up_to < 1000
    # Nothing below the checked part is reported as unlisted: what could not be decided is not blamed.
    assert not [p for p in report.errors if p.code == "coverage-unlisted-start"]


def test_an_unresolved_start_must_be_listed(catalogue):
    # 5x+1: the orbit of 7 grows past 64 bits long before returning (it looks divergent;
    # literature.md lists cycles through 1, 13, 17 only on the positives, Metzger via Lagarias).
    root = catalogue(
        files={
            "maps/5x-plus-1.yaml": (
                "name: 5x+1\nmodulus: 2\nbranches:\n  - {residue: 0, multiplier: 1, increment: 0}\n"
                "  - {residue: 1, multiplier: 5, increment: 1}\nsummary: s\n"
            )
        }
    )
    with_claim(root, "5x-plus-1", 7, steps=1000, bits=64)
    report = verify_catalogue(root)
    codes = {p.code for p in report.problems}
    assert "coverage-unlisted-start" in codes
    messages = [p.message for p in report.problems if p.code == "coverage-unlisted-start"]
    assert any("got no mention of 7," in m for m in messages), messages


def test_bad_coverage_records_are_positioned_errors(cli, catalogue):
    root = catalogue()
    path = root / "maps" / "3x-plus-1.yaml"
    path.write_text(
        path.read_text(encoding="utf-8")
        + "coverage:\n  - kind: some-starts\n    bound: true\n    found_on: 2026-12-01\n    method: m\n"
        "    max_steps: 10\n    max_bits: 10\n",
        encoding="utf-8",
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert (
        f"{root}/maps/3x-plus-1.yaml:13:11: error: coverage[0].kind: expected one of all-starts, got 'some-starts'"
        in run.lines
    )
    assert (
        f"{root}/maps/3x-plus-1.yaml:14:12: error: coverage[0].bound: expected an integer, got the boolean true"
        in run.lines
    )
