"""The ledger of completed units (builder.search.ledger) and hunts resumed from it (builder.search.cluster).

Every merged result is compared with a one-piece run of the exact reference builder.search.definition.hunt,
and for 3x+1 with the published cycles on Z through 0, 1, -1, -5 and -17 (J. C. Lagarias, Amer. Math.
Monthly 92 (1985) 3-23, via ../shared/literature.md, status "memory"); for 3x+5 with its positive
primitive cycles 1, 19, 23, 187 and 347 (E. Belaga, M. Mignotte, HAL hal-00129727 (2006), Table 1, via
../shared/literature.md, "recomputed"), besides the cycles every 3x+d has: -d, and d times each 3x+1 cycle
(common practice, no source: if n is on a cycle of 3x+1, dn is on one of 3x+d).
"""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from collections.abc import Callable
from pathlib import Path

import pytest

import builder
from builder.arith.dynamics import AffineMap
from builder.search import cluster
from builder.search.cluster import Plan, grid, run_hunt
from builder.search.definition import HuntResult, hunt
from builder.search.ledger import HuntParameters, Ledger, LedgerConflict, LedgerError, LedgerMismatch
from builder.search.survey import Survey
from builder.search.units import UnitResult, checksum_of, map_text, result_to_json, run_unit

ROOT = Path(__file__).resolve().parents[2]
T3 = AffineMap(2, ((1, 0), (3, 1)))
T35 = AffineMap(2, ((1, 0), (3, 5)))
LIMITS = (100_000, 4096, 10**10)
LAGARIAS_1985 = [0, 1, -1, -5, -17]
# Belaga and Mignotte's positive primitive cycles of 3x+5, with -5 and 5 times the 3x+1 cycles 0, 1, -1, -5, -17.
CYCLES_3X_PLUS_5 = [0, 1, 5, -5, 19, 23, -25, -85, 187, 347]


class MachineLost(Exception):
    """What the tests raise to stop a run without any cleanup of the hunt's own."""


def _survey(mapping: AffineMap, bound: int, name: str = "m") -> Survey:
    return Survey(name, mapping, bound, *LIMITS)


def _stop_after(units: int) -> tuple[list[int], Callable[[int], None]]:
    calls: list[int] = []

    def progress(done: int) -> None:
        calls.append(done)
        if len(calls) > units:  # the first call is the count before any unit ran
            raise MachineLost

    return calls, progress


def _rows(path: Path) -> list[tuple[str, str, str]]:
    with sqlite3.connect(path) as db:
        return db.execute("SELECT map, low, high FROM units").fetchall()


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_lost_run_resumes_with_nothing_lost_or_counted_twice(tmp_path: Path, jobs: int) -> None:
    path = tmp_path / "hunt.sqlite"
    bound, size = 3000, 200
    whole = list(grid(0, bound, size))
    with Ledger(path) as ledger:
        _, progress = _stop_after(4)
        with pytest.raises(MachineLost):
            run_hunt(_survey(T3, bound), 0, bound, Plan(jobs=jobs, ledger=ledger, unit_size=size), progress)
    held = len(_rows(path))
    assert 4 <= held < len(whole)
    with Ledger(path) as ledger:
        survey = _survey(T3, bound)
        end = run_hunt(survey, 0, bound, Plan(jobs=jobs, ledger=ledger, unit_size=size))
    assert (end.units_reused, end.units_run, end.interrupted) == (held, len(whole) - held, False)
    rows = _rows(path)
    assert sorted((int(lo), int(hi)) for _, lo, hi in rows) == whole  # each unit once, the range whole
    reference = hunt(T3, bound)
    assert survey.ranges == [(0, bound)]
    assert list(survey.cycles) == list(reference.cycles) == LAGARIAS_1985
    assert survey.reasons == reference.reasons == {}


def test_a_run_killed_outright_resumes(tmp_path: Path) -> None:
    # SIGKILL after the third unit: no handler, no finally runs; what was committed must be whole.
    path = tmp_path / "hunt.sqlite"
    script = textwrap.dedent(
        f"""
        import os, signal
        from builder.arith.dynamics import AffineMap
        from builder.search.cluster import Plan, run_hunt
        from builder.search.ledger import Ledger
        from builder.search.survey import Survey
        calls = []
        def progress(done):
            calls.append(done)
            if len(calls) == 4:
                os.kill(os.getpid(), signal.SIGKILL)
        survey = Survey("3x+5", AffineMap(2, ((1, 0), (3, 5))), 400, 100_000, 4096, 10**10)
        run_hunt(survey, 0, 400, Plan(jobs=1, ledger=Ledger({str(path)!r}), unit_size=30), progress)
        """
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    done = subprocess.run([sys.executable, "-c", script], env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == -signal.SIGKILL, done.stderr
    assert len(_rows(path)) == 3
    survey = _survey(T35, 400)
    with Ledger(path) as ledger:
        end = run_hunt(survey, 0, 400, Plan(ledger=ledger, unit_size=30))
    assert (end.units_reused, end.units_run) == (3, len(list(grid(0, 400, 30))) - 3)
    reference = hunt(T35, 400)
    assert list(survey.cycles) == list(reference.cycles) == CYCLES_3X_PLUS_5
    assert survey.reasons == reference.reasons


def test_resuming_with_other_jobs_cuts_the_same_units(tmp_path: Path) -> None:
    path = tmp_path / "hunt.sqlite"
    with Ledger(path) as ledger:
        run_hunt(_survey(T35, 400), 0, 400, Plan(jobs=2, ledger=ledger, unit_size=64))
    with Ledger(path) as ledger:
        # No unit size given: the ledger's is used, and nothing is run again.
        survey = _survey(T35, 400)
        end = run_hunt(survey, 0, 400, Plan(jobs=1, ledger=ledger))
        assert ledger.unit_size(T35) == 64
    assert (end.units_run, end.units_reused) == (0, len(list(grid(0, 400, 64))))
    assert list(survey.cycles) == CYCLES_3X_PLUS_5


def test_a_ledger_for_other_parameters_is_refused_with_what_it_holds(tmp_path: Path) -> None:
    path = tmp_path / "hunt.sqlite"
    with Ledger(path) as ledger:
        run_hunt(_survey(T3, 300, "3x-plus-1"), 0, 300, Plan(ledger=ledger, unit_size=100))
    other = Survey("3x-plus-1", T3, 301, 100_000, 4000, 10**10)
    with Ledger(path) as ledger, pytest.raises(LedgerMismatch) as caught:
        run_hunt(other, 0, 301, Plan(ledger=ledger, unit_size=100))
    assert str(caught.value) == (
        f"{path}: expected the hunt this ledger holds for 3x-plus-1 (mod 2: 1,0 3,1): bound 300, max_bits 4096; "
        "got bound 301, max_bits 4000"
    )
    with Ledger(path) as ledger, pytest.raises(LedgerMismatch, match="expected .* unit size 100; got unit size 99$"):
        run_hunt(_survey(T3, 300, "3x-plus-1"), 0, 300, Plan(ledger=ledger, unit_size=99))
    params = HuntParameters("3x-plus-1", T3, 300, *LIMITS, 100, version="0.0.1")
    with Ledger(path) as ledger, pytest.raises(LedgerMismatch, match=f"program version {builder.__version__}; got"):
        ledger.begin(params)


def test_maps_share_one_ledger(tmp_path: Path) -> None:
    # A family hunt keeps every map's units in one file: each map has its own parameters and units.
    path = tmp_path / "family.sqlite"
    with Ledger(path) as ledger:
        run_hunt(_survey(T3, 300), 0, 300, Plan(ledger=ledger, unit_size=100))
        run_hunt(_survey(T35, 400), 0, 400, Plan(ledger=ledger, unit_size=50))
        assert (ledger.unit_size(T3), ledger.unit_size(T35)) == (100, 50)
    maps = sorted({m for m, _, _ in _rows(path)})
    assert maps == sorted([map_text(T3), map_text(T35)])
    assert len(_rows(path)) == 4 + 9


def test_recording_is_idempotent_and_a_second_checksum_is_a_conflict(tmp_path: Path) -> None:
    params = HuntParameters("3x-plus-1", T3, 100, *LIMITS, 50)
    unit = params.unit(0, 49)
    done = run_unit(unit, "w1")
    with Ledger(tmp_path / "l.sqlite") as ledger:
        ledger.begin(params)
        assert ledger.record(done) is True
        assert ledger.record(UnitResult(unit, done.result, done.checksum, "w2")) is False
        assert ledger.recorded(T3) == {(0, 49): (done.checksum, "w1")}
        assert ledger.result(unit) == done.result
        with pytest.raises(
            LedgerConflict, match=f"expected checksum {done.checksum} as recorded, got 0+ \\(from w3\\)"
        ):
            ledger.record(UnitResult(unit, done.result, "0" * 64, "w3"))


def test_a_row_changed_behind_the_ledgers_back_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "l.sqlite"
    with Ledger(path) as ledger:
        run_hunt(_survey(T35, 400), 0, 400, Plan(ledger=ledger, unit_size=100))
    with sqlite3.connect(path) as db:
        (result,) = db.execute("SELECT result FROM units WHERE low = '0'").fetchone()
        data = json.loads(result)
        data["cycles"] = data["cycles"][1:]  # a cycle dropped, the checksum left as it was
        db.execute("UPDATE units SET result = ? WHERE low = '0'", (json.dumps(data),))
    with Ledger(path) as ledger, pytest.raises(LedgerError, match="unit 0..99: expected a result with checksum"):
        run_hunt(_survey(T35, 400), 0, 400, Plan(ledger=ledger, unit_size=100))


def test_a_forged_unit_is_caught_by_a_recheck(tmp_path: Path) -> None:
    # A worker that lost a cycle and checksummed what it sent: the ledger holds a consistent but false row.
    path = tmp_path / "l.sqlite"
    with Ledger(path) as ledger:
        run_hunt(_survey(T35, 400), 0, 400, Plan(ledger=ledger, unit_size=100))
    params = HuntParameters("m", T35, 400, *LIMITS, 100)
    with Ledger(path) as ledger:
        true = ledger.result(params.unit(100, 199))
    assert 187 in true.cycles
    forged = HuntResult(199, {c: v for c, v in true.cycles.items() if c != 187}, [], 100, {}, steps=true.steps)
    with sqlite3.connect(path) as db:
        db.execute(
            "UPDATE units SET result = ?, checksum = ?, worker = 'bad-worker' WHERE low = '100'",
            (result_to_json(forged), checksum_of(params.unit(100, 199), forged)),
        )
    survey = _survey(T35, 400)
    with Ledger(path) as ledger:
        end = run_hunt(survey, 0, 400, Plan(ledger=ledger, recheck_fraction=1.0))
        rechecks = ledger.rechecks(T35)
    assert end.rechecked == 5 and len(end.disagreements) == 1  # units 0..99, ..., 300..399 and 400..400
    (d,) = end.disagreements
    assert (d.low, d.high, d.first_worker) == (100, 199, "bad-worker")
    assert d.second == checksum_of(params.unit(100, 199), true)
    assert [(r.low, r.agreed) for r in rechecks] == [(0, True), (100, False), (200, True), (300, True), (400, True)]
    assert 187 not in survey.cycles  # the first result stays in the survey: reported, never merged away


def test_a_worker_sending_a_false_checksum_is_caught_by_a_recheck(monkeypatch: pytest.MonkeyPatch) -> None:
    # The unit's first run (in this process, jobs=1) gives a false checksum once; its rerun gives the true one.
    real = cluster.run_unit
    spoiled: list[int] = []

    def once_wrong(unit, worker=""):  # type: ignore[no-untyped-def]
        done = real(unit, worker)
        if unit.low == 200 and not spoiled:
            spoiled.append(unit.low)
            return UnitResult(unit, done.result, "f" * 64, worker)
        return done

    monkeypatch.setattr(cluster, "run_unit", once_wrong)
    end = run_hunt(_survey(T35, 400), 0, 400, Plan(unit_size=100, recheck_fraction=1.0))
    assert end.rechecked == 5 and [(d.low, d.first) for d in end.disagreements] == [(200, "f" * 64)]


def test_the_recheck_sample_follows_the_seed() -> None:
    params = HuntParameters("m", T3, 10**6, *LIMITS, 1000)
    units = [params.unit(lo, hi) for lo, hi in grid(0, 10**6, 1000)]
    picked = {seed: [u.low for u in units if cluster.chosen_for_recheck(u, 0.1, seed)] for seed in (0, 1)}
    assert picked[0] == [u.low for u in units if cluster.chosen_for_recheck(u, 0.1, 0)]
    assert picked[0] != picked[1]
    # About a tenth of 1,001 units (binomial: the mean 100, the standard deviation under 10).
    assert all(60 < len(p) < 140 for p in picked.values())
    assert all(cluster.chosen_for_recheck(u, 1.0, 7) for u in units)
    assert not any(cluster.chosen_for_recheck(u, 0.0, 7) for u in units)


def test_a_file_that_is_no_ledger_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "notes.txt"
    path.write_text("not a database, only text long enough to fill a header" * 20)
    with pytest.raises(LedgerError, match=f"^{path}: expected a Periplus ledger \\(SQLite\\), got: "):
        Ledger(path)
    with pytest.raises(LedgerError, match="expected a ledger file that can be opened|expected a Periplus ledger"):
        Ledger(tmp_path / "no-such-folder" / "l.sqlite")


def test_the_default_unit_size_follows_the_range_alone() -> None:
    # Arithmetic: 64 units of a small range (never under 1,024 magnitudes), 2^22 magnitudes past 2^28.
    assert cluster.default_unit_size(0, 400) == 1024
    assert cluster.default_unit_size(0, 10**6) == -(-(10**6 + 1) // 64) == 15_626
    assert cluster.default_unit_size(5, 10**12) == 1 << 22
    assert len(list(grid(0, 10**6, cluster.default_unit_size(0, 10**6)))) == 64
