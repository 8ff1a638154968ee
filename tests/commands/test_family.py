"""The family hunt, ``periplus hunt --qx Q --d A..B --bound N --into CATALOGUE``, against published cycles.

Every fixed value names its source beside it ("common practice, no source" for facts anyone can re-derive
by hand).  The command is the hunt command's own parser (builder.commands.hunt.register, which adds the family's
options) and its run, which hands the parsed arguments to run_family when --qx is given.
"""

from __future__ import annotations

import argparse
import io
import math
import shutil
import signal
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path

import pytest
from conftest import REPO, VALID

from builder.catalogue import family as familylib
from builder.catalogue.cache import VerifyCache
from builder.catalogue.entries import cycle_file_id
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import Catalogue
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands import family as familycli
from builder.commands import hunt as huntcli
from builder.commands.main import execute
from builder.errors import Severity
from builder.search import survey as surveylib

SHIPPED = REPO / "catalogue"


def _parser() -> argparse.ArgumentParser:
    top = argparse.ArgumentParser(prog="periplus")
    sub = top.add_subparsers(dest="command", required=True)
    huntcli.register(sub)
    assert "--qx" in sub.choices["hunt"]._option_string_actions  # the hunt command adds the family's options
    return top


def run(capsys: pytest.CaptureFixture[str], *argv: str | Path) -> tuple[int, str, str]:
    """Parse ``periplus hunt ARGV`` and run the family hunt through the one error handler."""
    args = _parser().parse_args(["hunt", *map(str, argv), "--no-cache"])
    code = execute(args)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def verified(root: Path, recheck: bool = False) -> Catalogue:
    limits = Limits() if recheck else Limits(recheck_up_to=NO_RECHECK)
    report = verify_catalogue(root, limits, VerifyCache.memory())
    assert report.ok, [str(p) for p in report.errors]
    return report.catalogue


def canonical(catalogue: Catalogue, map_id: str) -> dict[int, tuple[int, int]]:
    """Each cycle's least |member| -> (length, odd steps)."""
    return {c.canonical: (c.length, c.residue_counts[1]) for c in catalogue.cycles.get(map_id, ())}


def tree(root: Path) -> dict[str, bytes]:
    return {p.relative_to(root).as_posix(): p.read_bytes() for p in sorted(root.rglob("*")) if p.is_file()}


# --- published cycles ----------------------------------------------------------------------------

# Positive cycles of 3x+d whose members are coprime to d: least member -> (length, odd steps) of the shortcut
# map.  Source: the "recomputed" table of ../shared/literature.md, which quotes J. C. Lagarias, Acta Arith. 56
# (1990) 33-53, Table 3.1, and E. Belaga, M. Mignotte, HAL hal-00129727 (2006), Table 1.
PRIMITIVE = {
    # 3x+5: E. Belaga, M. Mignotte, HAL hal-00129727 (2006), Table 1 (via ../shared/literature.md)
    5: {1: (3, 1), 19: (5, 3), 23: (5, 3), 187: (27, 17), 347: (27, 17)},
    7: {5: (4, 2)},
    11: {1: (6, 2), 13: (14, 8)},
    13: {1: (4, 1), 131: (24, 15), **{c: (8, 5) for c in (211, 227, 251, 259, 283, 287, 319)}},
    23: {5: (5, 2), 7: (5, 2), 41: (43, 26)},
    29: {1: (5, 1), 11: (17, 9), 3811: (65, 41), 7055: (65, 41)},
}
#: The largest least member above (3x+29's 7055), so one bound covers every row.
PRIMITIVE_BOUND = 7055


@pytest.fixture(scope="module")
def three_x_5_to_29(tmp_path_factory: pytest.TempPathFactory) -> Iterator[tuple[Path, str]]:
    """One family hunt of 3x+d, d in 5..29, to 7,055 into a new catalogue."""
    root = tmp_path_factory.mktemp("family") / "record"
    args = _parser().parse_args(["hunt", "--qx", "3", "--d", "5..29", "--bound", str(PRIMITIVE_BOUND),
                                 "--into", str(root), "--no-cache", "--jobs", "1"])  # fmt: skip
    out, err = io.StringIO(), io.StringIO()
    assert familycli.run_family(args, out, err) == 0, out.getvalue() + err.getvalue()
    yield root, out.getvalue()


@pytest.mark.parametrize("d", sorted(PRIMITIVE))
def test_positive_primitive_cycles_of_3x_plus_d_are_the_published_ones(
    three_x_5_to_29: tuple[Path, str], d: int
) -> None:
    root, _ = three_x_5_to_29
    found = canonical(verified(root), familylib.FamilyMap(3, d).id)
    primitive = {c: shape for c, shape in found.items() if c > 0 and math.gcd(c, d) == 1}
    assert primitive == PRIMITIVE[d]


def test_the_new_catalogue_verifies_with_its_claims_searched_again(three_x_5_to_29: tuple[Path, str]) -> None:
    root, out = three_x_5_to_29
    report = verify_catalogue(root, Limits(), VerifyCache.memory())
    assert report.ok, [str(p) for p in report.errors]
    # Common practice, no source: a new record has no published address yet, which verify only warns about.
    assert {p.code for p in report.problems if p.severity is Severity.WARNING} == {"no-address"}
    # Common practice, no source: the odd d in 5..29 that 3 does not divide are 5, 7, 11, 13, 17, 19, 23, 25, 29.
    assert sorted(report.catalogue.maps) == sorted(
        familylib.FamilyMap(3, d).id for d in (5, 7, 11, 13, 17, 19, 23, 25, 29)
    )
    assert all(claim.rechecked for m in report.catalogue.maps.values() for claim in m.coverage)
    assert "9 of 9 maps hunted and written" in out


def test_3x_plus_1_and_3x_minus_1_cycles(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    code, out, _ = run(capsys, "--qx", "3", "--d", "-1..1", "--bound", "1000", "--into", tmp_path / "c")
    assert code == 0, out
    catalogue = verified(tmp_path / "c")
    # J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23: the cycles of 3x+1 on Z pass through 0, 1, -1, -5, -17,
    # with shortcut lengths 1, 2, 1, 3, 11 (memory, via ../shared/literature.md).
    assert {c: k for c, (k, _) in canonical(catalogue, "3x-plus-1").items()} == {0: 1, 1: 2, -1: 1, -5: 3, -17: 11}
    # Same source: 3x-1 is its mirror, with the positive cycles through 1, 5 and 17.
    assert set(canonical(catalogue, "3x-minus-1")) == {0, -1, 1, 5, 17}
    assert catalogue.maps["3x-plus-1"].name == "3x+1" and catalogue.maps["3x-minus-1"].name == "3x-1"


def test_5x_plus_1_cycles_and_the_maps_of_a_family(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    root = tmp_path / "c"
    argv = ("--qx", "5", "--d", "-5..5", "--bound", "200", "--max-steps", "10000", "--max-bits", "512")
    code, out, _ = run(capsys, *argv, "--into", root)
    assert code == 0, out
    catalogue = verified(root)
    # Metzger (1999), as annotated in J. C. Lagarias, arXiv:math/0309224 (secondary): the positive cycles of 5x+1
    # pass through 1, 13 and 17, and no others have at most 3 odd members.
    positive = {c: x for c, (_, x) in canonical(catalogue, "5x-plus-1").items() if c > 0}
    assert {1, 13, 17} <= set(positive)
    assert all(x > 3 for c, x in positive.items() if c not in (1, 13, 17))
    # Common practice, no source: one map per odd d in -5..5 that 5 does not divide (4 of the 6), none for +-5.
    expected = [d for d in range(-5, 6) if d % 2 and d % 5]
    assert len(list((root / "maps").iterdir())) == len(expected) == 4
    assert sorted(catalogue.maps) == sorted(familylib.FamilyMap(5, d).id for d in expected)
    assert not (root / "maps" / "5x-plus-5.yaml").exists() and not (root / "cycles" / "5x-minus-5").exists()
    assert "2 skipped, where 5 divides d" in out
    assert catalogue.maps["5x-plus-1"].references == ()  # the 3x+d reference is for q = 3 only
    # Common practice, no source: 5x+1 leaves starts unresolved (orbits that grow), and the claim lists them.
    claim = catalogue.maps["5x-plus-1"].coverage[0]
    assert (claim.bound, claim.max_steps, claim.max_bits) == (200, 10000, 512) and 7 in claim.unresolved


# --- the shipped catalogue ------------------------------------------------------------------------


def test_the_family_hunt_finds_the_shipped_3x_plus_d_cycles(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    bound = 2000
    code, out, _ = run(capsys, "--qx", "3", "--d", "-97..97", "--bound", str(bound), "--into", tmp_path / "c")
    assert code == 0, out
    fresh = verified(tmp_path / "c", recheck=True)
    shipped = verified(SHIPPED)
    # Common practice, no source: 98 odd d in -97..97, of which 32 are multiples of 3.
    assert len(fresh.maps) == 66
    for map_id in fresh.maps:
        mine, theirs = set(canonical(fresh, map_id)), set(canonical(shipped, map_id))
        assert {c for c in mine if abs(c) <= bound} == {c for c in theirs if abs(c) <= bound}, map_id
        assert mine <= theirs, map_id  # cycles met beyond the bound are shipped too (their hunt went to 10^6)
        assert fresh.maps[map_id].dynamics == shipped.maps[map_id].dynamics


def test_the_regeneration_script_reproduces_the_shipped_maps(tmp_path: Path) -> None:
    script = REPO / "scripts" / "regenerate_catalogue.py"
    done = subprocess.run(
        [sys.executable, str(script), str(tmp_path / "c"), "--bound", "200", "--compare", str(SHIPPED), "--jobs", "1"],
        capture_output=True,
        text=True,
        check=False,
        timeout=600,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    assert done.stdout.splitlines()[-1].startswith("the family hunt reproduces the maps of")


# --- writing into a catalogue ---------------------------------------------------------------------


def test_an_existing_catalogue_gains_claims_and_entries_and_keeps_its_text(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    root = shutil.copytree(VALID, tmp_path / "c")
    before = tree(root)
    code, out, _ = run(capsys, "--qx", "3", "--d", "-5..1", "--bound", "100", "--into", root)
    assert code == 0, out
    after = tree(root)
    for rel, data in before.items():
        if rel.startswith("maps/"):
            assert after[rel].startswith(data), rel  # every comment and field kept; the claim comes after
        else:
            assert after[rel] == data, rel
    catalogue = verified(root, recheck=True)
    assert [c.bound for c in catalogue.maps["3x-plus-1"].coverage] == [100]
    # The fixture lists 3x-1's cycles through 1, 5 and 17 (Lagarias 1985, memory); the hunt adds 0 and -1
    # (common practice, no source: 0/2 = 0 and (3(-1) - 1)/2 = -2, -2/2 = -1).
    assert sorted(after.keys() - before.keys()) == sorted(
        ["cycles/3x-minus-1/0.yaml", "cycles/3x-minus-1/minus-1.yaml", "maps/3x-minus-5.yaml"]
        + [f"cycles/3x-minus-5/{cycle_file_id(c)}.yaml" for c in canonical(catalogue, "3x-minus-5")]
    )
    assert "3x-plus-1: 5 cycles, 0 new, 0 unresolved (map file kept, claim added)" in out


def test_running_the_same_family_hunt_again_adds_nothing(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    argv = ("--qx", "3", "--d", "-7..7", "--bound", "500", "--into", tmp_path / "c")
    assert run(capsys, *argv)[0] == 0
    first = tree(tmp_path / "c")
    code, out, _ = run(capsys, *argv)
    assert code == 0
    assert tree(tmp_path / "c") == first
    assert "0 new map files, 0 new cycle entries, 0 claims added" in out
    assert not [p for p in (tmp_path / "c").rglob(".*")]  # no temporary file left behind


def test_a_map_of_the_same_definition_under_another_id_gets_the_results(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    root = tmp_path / "c"
    shutil.copytree(VALID, root)
    text = familylib.map_text(familylib.FamilyMap(3, 5)).replace("name: 3x+5", "name: three x plus five")
    (root / "maps" / "three-x-plus-five.yaml").write_text(text, encoding="utf-8")
    code, out, _ = run(capsys, "--qx", "3", "--d", "5..5", "--bound", "400", "--into", root)
    assert code == 0, out
    assert not (root / "maps" / "3x-plus-5.yaml").exists()
    catalogue = verified(root)
    # Belaga and Mignotte 2006, Table 1 (via ../shared/literature.md): 19 and 347 are least members of 3x+5 cycles.
    assert {19, 347} <= set(canonical(catalogue, "three-x-plus-five"))
    assert [c.bound for c in catalogue.maps["three-x-plus-five"].coverage] == [400]


def test_a_map_id_with_another_definition_is_refused(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    root = shutil.copytree(VALID, tmp_path / "c")
    # Common practice, no source: n/2, (6n+10)/2 is 3x+5 in its standard form, another definition.
    other = familylib.map_text(familylib.FamilyMap(3, 5)).replace(
        "multiplier: 3, increment: 5", "multiplier: 6, increment: 10"
    )
    (root / "maps" / "3x-plus-5.yaml").write_text(other, encoding="utf-8")
    before = tree(root)
    code, _, err = run(capsys, "--qx", "3", "--d", "1..5", "--bound", "100", "--into", root)
    assert code == 2
    assert err == (
        f"periplus: error: {root}/maps/3x-plus-5.yaml: expected the map 3x+5, T(n) = n/2 for n = 0, (3n+5)/2 for "
        "n = 1 (mod 2), got T(n) = n/2 for n = 0, (6n+10)/2 for n = 1 (mod 2)\n"
    )
    assert tree(root) == before  # refused before anything was hunted or written


def test_a_catalogue_that_does_not_verify_is_not_written(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    root = shutil.copytree(VALID, tmp_path / "c")
    (root / "maps" / "3x-plus-1.yaml").write_text("name: [\n", encoding="utf-8")
    code, out, _ = run(capsys, "--qx", "3", "--d", "5..5", "--bound", "100", "--into", root)
    assert code == 1
    assert out.splitlines()[-1].startswith(f"{root} does not verify (")
    assert not (root / "maps" / "3x-plus-5.yaml").exists()


# --- usage ---------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--d", "5..1"], "argument --d: expected A..B with A <= B, got '5..1'"),
        (["--d", "5"], "argument --d: expected A..B with A <= B, got '5'"),
        (["--d", "1...5"], "argument --d: expected A..B with A <= B, got '1...5'"),
        (["--qx", "4"], "argument --qx: expected an odd multiplier of at least 3, got 4"),
        (["--qx", "1"], "argument --qx: expected an odd multiplier of at least 3, got 1"),
        (["--qx", "-3"], "argument --qx: expected an odd multiplier of at least 3, got -3"),
        (["--qx", "x"], "argument --qx: expected an odd multiplier of at least 3, got 'x'"),
    ],
)
def test_bad_ranges_and_multipliers_are_usage_errors(
    capsys: pytest.CaptureFixture[str], argv: list[str], message: str
) -> None:
    with pytest.raises(SystemExit) as stop:
        _parser().parse_args(["hunt", "--qx", "3", "--d", "1..5", "--bound", "10", "--into", "x", *argv])
    assert stop.value.code == 2
    assert capsys.readouterr().err.splitlines()[-1] == f"periplus hunt: error: {message}"


def test_ranges_with_negative_ends_parse() -> None:
    args = _parser().parse_args(["hunt", "--qx", "3", "--d", "-97..-5", "--bound", "10", "--into", "x"])
    assert args.d_range == (-97, -5)
    assert _parser().parse_args(["hunt", "--d", "-97..97"]).d_range == (-97, 97)
    with pytest.raises(familylib.FamilyError, match=r"^--qx: expected an odd multiplier of at least 3, got 4$"):
        familylib.family_maps(4, 1, 5)
    with pytest.raises(familylib.FamilyError, match=r"^--d: expected A..B with A <= B, got 3..1$"):
        familylib.family_maps(3, 3, 1)


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--qx", "3", "--d", "1..5", "--into", "x"], "hunt --qx: give --d A..B, --bound N and --into CATALOGUE"),
        (["--qx", "3", "--d", "1..5", "--bound", "9"], "hunt --qx: give --d A..B, --bound N and --into CATALOGUE"),
        (["3x-plus-1", "--qx", "3", "--d", "1..5", "--bound", "9", "--into", "x"],
         "hunt --qx: expected no MAP (the family names its maps), got '3x-plus-1'"),
        (["--qx", "3", "--d", "1..5", "--bound", "9", "--into", "x", "--save", "f.json"],
         "hunt --qx: --save does not apply to a family hunt"),
        (["--qx", "3", "--d", "1..5", "--bound", "9", "--into", "x", "--from", "2"],
         "hunt --qx: --from does not apply to a family hunt"),
        (["--qx", "3", "--d", "1..5", "--bound", "9", "--into", "x", "--found-by", "  "],
         "--found-by: expected who found the cycles, got nothing"),
    ],
)  # fmt: skip
def test_options_that_do_not_fit_a_family_hunt(
    capsys: pytest.CaptureFixture[str], argv: list[str], message: str
) -> None:
    code, _, err = run(capsys, *argv)
    assert (code, err) == (2, f"periplus: error: {message}\n")


def test_into_a_folder_that_is_no_catalogue(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("mine\n", encoding="utf-8")
    code, _, err = run(capsys, "--qx", "3", "--d", "5..5", "--bound", "10", "--into", tmp_path)
    assert code == 2 and "expected a catalogue directory with a maps/ folder, got none" in err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.txt"]


# --- Ctrl-C --------------------------------------------------------------------------------------


def test_ctrl_c_keeps_the_maps_finished_and_exits_130(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    real = familycli.run_hunt
    calls = []

    def run_hunt(survey: surveylib.Survey, *args: object, **kwargs: object) -> surveylib.CoverEnd:
        calls.append(survey.map_id)
        if len(calls) == 2:
            raise KeyboardInterrupt
        return real(survey, *args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(familycli, "run_hunt", run_hunt)
    code, out, err = run(capsys, "--qx", "3", "--d", "-1..5", "--bound", "100", "--into", tmp_path / "c")
    assert code == 130 and err.endswith("periplus: interrupted\n")
    assert calls == ["3x-minus-1", "3x-plus-1"]
    assert sorted(p.name for p in (tmp_path / "c" / "maps").iterdir()) == ["3x-minus-1.yaml"]
    assert "interrupted: maps written: 3x-minus-1; 3x-plus-1 and the maps after it were not written" in out
    assert "(to go on, give --d 1..5)" in out
    verified(tmp_path / "c", recheck=True)


def test_ctrl_c_while_a_map_is_written_lets_it_finish(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    real = familylib.write_text
    signalled = []

    def write_text(path: Path, text: str) -> None:
        if not signalled and path.parent.name == "maps":
            signalled.append(path)
            signal.raise_signal(signal.SIGINT)  # Ctrl-C as the first file of the first map is written
        real(path, text)

    monkeypatch.setattr(familylib, "write_text", write_text)
    code, out, _ = run(capsys, "--qx", "3", "--d", "-1..5", "--bound", "100", "--into", tmp_path / "c")
    assert code == 130
    assert sorted(p.name for p in (tmp_path / "c" / "maps").iterdir()) == ["3x-minus-1.yaml"]
    assert "interrupted: maps written: 3x-minus-1; 3x-plus-1 and the maps after it were not written" in out
    catalogue = verified(tmp_path / "c", recheck=True)
    assert len(catalogue.maps["3x-minus-1"].coverage) == 1  # the map was written whole


def test_a_family_hunt_keeps_a_ledger_and_resumes_from_it(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    # One ledger for every map of the family (builder.search.ledger keys units by map); the same command run
    # again reads every unit back and writes nothing new.  Cycles: 3x+5's 1, 19, 23 (E. Belaga, M. Mignotte,
    # HAL hal-00129727 (2006), Table 1), 3x+7's 5 (../shared/literature.md, "recomputed").
    ledger = tmp_path / "family.sqlite"
    argv = ("--qx", "3", "--d", "5..7", "--bound", "2000", "--into", tmp_path / "c", "--ledger", ledger)
    code, out, _ = run(capsys, *argv, "--unit-size", "500")
    assert code == 0, out
    first = {p.relative_to(tmp_path).as_posix(): p.read_bytes() for p in (tmp_path / "c").rglob("*.yaml")}
    assert {"c/cycles/3x-plus-5/19.yaml", "c/cycles/3x-plus-5/23.yaml", "c/cycles/3x-plus-7/5.yaml"} <= set(first)
    from builder.arith.dynamics import AffineMap
    from builder.search.ledger import Ledger

    held = Ledger(ledger)
    try:  # 0..2,000 in units of 500 magnitudes: 5 units for each of the two maps
        for d in (5, 7):
            assert len(held.recorded(AffineMap(2, ((1, 0), (3, d))))) == 5
    finally:
        held.close()
    code, out, _ = run(capsys, *argv)
    assert code == 0, out
    again = {p.relative_to(tmp_path).as_posix(): p.read_bytes() for p in (tmp_path / "c").rglob("*.yaml")}
    assert again == first  # nothing added: every claim and entry is there already
