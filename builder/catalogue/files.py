"""The files of a catalogue: where they come from, which kind of entry each is, and their parsed nodes.

A catalogue is read from a *source*: a folder on disk (:class:`FolderSource`) or a tree held in
memory (:class:`TreeSource`, which the history stage fills from git objects, so a release is
verified without writing it anywhere).  Both answer the same three questions (what is at a path,
what a folder lists, what a file holds), so the layout rules below apply to either in the same way.
Nothing here interprets a value: files become positioned YAML nodes (:mod:`builder.catalogue.nodes`).
"""

from __future__ import annotations

import hashlib
import marshal
import os
import re
import stat
import time
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from enum import StrEnum
from pathlib import Path
from typing import Protocol

from builder.catalogue.nodes import Node, parse_yaml, problem_at
from builder.errors import CatalogueUnreadable, Problem

__all__ = [
    "CYCLES_FOLDER",
    "ID_PATTERN",
    "SETTLE_NS",
    "FolderSource",
    "PathKind",
    "RawCatalogue",
    "RawFile",
    "Source",
    "Stamp",
    "Survey",
    "TreeSource",
    "load_catalogue",
    "parse_bytes",
    "read_bytes",
    "read_file",
    "read_survey",
    "scan_catalogue",
    "scan_source",
    "take_survey",
]

#: Entry ids are file stems: lowercase letters, digits and hyphens.
ID_PATTERN = re.compile(r"[a-z0-9][a-z0-9-]*")


class PathKind(StrEnum):
    FILE = "file"
    FOLDER = "folder"
    LINK = "link"  # a symbolic link, never followed
    OTHER = "other"  # a device, a pipe...
    MISSING = "missing"


class Source(Protocol):
    """Where a catalogue's files come from; paths are relative to the catalogue root, POSIX style ("." for the root)."""

    @property
    def root(self) -> Path:
        """The catalogue root, as problems name it."""
        ...

    def kind(self, rel: str) -> PathKind: ...

    def listing(self, rel: str) -> list[tuple[str, PathKind]]:
        """The names in a folder with their kinds, sorted by name."""
        ...

    def read(self, rel: str) -> bytes:
        """A file's bytes; raises OSError when it cannot be read."""
        ...

    def stamp(self, rel: str) -> Stamp | None:
        """What tells a file's bytes apart without reading them, once they have been read (see :data:`Stamp`);
        None when there is no such thing, or the file changed too lately for it to be trusted."""
        ...

    def stamps(self, rels: Sequence[str]) -> list[Stamp | None]:
        """The stamp of each file of ``rels``, in order, as :meth:`stamp` gives it."""
        ...


#: A regular file's size, modification and change times (ns), inode and device.  Every write to a file
#: sets its change time to the clock's time, which no program but the system can set; so a file whose
#: stamp is the one it had when its bytes were read, then already SETTLE_NS old, has those bytes still
#: (common practice, no source: version control systems compare such stamps to skip reading files).
#: A file changed within SETTLE_NS of being looked at gets no stamp: a write in the same tick of a
#: coarse clock could leave its stamp unchanged.
Stamp = tuple[int, int, int, int, int]
SETTLE_NS = 3_000_000_000
#: The folder of the cycle files, from the root: each map's are in ``cycles/<map id>/``.
CYCLES_FOLDER = "cycles"


@dataclass(frozen=True, slots=True)
class Survey:
    """A catalogue folder's listings of maps/, cycles/ and each cycles/<folder>/, as FolderSource.listing
    gives them, and the stamps of the files they list, taken in one pass (:func:`take_survey`)."""

    listings: dict[str, list[tuple[str, PathKind]]]
    stamps: dict[str, Stamp | None]


def take_survey(root: Path) -> bytes:
    """A :class:`Survey` of the catalogue folder at ``root``, as bytes (:func:`read_survey` reads them back):
    taken by a process of its own while a build goes on (builder.site.build).  A folder that cannot be
    listed is left out; the scan lists it again, and says what is wrong."""
    source = FolderSource(root)
    listings: dict[str, list[tuple[str, str]]] = {}

    def take(folder: str) -> list[tuple[str, PathKind]]:
        try:
            entries = source.listing(folder)
        except OSError:
            return []
        listings[folder] = [(name, kind.value) for name, kind in entries]
        return entries

    take("maps")
    for name, kind in take(CYCLES_FOLDER):
        if kind is PathKind.FOLDER:
            take(f"{CYCLES_FOLDER}/{name}")
    files = [f"{folder}/{name}" for folder, entries in listings.items() for name, kind in entries if kind == "file"]
    return marshal.dumps((listings, dict(zip(files, source.stamps(files), strict=True))))


def read_survey(data: bytes) -> Survey:
    """The :class:`Survey` that :func:`take_survey` wrote as ``data`` (bytes of this program's own, from its helper)."""
    listings, stamps = marshal.loads(data)
    kinds = {kind.value: kind for kind in PathKind}
    found = {folder: [(name, kinds[kind]) for name, kind in entries] for folder, entries in listings.items()}
    return Survey(found, stamps)


@dataclass(frozen=True, slots=True)
class FolderSource:
    """A catalogue folder on disk; with a ``survey``, the listings and stamps it holds are taken from it."""

    root: Path
    survey: Survey | None = None

    def kind(self, rel: str) -> PathKind:
        if rel == ".":  # the root itself may be reached through a link
            if self.root.is_dir():
                return PathKind.FOLDER
            return PathKind.FILE if self.root.exists() else PathKind.MISSING
        return _kind_on_disk(self.root / rel)

    def listing(self, rel: str) -> list[tuple[str, PathKind]]:
        listed = self.survey.listings.get(rel) if self.survey is not None else None
        if listed is not None:
            return list(listed)
        with os.scandir(self.root / rel) as entries:
            found = sorted(entries, key=lambda e: e.name)
        return [(e.name, _kind_of_entry(e)) for e in found]

    def read(self, rel: str) -> bytes:
        # os.read rather than open(): no buffered file object per file (a cache hit reads little else).
        fd = os.open(os.path.join(self.root, rel), os.O_RDONLY)
        try:
            chunks = []
            while chunk := os.read(fd, 1 << 20):
                chunks.append(chunk)
        finally:
            os.close(fd)
        return chunks[0] if len(chunks) == 1 else b"".join(chunks)

    def stamp(self, rel: str) -> Stamp | None:
        if self.survey is not None and rel in self.survey.stamps:
            return self.survey.stamps[rel]
        try:
            st = os.lstat(os.path.join(self.root, rel))
        except OSError:
            return None
        if not stat.S_ISREG(st.st_mode) or max(st.st_mtime_ns, st.st_ctime_ns) > time.time_ns() - SETTLE_NS:
            return None
        return (st.st_size, st.st_mtime_ns, st.st_ctime_ns, st.st_ino, st.st_dev)

    def stamps(self, rels: Sequence[str]) -> list[Stamp | None]:
        surveyed = self.survey.stamps if self.survey is not None else {}
        if surveyed and all(rel in surveyed for rel in rels):
            return [surveyed[rel] for rel in rels]
        # As stamp does for each, with what it looks up once looked up once for all (a build stamps 50,000
        # files).  The clock is read first: a file changed while the others are looked at is newer than
        # it, so it gets no stamp, as with a clock read for each file.
        settled = time.time_ns() - SETTLE_NS
        top = os.path.join(self.root, "")
        lstat, regular = os.lstat, stat.S_ISREG
        out: list[Stamp | None] = []
        add = out.append
        for rel in rels:
            try:
                st = lstat(top + rel)
            except OSError:
                add(None)
                continue
            changed, made = st.st_mtime_ns, st.st_ctime_ns
            settled_file = regular(st.st_mode) and changed <= settled and made <= settled
            add((st.st_size, changed, made, st.st_ino, st.st_dev) if settled_file else None)
        return out


def _kind_on_disk(path: Path) -> PathKind:
    if path.is_symlink():
        return PathKind.LINK
    if path.is_dir():
        return PathKind.FOLDER
    if path.is_file():
        return PathKind.FILE
    return PathKind.OTHER if path.exists() else PathKind.MISSING


def _kind_of_entry(entry: os.DirEntry[str]) -> PathKind:
    if entry.is_symlink():
        return PathKind.LINK
    if entry.is_dir():
        return PathKind.FOLDER
    return PathKind.FILE if entry.is_file() else PathKind.OTHER


class TreeSource:
    """A catalogue held in memory: files by relative path, and the paths that are links or empty folders.

    Other folders are implied by what lies below them, as in a git tree.  A tree whose root is
    itself a file (a revision where the catalogue's path names a file) has that file at ``.``.
    """

    def __init__(
        self,
        root: Path,
        files: Mapping[str, bytes],
        links: Iterable[str] = (),
        folders: Iterable[str] = (),
    ) -> None:
        self._root = root
        self._files = dict(files)
        self._kinds: dict[str, PathKind] = {}
        self._children: dict[str, set[str]] = {}
        for paths, kind in ((self._files, PathKind.FILE), (links, PathKind.LINK), (folders, PathKind.FOLDER)):
            for path in paths:
                self._kinds[path] = kind
                child = path
                while child != ".":
                    parent, _, name = child.rpartition("/")
                    parent = parent or "."
                    self._kinds.setdefault(parent, PathKind.FOLDER)
                    self._children.setdefault(parent, set()).add(name)
                    child = parent
        self._kinds.setdefault(".", PathKind.FOLDER)

    @property
    def root(self) -> Path:
        return self._root

    def kind(self, rel: str) -> PathKind:
        return self._kinds.get(rel, PathKind.MISSING)

    def listing(self, rel: str) -> list[tuple[str, PathKind]]:
        return [(name, self.kind(_join(rel, name))) for name in sorted(self._children.get(rel, ()))]

    def read(self, rel: str) -> bytes:
        try:
            return self._files[rel]
        except KeyError:
            raise FileNotFoundError(2, "No such file or directory", str(rel)) from None

    def stamp(self, rel: str) -> Stamp | None:
        return None  # a tree in memory is read, not looked at

    def stamps(self, rels: Sequence[str]) -> list[Stamp | None]:
        return [None] * len(rels)


@dataclass(slots=True)
class RawFile:
    """One catalogue file: its kind and id, and once parsed its root node and problems.

    ``problems`` is None until the file has been parsed; ``root`` is None
    when it could not be (or holds no document).  ``digest`` is the SHA-256
    of its bytes once read (None when they could not be read).
    """

    path: Path
    kind: str  # "record", "references", "map" or "cycle"
    id: str
    folder: str | None  # for cycles, the map folder the file sits in
    rel: str = ""  # the path from the catalogue root, POSIX style
    root: Node | None = None
    problems: list[Problem] | None = None
    digest: bytes | None = None


@dataclass(slots=True)
class RawCatalogue:
    """The files of a catalogue, where they come from, and the problems with its layout."""

    source: Source
    files: list[RawFile] = field(default_factory=list)
    layout_problems: list[Problem] = field(default_factory=list)

    @property
    def root(self) -> Path:
        return self.source.root

    @property
    def problems(self) -> list[Problem]:
        """Layout problems, then those of every file parsed so far."""
        out = list(self.layout_problems)
        for f in self.files:
            out.extend(f.problems or ())
        return out

    def of_kind(self, kind: str) -> Iterator[RawFile]:
        return (f for f in self.files if f.kind == kind)


def _problem(path: Path, message: str, code: str) -> Problem:
    return problem_at(path, 0, 0, message, code)


def _decode(data: bytes, path: Path, problems: list[Problem]) -> str | None:
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        before = data[: exc.start]
        line = before.count(b"\n") + 1
        column = exc.start - (before.rfind(b"\n") + 1) + 1
        problems.append(
            problem_at(path, line, column, f"expected UTF-8 text, got the byte 0x{data[exc.start]:02x}", "encoding")
        )
        return None


def read_bytes(raw: RawCatalogue, file: RawFile) -> tuple[bytes | None, list[Problem]]:
    """The file's bytes, or None with the problem that says why they cannot be read."""
    try:
        return raw.source.read(file.rel), []
    except OSError as exc:
        return None, [_problem(file.path, f"cannot read the file: {exc.strerror}", "unreadable")]


def parse_bytes(file: RawFile, data: bytes | None, problems: list[Problem], digest: bytes | None = None) -> RawFile:
    """The file parsed from ``data`` (its bytes, None when they could not be read), with ``problems`` and its digest.

    ``problems`` holds what was found before parsing (why the bytes could not be read); the
    parse's own are added to it.  ``digest``: the SHA-256 of ``data`` when the caller has it already.
    """
    parsed = RawFile(file.path, file.kind, file.id, file.folder, file.rel, None, problems)
    if data is None:
        return parsed
    parsed.digest = digest if digest is not None else hashlib.sha256(data).digest()
    text = _decode(data, file.path, problems)
    if text is not None:
        parsed.root, found = parse_yaml(text, file.path)
        problems.extend(found)
    return parsed


def read_file(raw: RawCatalogue, file: RawFile) -> RawFile:
    """The file with its root node, problems and digest, parsing it now unless already parsed.

    Nothing is cached: a caller that streams through a large catalogue keeps
    only the file at hand alive.
    """
    if file.problems is not None:
        return file
    data, problems = read_bytes(raw, file)
    return parse_bytes(file, data, problems)


#: How messages name what was found at a path.
_A = {
    PathKind.FILE: "a file",
    PathKind.FOLDER: "a folder",
    PathKind.LINK: "a symbolic link",
    PathKind.OTHER: "a special file (a device, pipe or socket)",
    PathKind.MISSING: "nothing",
}


def _listing(raw: RawCatalogue, folder: str) -> list[tuple[str, PathKind]]:
    """A folder's entries, or none (with a layout problem) when the folder cannot be read."""
    try:
        return raw.source.listing(folder)
    except OSError as exc:
        problem = _problem(raw.root / folder, f"cannot read the folder: {exc.strerror or exc}", "unreadable")
        raw.layout_problems.append(problem)
        return []


def _join(folder: str, name: str) -> str:
    return name if folder == "." else f"{folder}/{name}"


def _child(folder: Path, name: str) -> Path:
    """``folder / name`` for a name from a folder's listing (one part, no separator): made without parsing
    it again, which is most of the time of listing 50,000 files, where pathlib has the means."""
    child = getattr(folder, "_make_child_relpath", None)
    return child(name) if child is not None else folder / name


def _entry_files(raw: RawCatalogue, folder: str, what: str) -> Iterator[tuple[str, Path]]:
    """Yield (id, path) for each ``<id>.yaml`` in folder, reporting anything else there."""
    problems = raw.layout_problems
    base = raw.root / folder
    for name, kind in _listing(raw, folder):
        if name.startswith("."):
            continue  # .gitkeep and editor files
        path = _child(base, name)
        if kind is PathKind.LINK:
            problems.append(_problem(path, "expected a regular file, got a symbolic link", "layout"))
            continue
        if kind is not PathKind.FILE:
            message = f"expected only {what} files (<id>.yaml) here, got {_A[kind]}"
            problems.append(_problem(path, message, "layout"))
            continue
        stem, dot, ext = name.rpartition(".")
        if not dot or ext != "yaml":
            hint = " (use the extension .yaml)" if ext == "yml" else ""
            problems.append(_problem(path, f"expected a file named <id>.yaml, got '{name}'{hint}", "layout"))
            continue
        if ID_PATTERN.fullmatch(stem) is None:
            message = f"expected an id of lowercase letters, digits and hyphens ([a-z0-9][a-z0-9-]*), got '{stem}'"
            problems.append(_problem(path, message, "bad-id"))
            continue
        yield stem, path


def scan_source(source: Source) -> RawCatalogue:
    """List the files of the catalogue in ``source`` without parsing them.

    Raises CatalogueUnreadable if the source holds no catalogue; every
    problem with the layout (bad names, links, stray folders) is collected.
    """
    root = source.root
    top = source.kind(".")
    if top is not PathKind.FOLDER:
        got = "nothing" if top is PathKind.MISSING else "a file"
        raise CatalogueUnreadable(root, f"expected a catalogue directory, got {got}")
    if source.kind("maps") is not PathKind.FOLDER:
        raise CatalogueUnreadable(root, "expected a catalogue directory with a maps/ folder, got none")
    raw = RawCatalogue(source)
    problems = raw.layout_problems
    for kind in ("record", "references"):
        found = source.kind(f"{kind}.yaml")
        if found in (PathKind.LINK, PathKind.FOLDER, PathKind.OTHER):
            problems.append(_problem(root / f"{kind}.yaml", f"expected a regular file, got {_A[found]}", "layout"))
        elif found is PathKind.FILE:
            raw.files.append(RawFile(root / f"{kind}.yaml", kind, kind, None, f"{kind}.yaml"))
    for map_id, path in _entry_files(raw, "maps", "map"):
        raw.files.append(RawFile(path, "map", map_id, None, f"maps/{map_id}.yaml"))
    cycles = CYCLES_FOLDER
    found = source.kind(cycles)
    if found in (PathKind.LINK, PathKind.FILE, PathKind.OTHER):
        problems.append(_problem(root / "cycles", f"expected a folder, got {_A[found]}", "layout"))
    elif found is PathKind.FOLDER:
        for name, kind in _listing(raw, cycles):
            if name.startswith("."):
                continue
            folder = root / "cycles" / name
            if kind is not PathKind.FOLDER:
                message = "expected a folder named after a map id, got a file or link"
                problems.append(_problem(folder, message, "layout"))
                continue
            if ID_PATTERN.fullmatch(name) is None:
                problems.append(_problem(folder, f"expected a folder named after a map id, got '{name}'", "bad-id"))
                continue
            for cycle_id, path in _entry_files(raw, f"cycles/{name}", "cycle"):
                raw.files.append(RawFile(path, "cycle", cycle_id, name, f"cycles/{name}/{cycle_id}.yaml"))
    return raw


def scan_catalogue(root: Path) -> RawCatalogue:
    """List the files of the catalogue folder at ``root`` (see :func:`scan_source`)."""
    return scan_source(FolderSource(root))


def load_catalogue(root: Path) -> RawCatalogue:
    """Scan the catalogue at ``root`` and parse every file (the whole raw layer in memory).

    Raises CatalogueUnreadable if ``root`` is not a catalogue directory; every
    problem with individual files is collected in the result instead.
    """
    raw = scan_catalogue(root)
    raw.files = [read_file(raw, file) for file in raw.files]
    return raw
