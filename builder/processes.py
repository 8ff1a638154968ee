"""Work shared among processes: how many to use, whether they can be forked, how work is shared out
among them (share_work), and the memory a process holds before it forks (the cycle collector paused
while a big model is built, free memory given back) and when it ends (keep_to_the_end).

Forked workers inherit what the process holds (copy-on-write) instead of receiving it through a
pipe, which is what makes sharing a big record among them cheap; where fork is missing (not on
Linux or macOS), the callers do their work in one process.
"""

from __future__ import annotations

import contextlib
import ctypes
import ctypes.util
import gc
import multiprocessing
import os
import signal
import traceback
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from functools import partial
from multiprocessing.connection import Connection
from typing import Any, Generic, TypeVar

__all__ = [
    "Background",
    "WorkerStopped",
    "can_fork",
    "default_jobs",
    "ignore_interrupts",
    "keep_to_the_end",
    "kept_to_the_end",
    "no_cycle_collection",
    "return_free_memory",
    "segments",
    "share_work",
]

R = TypeVar("R")


def default_jobs() -> int:
    """How many processes a command uses unless told: the cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def can_fork() -> bool:
    """Whether worker processes can be forked here."""
    return "fork" in multiprocessing.get_all_start_methods()


def ignore_interrupts() -> None:
    """A worker's start: Ctrl-C reaches every process of the terminal's group, and the parent handles it."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


@contextmanager
def no_cycle_collection() -> Iterator[None]:
    """Pause Python's collector of reference cycles while a big model is built (the verified record,
    then the site's records).

    The model is millions of objects that all stay alive, and the collector would traverse them again
    and again as they accumulate (a full pass each time the heap grows by a quarter: half the time of
    verifying 50,000 cycles, and 1.5 s of a rebuild).  Building it makes almost no reference cycles
    (450 objects at 50,000 cycles); memory is freed by reference counting as usual.  At the end the
    objects made meanwhile are moved to the oldest generation at once (``gc.freeze`` then
    ``gc.unfreeze``), without a traversal: re-enabled as they were, the collector would traverse them
    all straight away.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        gc.freeze()
        gc.unfreeze()
        if enabled:
            gc.enable()


def return_free_memory() -> None:
    """Give the memory that the C allocator holds free back to the system (glibc's malloc_trim), where
    there is such a call: before forking, so that this process's resident set is what it uses."""
    name = ctypes.util.find_library("c")
    trim = getattr(ctypes.CDLL(name), "malloc_trim", None) if name else None
    if trim is not None:
        trim(0)


#: What keep_to_the_end keeps, inside kept_to_the_end; None: nothing is kept.
_KEPT: list[object] | None = None


def keep_to_the_end(*objects: object) -> None:
    """Keep ``objects`` until the process ends, when it is a program that ends with its command (inside
    :func:`kept_to_the_end`); anywhere else (a test, a library's caller) nothing is kept.

    A build's model and site records are millions of objects: freeing them one by one takes a third of
    a second at 50,000 cycles, and ending the process with them takes no time."""
    if _KEPT is not None:
        _KEPT.extend(objects)


@contextmanager
def kept_to_the_end() -> Iterator[list[object]]:
    """Within, keep_to_the_end keeps what it is given, in the list given here: the caller (a program's
    entry point) ends the process at once (``os._exit``) when the list is not empty."""
    global _KEPT
    _KEPT = []
    try:
        yield _KEPT
    finally:
        _KEPT = None


class WorkerStopped(Exception):
    """A worker process ended without finishing its share: stopped by a signal or by an exception that is
    not an Exception (KeyboardInterrupt, SystemExit), or gone without a word (killed, out of memory)."""


class Background(Generic[R]):
    """``run()`` done in a forked process while this one goes on (where fork is missing, in this one when
    its result is asked for); :meth:`result` waits for it, :meth:`stop` ends it unasked.

    The process is forked when this is made: what it reads is what this process holds then."""

    def __init__(self, run: Callable[[], R]) -> None:
        self._run: Callable[[], R] | None = None
        self._pid: int | None = None
        if not can_fork():
            self._run = run
            return
        receive, send = multiprocessing.get_context("fork").Pipe(duplex=False)
        pid = os.fork()
        if pid == 0:
            _work(receive, send, partial(next, iter((0,)), None), lambda _: run())
        send.close()
        self._pid, self._receive = pid, receive

    def result(self) -> R:
        """What ``run()`` returned; what it raised is raised here (WorkerStopped if its process was stopped)."""
        if self._pid is None:
            assert self._run is not None, "a result is asked for once"
            run, self._run = self._run, None
            return run()
        try:
            return _results_of(self._receive)[0]  # type: ignore[no-any-return]
        finally:
            self.stop()

    def ready(self) -> bool:
        """Whether :meth:`result` would not wait for the process (it is done, or gone); True without one."""
        return self._pid is None or self._receive.poll()

    def stop(self) -> None:
        """End the process if it is still running (its work is not needed), and reap it."""
        self._run = None
        if self._pid is None:
            return
        pid, self._pid = self._pid, None
        self._receive.close()
        with contextlib.suppress(OSError):
            os.kill(pid, signal.SIGKILL)  # done by now, unless its work is abandoned
        with contextlib.suppress(ChildProcessError):
            os.waitpid(pid, 0)


def segments(order: Sequence[int], jobs: int, cost: Callable[[int], int], head: int = 0) -> list[list[int]]:
    """``order`` cut into ``jobs`` runs of neighbouring items of about equal cost (some may be empty);
    the first run counts ``head`` as already spent (the work its process does before its run)."""
    total = head + sum(cost(i) for i in order)
    runs: list[list[int]] = [[] for _ in range(jobs)]
    spent, at = head, 0
    for i in order:
        while at < jobs - 1 and spent >= total * (at + 1) / jobs:
            at += 1
        runs[at].append(i)
        spent += cost(i)
    return runs


def share_work(
    order: Sequence[int],
    jobs: int,
    run: Callable[[int], R],
    *,
    cost: Callable[[int], int] | None = None,
    home: Sequence[int] = (),
    last: Sequence[int] = (),
) -> dict[int, R]:
    """``run(i)`` for every i of ``home``, ``order`` and ``last``, by this process and ``jobs - 1`` forked workers;
    results by i.

    Each worker inherits what this process holds and copies each page of it that it touches (Python
    writes a reference count on every object it reads), so the work is shared to keep what each
    process reads apart:

    - ``home`` is the work that reads all the data (exports, site-wide pages): only this process does
      it, first, since the memory is its own anyway; this process works instead of waiting, so a
      process fewer reads the data, which is a copy fewer;
    - ``order`` is the rest, in the order of the data it reads (neighbouring items read neighbouring
      memory).  It is cut into one run of neighbouring items per process, of about equal ``cost``
      (default 1 each) counting ``home`` in this process's run, and each process does its own run,
      the costliest first;
    - a process whose run is done takes the cheapest item left in the run with most items left, so
      the work stays balanced however the costs were guessed, and ends on small items;
    - ``last`` is work this process does once every worker has ended: the work that needs the most
      memory while it runs, which is then not added to the copies the workers hold.

    A worker's exception is raised here again; if a worker is stopped or dies, WorkerStopped is raised
    and the other workers are ended.
    """
    price = cost if cost is not None else (lambda i: 1)
    results: dict[int, R] = {}
    if jobs <= 1 or len(order) < 2 or not can_fork():
        results.update((i, run(i)) for i in home)
        results.update((i, run(i)) for i in order)
        results.update((i, run(i)) for i in last)
        return results
    context = multiprocessing.get_context("fork")
    runs = _Runs(segments(order, jobs, price, sum(map(price, home))), price, context)
    workers: list[tuple[int, Connection]] = []
    try:
        for k in range(1, jobs):
            receive, send = context.Pipe(duplex=False)
            pid = os.fork()
            if pid == 0:  # a worker: its share, then one message with every result, then gone
                _work(receive, send, partial(runs.take, k), run)
            send.close()
            workers.append((pid, receive))
        for i in home:
            results[i] = run(i)
        while (item := runs.take(0)) is not None:
            results[item] = run(item)
        for _, receive in workers:
            results.update(_results_of(receive))
    finally:
        for pid, receive in workers:
            receive.close()
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGTERM)  # done by now, unless this process is giving up
            with contextlib.suppress(ChildProcessError):
                os.waitpid(pid, 0)
    results.update((i, run(i)) for i in last)
    return results


class _Runs:
    """The runs of items of share_work, in shared memory: the process of run k takes its items from the
    front, costliest first; a process whose run is done takes from the back of the run with most left."""

    def __init__(self, runs: list[list[int]], price: Callable[[int], int], context: Any) -> None:
        self.runs: list[list[int]] = [sorted(r, key=lambda i: (-price(i), i)) for r in runs]
        # Run k's items left are runs[k][bounds[2k]:bounds[2k + 1]].
        self.bounds = context.Array("q", [n for r in self.runs for n in (0, len(r))])

    def take(self, me: int) -> int | None:
        bounds = self.bounds
        with bounds.get_lock():
            lo, hi = int(bounds[2 * me]), int(bounds[2 * me + 1])
            if lo < hi:
                bounds[2 * me] = lo + 1
                return self.runs[me][lo]
            left = [bounds[2 * k + 1] - bounds[2 * k] for k in range(len(self.runs))]
            most = max(range(len(self.runs)), key=lambda k: left[k])
            if left[most] <= 0:
                return None
            bounds[2 * most + 1] -= 1
            return self.runs[most][int(bounds[2 * most + 1])]


def _results_of(receive: Connection) -> dict[int, Any]:
    """A worker's results, from its one message; what stopped it, raised here."""
    try:
        kind, payload = receive.recv()
    except EOFError:
        raise WorkerStopped("a worker process ended without a word (killed, or out of memory)") from None
    if kind == "raised":
        raise payload
    if kind == "stopped" and payload == "KeyboardInterrupt":
        raise KeyboardInterrupt
    if kind == "stopped":
        raise WorkerStopped(f"a worker process was stopped ({payload})")
    assert kind == "done", f"expected a worker's results, got {kind!r}"
    return payload  # type: ignore[no-any-return]


def _work(receive: Connection, send: Connection, next_index: Callable[[], int | None], run: Callable[[int], R]) -> None:
    """A worker's life: take work until there is none left, send the results (or what stopped it), exit."""
    ignore_interrupts()
    receive.close()
    try:
        done = {}
        while (i := next_index()) is not None:
            done[i] = run(i)
        message: tuple[str, object] = ("done", done)
    except Exception as exc:
        exc.add_note("raised in a worker process:\n" + traceback.format_exc().rstrip())  # kept by pickle
        message = ("raised", exc)
    except BaseException as exc:
        message = ("stopped", type(exc).__name__)
    try:
        send.send(message)
    except Exception as exc:  # an exception that cannot be pickled
        with contextlib.suppress(Exception):
            send.send(("raised", RuntimeError(f"in a worker process: {exc!r} ({message[1]!r})")))
    finally:
        os._exit(0)
