"""What every page kind is made of: a page, a link, a place in the navigation, and the kind itself.

A page kind (builder.site.pages.<kind>) declares a ``PageKind``: its name, the function that
makes its pages, and, when it has one, its entry in the site's navigation.  The registry
(builder.site.pages) lists the kinds in the order their pages are made.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from builder.site.pages.context import SiteContext

__all__ = ["HOME_CRUMBS", "Link", "MapPages", "NavEntry", "Page", "PageKind", "SitePages"]


@dataclass(frozen=True, slots=True)
class Link:
    label: str
    url: str  # relative to the site root
    note: str = ""


#: The breadcrumbs of a page one step below the home page.
HOME_CRUMBS = (Link("Record", "index.html"),)


@dataclass(slots=True)
class Page:
    """One HTML page: where it goes, which template draws it, and what it shows."""

    path: str  # relative to the site root, e.g. maps/3x-plus-1/index.html
    template: str
    title: str
    section: str  # which part of the navigation it belongs to
    context: dict[str, Any] = field(default_factory=dict)
    crumbs: tuple[Link, ...] = ()
    fixed_root: str | None = None  # an absolute site address, for pages served from any path (404)

    @property
    def root(self) -> str:
        """The path from this page back to the site root ('' or '../..' style, with a slash)."""
        if self.fixed_root is not None:
            return self.fixed_root
        depth = self.path.count("/")
        return "../" * depth


@dataclass(frozen=True, slots=True)
class NavEntry:
    """A link in the navigation bar of every page; ``place`` orders the bar from left to right."""

    section: str  # the pages of this section mark the link as the current one
    label: str
    url: str
    place: int


#: Makes a kind's pages for the whole site, given the pages made before them (the site map lists those).
SitePages = Callable[["SiteContext", Sequence[Page]], list[Page]]
#: Makes a kind's pages for one map, given its id.
MapPages = Callable[["SiteContext", str], list[Page]]


@dataclass(frozen=True, slots=True)
class PageKind:
    """One kind of page: its name, how its pages are made (``site_pages`` or ``map_pages``), its nav entry."""

    name: str
    site_pages: SitePages | None = None
    map_pages: MapPages | None = None
    nav: NavEntry | None = None

    def __post_init__(self) -> None:
        assert (self.site_pages is None) != (self.map_pages is None), f"{self.name}: expected one way to make pages"
