"""Cycle files checked by forked workers give the report one process gives, for every fixture catalogue.

The reference is Periplus's own verification in one process (itself checked against published
cycles in test_verify.py): what is tested here is only that sharing the files among processes
changes nothing a reader or a review could see: the model, every problem with its position and
wording, and the entries as written in the order the files were read.  The threshold below which
the verification keeps the work to itself is lowered, so that the small fixtures are shared too, and
each test shows that workers really ran (a test that passed whether or not they did would prove
nothing).
"""

from __future__ import annotations

import gc
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from conftest import BROKEN_CASES, REPO
from test_cache import NO_RECHECK, detail
from test_coverage import with_claim

from builder.catalogue import shared as shared_module
from builder.catalogue import verify as verify_module
from builder.catalogue.cache import VerifyCache
from builder.catalogue.verify import Limits, verify_catalogue
from builder.search import engine as engine_module


@pytest.fixture
def shared(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> Callable[[], list[int]]:
    """Share even a handful of cycle files among workers; gives the ids of the processes that checked files."""
    monkeypatch.setattr(shared_module, "SHARE_FROM", 2)
    log = tmp_path / "checkers"
    log.touch()
    real = verify_module._Verification.check_one

    def counting(run: object, *args: object) -> object:
        with open(log, "a") as fh:  # appended to by every process that checks a file
            fh.write(f"{os.getpid()}\n")
        return real(run, *args)

    monkeypatch.setattr(verify_module._Verification, "check_one", counting)
    return lambda: [int(line) for line in log.read_text().split()]


def both(root: Path, limits: Limits = NO_RECHECK) -> tuple[object, object]:
    return detail(verify_catalogue(root, limits, jobs=1)), detail(verify_catalogue(root, limits, jobs=3))


def test_the_shipped_record_checked_by_three_processes_is_the_one_process_report(shared):
    one, three = both(REPO / "catalogue", Limits())
    assert one == three
    assert set(shared()) - {os.getpid()}  # checked by workers too


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_every_broken_case_checked_by_workers_is_the_one_process_report(case, catalogue, shared):
    root = catalogue(case)
    one, three = both(root)
    assert one == three
    assert set(shared()) - {os.getpid()}  # checked by workers too


def test_a_cache_filled_by_workers_gives_one_process_its_report(catalogue, tmp_path, shared):
    # The workers send the entries as written apart from the outcomes; the cache must still keep them whole.
    root = catalogue("duplicate-cycle")
    cold = detail(verify_catalogue(root, NO_RECHECK, jobs=1))
    with VerifyCache.open(tmp_path / "cache") as cache:
        first = detail(verify_catalogue(root, NO_RECHECK, cache, jobs=3))
    assert set(shared()) - {os.getpid()}  # checked by workers too
    with VerifyCache.open(tmp_path / "cache") as cache:
        warm = detail(verify_catalogue(root, NO_RECHECK, cache, jobs=1))
    assert first == cold == warm


def test_a_cache_filled_by_workers_reads_each_workers_entries_once(tmp_path, monkeypatch, shared):
    # Each share of files sends its entries as written as one piece of bytes; filling the cache reads
    # each piece once, however many files it holds (reading it again for every share would double the cost).
    decoded: list[int] = []
    real = shared_module.Share.entries

    def counting(share: shared_module.Share) -> object:
        if share._read is None:
            decoded.append(id(share))
        return real(share)

    monkeypatch.setattr(shared_module.Share, "entries", counting)
    with VerifyCache.open(tmp_path / "cache") as cache:
        report = verify_catalogue(REPO / "catalogue", NO_RECHECK, cache, jobs=2)
    assert report.ok
    assert decoded and len(decoded) == len(set(decoded))


@pytest.fixture
def searchers(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> Callable[[], list[int]]:
    """The ids of the processes that ran a coverage search, one per search."""
    log = tmp_path / "searchers"
    log.touch()
    real = engine_module.hunt_range

    def counting(*args: Any, **kwargs: Any) -> Any:
        with open(log, "a") as fh:  # appended to by every process that searches
            fh.write(f"{os.getpid()}\n")
        return real(*args, **kwargs)

    monkeypatch.setattr(engine_module, "hunt_range", counting)  # imported from it when a search runs
    return lambda: [int(line) for line in log.read_text().split()]


def test_coverage_searches_run_ahead_by_workers_give_the_one_process_report(catalogue, shared, searchers):
    # A true claim, and a claim that the catalogue lacks a cycle for: the workers search both while
    # they check the files, and the recheck finds their searches kept (it searches nothing itself).
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    # 3x+1 on Z has a cycle through -17 (Lagarias 1985 via literature.md, status memory): a claim to 1000
    # without its file is false.
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    one = detail(verify_catalogue(root, Limits(), jobs=1))
    assert searchers() and set(searchers()) == {os.getpid()}  # one process: it searched itself
    before = len(searchers())
    three = detail(verify_catalogue(root, Limits(), jobs=3))
    assert one == three
    assert "coverage-missing-cycle" in {problem[5] for problem in three[2]}
    ahead = searchers()[before:]
    assert len(ahead) == before and os.getpid() not in ahead  # every search, all by workers
    assert set(shared()) - {os.getpid()}


def test_searches_the_cache_keeps_are_not_run_ahead(catalogue, tmp_path, shared, searchers):
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    with VerifyCache.open(tmp_path / "cache") as cache:
        first = detail(verify_catalogue(root, Limits(), cache, jobs=3))
    ran = len(searchers())
    assert ran
    with VerifyCache.open(tmp_path / "cache") as cache:
        again = detail(verify_catalogue(root, Limits(), cache, jobs=3))
    assert first == again
    assert len(searchers()) == ran  # all kept: nothing searched, ahead or not


def test_checking_a_cycle_file_leaves_no_reference_cycle(monkeypatch):
    # A worker checks files with the cycle collector paused (builder.processes.no_cycle_collection), so what
    # a check leaves behind must be freed by reference counting alone: a cycle of references would stay
    # until the worker ends (gc.DEBUG_SAVEALL keeps what the collector finds, instead of freeing it).
    checked: list[object] = []
    real = verify_module._Verification.check_one

    def collected(run: object, *args: object) -> object:
        gc.collect()  # what was made before the check
        gc.set_debug(gc.DEBUG_SAVEALL)
        try:
            outcome = real(run, *args)
            checked.append(outcome)
            found = gc.collect()
            assert found == 0, f"a check left {found} objects in reference cycles: {gc.garbage[:10]}"
        finally:
            gc.set_debug(0)
            gc.garbage.clear()
        return outcome

    monkeypatch.setattr(verify_module._Verification, "check_one", collected)
    gc.collect()
    gc.freeze()  # each collection looks at what was made since: what the check made
    try:
        report = verify_catalogue(REPO / "catalogue", NO_RECHECK, jobs=1)
    finally:
        gc.unfreeze()
    assert report.ok and len(checked) > 600  # every cycle file of the shipped record
