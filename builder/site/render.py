"""Stage 4: write the site's files from the pages and typed records into a directory.

Templates are Jinja with autoescaping on for every template; the only
pre-made markup they receive is sanitised notes, the JSON-LD script, and
MathML and SVG built by Periplus from numbers, each returned as Markup by
the module that escapes it.  Every output path is checked to stay inside the
output directory, whatever the ids (they are validated long before, this is
a second line of defence).

The work is cut into tasks: one per unit of pages (builder.site.pages.page_units: a map with
its cycles, a part of a big map's, or one kind of page for the whole site) and one per large export.  Each task makes
its pages, renders them and writes them at once, so a build holds one task's text at a time.
With more than one process the maps' tasks are shared among the build and worker processes
forked from it (builder.processes.share_work): they inherit the site's records instead of
receiving copies, each takes a run of neighbouring maps (so each copies only the memory its own
records fill), and they send back only the addresses and titles of the pages they wrote.  The
tasks that read every record (site-wide pages, the exports) are the build's own, and what needs
every page (the site map, sitemap.xml) is written last, by the build itself.  The output never
depends on how the tasks were shared.

Builds are incremental: a task whose inputs are known (a unit's ``inputs``, builder.site.pages)
has a digest of them and of what every page reads (the code and templates, the record, the
edition, the base address).  The manifest ``.periplus-build.json`` in the site lists each task's
digest and files.  The files of the site a build replaces are hard-linked into the new one while
the catalogue is verified (builder.site.manifest.HeadStart); a task with the same digest keeps
them instead of writing them again, any other removes them first, so the result is the clean
build's, byte for byte (tests/site/test_incremental.py).  Every file is made new, never written
through a link to the site being replaced.  The whole-record exports (data/catalogue.json,
data/cycles.csv) are made of one piece per map, made with the map's data file by the task that
writes it and set aside (builder.site.spool), then copied in once every task is done; the manifest
says where each lies, and an incremental build takes the unchanged maps' pieces from the previous
site's files (once their SHA-256 is the manifest's).
"""

from __future__ import annotations

import contextlib
import functools
import gc
import hashlib
import operator
import os
import shutil
from collections.abc import Callable, Iterable
from dataclasses import dataclass, replace
from itertools import chain
from pathlib import Path
from typing import BinaryIO

import jinja2

from builder import __version__
from builder.processes import WorkerStopped, default_jobs, return_free_memory, share_work
from builder.site.digest import stable_digest
from builder.site.exports import (
    MapPieces,
    atom_feed,
    map_exports,
    search_files,
    sitemap_files,
    write_record_exports,
)
from builder.site.manifest import (
    CATALOGUE_JSON,
    CYCLES_CSV,
    MANIFEST,
    Done,
    HeadStart,
    Previous,
    Record,
    inside,
    manifest_text,
    open_folder,
    remove_empty_folders,
    remove_files,
)
from builder.site.metadata import citation_cff, robots_txt
from builder.site.pages import Unit, index_pages
from builder.site.pages.common import Page, PageInfo
from builder.site.spool import Spooled, remove_spools, spool, unspool
from builder.site.templating import TemplateStore, page_environment, template_dir
from builder.site.views import SiteViews

__all__ = ["MANIFEST", "MARKER", "Writer", "default_jobs", "render_site"]

#: Written at the top of every built site, so a later build knows the folder is its own to replace.
MARKER = ".periplus-site"
_SEARCH = "export:search"  # the task that writes the search index


# Every file is made new (O_EXCL): never written through a link to a file of the site being replaced.
_NEW_FILE = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_CLOEXEC", 0)


class Writer:
    """Writes files below one folder, refusing any address that would leave it.

    Files are made relative to a descriptor of the folder (``folder``, which the caller keeps open and
    closes; else one of the writer's own, closed by :meth:`close`), so the system does not walk the
    folder's path again for each of 50,000 files."""

    def __init__(self, out: Path, folder: int | None = None) -> None:
        self.out = out.resolve() if folder is None else out  # with a descriptor, the caller's resolved path
        self._own = folder is None
        self.fd = open_folder(self.out) if folder is None else folder
        self._folders: set[str] = set()
        self.files: list[str] = []  # every file written, in order
        self.spooled: Spooled | None = None  # where the task that writes a map's data file set its pieces aside

    def close(self) -> None:
        if self._own and self.fd >= 0:
            os.close(self.fd)
        self.fd = -1

    def __enter__(self) -> Writer:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _target(self, relative: str) -> str:
        # Addresses are built from validated ids; this is the second line of defence, done on the text
        # (no resolve() per file): a relative POSIX path with no empty, "." or ".." part.
        if not inside(relative):
            raise AssertionError(f"refusing to write outside the site: {relative!r}")
        folder = relative.rpartition("/")[0]
        if folder and folder not in self._folders:
            try:
                os.mkdir(folder, dir_fd=self.fd)  # most folders hold one page, below a folder that exists
            except FileExistsError:
                pass
            except FileNotFoundError:
                os.makedirs(os.path.join(self.out, folder), exist_ok=True)
            self._folders.add(folder)
        self.files.append(relative)
        return relative

    def text(self, relative: str, text: str) -> None:
        # Unbuffered, from bytes encoded at once: a text file object per page costs more than the write.
        data = text.encode("utf-8")
        target = self._target(relative)
        try:
            fd = os.open(target, _NEW_FILE, 0o666, dir_fd=self.fd)
        except FileExistsError:  # a file taken from the previous site: replaced, not written through
            os.unlink(target, dir_fd=self.fd)
            fd = os.open(target, _NEW_FILE, 0o666, dir_fd=self.fd)
        try:
            view = memoryview(data)
            while view:
                view = view[os.write(fd, view) :]
        finally:
            os.close(fd)

    def path(self, relative: str) -> str:
        """Where to write the file ``relative`` (its folder made, the address checked, no file there)."""
        target = self._target(relative)
        with contextlib.suppress(FileNotFoundError):
            os.unlink(target, dir_fd=self.fd)
        return os.path.join(self.out, target)


@dataclass(frozen=True, slots=True)
class _Task:
    name: str
    cost: int
    run: Callable[[SiteViews, Writer, jinja2.Environment], list[PageInfo]]
    inputs: Callable[[SiteViews], object] | None = None  # None: made at every build
    map_id: str | None = None  # for a map's pages, which read the records of that map (and a few related)
    data: bool = False  # writes the map's data file; its inputs are what the map's export pieces are made from
    sources: Callable[[SiteViews], object | None] | None = None  # what its inputs are made from (pages.Unit)

    @property
    def reads_all(self) -> bool:
        return self.map_id is None


@functools.cache
def _source_digest() -> str:
    """A digest of the code and templates that write pages: a build by other code makes every page again
    (read once by a process: an installed program's code does not change while it runs)."""
    h = hashlib.sha256(__version__.encode())
    for folder in (Path(__file__).resolve().parent.parent, template_dir()):
        for path in sorted(folder.rglob("*")):
            if path.suffix in (".py", ".html", ".css", ".js") and "__pycache__" not in path.parts:
                h.update(path.relative_to(folder).as_posix().encode() + b"\0" + path.read_bytes() + b"\0")
    return h.hexdigest()


def _common_inputs(views: SiteViews) -> str:
    """What every page reads besides its own inputs."""
    history = views.history
    return stable_digest(
        (
            _source_digest(),
            views.record,
            views.edition.shown,
            views.base_url,
            getattr(history, "reason", None),
            getattr(history, "shallow", None),
        )
    )


def _digest(common: str, inputs: object) -> str:
    return stable_digest((common, inputs))


def _render(views: SiteViews, writer: Writer, env: jinja2.Environment, pages: Iterable[Page]) -> list[PageInfo]:
    written = []
    for page in pages:
        template = env.get_template(page.template)
        html = template.render(page=page, root=page.root, about=views.record, edition=views.edition, **page.context)
        writer.text(page.path, html)
        written.append(PageInfo(page.path, page.title, page.listed, page.in_site_map))
    return written


def _tasks(views: SiteViews) -> list[_Task]:
    tasks = []
    for unit in views.units:
        known = unit.inputs
        inputs = None if known is None else (lambda v, known=known: known(v.site))
        origin = unit.sources
        sources = None if origin is None else (lambda v, origin=origin: origin(v.site))
        tasks.append(_Task(unit.name, unit.cost, _unit_pages(unit), inputs, unit.map_id, unit.data, sources))
    # Cost as a share of a cycle's page per cycle (measured at 50,000 cycles; a rough guess does).
    tasks.append(_Task(_SEARCH, 1 + len(views.cycles) // 17, _search_export, _search_inputs))
    return tasks


def _unit_pages(unit: Unit) -> Callable[[SiteViews, Writer, jinja2.Environment], list[PageInfo]]:
    def run(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
        pages = _render(views, writer, env, unit.make(views.site))
        if unit.map_id is not None and unit.data:  # the map's data file and export pieces, from the unit's inputs
            text, pieces = map_exports(views.maps[unit.map_id])
            writer.text(f"data/maps/{unit.map_id}.json", text)
            writer.spooled = spool(writer.fd, pieces)
        return pages

    return run


def _write_record(views: SiteViews, writer: Writer, kept: Callable[[str], MapPieces | None]) -> Record:
    """data/catalogue.json and data/cycles.csv, with the pieces ``kept`` gives (the others made here);
    their layout."""
    with open(writer.path(CATALOGUE_JSON), "wb") as catalogue, open(writer.path(CYCLES_CSV), "wb") as table:
        sinks = _Hashed(catalogue), _Hashed(table)
        spans = write_record_exports(views, *sinks, kept)
        return spans, (sinks[0].sha256.hexdigest(), sinks[1].sha256.hexdigest())


class _Hashed:
    """A file being written, and the SHA-256 of what was written to it."""

    def __init__(self, fh: BinaryIO) -> None:
        self.fh = fh
        self.sha256 = hashlib.sha256()

    def write(self, data: bytes) -> int:
        self.sha256.update(data)
        return self.fh.write(data)


def _search_export(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
    for rel, text in search_files(views):
        writer.text(rel, text)
    return []


def _search_inputs(views: SiteViews) -> object:
    """What the search index holds: each cycle's key and fingerprint (which fix its members, word and
    length) and its map's name, and the id and name of every map (maps without cycles are searchable)."""
    # As lines of text joined in C (see builder.site.pages.lengths.length_inputs); a map's name may hold
    # any character, and is given with its map below.
    cycles = views.cycles
    keys = "\n".join(
        chain.from_iterable(zip(map(_map_id, cycles), map(_id, cycles), map(_fingerprint, cycles), strict=True))
    )
    return [keys, [(m.id, m.name, m.branches) for m in views.maps.values()]]


_map_id, _id, _fingerprint = (operator.attrgetter(name) for name in ("map_id", "id", "fingerprint"))


@dataclass(frozen=True, slots=True)
class _Folders:
    """The folder being written, held open."""

    out: Path
    fd: int


@dataclass(frozen=True, slots=True)
class _Common:
    """What every task's digests start from: what every page reads (_common_inputs), and that with what
    every map's inputs are made from (SiteContext.shared_sources)."""

    inputs: str
    sources: str


@dataclass(frozen=True, slots=True)
class _Kept:
    """A task whose files are kept from the previous site (its digest and pages are that site's): all a worker
    sends back for it, since the build process read the previous site's manifest already."""

    sources: str | None


def _perform(
    task: _Task,
    views: SiteViews,
    at: _Folders,
    env: jinja2.Environment,
    common: _Common,
    previous: Previous | None,
    linked: frozenset[str],
) -> Done | _Kept:
    """Run one task, or keep its files taken from the previous site when its inputs are the same.

    Its inputs are not even read when what they are made from, its sources, are the previous site's."""
    known = None if task.sources is None else task.sources(views)
    sources = None if known is None else _digest(common.sources, known)
    before = previous.tasks[task.name] if previous is not None and task.name in linked else None
    if before is not None and sources is not None and before.sources == sources and before.digest is not None:
        return _Kept(sources)
    digest = None if task.inputs is None else _digest(common.inputs, task.inputs(views))
    if before is not None:
        if digest is not None and before.digest == digest:
            return _Kept(sources)
        remove_files(at.fd, before.files)  # made again: the files it made before are not all made now
    writer = Writer(at.out, at.fd)
    pages = task.run(views, writer, env)
    return Done(digest, pages, writer.files, sources=sources, spooled=writer.spooled)


def _run_tasks(
    views: SiteViews, tasks: list[_Task], out: Path, jobs: int, head: HeadStart | None, env: jinja2.Environment
) -> tuple[list[Done], Record]:
    """Run every task, in ``jobs`` processes (this one and forked workers), then write the whole-record
    exports; what each task left, in task order, and the exports' layout."""
    fd = open_folder(out)
    try:
        previous = head.previous if head is not None else None
        linked = head.linked() if head is not None else frozenset()
        if previous is not None:
            # The files of the tasks this build does not have (a map removed) are not part of it.
            names = {task.name for task in tasks}
            remove_files(fd, (f for name in linked - names for f in previous.tasks[name].files))
        at = _Folders(out.resolve(), fd)
        done = _share_tasks(views, tasks, at, jobs, previous, linked, env)
        layout = _record_exports(views, tasks, done, at, previous)
        if previous is not None:
            # Folders that held only files taken from the previous site and made no more.
            names = {task.name for task, d in zip(tasks, done, strict=True) if d.reused}
            remove_empty_folders(fd, (f for name in linked - names for f in previous.tasks[name].files))
        return done, layout
    finally:
        os.close(fd)


def _share_tasks(
    views: SiteViews,
    tasks: list[_Task],
    at: _Folders,
    jobs: int,
    previous: Previous | None,
    linked: frozenset[str],
    env: jinja2.Environment,
) -> list[Done]:
    inputs = _common_inputs(views)
    common = _Common(inputs, _digest(inputs, views.site.shared_sources()))
    views.site.marked  # noqa: B018 (made once here, before the workers are forked: they share it)
    if previous is None or previous.common != inputs:  # every page is made again
        _ready_for_every_page(env)

    def run(i: int) -> Done | _Kept:
        return _perform(tasks[i], views, at, env, common, previous, linked)

    # A map's pages read its own records, made together in catalogue order: the maps are shared out in
    # runs of neighbours, so that each process reads (and a worker copies) its own part of the record;
    # what reads every record (the site-wide pages, the exports) is done by this process, which owns it.
    maps = [i for i, task in enumerate(tasks) if not task.reads_all]
    whole = [i for i, task in enumerate(tasks) if task.reads_all and task.name != _SEARCH]
    # The search index needs the most memory while it is made (40 MB at 50,000 cycles): made once the
    # workers are gone, not on top of their copies.
    last = [i for i, task in enumerate(tasks) if task.name == _SEARCH]
    return_free_memory()
    try:
        done = share_work(maps, jobs, run, cost=lambda i: tasks[i].cost, home=whole, last=last)
    except WorkerStopped as stopped:
        raise SystemExit(f"a page-writing process stopped: {stopped}") from None
    return [_done(tasks[i], done[i], previous) for i in range(len(tasks))]


def _ready_for_every_page(env: jinja2.Environment) -> None:
    """Every template compiled, and numpy (charts, the search index) imported, here, before the workers are
    forked: they inherit the compiled code and share the module's memory.  A build that takes most pages
    from the site it replaces compiles and imports only what it uses, as it uses it."""
    for name in env.list_templates(filter_func=lambda name: name.endswith(".html")):
        env.get_template(name)
    import numpy  # noqa: F401


def _done(task: _Task, result: Done | _Kept, previous: Previous | None) -> Done:
    if isinstance(result, Done):
        return result
    assert previous is not None, "only a task of the previous site is kept"
    before = previous.tasks[task.name]
    return Done(before.digest, before.pages, before.files, reused=True, sources=result.sources)


def _record_exports(
    views: SiteViews, tasks: list[_Task], done: list[Done], at: _Folders, previous: Previous | None
) -> Record:
    """Write the whole-record exports once every task is done, from each map's pieces: as the task that
    wrote its data file set them aside (builder.site.spool), or, where that task was kept from the
    previous site, as that site's exports hold them."""
    spooled = {task.map_id: d.spooled for task, d in zip(tasks, done, strict=True) if d.spooled is not None}
    # The map's task with its data file reads what its pieces are made from.
    reused = {task.map_id for task, d in zip(tasks, done, strict=True) if d.reused and task.data}
    kept = previous.pieces() if previous is not None and previous.record is not None and reused else None

    def pieces(map_id: str) -> MapPieces | None:
        if map_id in spooled:
            return unspool(at.fd, spooled[map_id])
        return kept(map_id) if kept is not None and map_id in reused else None

    try:
        return _write_record(views, Writer(at.out, at.fd), pieces)
    finally:
        remove_spools(at.fd, spooled.values())


def render_site(
    views: SiteViews, out: Path, jobs: int = 1, head: HeadStart | None = None, kept: TemplateStore | None = None
) -> list[str]:
    """Write every page, export and asset into ``out`` (an empty folder, made if missing), in ``jobs`` processes;
    return the pages written.  ``head`` holds the site this one replaces, if any, and its files taken into
    ``out``: the files of the tasks whose inputs did not change are kept from it.  ``kept`` (the verification
    cache) keeps the compiled templates between builds."""
    out.mkdir(parents=True, exist_ok=True)
    # What exists now (the records) is left out of the collector's passes while the site is written:
    # it would otherwise traverse them again and again (rendering makes reference cycles, so it runs),
    # and in each worker touch, and so copy, every object the worker inherits.
    gc.freeze()
    try:
        return _write_site(views, out, jobs, head, kept)
    finally:
        gc.unfreeze()


def _write_site(
    views: SiteViews, out: Path, jobs: int, head: HeadStart | None, kept: TemplateStore | None
) -> list[str]:
    tasks = _tasks(views)
    env = page_environment(kept, _source_digest())
    done, layout = _run_tasks(views, tasks, out, jobs, head, env)
    with Writer(out) as writer:
        return _write_rest(views, out, writer, tasks, done, layout, env)


def _write_rest(
    views: SiteViews,
    out: Path,
    writer: Writer,
    tasks: list[_Task],
    done: list[Done],
    layout: Record,
    env: jinja2.Environment,
) -> list[str]:
    """The pages and files made from every other: the indexes, the site map, the feed, the assets, the manifest."""
    written = [info for d in done for info in d.pages]
    written += _render(views, writer, env, index_pages(views.site, written))
    pages = [info.path for info in written]
    if views.base_url is not None:  # the sitemaps protocol has absolute addresses only
        for path, text in sitemap_files([info.path for info in written if info.listed], views.base_url):
            writer.text(path, text)
    writer.text("feed.xml", atom_feed(views))
    about = replace(views.record, base_url=views.base_url)
    writer.text(
        "CITATION.cff",
        citation_cff(about, release=about.version, released_on=views.edition.released_on, commit=views.edition.commit),
    )
    writer.text("robots.txt", robots_txt(views.base_url))
    static = template_dir() / "static"
    for asset in sorted(static.iterdir()):
        if asset.is_file() and not asset.name.startswith("."):
            (out / "static").mkdir(exist_ok=True)
            shutil.copyfile(asset, out / "static" / asset.name)
    writer.text(MANIFEST, manifest_text([t.name for t in tasks], done, layout, _common_inputs(views)))
    writer.text(MARKER, f"This folder was written by periplus {__version__}; periplus build replaces it whole.\n")
    return pages
