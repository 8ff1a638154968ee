"""Checking cycle files in forked workers, with the report one process would give.

The verification (builder.catalogue.verify) hands over the files to check, numbered; each worker
checks a share of them in file order and sends back the outcomes, and apart from them, as bytes,
the entries as written (a Share).  The verification loads the outcomes as they come and reads the
entries as written only if they are asked for (WrittenEntries): a build without releases to compare
never reads them.  Loading an outcome costs about two thirds of checking it (measured on the big demo
catalogue of bench/big_catalogue.py), so the gain is the parse and the checks; the verifying process
never holds a node tree, and its record is not scattered among the entries as written.
"""

from __future__ import annotations

import multiprocessing
from collections.abc import Callable, Collection, Iterator, Mapping, Sequence
from pathlib import Path
from typing import Any, Protocol

from builder.catalogue.serial import dumps, loads
from builder.catalogue.written import WrittenEntry
from builder.processes import can_fork, ignore_interrupts

__all__ = ["SHARE_FROM", "Share", "WrittenEntries", "check_shared"]

#: Fewer cycle files than this to check are checked by the verification's own process.
SHARE_FROM = 400
#: A worker checks at most this many files at a time: it holds their outcomes and entries as written (about
#: 12 KB a file) until it sends them, and its memory peaks with the most it held at once.
SHARE_AT_MOST = 400


class _File(Protocol):
    path: Path
    rel: str


#: Checks the file numbered i: its cache key (None if unreadable) and its outcome.
CheckOne = Callable[[int], tuple[Any, Any]]

# What a worker checks files with, and the work it may do ahead: set just before the workers are
# forked, so that they inherit it.
_FORKED: tuple[CheckOne, Sequence[_File], Sequence[Callable[[], Any]]] | None = None


def check_shared(
    check_one: CheckOne,
    files: Sequence[_File],
    todo: list[int],
    jobs: int,
    paths: Mapping[str, Path],
    ahead: Sequence[Callable[[], Any]] = (),
    take: Callable[[Any], None] = lambda result: None,
) -> Iterator[tuple[int, Any, Any, Share | None]]:
    """Check the files numbered ``todo``: (number, key, outcome, share) for each, in no set order.

    With ``jobs`` above 1 and at least SHARE_FROM files, forked workers check them and the outcomes
    come without their entries as written, which ``share`` holds; otherwise this process checks
    them and ``share`` is None.  ``paths`` gives each file's path by its path from the root.

    ``ahead`` is work the caller would do later (the coverage searches, which take seconds each and
    no file): with workers, they do it first, beside the files, and each result is given to ``take``
    here as it comes; without workers, none of it is done.
    """
    jobs = min(jobs, -(-len(todo) // SHARE_FROM))
    if jobs <= 1 or not can_fork():
        for i in todo:
            key, outcome = check_one(i)
            yield i, key, outcome, None
        return
    global _FORKED
    size = max(1, min(SHARE_AT_MOST, -(-len(todo) // (jobs * 8))))
    shares: list[int | list[int]] = [*range(len(ahead)), *(todo[at : at + size] for at in range(0, len(todo), size))]
    _FORKED = (check_one, files, ahead)
    try:
        with multiprocessing.get_context("fork").Pool(jobs, initializer=ignore_interrupts) as pool:
            for data, written in pool.imap_unordered(_check_share, shares):
                if written is None:  # the result of work done ahead
                    take(data)
                    continue
                done = loads(data, paths)
                assert done is not None, "a worker's outcomes load"
                share = Share(written, paths)
                for i, key, outcome in done:
                    yield i, key, outcome, share
    finally:
        _FORKED = None


def _check_share(share: int | list[int]) -> tuple[Any, bytes | None]:
    """In a worker: check the files numbered ``share``; their outcomes and their entries as written, as
    bytes.  Given a number alone, do that piece of the work ahead: its result, and None."""
    assert _FORKED is not None, "a worker runs only in a process forked by check_shared"
    check_one, files, ahead = _FORKED
    if isinstance(share, int):
        return ahead[share](), None
    done, written = [], []
    for i in share:
        key, outcome = check_one(i)
        done.append((i, key, outcome._replace(written=())))
        written.append((i, outcome.written))
    rels = {files[i].path: files[i].rel for i in share}
    return dumps(done, rels), dumps(written, rels)


class Share:
    """The entries as written of some cycle files, as bytes: those one worker checked, as it sent them, or
    those the cache kept for one folder (of the files in ``only``, when given); read when asked for."""

    def __init__(self, data: bytes, paths: Mapping[str, Path], only: Collection[str] | None = None) -> None:
        self.data = data
        self.paths = paths
        self.only = only
        self._read: dict[Any, tuple[WrittenEntry, ...]] | None = None

    def entries(self) -> dict[Any, tuple[WrittenEntry, ...]]:
        """Each file's entries as written: by its number among the cycle files (a worker's), or by its
        path from the catalogue root (the cache's)."""
        if self._read is None:
            read = loads(self.data, self.paths)
            assert read is not None, "entries as written this program kept load"
            self._read = {k: v for k, v in dict(read).items() if self.only is None or k in self.only}
        return self._read

    def written_of(self, i: int) -> tuple[WrittenEntry, ...]:
        return self.entries()[i]

    def forget(self) -> None:
        """Drop what was read (it is read again if asked for)."""
        self._read = None


class WrittenEntries(Mapping[tuple[str, str], WrittenEntry]):
    """The entries as written of a run, with those of the worker-checked cycle files read on first use.

    Read, they take the places they have when one process checks every file: the cycle files' in
    the order of those files, after every other file's.
    """

    def __init__(self, taken: dict[tuple[str, str], WrittenEntry], shares: list[Share], order: dict[str, int]) -> None:
        self._taken = taken
        self._shares = shares
        self._order = order
        self._whole: dict[tuple[str, str], WrittenEntry] | None = None

    def _all(self) -> dict[tuple[str, str], WrittenEntry]:
        if self._whole is None:
            entries = list(self._taken.values())
            for share in self._shares:
                for written in share.entries().values():
                    entries.extend(written)
                share.forget()
            order = self._order
            ranked = sorted(range(len(entries)), key=lambda n: (order.get(entries[n].path, -1), n))
            self._whole = {(entries[n].kind, entries[n].key): entries[n] for n in ranked}
            self._taken, self._shares = {}, []
        return self._whole

    def __getitem__(self, key: tuple[str, str]) -> WrittenEntry:
        return self._all()[key]

    def __iter__(self) -> Iterator[tuple[str, str]]:
        return iter(self._all())

    def __len__(self) -> int:
        return len(self._all())
