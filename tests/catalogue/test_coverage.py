"""Coverage claims: 'every start with |n| up to a bound was iterated' is rechecked, not trusted."""

from __future__ import annotations

from pathlib import Path

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


def test_a_claim_beyond_the_budget_is_attested_not_rechecked(catalogue):
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    report = verify_catalogue(root, Limits(recheck_up_to=999))
    assert report.ok
    (claim,) = report.catalogue.maps["3x-plus-1"].coverage
    assert not claim.rechecked


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
