"""Stage 4: write the site's files from the pages and typed records into a directory.

Templates are Jinja with autoescaping on for every template; the only
pre-made markup they receive is sanitised notes, the JSON-LD script, and
MathML and SVG built by Periplus from numbers, each returned as Markup by
the module that escapes it.  Every output path is checked to stay inside the
output directory, whatever the ids (they are validated long before, this is
a second line of defence).

The work is cut into tasks: one per unit of pages (builder.site.pages.page_units: a map with
its cycles, or one kind of page for the whole site) and one per large export.  Each task makes
its pages, renders them and writes them at once, so a build holds one task's text at a time.
With more than one process the tasks are shared among worker processes forked from the build:
they inherit the site's records instead of receiving copies, and send back only the addresses
and titles of the pages they wrote.  What needs every page (the site map, sitemap.xml) is
written last, by the build itself.  The output never depends on how the tasks were shared.
"""

from __future__ import annotations

import gc
import multiprocessing
import os
import shutil
import signal
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, replace
from importlib import resources
from pathlib import Path
from typing import IO

import jinja2

from builder import __version__
from builder.site.exports import (
    atom_feed,
    map_json,
    search_files,
    sitemap_files,
    write_catalogue_json,
    write_cycles_csv,
)
from builder.site.metadata import citation_cff, robots_txt
from builder.site.pages import NAV, Unit, index_pages
from builder.site.pages.common import Page, PageInfo
from builder.site.views import SiteViews

__all__ = ["MARKER", "Writer", "default_jobs", "render_site", "template_dir"]

#: Written at the top of every built site, so a later build knows the folder is its own to replace.
MARKER = ".periplus-site"


def template_dir() -> Path:
    """The folder holding the templates and static assets (the top-level templates/ folder)."""
    return Path(str(resources.files("builder.templates")))


def default_jobs() -> int:
    """How many processes a build uses unless told: the cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _environment() -> jinja2.Environment:
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(template_dir()),
        autoescape=True,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
        auto_reload=False,
    )
    env.globals.update(nav=NAV, version=__version__)
    return env


class Writer:
    """Writes files below one folder, refusing any address that would leave it."""

    def __init__(self, out: Path) -> None:
        self.out = out.resolve()
        self._folders: set[str] = set()

    def _target(self, relative: str) -> str:
        # Addresses are built from validated ids; this is the second line of defence, done on the text
        # (no resolve() per file): a relative POSIX path with no empty, "." or ".." part.
        parts = relative.split("/")
        if relative.startswith("/") or "\\" in relative or any(p in ("", ".", "..") for p in parts):
            raise AssertionError(f"refusing to write outside the site: {relative!r}")
        folder = "/".join(parts[:-1])
        if folder and folder not in self._folders:
            (self.out / folder).mkdir(parents=True, exist_ok=True)
            self._folders.add(folder)
        return os.path.join(self.out, relative)

    def text(self, relative: str, text: str) -> None:
        with open(self._target(relative), "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)

    @contextmanager
    def stream(self, relative: str) -> Iterator[IO[str]]:
        with open(self._target(relative), "w", encoding="utf-8", newline="\n") as fh:
            yield fh


@dataclass(frozen=True, slots=True)
class _Task:
    name: str
    cost: int
    run: Callable[[SiteViews, Writer, jinja2.Environment], list[PageInfo]]


def _render(views: SiteViews, writer: Writer, env: jinja2.Environment, pages: list[Page]) -> list[PageInfo]:
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
        tasks.append(_Task(unit.name, unit.cost, _unit_pages(unit)))
    for map_id, record in views.maps.items():
        tasks.append(_Task(f"export:{map_id}", 1 + len(record.cycles) // 4, _map_export(map_id)))
    size = len(views.cycles)
    tasks.append(_Task("export:catalogue", 1 + size // 3, _catalogue_export))
    tasks.append(_Task("export:csv", 1 + size // 20, _csv_export))
    tasks.append(_Task("export:search", 1 + size // 10, _search_export))
    return tasks


def _unit_pages(unit: Unit) -> Callable[[SiteViews, Writer, jinja2.Environment], list[PageInfo]]:
    def run(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
        return _render(views, writer, env, unit.make(views.site))

    return run


def _map_export(map_id: str) -> Callable[[SiteViews, Writer, jinja2.Environment], list[PageInfo]]:
    def run(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
        writer.text(f"data/maps/{map_id}.json", map_json(views.maps[map_id]))
        return []

    return run


def _catalogue_export(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
    with writer.stream("data/catalogue.json") as fh:
        write_catalogue_json(views, fh)
    return []


def _csv_export(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
    with writer.stream("data/cycles.csv") as fh:
        write_cycles_csv(views, fh)
    return []


def _search_export(views: SiteViews, writer: Writer, env: jinja2.Environment) -> list[PageInfo]:
    for rel, text in search_files(views):
        writer.text(rel, text)
    return []


# The state a worker process works from: set by the build just before it forks its workers, so they
# inherit it (copy-on-write) instead of receiving it through a pipe.
_FORKED: tuple[SiteViews, list[_Task], Path] | None = None
_ENV: jinja2.Environment | None = None


class _Stopped(Exception):
    """A worker was stopped by an exception that is not an Exception (KeyboardInterrupt, SystemExit),
    which would otherwise end the worker and leave the build waiting for its result forever."""

    def __init__(self, name: str) -> None:
        super().__init__(name)
        self.name = name


def _worker_start() -> None:
    # Ctrl-C reaches every process of the terminal's group: the build itself handles it, and ends the workers.
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _worker_run(index: int) -> list[PageInfo]:
    global _ENV
    assert _FORKED is not None, "a worker runs only in a process forked by render_site"
    views, tasks, out = _FORKED
    if _ENV is None:
        _ENV = _environment()
    try:
        return tasks[index].run(views, Writer(out), _ENV)
    except Exception:
        raise
    except BaseException as exc:
        raise _Stopped(type(exc).__name__) from None


def _run_tasks(views: SiteViews, tasks: list[_Task], out: Path, jobs: int) -> list[PageInfo]:
    """Run every task, in ``jobs`` processes; the pages written, in the order of the tasks."""
    results: list[list[PageInfo]] = [[] for _ in tasks]
    if jobs <= 1 or len(tasks) < 2 or "fork" not in multiprocessing.get_all_start_methods():
        env, writer = _environment(), Writer(out)
        for i, task in enumerate(tasks):
            results[i] = task.run(views, writer, env)
        return [info for result in results for info in result]
    global _FORKED
    # Largest first, so that no process is left with a big task at the end.
    order = sorted(range(len(tasks)), key=lambda i: (-tasks[i].cost, i))
    _FORKED = (views, tasks, out)
    gc.collect()
    gc.freeze()  # the collector would otherwise touch, and so copy, every object the workers inherit
    try:
        with multiprocessing.get_context("fork").Pool(jobs, initializer=_worker_start) as pool:
            for i, result in zip(order, pool.imap(_worker_run, order, chunksize=1), strict=True):
                results[i] = result
    except _Stopped as stopped:
        if stopped.name == "KeyboardInterrupt":
            raise KeyboardInterrupt from None
        raise SystemExit(f"a page-writing process stopped ({stopped.name})") from None
    finally:
        _FORKED = None
        gc.unfreeze()
    return [info for result in results for info in result]


def render_site(views: SiteViews, out: Path, jobs: int = 1) -> list[str]:
    """Write every page, export and asset into ``out`` (an empty folder), in ``jobs`` processes;
    return the pages written."""
    writer = Writer(out)
    written = _run_tasks(views, _tasks(views), out, jobs)
    written += _render(views, writer, _environment(), index_pages(views.site, written))
    pages = [info.path for info in written]
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
    writer.text(MARKER, f"This folder was written by periplus {__version__}; periplus build replaces it whole.\n")
    return pages
