"""Units of work of a hunt: one map, one magnitude range, one set of limits, and what deciding it gave.

A ``Unit`` is everything a worker needs; ``run_unit`` decides it with the hunt engine
(builder.search.engine.hunt_range) and returns a ``UnitResult``: the cycles met, the unresolved
starts, and a checksum.  A unit is a pure function of its fields (builder.search.definition: the
fate of each start depends on that start alone), so running it twice, on any machine, in any
order, gives the same result and the same checksum; that is what lets a cluster lose a worker
and run the unit again, a ledger skip what it has, and a recheck compare two runs.

The checksum is a SHA-256 over a canonical text of the mathematics only: the map's constants,
the range, the limits, the members of the cycles met (in start order), the unresolved starts with
their reasons, and the total step count (``HuntResult.steps``: for every start decided by event
(a) or (b) of the definition, the step at which that happened).  Nothing about the engine, the
machine or the time enters it.  The unit's ``key`` names it for a cluster and a ledger: a digest
of its fields and of the program version, since another version may define a hunt otherwise.

This module imports neither numpy nor anything of a cluster: the engine is imported when a unit
runs, so a process that only reads results does without it.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass
from typing import Any

from builder import __version__
from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import parse_decimal, to_decimal
from builder.search.definition import HuntResult, canonical_member, cycle_at, hunt_result, order_key
from builder.search.survey import REASONS

__all__ = [
    "UNIT_FORMAT",
    "Unit",
    "UnitResult",
    "UnitResultError",
    "checksum_of",
    "map_text",
    "result_from_json",
    "result_to_json",
    "run_unit",
]

#: Names the canonical texts below; a change to them is a change of this name.
UNIT_FORMAT = "periplus-unit/1"


class UnitResultError(ValueError):
    """A stored unit result that does not hold: malformed, not an orbit of the map, or another checksum."""


def map_text(mapping: AffineMap) -> str:
    """The map's definition as one canonical line: the modulus, then each branch's multiplier and increment."""
    branches = " ".join(f"{to_decimal(a)},{to_decimal(b)}" for a, b in mapping.branches)
    return f"mod {to_decimal(mapping.modulus)}: {branches}"


@dataclass(frozen=True, slots=True)
class Unit:
    """The starts with ``low`` <= |n| <= ``high`` of one map, to be decided under the given limits."""

    mapping: AffineMap
    low: int
    high: int
    max_steps: int
    max_bits: int
    max_work: int

    def text(self) -> str:
        """The unit as canonical text (a part of every checksum of its results)."""
        return (
            f"{UNIT_FORMAT}\nmap {map_text(self.mapping)}\nrange {to_decimal(self.low)}..{to_decimal(self.high)}\n"
            f"limits steps={self.max_steps} bits={self.max_bits} work={self.max_work}\n"
        )

    @property
    def key(self) -> str:
        """The unit's name for a cluster and a ledger: its fields and the program version, digested."""
        digest = hashlib.sha256(f"periplus {__version__}\n{self.text()}".encode()).hexdigest()
        return f"periplus-unit-{digest[:40]}"

    def starts(self) -> int:
        """How many starts the unit holds (both signs; 0 once)."""
        return 2 * (self.high - self.low + 1) - (self.low == 0)


@dataclass(frozen=True, slots=True)
class UnitResult:
    """What deciding a unit gave, its checksum, and the worker that ran it (a name, for reports only)."""

    unit: Unit
    result: HuntResult
    checksum: str
    worker: str = ""


def checksum_of(unit: Unit, result: HuntResult) -> str:
    """SHA-256 (hex) over the canonical text of the unit and of what deciding it gave (see the module docstring)."""
    h = hashlib.sha256(unit.text().encode())
    for c in sorted(result.cycles, key=order_key):
        h.update(("cycle " + " ".join(map(to_decimal, result.cycles[c].members)) + "\n").encode())
    for s in sorted(result.unresolved, key=order_key):
        h.update(f"unresolved {to_decimal(s)} {result.reasons.get(s, 'steps')}\n".encode())
    h.update(f"steps {to_decimal(result.steps)}\n".encode())
    return h.hexdigest()


def run_unit(unit: Unit, worker: str = "") -> UnitResult:
    """Decide every start of ``unit`` (builder.search.engine.hunt_range) and return the result with its checksum."""
    # Imported with numpy when a unit runs: a process that only reads ledgers does without it.
    from builder.search.engine import hunt_range

    result = hunt_range(unit.mapping, unit.low, unit.high, unit.max_steps, unit.max_bits, unit.max_work)
    return UnitResult(unit, result, checksum_of(unit, result), worker)


# --- results as JSON (a ledger's rows) ---------------------------------------------------------


def result_to_json(result: HuntResult) -> str:
    """A unit's result as compact JSON, every integer as a decimal string (members, starts, steps)."""
    data = {
        "cycles": [[to_decimal(v) for v in cycle.members] for cycle in result.cycles.values()],
        "unresolved": [[to_decimal(s), result.reasons.get(s, "steps")] for s in result.unresolved],
        "steps": to_decimal(result.steps),
    }
    return json.dumps(data, separators=(",", ":"))


def result_from_json(unit: Unit, text: str, checksum: str, known: dict[int, CycleFound] | None = None) -> HuntResult:
    """The result ``result_to_json`` wrote for ``unit``, checked: every cycle is an orbit of the map (exact
    iteration; ``known`` holds cycles checked before and gains the new ones), every unresolved start lies
    in the unit and has a known reason, and the result has ``checksum`` (UnitResultError otherwise)."""
    known = {} if known is None else known
    try:
        data: Any = json.loads(text)
        cycles: dict[int, CycleFound] = {}
        for item in data["cycles"]:
            members = tuple(parse_decimal(v) for v in item)
            cycle = known.get(members[0])
            if cycle is None:
                if canonical_member(members) != members[0] or len(set(members)) != len(members):
                    raise UnitResultError(f"cycle {members[0]}: expected its members once round from the least")
                cycle = cycle_at(unit.mapping, members[0], len(members))
                known[members[0]] = cycle
            if cycle.members != members:
                raise UnitResultError(f"cycle {members[0]}: expected an orbit of the map, got other members")
            cycles[members[0]] = cycle
        reasons: dict[int, str] = {}
        for start_text, reason in data["unresolved"]:
            start = parse_decimal(start_text)
            if not unit.low <= abs(start) <= unit.high or reason not in REASONS:
                raise UnitResultError(f"unresolved start {start}: expected one of the unit, with a known reason")
            reasons[start] = reason
        result = hunt_result(unit.low, unit.high, cycles, reasons)
        steps = parse_decimal(data["steps"])
    except UnitResultError:
        raise
    except (AssertionError, KeyError, TypeError, ValueError, IndexError) as exc:
        raise UnitResultError(f"expected a unit result, got {type(exc).__name__}: {exc}") from None
    result.steps = steps
    found = checksum_of(unit, result)
    if found != checksum:
        raise UnitResultError(f"expected a result with checksum {checksum}, got one with checksum {found}")
    return result
