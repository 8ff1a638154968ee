"""What a built site says about itself for the next build, and the files a build takes from it.

The manifest ``.periplus-build.json`` lists each task of the build (builder.site.render) with the
digest of its inputs, its pages and the files it wrote, and where each map's pieces lie in the
whole-record exports.  A build that replaces the site reads it first (:func:`read_previous`).

Taking files from the previous site starts early (:class:`HeadStart`): once the build holds the lock
of the site folder and has made its staging folder, a forked process hard-links every file the
manifest lists into the staging folder, while the build verifies the catalogue and builds its views.
When the tasks are run, a task whose digest is the manifest's keeps the files already there; any
other task removes them before it writes its own.  A file is never written through a link: the
writer makes every file new (builder.site.render.Writer), so the site being replaced, which a host
may be serving, is never changed.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import stat
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from builder.processes import Background, WorkerStopped
from builder.site.exports import MapPieces, Spans
from builder.site.pages.common import PageInfo
from builder.site.spool import Spooled

__all__ = [
    "CATALOGUE_JSON",
    "CYCLES_CSV",
    "MANIFEST",
    "Done",
    "HeadStart",
    "Previous",
    "Record",
    "inside",
    "manifest_text",
    "open_folder",
    "read_previous",
    "remove_empty_folders",
    "remove_files",
]

#: What each task of the build wrote, with the digest of its inputs, for the next build.
MANIFEST = ".periplus-build.json"
_FORMAT = "periplus-build/1"
CATALOGUE_JSON, CYCLES_CSV = "data/catalogue.json", "data/cycles.csv"
#: Where each map's pieces lie in data/catalogue.json and data/cycles.csv, and those files' SHA-256.
Record = tuple[dict[str, Spans], tuple[str, str]]


def inside(relative: str) -> bool:
    """Whether ``relative`` is a relative POSIX path with no empty, "." or ".." part: one that stays inside."""
    return "\n" not in relative and _all_inside([relative])


def _all_inside(paths: list[str]) -> bool:
    """Whether every one of ``paths`` (strings with no line break) stays inside, all looked at at once (in C):
    with every path on a line of its own and every slash a line break, no line is empty, "." or "..",
    and no backslash or NUL is left."""
    if not all(isinstance(p, str) for p in paths):
        return False
    if not paths:
        return True
    lines = ("\n" + "\n".join(paths) + "\n").replace("/", "\n")
    return not any(bad in lines for bad in ("\n\n", "\n.\n", "\n..\n", "\\", "\x00"))


def open_folder(path: Path) -> int:
    """A descriptor of the folder ``path``, to make and find files relative to it."""
    return os.open(path, os.O_RDONLY | getattr(os, "O_DIRECTORY", 0) | getattr(os, "O_CLOEXEC", 0))


@dataclass(frozen=True, slots=True)
class Done:
    """What a task left: its digest (None without known inputs), its pages and every file it wrote."""

    digest: str | None
    pages: list[PageInfo]
    files: list[str]
    reused: bool = False  # taken from the previous site, not made again
    sources: str | None = None  # the digest of what its inputs are made from (None: not known)
    spooled: Spooled | None = None  # where a map's task with its data file set the map's export pieces aside


@dataclass(frozen=True, slots=True)
class Previous:
    """The site a build replaces, as its manifest describes it."""

    root: Path
    tasks: dict[str, Done]
    record: Record | None = None  # the layout of its whole-record exports (None: unknown)
    common: str | None = None  # the digest of what every page of it read (None: unknown)

    def pieces(self) -> Callable[[str], MapPieces | None]:
        """The pieces of a map as the previous site's exports hold them; None where they cannot be had."""
        assert self.record is not None
        spans, digests = self.record
        files = [self.root / CATALOGUE_JSON, self.root / CYCLES_CSV]
        try:
            if not all(f.is_file() and not f.is_symlink() for f in files):
                return lambda map_id: None
            catalogue, table = (f.read_bytes() for f in files)
        except OSError:
            return lambda map_id: None
        if tuple(hashlib.sha256(data).hexdigest() for data in (catalogue, table)) != digests:
            return lambda map_id: None  # not the files the manifest describes: made afresh

        def kept(map_id: str) -> MapPieces | None:
            at = spans.get(map_id)
            if at is None or not (at[0] <= at[1] <= len(catalogue) and at[2] <= at[3] <= len(catalogue)):
                return None
            if not at[4] <= at[5] <= len(table):
                return None
            return MapPieces(catalogue[at[0] : at[1]], catalogue[at[2] : at[3]], table[at[4] : at[5]])

        return kept


def read_previous(site: Path | None) -> Previous | None:
    """The manifest of the site a build replaces; None when there is none or it cannot be read."""
    if site is None:
        return None
    try:
        data = json.loads((site / MANIFEST).read_text(encoding="utf-8"))
        if data.get("format") != _FORMAT:
            return None
        new = tuple.__new__  # each row checked below to have PageInfo's four fields
        tasks = {
            name: Done(
                entry["digest"],
                [new(PageInfo, row) for row in entry["pages"]],
                list(entry["files"]),
                sources=entry.get("sources"),
            )
            for name, entry in data["tasks"].items()
        }
        record = _record_of(data.get("record"))
        common = data.get("common")
    except (OSError, ValueError, KeyError, TypeError, IndexError):
        return None
    if not all(len(p) == 4 for done in tasks.values() for p in done.pages):
        return None
    if not _all_inside([f for done in tasks.values() for f in done.files]):
        return None  # not a manifest this tool wrote
    return Previous(site, tasks, record, common if isinstance(common, str) else None)


def _record_of(data: Any) -> Record | None:
    """The layout of the whole-record exports as a manifest gives it; None if it gives none."""
    if data is None:
        return None
    spans: dict[str, Spans] = {}
    for map_id, at in data["spans"].items():
        if len(at) != 6 or not all(isinstance(n, int) and n >= 0 for n in at):
            return None
        spans[str(map_id)] = (at[0], at[1], at[2], at[3], at[4], at[5])
    whole, rows = data["sha256"]
    return spans, (str(whole), str(rows))


def manifest_text(names: list[str], done: list[Done], record: Record, common: str) -> str:
    """The manifest of a build whose tasks ``names`` left ``done``, and each of whose pages read ``common``."""
    tasks = {
        name: {
            "digest": d.digest,
            "pages": [[p.path, p.title, p.listed, p.in_site_map] for p in d.pages],
            "files": d.files,
            **({} if d.sources is None else {"sources": d.sources}),
        }
        for name, d in zip(names, done, strict=True)
        if d.digest is not None
    }
    spans, digests = record
    layout = {"sha256": list(digests), "spans": {k: list(v) for k, v in spans.items()}}
    whole = {"format": _FORMAT, "tasks": tasks, "record": layout, "common": common}
    return json.dumps(whole, sort_keys=True, separators=(",", ":")) + "\n"


def _link_previous(previous: Previous, staging: Path) -> frozenset[str]:
    """Hard-link the files of every task of ``previous`` into ``staging``; the tasks whose files are all there.

    Only regular files are linked (never what a symbolic link put in the old site points to); a task
    with a file that cannot be linked (gone, not a regular file, another file system) has none of its
    files left in ``staging``."""
    linked = []
    source, target = open_folder(previous.root), open_folder(staging)
    try:
        folders: set[str] = set()
        for name, done in previous.tasks.items():
            made: list[str] = []
            try:
                for relative in done.files:
                    if not stat.S_ISREG(os.lstat(relative, dir_fd=source).st_mode):
                        raise OSError(f"{relative}: expected a regular file")
                    _make_folder(target, staging, relative.rpartition("/")[0], folders)
                    os.link(relative, relative, src_dir_fd=source, dst_dir_fd=target, follow_symlinks=False)
                    made.append(relative)
            except OSError:
                remove_files(target, made)
                continue
            linked.append(name)
    finally:
        os.close(source)
        os.close(target)
    return frozenset(linked)


def _make_folder(fd: int, root: Path, folder: str, made: set[str]) -> None:
    if not folder or folder in made:
        return
    try:
        os.mkdir(folder, dir_fd=fd)  # most folders hold one page, below a folder that exists
    except FileExistsError:
        pass
    except FileNotFoundError:
        os.makedirs(os.path.join(root, folder), exist_ok=True)
    made.add(folder)


def remove_files(fd: int, files: Iterable[str]) -> None:
    """Remove ``files`` (relative to the folder ``fd``) where they exist."""
    for relative in files:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(relative, dir_fd=fd)


def remove_empty_folders(fd: int, files: Iterable[str]) -> None:
    """Remove the folders of ``files`` (and theirs, up to the top) that are left empty."""
    folders = set()
    for relative in files:
        folder = relative.rpartition("/")[0]
        while folder and folder not in folders:
            folders.add(folder)
            folder = folder.rpartition("/")[0]
    for folder in sorted(folders, key=lambda f: f.count("/"), reverse=True):
        with contextlib.suppress(OSError):  # not empty (the usual case), or gone
            os.rmdir(folder, dir_fd=fd)


class HeadStart:
    """The site a build replaces and its files, linked into the staging folder ahead of the tasks.

    Made once the build holds the site's lock and has its staging folder: with ``jobs`` above 1 the
    files are linked by a forked process from :meth:`start` on, while the build goes on; else when
    :meth:`linked` asks."""

    def __init__(self, staging: Path, site: Path | None, jobs: int) -> None:
        self.staging = staging
        self.previous = read_previous(site)
        self._jobs = jobs
        self._linked: frozenset[str] | None = None
        self._helper: Background[frozenset[str]] | None = None

    def start(self) -> None:
        """Start linking in a process of its own (with ``jobs`` above 1, if there is a previous site)."""
        if self.previous is not None and self._jobs > 1 and self._helper is None and self._linked is None:
            previous, staging = self.previous, self.staging
            self._helper = Background(lambda: _link_previous(previous, staging))

    def linked(self) -> frozenset[str]:
        """The tasks of the previous site whose files are all in the staging folder (waiting for them)."""
        if self._linked is None:
            self.start()
            if self.previous is None:
                self._linked = frozenset()
            elif self._helper is None:
                self._linked = _link_previous(self.previous, self.staging)
            else:
                try:
                    self._linked = self._helper.result()
                except (WorkerStopped, OSError):  # which files it linked is not known: none of them is used
                    _empty(self.staging)
                    self._linked = frozenset()
        return self._linked

    def stop(self) -> None:
        """Stop linking (the build is given up)."""
        if self._helper is not None:
            self._helper.stop()


def _empty(folder: Path) -> None:
    for entry in os.scandir(folder):
        if entry.is_dir(follow_symlinks=False):
            shutil.rmtree(entry.path)
        else:
            os.unlink(entry.path)
