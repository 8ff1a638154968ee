"""Re-running coverage claims: every start up to the bound, searched again, against the listed cycles.

A claim says that every cycle whose least |member| is at most its bound is listed, and that its
unresolved starts are exactly those the search cannot resolve within its limits.  Claims within the
verification's budget are re-run by the fast search engine each time; larger ones are kept as stated
(attested, not rechecked).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import replace

from builder.arith.integers import show
from builder.catalogue.limits import Limits
from builder.catalogue.model import Coverage, Cycle, MapEntry
from builder.catalogue.reader import label
from builder.errors import KeyPath, Position, Problem, Severity
from builder.search.engine import hunt_range

__all__ = ["recheck_coverage"]

Finding = tuple[str, str, Severity]  # message, code, severity


def recheck_coverage(
    entry: MapEntry,
    cycles: Mapping[int, Cycle],
    limits: Limits,
    problems: list[Problem],
    where: Callable[[KeyPath], Position],
) -> MapEntry:
    """Re-run each coverage claim within budget; report what the catalogue or the claim lacks.

    ``cycles`` are the map's verified cycles by canonical member; ``where`` gives the position of
    a key path in the map's file.
    """
    checked = []
    for i, claim in enumerate(entry.coverage):
        if claim.bound > limits.recheck_up_to:
            checked.append(claim)
            continue
        findings = _findings(entry, claim, cycles, label(("coverage", i)))
        if findings:
            at = where(("coverage", i))
            problems.extend(Problem(at, message, code, severity) for message, code, severity in findings)
        checked.append(replace(claim, rechecked=True))
    return replace(entry, coverage=tuple(checked))


def _findings(entry: MapEntry, claim: Coverage, cycles: Mapping[int, Cycle], label: str) -> list[Finding]:
    result = hunt_range(entry.dynamics, 0, claim.bound, claim.max_steps, claim.max_bits)
    findings: list[Finding] = []
    for canonical, found in result.cycles.items():
        if abs(canonical) <= claim.bound and canonical not in cycles:
            findings.append((
                f"{label}expected every cycle with least |member| up to {show(claim.bound)} to be listed, "
                f"got none for the cycle through {show(canonical)} (length {len(found.members)}), "
                f"which the search finds; add cycles/{entry.id}/<id>.yaml with start {show(canonical)}",
                "coverage-missing-cycle", Severity.ERROR,
            ))  # fmt: skip
    listed = set(claim.unresolved)
    for start in result.unresolved:
        if start not in listed:
            findings.append((
                f"{label}expected the unresolved starts to be listed, got no mention of {show(start)}, "
                f"whose orbit is not resolved within {claim.max_steps} steps and {claim.max_bits} bits",
                "coverage-unlisted-start", Severity.ERROR,
            ))  # fmt: skip
    for start in sorted(listed - set(result.unresolved), key=lambda v: (abs(v), v < 0)):
        findings.append((
            f"{label}unresolved lists {show(start)}, but its orbit is resolved within the claim's limits",
            "coverage-resolved-start", Severity.WARNING,
        ))  # fmt: skip
    return findings
