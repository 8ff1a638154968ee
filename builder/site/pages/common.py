"""What every page kind is made of: a page, a link, a place in the navigation, and the kind itself.

A page kind (builder.site.pages.<kind>) declares a ``PageKind``: its name, the function that
makes its pages, and, when it has one, its entry in the site's navigation.  The registry
(builder.site.pages) lists the kinds in the order their pages are made.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, NamedTuple

if TYPE_CHECKING:
    from builder.catalogue.model import Cycle
    from builder.site.pages.context import SiteContext

__all__ = [
    "HOME_CRUMBS",
    "PAGE_ROWS",
    "IndexPages",
    "MapInputs",
    "SiteInputs",
    "Link",
    "MapPages",
    "NavEntry",
    "Page",
    "PageInfo",
    "PageKind",
    "Pager",
    "SitePages",
    "pagers",
]


@dataclass(frozen=True, slots=True)
class Link:
    label: str
    url: str  # relative to the site root
    note: str = ""


#: The breadcrumbs of a page one step below the home page.
HOME_CRUMBS = (Link("Record", "index.html"),)

#: A table longer than this is split into pages of this many rows: a page stays small enough to open
#: and to sort at once on a phone, whatever the size of the record.
PAGE_ROWS = 1000


@dataclass(frozen=True, slots=True)
class Pager:
    """Where one page of a long table stands: its rows, every page of the same order, the other orders."""

    first: int  # the number of its first row, from 1
    last: int
    total: int
    order: str  # how the rows are ordered, as a reader is told: "by least |member|"
    pages: tuple[Link, ...]  # every page of this order, labelled "1", "2", ...
    current: int  # the index of this page in ``pages``
    others: tuple[Link, ...]  # the first page of each other order of the same rows

    @property
    def span(self) -> str:
        return f"{self.first:,}–{self.last:,} of {self.total:,}"


def pagers(
    total: int, order: str, url: Callable[[int], str], others: tuple[Link, ...] = (), per_page: int = PAGE_ROWS
) -> list[tuple[slice, Pager | None]]:
    """How ``total`` rows fall into pages of ``per_page``: each page's slice of the rows and its pager
    (None when one page holds them all).  ``url(n)`` is the address of page n, from 1."""
    if total <= per_page:
        return [(slice(0, total), None)]
    count = -(-total // per_page)
    links = tuple(Link(str(n), url(n)) for n in range(1, count + 1))
    out: list[tuple[slice, Pager | None]] = []
    for i in range(count):
        rows = slice(i * per_page, min(total, (i + 1) * per_page))
        out.append((rows, Pager(rows.start + 1, rows.stop, total, order, links, i, others)))
    return out


@dataclass(slots=True)
class Page:
    """One HTML page: where it goes, which template draws it, and what it shows."""

    path: str  # relative to the site root, e.g. maps/3x-plus-1/index.html
    template: str
    title: str
    section: str  # which part of the navigation it belongs to
    context: dict[str, Any] = field(default_factory=dict)
    crumbs: tuple[Link, ...] = ()
    listed: bool = True  # whether sitemap.xml lists it (not the 404 page)
    in_site_map: bool = True  # whether the site map page lists it (not cycles, nor pages 2.. of a table)

    @property
    def root(self) -> str:
        """The path from this page back to the site root ('' or '../..' style, with a slash)."""
        depth = self.path.count("/")
        return "../" * depth


class PageInfo(NamedTuple):
    """What the build keeps of a page once it is written: where it is and what it is called (a named
    tuple: the manifest of a big site holds 50,000, read back at every build)."""

    path: str
    title: str
    listed: bool
    in_site_map: bool


@dataclass(frozen=True, slots=True)
class NavEntry:
    """A link in the navigation bar of every page; ``place`` orders the bar from left to right."""

    section: str  # the pages of this section mark the link as the current one
    label: str
    url: str
    place: int


#: Makes a kind's pages for the whole site.
SitePages = Callable[["SiteContext"], Iterable[Page]]
#: Makes a kind's pages for one map, given its id and its cycles whose pages are wanted (all of them, or
#: for a kind ``per_cycle``, a part of a big map's), one at a time (a map may have thousands of cycle pages).
MapPages = Callable[["SiteContext", str, Sequence["Cycle"]], Iterable[Page]]
#: What a kind's pages for one map (and those cycles) are made from, as plain data (builder.site.digest
#: reads it): an incremental build renders them again only when this changes (builder.site.render).
MapInputs = Callable[["SiteContext", str, Sequence["Cycle"]], object]
#: The same for a kind made for the whole site.
SiteInputs = Callable[["SiteContext"], object]
#: Makes a kind's pages once every other page is written, given what was written (the site map).
IndexPages = Callable[["SiteContext", Sequence[PageInfo]], list[Page]]


@dataclass(frozen=True, slots=True)
class PageKind:
    """One kind of page: its name, how its pages are made (``site_pages``, ``map_pages`` or
    ``index_pages``), its nav entry."""

    name: str
    site_pages: SitePages | None = None
    map_pages: MapPages | None = None
    nav: NavEntry | None = None
    index_pages: IndexPages | None = None
    # What its pages read, beyond what every page reads (the record, the edition, the code): without
    # it, an incremental build makes the kind's pages every time.  Every value a page shows must follow
    # from it: tests/site/test_incremental.py builds after each kind of change and compares.
    map_inputs: MapInputs | None = None
    site_inputs: SiteInputs | None = None
    # For a kind made for the whole site: the time its pages take, per cycle of the record, as a share of
    # the time of one cycle's page (to share the work evenly among processes; a rough guess does).
    cost_per_cycle: float = 0.002
    # For a kind made per map: one page per cycle, so a big map's pages of this kind are made in parts
    # (builder.site.pages.page_units), each given some of its cycles; the other kinds are given all.
    per_cycle: bool = False

    def __post_init__(self) -> None:
        ways = (self.site_pages, self.map_pages, self.index_pages)
        assert sum(way is not None for way in ways) == 1, f"{self.name}: expected one way to make pages"
