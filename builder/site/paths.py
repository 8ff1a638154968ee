"""Where each page of the site lives: the one place that spells the site's addresses.

Every address is relative to the site root and ends in a file name (``index.html``), so
the site reads the same from a web host and from a folder on disk.  Map, cycle and release
ids are validated long before they get here (letters, digits, dots, hyphens, underscores).
"""

from __future__ import annotations

__all__ = [
    "change_url",
    "cycle_url",
    "family_url",
    "length_url",
    "map_table_url",
    "map_url",
    "reference_url",
    "site_map_url",
]


def map_url(map_id: str) -> str:
    return f"maps/{map_id}/index.html"


def cycle_url(map_id: str, cycle_id: str) -> str:
    return f"maps/{map_id}/{cycle_id}/index.html"


def length_url(k: int, page: int = 1) -> str:
    """The cycles of length k, ``page`` of them when they fill several."""
    return f"lengths/{k}/index.html" if page == 1 else f"lengths/{k}/page-{page}.html"


def map_table_url(map_id: str, order: str, page: int) -> str:
    """A page of a long map's table of cycles: by least |member| (page 1 is the map's own page) or by length.

    These are files beside the map's cycle folders; a cycle id has no dot, so none can take their names.
    """
    if order == "least":
        return map_url(map_id) if page == 1 else f"maps/{map_id}/cycles-{page}.html"
    assert order == "length", order
    return f"maps/{map_id}/by-length-{page}.html"


def family_url(key: str, page: int = 1) -> str:
    """A family of maps (all qx+d maps of one q, or the maps of one modulus), ``page`` of its maps."""
    return f"families/{key}/index.html" if page == 1 else f"families/{key}/page-{page}.html"


def site_map_url(page: int = 1) -> str:
    return "sitemap/index.html" if page == 1 else f"sitemap/page-{page}.html"


def change_url(version: str | None) -> str:
    """The page of a release's changes, or of the changes not yet released (``None``)."""
    return f"changes/{version if version is not None else 'unreleased'}/index.html"


def reference_url(key: str) -> str:
    """A reference's place on the references page."""
    return f"references/index.html#ref-{key}"
