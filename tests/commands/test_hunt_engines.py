"""``periplus hunt`` with the engine options: --ledger, --unit-size, --recheck-fraction, --seed, --engine, --scheduler.

The report of a hunt run in units, resumed from a ledger or rechecked, must be the report of one plain
run, which tests/search/test_hunt.py checks against the exact reference and published cycles: for 3x+5
the positive primitive cycles 1, 19, 23, 187, 347 (E. Belaga, M. Mignotte, HAL hal-00129727 (2006),
Table 1, via ../shared/literature.md), with -5 and 5 times each 3x+1 cycle (common practice, no
source).  The dask engine's own runs are in tests/search/test_cluster.py.
"""

from __future__ import annotations

import io
import sqlite3
from pathlib import Path

import pytest

from builder.arith.dynamics import AffineMap
from builder.commands.main import main
from builder.search import cluster
from builder.search.definition import HuntResult
from builder.search.ledger import HuntParameters, Ledger
from builder.search.units import Unit, UnitResult, checksum_of, result_to_json

ROOT = Path(__file__).resolve().parents[2]
CATALOGUE = ROOT / "catalogue"
HUNT = ["hunt", "3x-plus-5", "--bound", "400", "--catalogue", str(CATALOGUE)]
T35 = AffineMap(2, ((1, 0), (3, 5)))  # 3x+5 as the catalogue defines it: T(n) = n/2, (3n + 5)/2
CYCLES_3X_PLUS_5 = ["0", "1", "5", "-5", "19", "23", "-25", "-85", "187", "347"]


def _run(capsys: pytest.CaptureFixture[str], *argv: str | Path) -> tuple[int, str, str]:
    code = main([*HUNT, *map(str, argv)])
    captured = capsys.readouterr()
    return code, captured.out, captured.err


@pytest.fixture(scope="module")
def plain() -> str:
    """The report of one plain run (the local engine as before units, one process)."""
    out = io.StringIO()
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr("sys.stdout", out)
        assert main([*HUNT, "--jobs", "1"]) == 0
    text = out.getvalue()
    rows = [line.split()[0] for line in text.splitlines() if line.startswith("  ") and "catalogued" in line]
    assert rows == CYCLES_3X_PLUS_5
    return text


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--scheduler", "tcp://h:8786"], "--scheduler: expected --engine dask with it, got --engine local"),
        (["--engine", "dask"], "--engine dask: expected --scheduler ADDRESS (the Dask scheduler, such as tcp://h"),
        (["--recheck-fraction", "1.5"], "argument --recheck-fraction: expected a number from 0 to 1, got '1.5'"),
        (["--recheck-fraction", "nan"], "argument --recheck-fraction: expected a number from 0 to 1, got 'nan'"),
        (["--engine", "cloud"], "argument --engine: invalid choice: 'cloud'"),
        (["--unit-size", "0"], "argument --unit-size: expected a positive integer, got 0"),
    ],
)
def test_engine_options_that_do_not_go_together_are_usage_errors(
    capsys: pytest.CaptureFixture[str], argv: list[str], message: str
) -> None:
    try:
        code, _, err = _run(capsys, *argv)
    except SystemExit as exc:  # argparse's own errors
        code, err = int(str(exc.code)), capsys.readouterr().err
    assert code == 2 and message in err and "Traceback" not in err


def test_merge_takes_no_engine_options(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    saved = tmp_path / "a.json"
    assert _run(capsys, "--jobs", "1", "--save", saved)[0] == 0
    code, _, err = _run(capsys, "--merge", saved, "--ledger", tmp_path / "l.sqlite")
    assert code == 2 and "--ledger, --unit-size, --scheduler and --recheck-fraction do not apply to --merge" in err
    code, _, err = _run(capsys, "--ledger", tmp_path)
    assert (code, err) == (2, f"periplus: error: --ledger: expected a file, got the folder {tmp_path}\n")


def test_ctrl_c_keeps_the_units_done_and_the_same_command_resumes(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, tmp_path: Path, plain: str
) -> None:
    ledger = tmp_path / "hunt.sqlite"
    real = cluster.run_unit
    calls: list[Unit] = []

    def third_is_interrupted(unit: Unit, worker: str = "") -> UnitResult:
        calls.append(unit)
        if len(calls) == 3:
            raise KeyboardInterrupt  # as Ctrl-C would, in this process (one job)
        return real(unit, worker)

    argv = ["--jobs", "1", "--ledger", ledger, "--unit-size", "100"]
    with monkeypatch.context() as mp:
        mp.setattr(cluster, "run_unit", third_is_interrupted)
        code, out, err = _run(capsys, *argv)
    assert (code, err) == (130, "periplus: interrupted\n")
    assert "interrupted: only magnitudes 0..199 were fully covered" in out
    assert f"units: 2 run, 0 read back from the ledger {ledger}" in out
    assert f"the ledger {ledger} keeps every unit finished; run the same command again to resume" in out
    code, out, err = _run(capsys, *argv)
    assert (code, err) == (0, "")
    assert out == plain + f"\nunits: 3 run, 2 read back from the ledger {ledger}\n"


def test_a_ledger_for_another_hunt_is_refused(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    ledger = tmp_path / "hunt.sqlite"
    assert _run(capsys, "--jobs", "1", "--ledger", ledger)[0] == 0
    code, out, err = _run(capsys, "--jobs", "1", "--ledger", ledger, "--max-steps", "500")
    assert code == 2 and out == ""
    assert err == (
        f"periplus: error: --ledger: {ledger}: expected the hunt this ledger holds for 3x-plus-5 (mod 2: 1,0 3,5): "
        "max_steps 100000; got max_steps 500\n"
    )


def test_a_recheck_that_disagrees_is_reported_and_exits_1(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    ledger = tmp_path / "hunt.sqlite"
    assert _run(capsys, "--jobs", "1", "--ledger", ledger, "--unit-size", "150")[0] == 0
    # Forge the row of 150..299 as a faulty worker would send it: 187 dropped, the checksum made to match.
    params = HuntParameters("3x-plus-5", T35, 400, 100_000, 4096, 10**10, 150)
    unit = params.unit(150, 299)
    with Ledger(ledger) as held:
        true = held.result(unit)
        true_sum = checksum_of(unit, true)
    forged = HuntResult(299, {c: v for c, v in true.cycles.items() if c != 187}, [], 150, {}, steps=true.steps)
    with sqlite3.connect(ledger) as db:
        db.execute(
            "UPDATE units SET result = ?, checksum = ?, worker = 'faulty' WHERE low = '150'",
            (result_to_json(forged), checksum_of(unit, forged)),
        )
    code, out, err = _run(capsys, "--jobs", "1", "--ledger", ledger, "--recheck-fraction", "1")
    assert code == 1
    assert err == "periplus: two runs of 1 unit disagree; see DISAGREEMENT above\n"
    assert "rechecked 3 units in this machine's processes: 1 DISAGREE" in out
    assert (
        f"DISAGREEMENT on magnitudes 150..299: checksum {checksum_of(unit, forged)} from faulty, {true_sum} from "
        in out
    )


def test_rechecks_that_agree_say_so(capsys: pytest.CaptureFixture[str], plain: str) -> None:
    code, out, _ = _run(capsys, "--jobs", "2", "--unit-size", "40", "--recheck-fraction", "0.5", "--seed", "3")
    assert code == 0 and out.startswith(plain)
    params = HuntParameters("3x-plus-5", T35, 400, 100_000, 4096, 10**10, 40)
    picked = [u for u in cluster.grid(0, 400, 40) if cluster.chosen_for_recheck(params.unit(*u), 0.5, 3)]
    assert 0 < len(picked) < 11
    assert (
        out[len(plain) :] == f"\nunits: 11 run\nrechecked {len(picked)} units in this machine's processes: all agree\n"
    )


def test_progress_after_a_resume_starts_from_what_the_ledger_holds(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    ledger = tmp_path / "hunt.sqlite"
    assert _run(capsys, "--jobs", "1", "--ledger", ledger, "--unit-size", "100", "--to", "199")[0] == 0

    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    screen = Terminal()
    monkeypatch.setattr("sys.stderr", screen)
    assert main([*HUNT, "--jobs", "1", "--ledger", str(ledger)]) == 0
    shown = screen.getvalue()
    # 0..199 (399 starts) read back from the ledger, of 801; the bar begins there, and ends at 801.
    assert shown.startswith("\r399/801 starts  50%|") and "\r801/801 starts 100%|" in shown and " left" in shown
    assert shown.endswith("\n")
