"""builder.processes.share_work: the work shared with forked workers gives what one process gives.

What is checked is the contract a build relies on (facts of the trade, common practice, no source):
every item is done exactly once whoever does it, results come back by item, and a worker that
fails makes the caller fail instead of waiting forever or returning a partial result.
"""

from __future__ import annotations

import os
import time

import pytest
from hypothesis import given
from hypothesis import strategies as st

from builder.processes import Background, WorkerStopped, segments, share_work


def square(i: int) -> tuple[int, int]:
    time.sleep(0.002)  # long enough for the forked workers to start and take their share
    return i * i, os.getpid()


@pytest.mark.parametrize("jobs", [1, 2, 3, 5])
def test_every_item_is_done_once_and_the_results_are_those_of_one_process(jobs: int) -> None:
    order = list(range(200))[::-1]
    done = share_work(order, jobs, square)
    assert {i: v for i, (v, _) in done.items()} == {i: i * i for i in range(200)}
    workers = {pid for _, pid in done.values()}
    assert os.getpid() in workers  # this process works too
    if jobs > 1:
        assert len(workers) > 1 or len(order) < jobs  # and so do the forked ones (200 items are plenty)


@pytest.mark.parametrize("jobs", [1, 2, 3])
def test_the_work_that_reads_everything_is_done_here_first_or_last(jobs: int) -> None:
    home, last = [500, 501, 502], [600]
    started = []

    def noted(i: int) -> tuple[int, int]:
        started.append(i)  # in this process's memory only: the items this process did, in order
        return square(i)

    done = share_work(list(range(200)), jobs, noted, cost=lambda i: 1 + i % 7, home=home, last=last)
    assert sorted(done) == [*range(200), *home, *last]
    assert {done[i][1] for i in home + last} == {os.getpid()}
    assert started[:3] == home  # first
    assert started[-1] == 600  # and last, once the workers are done


@given(
    st.lists(st.integers(min_value=1, max_value=50), min_size=0, max_size=60),
    st.integers(min_value=1, max_value=5),
    st.integers(min_value=0, max_value=200),
)
def test_the_runs_are_neighbours_in_order_and_of_about_equal_cost(costs: list[int], jobs: int, head: int) -> None:
    # The rule checked: each process gets one run of neighbouring items (so it reads one part of the
    # data), every item once, and no run exceeds its equal share by more than one item's cost.
    order = list(range(len(costs)))
    runs = segments(order, jobs, lambda i: costs[i], head)
    assert len(runs) == jobs
    assert [i for run in runs for i in run] == order
    fair = (head + sum(costs)) / jobs
    spent = [sum(costs[i] for i in run) + (head if k == 0 else 0) for k, run in enumerate(runs)]
    for k, run in enumerate(runs[:-1]):
        assert spent[k] <= fair + (costs[run[-1]] if run else 0) or (k == 0 and not run)


def test_a_workers_exception_is_raised_here() -> None:
    parent = os.getpid()

    def failing(i: int) -> int:
        if os.getpid() != parent:
            raise ValueError(f"expected a number, got item {i}")
        time.sleep(0.002)
        return i

    with pytest.raises(ValueError, match="expected a number, got item") as raised:
        share_work(list(range(400)), 2, failing)
    assert "raised in a worker process" in raised.value.__notes__[0]
    assert "in failing" in raised.value.__notes__[0]  # with the worker's own traceback


def test_a_worker_that_dies_makes_the_caller_fail() -> None:
    parent = os.getpid()

    def dying(i: int) -> int:
        if os.getpid() != parent:
            os._exit(9)  # as a worker killed by the system would vanish
        time.sleep(0.002)
        return i

    with pytest.raises(WorkerStopped, match="ended without a word"):
        share_work(list(range(400)), 2, dying)


def test_an_interrupted_worker_interrupts_the_caller() -> None:
    parent = os.getpid()

    def interrupted(i: int) -> int:
        if os.getpid() != parent:
            raise KeyboardInterrupt
        time.sleep(0.002)
        return i

    with pytest.raises(KeyboardInterrupt):
        share_work(list(range(400)), 2, interrupted)


def test_a_background_result_is_ready_only_once_its_process_is_done(tmp_path) -> None:
    go = tmp_path / "go"

    def waiting() -> int:
        while not go.exists():  # until the test says so: no timing involved
            time.sleep(0.01)
        return 17

    helper = Background(waiting)
    try:
        assert not helper.ready()
        go.touch()
        for _ in range(3000):  # at most 30 s; a done process is ready at once
            if helper.ready():
                break
            time.sleep(0.01)
        assert helper.ready()
        assert helper.result() == 17
        assert helper.ready()  # gone: asking does not wait
    finally:
        helper.stop()


# --- keep_to_the_end, and the program that ends with its command --------------------------------------

_PROGRAM = """
import sys, weakref
import builder.commands.main
from builder.processes import keep_to_the_end

class Big:
    pass

def command():
    big = Big()
    weakref.finalize(big, print, "freed", flush=True)
    if sys.argv[1] == "keep":
        keep_to_the_end(big)
    print("done", end="")  # buffered: flushed before the process ends either way
    return 3
line = sys.modules["builder.commands.main"]
line.main = command  # the program's command line, whatever it runs
line.program()
"""


@pytest.mark.parametrize(("keep", "out"), [("keep", "done"), ("free", "donefreed\n")])
def test_a_program_ends_with_its_command_s_status_and_output_and_what_it_kept_is_not_freed(keep: str, out: str):
    # Kept to the end, the object is dropped with the process (its finalizer never runs); else the
    # program exits as Python does, freeing it (the finalizer runs).  The status and output are the same.
    import subprocess
    import sys

    ran = subprocess.run([sys.executable, "-c", _PROGRAM, keep], capture_output=True, text=True, timeout=60)
    assert (ran.returncode, ran.stdout, ran.stderr) == (3, out, "")


def test_nothing_is_kept_outside_a_program() -> None:
    from builder import processes

    processes.keep_to_the_end(object())
    assert processes._KEPT is None
