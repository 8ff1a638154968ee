"""The limits of a verification: how far each orbit is followed, and which coverage claims are re-run."""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["DEFAULT_MAX_STEPS", "DEFAULT_RECHECK_UP_TO", "Limits"]

#: Steps after which verification gives up on an orbit (a hunt has its own, smaller default).
DEFAULT_MAX_STEPS = 1_000_000
#: Coverage claims with a bound up to this are re-run by every verification.
DEFAULT_RECHECK_UP_TO = 100_000


@dataclass(frozen=True, slots=True)
class Limits:
    """Bounds on each trace: steps, and member size in bits (None: grows with the entry's size)."""

    max_steps: int = DEFAULT_MAX_STEPS
    max_bits: int | None = None
    recheck_up_to: int = DEFAULT_RECHECK_UP_TO
