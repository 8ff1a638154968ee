"""The limits of a verification: how far and how hard each orbit is followed, how far coverage claims are re-run
and how many words census claims may try."""

from __future__ import annotations

from dataclasses import dataclass

from builder.arith.dynamics import DEFAULT_MAX_WORK

__all__ = [
    "DEFAULT_CENSUS_WORDS",
    "DEFAULT_MAX_STEPS",
    "DEFAULT_MAX_WORK",
    "DEFAULT_RECHECK_UP_TO",
    "MAP_WORK_ORBITS",
    "NO_RECHECK",
    "Limits",
]

#: Steps after which verification gives up on an orbit (a hunt has its own, smaller default).
DEFAULT_MAX_STEPS = 1_000_000
#: Coverage claims are re-run for every start with |n| up to this (or their bound, if smaller).
DEFAULT_RECHECK_UP_TO = 100_000
#: ``recheck_up_to`` that re-runs no claim at all (commands that need only the entries).
NO_RECHECK = -1
#: Census claims may have this many words tried in all (the maps of one multiplier share them): every length
#: up to 26, or the lengths up to 30 that a family's census needs, about a second each on one core.
DEFAULT_CENSUS_WORDS = 100_000_000
#: The coverage claims of one map may take this many orbits' work (``max_work``) in all.
MAP_WORK_ORBITS = 2


@dataclass(frozen=True, slots=True)
class Limits:
    """Bounds on each orbit: steps, member size in bits (None: grows with the entry's size) and work in
    bit-operations; how far coverage claims are searched again, and how many words census claims may try."""

    max_steps: int = DEFAULT_MAX_STEPS
    max_bits: int | None = None
    recheck_up_to: int = DEFAULT_RECHECK_UP_TO
    max_work: int = DEFAULT_MAX_WORK
    census_words: int = DEFAULT_CENSUS_WORDS

    @property
    def map_work(self) -> int:
        """The work the coverage claims of one map may take in all."""
        return MAP_WORK_ORBITS * self.max_work
