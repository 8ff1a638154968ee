"""Where each page of the site lives: the one place that spells the site's addresses.

Every address is relative to the site root and ends in a file name (``index.html``), so
the site reads the same from a web host and from a folder on disk.  Map, cycle and release
ids are validated long before they get here (letters, digits, dots, hyphens, underscores).
"""

from __future__ import annotations

__all__ = ["change_url", "cycle_url", "length_url", "map_url", "reference_url"]


def map_url(map_id: str) -> str:
    return f"maps/{map_id}/index.html"


def cycle_url(map_id: str, cycle_id: str) -> str:
    return f"maps/{map_id}/{cycle_id}/index.html"


def length_url(k: int) -> str:
    return f"lengths/{k}/index.html"


def change_url(version: str | None) -> str:
    """The page of a release's changes, or of the changes not yet released (``None``)."""
    return f"changes/{version if version is not None else 'unreleased'}/index.html"


def reference_url(key: str) -> str:
    """A reference's place on the references page."""
    return f"references/index.html#ref-{key}"
