"""Units of work (builder.search.units): deterministic, idempotent, and checksummed by the mathematics alone.

Results are checked against the exact reference builder.search.definition.hunt and, for 3x+1, against
the published list of its cycles on Z: those through 0, 1, -1, -5 and -17 (J. C. Lagarias, "The 3x+1
problem and its generalizations", Amer. Math. Monthly 92 (1985) 3-23; recorded in ../shared/literature.md
with status "memory"; the engine re-derives them here from every start).
"""

from __future__ import annotations

import json
from dataclasses import replace

import pytest

import builder
from builder.arith.dynamics import AffineMap
from builder.search import units
from builder.search.definition import hunt, merge_results
from builder.search.units import Unit, UnitResultError, checksum_of, result_from_json, result_to_json, run_unit


def qx_plus_d(q: int, d: int) -> AffineMap:
    """The shortcut map T(n) = n/2 or (qn + d)/2."""
    return AffineMap(2, ((1, 0), (q, d)))


T3 = qx_plus_d(3, 1)
T5 = qx_plus_d(5, 1)
LAGARIAS_1985 = [0, 1, -1, -5, -17]  # least |member| of each cycle of 3x+1 on Z, in start order


def test_a_unit_is_a_pure_function_of_its_fields() -> None:
    unit = Unit(T3, 0, 3000, 100_000, 4096, 10**10)
    first, second = run_unit(unit), run_unit(Unit(T3, 0, 3000, 100_000, 4096, 10**10))
    assert first.result == second.result and first.checksum == second.checksum
    assert first.result.steps == second.result.steps > 0
    assert list(first.result.cycles) == LAGARIAS_1985


@pytest.mark.parametrize(
    ("mapping", "low", "high", "max_steps", "max_bits"),
    [
        (T3, 0, 2000, 100_000, 4096),
        (T3, 700, 1900, 100_000, 4096),
        (qx_plus_d(3, 5), 0, 400, 100_000, 4096),
        (T5, 0, 300, 500, 80),  # 5x+1: most starts unresolved by the magnitude limit
        (T5, 1, 40, 3, 64),  # the step limit decides
    ],
)
def test_the_checksum_is_that_of_the_exact_reference(
    mapping: AffineMap, low: int, high: int, max_steps: int, max_bits: int
) -> None:
    # The checksum digests the mathematics only: the engine's result and the reference's agree on it.
    unit = Unit(mapping, low, high, max_steps, max_bits, 10**10)
    done = run_unit(unit)
    reference = hunt(mapping, high, max_steps, max_bits, low=low, max_work=10**10)
    assert done.result == reference and done.result.steps == reference.steps
    assert done.checksum == checksum_of(unit, reference)


def test_units_of_a_range_merge_into_the_one_piece_result() -> None:
    pieces = [run_unit(Unit(T3, lo, min(lo + 249, 2000), 100_000, 4096, 10**10)) for lo in range(0, 2001, 250)]
    (merged,) = merge_results([p.result for p in pieces])
    whole = hunt(T3, 2000)
    assert merged == whole
    # The total stopping time adds up over the units (definition: a sum over the starts).
    assert sum(p.result.steps for p in pieces) == whole.steps


def test_the_checksum_changes_with_every_field_and_with_the_result() -> None:
    unit = Unit(T3, 0, 300, 100_000, 4096, 10**10)
    done = run_unit(unit)
    others = [
        replace(unit, mapping=qx_plus_d(3, -1)),
        replace(unit, low=1),
        replace(unit, high=301),
        replace(unit, max_steps=99_999),
        replace(unit, max_bits=4095),
        replace(unit, max_work=10**10 + 1),
    ]
    sums = {checksum_of(other, done.result) for other in others} | {done.checksum}
    assert len(sums) == len(others) + 1
    changed = replace(done.result, steps=done.result.steps + 1)
    assert checksum_of(unit, changed) != done.checksum
    fewer = replace(done.result, cycles={c: v for c, v in done.result.cycles.items() if c != -17})
    assert checksum_of(unit, fewer) != done.checksum


def test_the_key_names_the_fields_and_the_program_version(monkeypatch: pytest.MonkeyPatch) -> None:
    unit = Unit(T3, 0, 300, 100_000, 4096, 10**10)
    assert unit.key == Unit(T3, 0, 300, 100_000, 4096, 10**10).key
    assert unit.key != replace(unit, high=299).key
    before = unit.key
    monkeypatch.setattr(units, "__version__", builder.__version__ + ".1")
    assert unit.key != before


def test_a_result_survives_json_with_integers_as_decimal_text() -> None:
    # 3x+1 at a start of 200 digits: members beyond 64 bits are written whole (common practice, no source).
    big = 10**200
    unit = Unit(T3, big, big + 20, 100_000, 4096, 10**10)
    done = run_unit(unit)
    text = result_to_json(done.result)
    data = json.loads(text)
    assert all(isinstance(v, str) for v in [data["steps"], *(s for s, _ in data["unresolved"])])
    back = result_from_json(unit, text, done.checksum)
    assert back == done.result and back.steps == done.result.steps


def test_a_stored_result_that_does_not_hold_is_refused() -> None:
    unit = Unit(T5, 0, 60, 500, 80, 10**10)
    done = run_unit(unit)
    data = json.loads(result_to_json(done.result))
    assert data["unresolved"], "5x+1 leaves starts unresolved at 80 bits (the test needs one)"
    data["unresolved"] = data["unresolved"][1:]
    with pytest.raises(UnitResultError, match=f"^expected a result with checksum {done.checksum}, got one with"):
        result_from_json(unit, json.dumps(data), done.checksum)
    # Common practice, no source: 1 -> 3 -> 8 -> 4 -> 2 -> 1 under 5x+1, so (1, 2, 4) is no orbit.
    data = json.loads(result_to_json(done.result))
    data["cycles"] = [["1", "2", "4"]]
    with pytest.raises(UnitResultError):
        result_from_json(unit, json.dumps(data), done.checksum)
    with pytest.raises(UnitResultError, match="^expected a unit result, got"):
        result_from_json(unit, "[1, 2]", done.checksum)
