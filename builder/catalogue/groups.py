"""A catalogue's cycle files by folder (``cycles/<map id>``): the files of a folder come one after another in
the order verification reads them, so each folder's files are looked up, digested and kept aside together."""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from dataclasses import dataclass
from itertools import groupby
from typing import TypeVar

from builder.catalogue.files import RawFile

__all__ = ["FileGroups"]

T = TypeVar("T")


@dataclass(frozen=True, slots=True)
class FileGroups:
    """Each folder's path from the root and the places of its files in the list they were made from, in order
    (a folder met again after another is a run of its own, as the cache takes it: builder.catalogue.cache)."""

    places: list[tuple[str, list[int]]]

    @classmethod
    def of(cls, files: list[RawFile]) -> FileGroups:
        """The folders of ``files``, taken as runs of neighbours."""
        places = [(folder, list(at)) for folder, at in groupby(range(len(files)), key=lambda i: _folder_of(files[i]))]
        return cls(places)

    def each(self, value: Callable[[str, list[int]], T]) -> list[T]:
        """``value(folder, places)`` of each folder, given for each of its files, by place."""
        out: list[T] = []
        for folder, at in self.places:
            out += [value(folder, at)] * len(at)  # the places of the runs, in turn, are 0, 1, 2...
        return out

    def digests(self, files: list[RawFile], keys: list[tuple[bytes, str] | None]) -> dict[str, bytes]:
        """The SHA-256 of each folder's cycle files, their names and the SHA-256 of their bytes in turn (each
        name ends in .yaml, so the list reads one way), for the folders whose every file's bytes are known."""
        digests: dict[str, bytes] = {}
        for folder, at in self.places:
            parts = [files[i].rel.encode("utf-8", "surrogateescape") + b"\0" + key[0] for i in at if (key := keys[i])]
            if len(parts) == len(at):
                digests[folder] = hashlib.sha256(b"".join(parts)).digest()
        return digests


def _folder_of(file: RawFile) -> str:
    return file.rel.rpartition("/")[0]
