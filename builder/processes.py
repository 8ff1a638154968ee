"""Work shared among processes: how many to use, and whether they can be forked.

Forked workers inherit what the process holds (copy-on-write) instead of receiving it through a
pipe, which is what makes sharing a big record among them cheap; where fork is missing (not on
Linux or macOS), the callers do their work in one process.
"""

from __future__ import annotations

import contextlib
import multiprocessing
import os
import signal
import traceback
from collections.abc import Callable, Sequence
from multiprocessing.connection import Connection
from typing import TypeVar

__all__ = ["WorkerStopped", "can_fork", "default_jobs", "ignore_interrupts", "share_work"]

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


class WorkerStopped(Exception):
    """A worker process ended without finishing its share: stopped by a signal or by an exception that is
    not an Exception (KeyboardInterrupt, SystemExit), or gone without a word (killed, out of memory)."""


def share_work(order: Sequence[int], jobs: int, run: Callable[[int], R]) -> dict[int, R]:
    """``run(i)`` for every i of ``order``, by this process and ``jobs - 1`` forked workers; results by i.

    Every process takes the next i of ``order`` as it becomes free (a counter in shared memory), so the
    work is balanced whatever each costs; put the costly first.  This process works too instead of
    waiting: each worker inherits what this process holds and copies each page of it that it touches
    (Python writes a reference count on every object it reads), so a process fewer that reads the
    record is a copy fewer.  A worker's exception is raised here again; if a worker is stopped or
    dies, WorkerStopped is raised and the other workers are ended.
    """
    if jobs <= 1 or len(order) < 2 or not can_fork():
        return {i: run(i) for i in order}
    context = multiprocessing.get_context("fork")
    counter = context.Value("q", 0)

    def next_index() -> int | None:
        with counter.get_lock():
            at = counter.value
            counter.value = at + 1
        return order[at] if at < len(order) else None

    workers: list[tuple[int, Connection]] = []
    results: dict[int, R] = {}
    try:
        for _ in range(jobs - 1):
            receive, send = context.Pipe(duplex=False)
            pid = os.fork()
            if pid == 0:  # a worker: its share, then one message with every result, then gone
                _work(receive, send, next_index, run)
            send.close()
            workers.append((pid, receive))
        while (i := next_index()) is not None:
            results[i] = run(i)
        for _, receive in workers:
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
            results.update(payload)
    finally:
        for pid, receive in workers:
            receive.close()
            with contextlib.suppress(OSError):
                os.kill(pid, signal.SIGTERM)  # done by now, unless this process is giving up
            with contextlib.suppress(ChildProcessError):
                os.waitpid(pid, 0)
    return results


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
