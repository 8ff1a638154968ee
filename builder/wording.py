"""Small pieces of English shared by messages, reports and pages."""

from __future__ import annotations

__all__ = ["count"]


def count(n: int, one: str, many: str | None = None) -> str:
    """``n`` with its noun: "1 cycle", "3 cycles"; ``many`` when the plural is not ``one`` + "s"."""
    return f"{n} {one}" if n == 1 else f"{n} {many if many is not None else one + 's'}"
