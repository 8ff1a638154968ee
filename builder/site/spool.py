"""Each map's pieces of the whole-record exports, set aside by the process that made them.

A map's data file (data/maps/<id>.json) and its pieces of data/catalogue.json and data/cycles.csv
hold the same text of each cycle, so the task that writes the one makes the other (whichever
process runs it) and appends it to a spool file of its process in the staging folder
(``.pieces-<pid>``).  The build writes the whole-record exports from the spools once every map's
task is done, copying bytes, and removes them; a build that stops leaves them in its staging
folder, which is removed whole.
"""

from __future__ import annotations

import contextlib
import os
from collections.abc import Iterable
from dataclasses import dataclass

from builder.site.exports import MapPieces

__all__ = ["SPOOL_PREFIX", "Spooled", "remove_spools", "spool", "unspool"]

SPOOL_PREFIX = ".pieces-"
_APPEND = os.O_WRONLY | os.O_CREAT | os.O_APPEND | getattr(os, "O_CLOEXEC", 0)


@dataclass(frozen=True, slots=True)
class Spooled:
    """Where one map's pieces were set aside: the spool file, their start, and the size of each piece."""

    name: str
    at: int
    sizes: tuple[int, int, int]  # of the cycles' items, the map's item and the rows


def spool(folder: int, pieces: MapPieces) -> Spooled:
    """Append ``pieces`` to this process's spool in ``folder`` (a descriptor); say where they are."""
    name = f"{SPOOL_PREFIX}{os.getpid()}"  # one writer per file: no two live processes share a pid
    parts = (pieces.cycles, pieces.line, pieces.rows)
    fd = os.open(name, _APPEND, 0o600, dir_fd=folder)
    try:
        at = os.lseek(fd, 0, os.SEEK_END)
        view = memoryview(b"".join(parts))
        while view:
            view = view[os.write(fd, view) :]
    finally:
        os.close(fd)
    return Spooled(name, at, (len(parts[0]), len(parts[1]), len(parts[2])))


def unspool(folder: int, spooled: Spooled) -> MapPieces:
    """The pieces set aside at ``spooled``."""
    fd = os.open(spooled.name, os.O_RDONLY | getattr(os, "O_CLOEXEC", 0), dir_fd=folder)
    try:
        size = sum(spooled.sizes)
        data = os.pread(fd, size, spooled.at)
    finally:
        os.close(fd)
    assert len(data) == size, f"{spooled.name}: expected {size} bytes at {spooled.at}, got {len(data)}"
    a, b, _ = spooled.sizes
    return MapPieces(data[:a], data[a : a + b], data[a + b :])


def remove_spools(folder: int, spooled: Iterable[Spooled]) -> None:
    """Remove the spool files of ``spooled`` from ``folder``."""
    for name in {s.name for s in spooled}:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(name, dir_fd=folder)
