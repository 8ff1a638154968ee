"""Work shared among processes: how many to use, and whether they can be forked.

Forked workers inherit what the process holds (copy-on-write) instead of receiving it through a
pipe, which is what makes sharing a big record among them cheap; where fork is missing (not on
Linux or macOS), the callers do their work in one process.
"""

from __future__ import annotations

import multiprocessing
import os
import signal

__all__ = ["can_fork", "default_jobs", "ignore_interrupts"]


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
