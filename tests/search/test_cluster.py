"""The dask engine (builder.search.cluster) on a local Dask cluster of two worker processes.

Each test's result is compared with the local engine's and with the exact reference
builder.search.definition.hunt; for 3x+1 also with its published cycles on Z, through 0, 1, -1, -5 and
-17 (J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, via ../shared/literature.md, status "memory"),
and for 3x+5 with its positive primitive cycles 1, 19, 23, 187, 347 (E. Belaga, M. Mignotte, HAL
hal-00129727 (2006), Table 1, via ../shared/literature.md) besides -5 and 5 times each 3x+1 cycle
(common practice, no source).  The cluster is the one ``distributed.LocalCluster`` starts (the
package's own reference setup); one test kills a worker's process as a crash would.
"""

from __future__ import annotations

import os
import re
import signal
import sqlite3
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import dask
import distributed
import pytest

import builder
from builder.arith.dynamics import AffineMap
from builder.commands.main import main
from builder.search.cluster import NO_DISTRIBUTED, ClusterUnavailable, Plan, grid, run_hunt
from builder.search.definition import hunt
from builder.search.ledger import Ledger
from builder.search.survey import Survey, starts_in
from builder.search.units import Unit, run_unit

ROOT = Path(__file__).resolve().parents[2]
CATALOGUE = ROOT / "catalogue"
T3 = AffineMap(2, ((1, 0), (3, 1)))
T35 = AffineMap(2, ((1, 0), (3, 5)))
LAGARIAS_1985 = [0, 1, -1, -5, -17]
CYCLES_3X_PLUS_5 = [0, 1, 5, -5, 19, 23, -25, -85, 187, 347]


def _local_cluster() -> distributed.LocalCluster:
    return distributed.LocalCluster(
        n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0", silence_logs=50
    )


@pytest.fixture(scope="module")
def cluster() -> Iterator[distributed.LocalCluster]:
    with _local_cluster() as running:
        # Each worker process loads the hunt's compiled kernel once, the first time it runs a unit: here.
        with distributed.Client(running.scheduler_address, set_as_default=False) as client:
            client.run(run_unit, Unit(T3, 0, 10, 100, 64, 10**6))
        yield running


@pytest.fixture
def scheduler(cluster: distributed.LocalCluster) -> str:
    return str(cluster.scheduler_address)


def _survey(mapping: AffineMap, bound: int) -> Survey:
    return Survey("m", mapping, bound, 100_000, 4096, 10**10)


def _same(one: Survey, other: Survey) -> bool:
    return (one.ranges, one.cycles, one.reasons) == (other.ranges, other.cycles, other.reasons)


def test_the_dask_engine_gives_the_local_engines_result(scheduler: str, tmp_path: Path) -> None:
    on_cluster, local = _survey(T35, 5000), _survey(T35, 5000)
    with Ledger(tmp_path / "hunt.sqlite") as ledger:
        end = run_hunt(on_cluster, 0, 5000, Plan("dask", scheduler=scheduler, ledger=ledger, unit_size=400))
    run_hunt(local, 0, 5000, Plan("local", jobs=1, unit_size=400))
    units = len(list(grid(0, 5000, 400)))
    assert (end.units_run, end.interrupted) == (units, False)
    assert _same(on_cluster, local)
    reference = hunt(T35, 5000)
    assert list(on_cluster.cycles) == list(reference.cycles)
    assert [c for c in on_cluster.cycles if abs(c) <= 400] == CYCLES_3X_PLUS_5
    assert on_cluster.reasons == reference.reasons


def test_a_recheck_of_every_unit_runs_on_the_other_worker_and_agrees(scheduler: str, tmp_path: Path) -> None:
    path = tmp_path / "hunt.sqlite"
    survey = _survey(T3, 20_000)
    with Ledger(path) as ledger:
        plan = Plan("dask", scheduler=scheduler, ledger=ledger, unit_size=2000, recheck_fraction=1.0)
        end = run_hunt(survey, 0, 20_000, plan)
    units = len(list(grid(0, 20_000, 2000)))
    assert (end.units_run, end.rechecked, end.rechecked_alone, end.disagreements) == (units, units, 0, ())
    with sqlite3.connect(path) as db:
        first = dict(((lo, hi), w) for lo, hi, w in db.execute("SELECT low, high, worker FROM units"))
        again = db.execute("SELECT low, high, worker, agreed FROM rechecks").fetchall()
    assert sorted((lo, hi) for lo, hi, _, _ in again) == sorted(first)
    assert all(agreed == 1 and w != first[lo, hi] for lo, hi, w, agreed in again)
    assert len(set(first.values()) | {w for _, _, w, _ in again}) == 2
    assert list(survey.cycles) == list(hunt(T3, 20_000).cycles) == LAGARIAS_1985


def test_ctrl_c_on_a_cluster_keeps_what_finished_and_resumes(scheduler: str, tmp_path: Path) -> None:
    path = tmp_path / "hunt.sqlite"
    seen: list[int] = []

    def progress(done: int) -> None:
        seen.append(done)
        if len(seen) == 3:  # two units completed
            raise KeyboardInterrupt

    first = _survey(T35, 4000)
    with Ledger(path) as ledger:
        end = run_hunt(first, 0, 4000, Plan("dask", scheduler=scheduler, ledger=ledger, unit_size=500), progress)
    assert end.interrupted and end.units_run == 2
    assert sum(hi - lo + 1 for lo, hi in first.ranges) == 1000  # the two units finished, wherever they lie
    rest = _survey(T35, 4000)
    with Ledger(path) as ledger:
        end = run_hunt(rest, 0, 4000, Plan("dask", scheduler=scheduler, ledger=ledger))
    assert (end.interrupted, end.units_reused, end.units_run) == (False, 2, 7)
    reference = hunt(T35, 4000)
    assert list(rest.cycles) == list(reference.cycles) and rest.reasons == reference.reasons


def test_the_command_runs_on_a_cluster(scheduler: str, capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    common = ["hunt", "3x-plus-5", "--bound", "400", "--catalogue", str(CATALOGUE)]
    assert main([*common, "--jobs", "1"]) == 0
    local = capsys.readouterr().out
    ledger = tmp_path / "hunt.sqlite"
    on_cluster = [*common, "--engine", "dask", "--scheduler", scheduler, "--unit-size", "50", "--ledger", str(ledger)]
    assert main(on_cluster) == 0
    out = capsys.readouterr().out
    assert out == local + f"\nunits: 9 run, 0 read back from the ledger {ledger}\n"
    assert main(on_cluster) == 0  # the same command again: everything is read back
    assert capsys.readouterr().out == local + f"\nunits: 0 run, 9 read back from the ledger {ledger}\n"


def test_without_distributed_the_dask_engine_says_what_to_install(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    monkeypatch.setitem(sys.modules, "distributed", None)  # import distributed now raises ImportError
    with pytest.raises(ClusterUnavailable, match=f"^{re.escape(NO_DISTRIBUTED)}$"):
        run_hunt(_survey(T3, 10), 0, 10, Plan("dask", scheduler="tcp://127.0.0.1:8786"))
    argv = ["hunt", "3x-plus-1", "--bound", "10", "--catalogue", str(CATALOGUE), "--engine", "dask"]
    assert main([*argv, "--scheduler", "tcp://127.0.0.1:8786"]) == 2
    assert capsys.readouterr().err == (
        "periplus: error: --engine dask: expected the package distributed (pip install 'periplus[cluster]'), got none\n"
    )


def test_a_scheduler_that_does_not_answer_is_reported(capsys: pytest.CaptureFixture[str]) -> None:
    # Port 9 (discard) has no scheduler here: the client gives up after the connect timeout.
    argv = ["hunt", "3x-plus-1", "--bound", "10", "--catalogue", str(CATALOGUE), "--engine", "dask"]
    with dask.config.set({"distributed.comm.timeouts.connect": "1s"}):
        assert main([*argv, "--scheduler", "tcp://127.0.0.1:9"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("periplus: error: --engine dask: expected a Dask scheduler at tcp://127.0.0.1:9, got: ")


def test_a_worker_with_another_version_is_refused(scheduler: str) -> None:
    # Every worker pretends to be another release of the program: none of its results may count.
    with distributed.Client(scheduler, set_as_default=False) as client:
        client.run(exec, "import builder.search.cluster as c; c.__version__ = '0.0.1'")
        try:
            mine = re.escape(builder.__version__)
            with pytest.raises(
                ClusterUnavailable,
                match=f"^expected periplus {mine} on the worker tcp://[^ ]+, got periplus 0\\.0\\.1$",
            ):
                run_hunt(_survey(T3, 100), 0, 100, Plan("dask", scheduler=scheduler))
        finally:
            client.run(exec, f"import builder.search.cluster as c; c.__version__ = {builder.__version__!r}")


def test_a_worker_killed_mid_hunt_loses_nothing(cluster: distributed.LocalCluster, tmp_path: Path) -> None:
    # Last in the file: its nanny starts another worker in place of the one killed, which the tests above
    # would only wait for.
    path = tmp_path / "hunt.sqlite"
    bound, size = 200_000, 10_000
    total = starts_in(0, bound)
    seen: list[int] = []
    with Ledger(path) as ledger:
        victim = cluster.workers[0]
        address = victim.worker_address

        def progress(done: int) -> None:
            seen.append(done)
            if len(seen) == 2:  # after the first completed unit
                assert done < total
                os.kill(victim.process.process.pid, signal.SIGKILL)

        survey = _survey(T3, bound)
        end = run_hunt(
            survey, 0, bound, Plan("dask", scheduler=cluster.scheduler_address, ledger=ledger, unit_size=size), progress
        )
        with distributed.Client(cluster.scheduler_address, set_as_default=False) as client:
            # The killed worker is gone (its nanny starts another, at another address).
            deadline = time.monotonic() + 30
            while address in client.nthreads() and time.monotonic() < deadline:
                time.sleep(0.1)
            assert address not in client.nthreads()
    units = list(grid(0, bound, size))
    assert (end.units_run, end.interrupted) == (len(units), False)
    assert len(seen) == len(units) + 1 and seen[-1] == total  # every unit counted once
    with sqlite3.connect(path) as db:
        rows = sorted((int(lo), int(hi)) for lo, hi in db.execute("SELECT low, high FROM units"))
    assert rows == units
    assert survey.ranges == [(0, bound)] and list(survey.cycles) == LAGARIAS_1985 and survey.reasons == {}


def test_a_family_hunt_on_the_cluster_writes_what_a_local_one_writes(scheduler: str, tmp_path: Path) -> None:
    # The family hunt (builder.commands.family) runs unchanged on a cluster: the same map files, entries
    # and claims as on this machine.  Its 3x+5 cycles through 1, 19 and 23 are Belaga and Mignotte's
    # (HAL hal-00129727 (2006), Table 1); 3x+7's through 5 is ../shared/literature.md's "recomputed" row.
    def written(root: Path) -> dict[str, bytes]:
        return {p.relative_to(root).as_posix(): p.read_bytes() for p in root.rglob("*.yaml")}

    family = ["hunt", "--qx", "3", "--d", "5..7", "--bound", "3000", "--no-cache"]
    assert main([*family, "--into", str(tmp_path / "here")]) == 0
    cluster_options = ["--engine", "dask", "--scheduler", scheduler, "--ledger", str(tmp_path / "l.sqlite")]
    assert main([*family, "--into", str(tmp_path / "there"), *cluster_options]) == 0
    there = written(tmp_path / "there")
    assert there == written(tmp_path / "here")
    assert {"cycles/3x-plus-5/19.yaml", "cycles/3x-plus-5/23.yaml", "cycles/3x-plus-7/5.yaml"} <= set(there)
