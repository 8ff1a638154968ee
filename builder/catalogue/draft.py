"""``periplus draft``: turn a number or a word into a complete, correct catalogue entry.

The contributor gives a map and either a start or a word; the cycle is
derived exactly, normalised to its canonical member, checked against the
catalogue for duplicates, and written in the catalogue format with every
claim filled in and the provenance left for the contributor.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass
from pathlib import Path

from builder.arith.dynamics import AffineMap, CycleFound, EntersCycle, Unresolved, from_canonical, trace
from builder.arith.integers import DECIMAL_INTEGER, parse_decimal, show
from builder.arith.words import least_period, word_text
from builder.catalogue.derive import solve_word
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.catalogue.limits import Limits
from builder.catalogue.model import PLACEHOLDER, Catalogue
from builder.errors import UsageError

__all__ = ["Draft", "draft_cycle", "parse_word"]


def parse_word(text: str, modulus: int) -> tuple[int, ...]:
    """A word as given on the command line: digits (modulus <= 10) or comma-separated residues."""
    parts = text.split(",") if "," in text or modulus > 10 else list(text)
    residues = []
    for part in parts:
        part = part.strip()
        if not part.isdigit() or not 0 <= int(part) < modulus:
            raise UsageError(f"--word: expected residues 0..{modulus - 1}, got '{part}'")
        residues.append(int(part))
    if not residues:
        raise UsageError("--word: expected at least one residue, got none")
    return tuple(residues)


@dataclass(frozen=True, slots=True)
class Draft:
    """The outcome: the entry text and where it belongs, or why there is none."""

    text: str | None
    path: Path | None
    message: str
    ok: bool


def draft_cycle(
    catalogue: Catalogue,
    root: Path,
    map_id: str,
    start: str | None,
    word: str | None,
    limits: Limits,
    today: _dt.date | None = None,
) -> Draft:
    """Derive the cycle through ``start`` (or following ``word``) and draft its entry."""
    entry = catalogue.maps.get(map_id)
    if entry is None:
        raise UsageError(f"expected a map id of the catalogue, got '{map_id}' (no valid maps/{map_id}.yaml)")
    mapping: AffineMap = entry.dynamics
    if start is not None:
        if DECIMAL_INTEGER.fullmatch(start.strip()) is None:
            raise UsageError(f"--start: expected a decimal integer, got '{start[:40]}'")
        n = parse_decimal(start.strip())
    else:
        assert word is not None
        residues = parse_word(word, mapping.modulus)
        period = least_period(residues)
        if period < len(residues):
            unit = word_text(residues[:period], mapping.modulus)
            return Draft(None, None, f"the word repeats {unit}; a cycle's word is its least period: use {unit}", False)
        solved = solve_word(mapping, residues)
        if solved.fraction is None:
            return Draft(None, None, "the cycle equation does not fix a start for this word (m^k - A = 0)", False)
        num, den = solved.fraction
        if den != 1:
            return Draft(
                None, None,
                f"no integer cycle follows this word: n = B / (m^k - A) = {show(num)}/{show(den)}", False,
            )  # fmt: skip
        n = num
    outcome = trace(mapping, n, limits.max_steps, limits.max_bits, limits.max_work)
    if isinstance(outcome, EntersCycle):
        c = from_canonical(outcome.cycle)
        return Draft(
            None, None,
            f"{show(n)} is not on a cycle: its orbit enters the cycle through {show(c.members[0])} "
            f"(length {len(c.members)}) after {outcome.steps} steps; draft that one with --start {show(c.members[0])}",
            False,
        )  # fmt: skip
    if isinstance(outcome, Unresolved):
        return Draft(
            None, None,
            f"the orbit of {show(n)} neither returned nor repeated within {limits.max_steps} steps, "
            "the size limit and the work budget (raise --max-steps, --max-bits or --max-work to look further)",
            False,
        )  # fmt: skip
    assert isinstance(outcome, CycleFound)
    if word is not None and outcome.word != residues:
        return Draft(
            None, None, f"the cycle equation gives n = {show(n)}, but its orbit does not follow the word", False
        )
    cycle = from_canonical(outcome)
    canonical = cycle.members[0]
    for existing in catalogue.cycles.get(map_id, ()):
        if existing.canonical == canonical:
            return Draft(
                None, existing.path,
                f"already catalogued: {existing.path} holds the cycle through {show(canonical)}", False,
            )  # fmt: skip
    found_on = (today or _dt.date.today()).isoformat()
    text = entry_text(
        map_id, cycle, mapping.modulus, f"{PLACEHOLDER}: who found it", found_on, f"{PLACEHOLDER}: how it was found"
    )
    path = root / "cycles" / map_id / f"{cycle_file_id(canonical)}.yaml"
    return Draft(text, path, f"cycle through {show(canonical)}, length {len(cycle.members)}", True)
