"""Release versions: what a record's ``version`` may be, since it names a git tag and a page."""

from __future__ import annotations

import re

__all__ = ["UNRELEASED", "version_problem"]

# The word that names the changes not yet released (page changes/unreleased/), so no version may be it.
UNRELEASED = "unreleased"
# A version names the tag record-<version> and the page changes/<version>/, so it is one path
# segment that reads the same on every file system: letters, digits, dots, hyphens, underscores.
_VERSION = re.compile(r"[0-9A-Za-z](?:[0-9A-Za-z._-]*[0-9A-Za-z])?")


def version_problem(text: str) -> str | None:
    """Why ``text`` cannot be a release version, or None when it can."""
    if _VERSION.fullmatch(text) is None or ".." in text:
        return "expected letters, digits, dots, hyphens and underscores, starting and ending with a letter or digit"
    if text.lower() == UNRELEASED:
        return f"'{UNRELEASED}' names the changes not yet released"
    return None
