"""What checking one map or cycle file gives, kept whole so that the cache can give it back
(:mod:`builder.catalogue.cache`), and the reference keys its checks asked about."""

from __future__ import annotations

from collections.abc import Callable, Collection, Iterator
from typing import NamedTuple

from builder.catalogue.files import RawFile
from builder.catalogue.model import Cycle, MapEntry
from builder.catalogue.written import WrittenEntry
from builder.errors import KeyPath, Problem

__all__ = ["Asked", "Check", "Checked", "Value"]

#: What checking a map or cycle file gives: the verified map, or a cycle with the line, column and key path
#: of its start (or word), or None.
Value = MapEntry | tuple[Cycle, int, int, KeyPath] | None
#: How a map or cycle file is checked, given the reference keys it may cite and where problems go.
Check = Callable[[RawFile, Collection[str] | None, list[Problem]], Value]


class Checked(NamedTuple):
    """Everything checking one map or cycle file gave, kept whole so that a cache can give it back.

    ``asked`` lists the reference keys the checks looked up in references.yaml, with the answers;
    a kept outcome holds again only where every answer is the same (None: none could be looked up).
    A named tuple, which the cache makes again in C: it gives back one per file of the catalogue.
    """

    problems: tuple[Problem, ...]
    written: tuple[WrittenEntry, ...]
    faulted: bool  # the loader found fault with the file: nothing from it reaches the model
    value: Value
    asked: tuple[tuple[str, bool], ...] | None

    def holds_with(self, known: Collection[str] | None) -> bool:
        """Whether the answers about reference keys are the same with ``known``."""
        asked = self.asked
        if asked is None or known is None:
            return asked is None and known is None
        return not asked or all((key in known) is found for key, found in asked)


class Asked(Collection[str]):
    """The reference keys entries may cite, noting each key asked about and the answer."""

    def __init__(self, known: Collection[str]) -> None:
        self.known = known
        self.answers: dict[str, bool] = {}
        self.whole = False  # looked at as a whole (listed or counted): the outcome depends on every key

    def __contains__(self, key: object) -> bool:
        found = key in self.known
        if isinstance(key, str):
            self.answers[key] = found
        else:
            self.whole = True
        return found

    def __iter__(self) -> Iterator[str]:
        self.whole = True
        return iter(self.known)

    def __len__(self) -> int:
        self.whole = True
        return len(self.known)
