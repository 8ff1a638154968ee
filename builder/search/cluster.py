"""Where a hunt runs: local processes or a Dask cluster, with a ledger of completed units and rechecks.

``run_hunt`` covers the magnitudes low..high of a survey's map, as ``builder.search.survey.cover``
does, but in units of work (builder.search.units) handed to an engine:

* ``local``: processes of this machine (one process runs the units itself);
* ``dask``: the workers of a Dask distributed cluster whose scheduler is at ``Plan.scheduler``.
  Each unit is a task with a key made from its fields (``Unit.key``) and ``pure=True``; when a
  worker is lost, the scheduler gives its tasks to another, and a unit that runs twice gives
  the same result twice.  ``distributed`` is imported only for this engine.

With a plan that asks for nothing of this (the local engine, no ledger, no recheck, no unit size)
``run_hunt`` is ``cover`` itself.  Otherwise the range is cut on a fixed grid: unit i holds the
magnitudes i*size .. (i+1)*size - 1 (clipped to low..high), whatever the engine or the number of
processes, so a hunt resumed with other options cuts the same units (the size is the plan's, else
the one the ledger holds for the map, else ``default_unit_size`` of the range).  With a ledger
(builder.search.ledger) every completed unit is recorded as it arrives, and the units it holds
already are not run again (their results are read back and checked against their checksums).

Rechecks.  With ``recheck_fraction`` P, each unit is chosen for a rerun with probability P,
decided by a digest of the seed and the unit's key (so a seed picks the same units again).  A
chosen unit runs again on another worker than the one that ran it, when the cluster has one
(on the local engine, on any of the processes), and the two checksums are compared.  A
disagreement is never merged away: it is in ``HuntEnd.disagreements``, and in the ledger.

On Ctrl-C every completed unit stays in the survey (which may then have gaps; it says which),
and in the ledger.  Nothing here prints; progress goes to a callback with the number of starts
decided so far (those read from the ledger first).
"""

from __future__ import annotations

import collections
import hashlib
import multiprocessing
import os
import queue
import socket
import time
import uuid
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any, Protocol

from builder import __version__
from builder.processes import can_fork, ignore_interrupts
from builder.search.definition import HuntResult
from builder.search.ledger import HuntParameters, Ledger, LedgerConflict
from builder.search.survey import CoverEnd, Survey, cover
from builder.search.units import Unit, UnitResult, run_unit

__all__ = [
    "DEFAULT_UNIT_SIZE",
    "ENGINES",
    "ClusterUnavailable",
    "Disagreement",
    "HuntEnd",
    "Plan",
    "chosen_for_recheck",
    "default_unit_size",
    "grid",
    "run_hunt",
]

ENGINES = ("local", "dask")
#: Magnitudes per unit on the grid, unless the plan or the ledger says otherwise: 2^23 starts, a second
#: or less of one core (a cluster's task should not be much shorter); a smaller range is cut into at
#: least UNITS_AT_LEAST units of at least UNIT_AT_LEAST magnitudes (see ``default_unit_size``).
DEFAULT_UNIT_SIZE = 1 << 22
UNITS_AT_LEAST = 64
UNIT_AT_LEAST = 1 << 10
#: Seconds a rerun waits at the end of a hunt for a worker other than the one that ran the unit first.
RERUN_GRACE = 20.0
#: What the dask engine asks for when ``distributed`` is missing.
NO_DISTRIBUTED = "expected the package distributed (pip install 'periplus[cluster]'), got none"

_RUN, _RECHECK = "run", "recheck"


class ClusterUnavailable(ValueError):
    """The engine cannot run: ``distributed`` is missing, or no scheduler answers at the address."""


@dataclass(frozen=True, slots=True)
class Plan:
    """How to run a hunt: the engine and its processes or scheduler, the ledger, the unit size, rechecks."""

    engine: str = "local"
    jobs: int = 1
    scheduler: str | None = None
    ledger: Ledger | None = None
    unit_size: int | None = None
    recheck_fraction: float = 0.0
    seed: int = 0

    def simple(self) -> bool:
        """Whether the plan is ``cover``'s: local processes, no ledger, no unit size, no recheck."""
        return self.engine == "local" and self.ledger is None and self.unit_size is None and not self.recheck_fraction


@dataclass(frozen=True, slots=True)
class Disagreement:
    """A unit whose two runs gave different checksums (or a run that disagrees with the ledger)."""

    low: int
    high: int
    first: str
    first_worker: str
    second: str
    second_worker: str


@dataclass(frozen=True, slots=True)
class HuntEnd(CoverEnd):
    """How ``run_hunt`` ended: ``CoverEnd``, and the units run, read from the ledger and rechecked."""

    units_run: int = 0
    units_reused: int = 0
    rechecked: int = 0
    #: Rechecks that ran on the worker of the first run, for want of another.
    rechecked_alone: int = 0
    disagreements: tuple[Disagreement, ...] = field(default=())


def grid(low: int, high: int, size: int) -> Iterator[tuple[int, int]]:
    """The units of low..high on the grid of ``size`` magnitudes (made as they are asked for)."""
    for i in range(low // size, high // size + 1):
        yield max(low, i * size), min(high, (i + 1) * size - 1)


def _on_grid(lo: int, hi: int, low: int, high: int, size: int) -> bool:
    i = lo // size
    return lo <= hi and lo == max(low, i * size) and hi == min(high, (i + 1) * size - 1)


def chosen_for_recheck(unit: Unit, fraction: float, seed: int) -> bool:
    """Whether a unit is rerun: a digest of the seed and its key, read as a number in [0, 1), below ``fraction``."""
    if fraction <= 0:
        return False
    draw = int.from_bytes(hashlib.sha256(f"{seed}:{unit.key}".encode()).digest()[:8], "big") / 2**64
    return draw < fraction


# --- engines ---------------------------------------------------------------------------------


class _Engine(Protocol):
    def capacity(self) -> int: ...

    def elsewhere(self, avoid: str, patient: bool) -> bool: ...

    def submit(self, unit: Unit, tag: str, avoid: str) -> bool: ...

    def next(self) -> tuple[str, UnitResult]: ...

    def close(self, abort: bool) -> None: ...


def _local_unit(unit: Unit) -> UnitResult:
    return run_unit(unit, f"{socket.gethostname()}:{os.getpid()}")


class _Local:
    """Processes of this machine (or this process, for one job); a rerun goes to any of them."""

    def __init__(self, jobs: int) -> None:
        self._window = 2 * jobs
        self._todo: collections.deque[tuple[str, Unit]] = collections.deque()
        self._done: queue.SimpleQueue[tuple[str, UnitResult | BaseException]] = queue.SimpleQueue()
        self._pool = None
        if jobs > 1 and can_fork():
            self._pool = multiprocessing.get_context("fork").Pool(jobs, initializer=ignore_interrupts)

    def capacity(self) -> int:
        return self._window

    def elsewhere(self, avoid: str, patient: bool) -> bool:
        return True  # any of the processes will do

    def submit(self, unit: Unit, tag: str, avoid: str) -> bool:
        if self._pool is None:
            self._todo.append((tag, unit))
        else:
            self._pool.apply_async(
                _local_unit,
                (unit,),
                callback=lambda r: self._done.put((tag, r)),
                error_callback=lambda e: self._done.put((tag, e)),
            )
        return False

    def next(self) -> tuple[str, UnitResult]:
        if self._pool is None:
            tag, unit = self._todo.popleft()
            return tag, _local_unit(unit)
        while True:  # a timed wait, so that Ctrl-C is seen at once
            try:
                tag, got = self._done.get(timeout=0.2)
            except queue.Empty:
                continue
            if isinstance(got, BaseException):
                raise got
            return tag, got

    def close(self, abort: bool) -> None:
        if self._pool is not None:
            if abort:
                self._pool.terminate()
            else:
                self._pool.close()
            self._pool.join()


def _dask_unit(unit: Unit, version: str) -> UnitResult:
    """A unit run as a Dask task, named after the worker that runs it, by the client's version of the program."""
    from distributed import get_worker

    try:
        name = get_worker().address
    except ValueError:  # run outside a worker (a client that computes a task itself)
        name = f"{socket.gethostname()}:{os.getpid()}"
    if version != __version__:
        raise ClusterUnavailable(f"expected periplus {version} on the worker {name}, got periplus {__version__}")
    return run_unit(unit, name)


class _Dask:
    """The workers of a Dask cluster; a rerun is kept off the worker that ran the unit when there is another."""

    def __init__(self, address: str) -> None:
        try:
            import distributed
        except ImportError:
            raise ClusterUnavailable(NO_DISTRIBUTED) from None
        dist: Any = distributed  # partly typed
        try:
            self._client: Any = dist.Client(address, set_as_default=False)
        except (OSError, TimeoutError, ValueError) as exc:
            raise ClusterUnavailable(f"expected a Dask scheduler at {address}, got: {exc}") from None
        # Results are fetched by the client's own loop as tasks finish, not one round trip per unit.
        self._done: Any = dist.as_completed(loop=self._client.loop, with_results=True)
        self._tags: dict[str, str] = {}
        self._futures: dict[str, Any] = {}
        # Reruns held to some workers: (unit, the worker to avoid, the workers allowed).
        self._held: dict[str, tuple[Unit, str, frozenset[str]]] = {}
        self._reruns = 0
        self._token = uuid.uuid4().hex[:12]  # a rerun's key is this hunt's alone (a unit's key is shared)
        self._waited = False
        self._checked = self._looked = 0.0
        self._window = 8

    def capacity(self) -> int:
        """Units in flight: four per thread of the cluster (which may grow: asked again every few seconds)."""
        if time.monotonic() - self._checked > 5.0:
            self._checked = time.monotonic()
            self._window = max(8, 4 * sum(self._client.nthreads().values()))
        return self._window

    def elsewhere(self, avoid: str, patient: bool) -> bool:
        # Patient: nothing else is left to do, so wait a while (once per hunt) for a worker to come back.
        deadline = time.monotonic() + (RERUN_GRACE if patient and not self._waited else 0.0)
        while not any(w != avoid for w in self._client.nthreads()):
            if time.monotonic() >= deadline:
                self._waited |= patient
                return False
            time.sleep(0.2)
        return True

    def submit(self, unit: Unit, tag: str, avoid: str) -> bool:
        if tag == _RUN:
            self._add(self._client.submit(_dask_unit, unit, __version__, key=unit.key, pure=True), tag)
            return False
        others = frozenset(w for w in self._client.nthreads() if w != avoid)
        self._reruns += 1
        key = f"{unit.key}-recheck-{self._token}-{self._reruns}"
        # Kept off the first worker when there is another (``workers`` alone would only prefer them).
        where = {"workers": sorted(others), "allow_other_workers": False} if others else {}
        self._add(self._client.submit(_dask_unit, unit, __version__, key=key, pure=True, **where), tag)
        if others:
            self._held[key] = (unit, avoid, others)
        return not others

    def _add(self, future: Any, tag: str) -> None:
        self._tags[future.key] = tag
        self._futures[future.key] = future
        self._done.add(future)

    def next(self) -> tuple[str, UnitResult]:
        while True:
            while not self._done.has_ready():
                time.sleep(0.01)
                self._rescue()
            future, result = next(self._done)
            tag = self._tags.pop(future.key, None)
            if tag is None:  # a rerun cancelled by _rescue
                continue
            self._futures.pop(future.key, None)
            self._held.pop(future.key, None)
            future.release()
            return tag, result

    def _rescue(self) -> None:
        """A rerun held to workers that have all left would wait for ever: send it again to those up now."""
        if not self._held or time.monotonic() - self._looked < 1.0:
            return
        self._looked = time.monotonic()
        up = set(self._client.nthreads())
        for key, (unit, avoid, allowed) in list(self._held.items()):
            if allowed & up:
                continue
            del self._held[key], self._tags[key]
            self._futures.pop(key).cancel()
            self.submit(unit, _RECHECK, avoid)

    def close(self, abort: bool) -> None:
        if abort and self._futures:
            self._client.cancel(list(self._futures.values()))
        self._futures.clear()
        self._client.close()


def _engine(plan: Plan) -> _Engine:
    if plan.engine == "dask":
        if plan.scheduler is None:
            raise ClusterUnavailable("the dask engine: expected the address of a scheduler, got none")
        return _Dask(plan.scheduler)
    return _Local(plan.jobs)


# --- the hunt --------------------------------------------------------------------------------


@dataclass(slots=True)
class _Tally:
    """What a run has so far: results by unit, checksums, rechecks, disagreements."""

    results: list[HuntResult] = field(default_factory=list)
    first: dict[tuple[int, int], tuple[str, str]] = field(default_factory=dict)  # (checksum, worker)
    starts: int = 0
    run: int = 0
    reused: int = 0
    rechecked: int = 0
    alone: int = 0
    disagreements: list[Disagreement] = field(default_factory=list)


def default_unit_size(low: int, high: int) -> int:
    """The unit size of a hunt of low..high that names none: DEFAULT_UNIT_SIZE, or less for a small range."""
    return max(UNIT_AT_LEAST, min(DEFAULT_UNIT_SIZE, -(-(high - low + 1) // UNITS_AT_LEAST)))


def _parameters(survey: Survey, low: int, high: int, plan: Plan) -> HuntParameters:
    size = plan.unit_size
    if size is None and plan.ledger is not None:
        size = plan.ledger.unit_size(survey.mapping)
    if size is None:
        size = default_unit_size(low, high)
    if size < 1:
        raise ValueError(f"expected a unit size of at least 1, got {size}")
    return HuntParameters(
        survey.map_id, survey.mapping, survey.bound, survey.max_steps, survey.max_bits, survey.max_work, size
    )


def run_hunt(survey: Survey, low: int, high: int, plan: Plan, progress: Callable[[int], None] | None = None) -> HuntEnd:
    """Hunt the magnitudes low..high into ``survey`` as ``plan`` says (see the module docstring).

    ``progress`` is called with the number of starts decided so far: first with those the ledger
    holds (0 without one), then after each unit.  Raises ClusterUnavailable when the engine cannot
    run, LedgerMismatch when the ledger holds another hunt of the map.
    """
    if plan.engine not in ENGINES:
        raise ValueError(f"expected an engine among {', '.join(ENGINES)}, got {plan.engine!r}")
    if not 0 <= plan.recheck_fraction <= 1:
        raise ValueError(f"expected a recheck fraction from 0 to 1, got {plan.recheck_fraction}")
    if plan.simple():
        end = cover(survey, low, high, plan.jobs, progress)
        return HuntEnd(end.interrupted, end.met_past_prefix)
    report = progress if progress is not None else (lambda done: None)
    params = _parameters(survey, low, high, plan)
    tally = _Tally()
    extra: collections.deque[tuple[Unit, str]] = collections.deque()  # rechecks waiting
    if plan.ledger is not None:
        plan.ledger.begin(params)
        _reuse(plan.ledger, params, low, high, plan, tally, extra)
    interrupted = False
    engine = _engine(plan)
    aborted = True
    try:
        report(tally.starts)
        _drive(engine, params, low, high, plan, tally, extra, report)
        aborted = False
    except KeyboardInterrupt:
        interrupted = True
    finally:
        engine.close(abort=aborted)
    survey.absorb(tally.results)
    return HuntEnd(interrupted, {}, tally.run, tally.reused, tally.rechecked, tally.alone, tuple(tally.disagreements))


def _reuse(
    ledger: Ledger,
    params: HuntParameters,
    low: int,
    high: int,
    plan: Plan,
    tally: _Tally,
    extra: collections.deque[tuple[Unit, str]],
) -> None:
    """Take the results of the grid's units the ledger holds (checked), and queue the chosen ones' rechecks."""
    known: dict[int, Any] = {}
    for (lo, hi), (checksum, worker) in sorted(ledger.recorded(params.mapping).items()):
        if not _on_grid(lo, hi, low, high, params.unit_size):
            continue
        unit = params.unit(lo, hi)
        tally.results.append(ledger.result(unit, known))
        tally.first[lo, hi] = (checksum, worker)
        tally.starts += unit.starts()
        tally.reused += 1
        if chosen_for_recheck(unit, plan.recheck_fraction, plan.seed):
            extra.append((unit, worker))


def _drive(
    engine: _Engine,
    params: HuntParameters,
    low: int,
    high: int,
    plan: Plan,
    tally: _Tally,
    extra: collections.deque[tuple[Unit, str]],
    report: Callable[[int], None],
) -> None:
    """Keep the engine's window full, units first, then rechecks; take each result as it completes."""
    todo = (params.unit(lo, hi) for lo, hi in grid(low, high, params.unit_size) if (lo, hi) not in tally.first)
    pending = 0
    more = True
    while True:
        while pending < engine.capacity():
            # A rerun waits while the only worker up is the one to avoid, unless nothing else is left to do.
            idle = not (more or pending)
            if extra and (engine.elsewhere(extra[0][1], idle) or idle):
                unit, avoid = extra.popleft()
                tally.alone += engine.submit(unit, _RECHECK, avoid)
                pending += 1
            elif more and (fresh := next(todo, None)) is not None:
                engine.submit(fresh, _RUN, "")
                pending += 1
            elif more:
                more = False
            else:
                break
        if not pending:
            return
        tag, done = engine.next()
        pending -= 1
        if tag == _RUN:
            _take(done, plan, tally, extra)
            report(tally.starts)
        else:
            _compare(done, plan.ledger, tally)


def _take(done: UnitResult, plan: Plan, tally: _Tally, extra: collections.deque[tuple[Unit, str]]) -> None:
    """A unit's first run: into the ledger (a conflict with it is a disagreement) and the results."""
    unit = done.unit
    if plan.ledger is not None:
        try:
            plan.ledger.record(done)
        except LedgerConflict as exc:
            tally.disagreements.append(
                Disagreement(unit.low, unit.high, exc.held, "the ledger", done.checksum, done.worker)
            )
    tally.results.append(done.result)
    tally.first[unit.low, unit.high] = (done.checksum, done.worker)
    tally.starts += unit.starts()
    tally.run += 1
    if chosen_for_recheck(unit, plan.recheck_fraction, plan.seed):
        extra.append((unit, done.worker))


def _compare(done: UnitResult, ledger: Ledger | None, tally: _Tally) -> None:
    """A rerun: its checksum against the first run's, recorded in the ledger; a difference is a disagreement."""
    unit = done.unit
    checksum, worker = tally.first[unit.low, unit.high]
    agreed = done.checksum == checksum
    tally.rechecked += 1
    if ledger is not None:
        ledger.record_recheck(unit, done.worker, done.checksum, agreed)
    if not agreed:
        tally.disagreements.append(Disagreement(unit.low, unit.high, checksum, worker, done.checksum, done.worker))
