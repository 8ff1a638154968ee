"""What ``periplus hunt`` prints and writes after a search: the report, the engine's summary, the drafts.

``report`` lists the cycles met (within and beyond the bound, catalogued or new), the catalogued
cycles of the covered range not found, the unresolved starts and what was covered;
``engine_lines`` says how the units of a clustered or ledgered hunt went (run, read back,
rechecked, and every disagreement); ``write_drafts`` writes an entry for each new cycle.
"""

from __future__ import annotations

import datetime as _dt
from pathlib import Path
from typing import IO

from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import show
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.catalogue.fields import BASIN_LIMIT
from builder.catalogue.model import PLACEHOLDER, Cycle
from builder.search.cluster import HuntEnd
from builder.search.survey import Survey

__all__ = [
    "FOUND_BY_PLACEHOLDER",
    "UNRESOLVED_SHOWN",
    "engine_lines",
    "number",
    "ranges_text",
    "report",
    "write_drafts",
]

FOUND_BY_PLACEHOLDER = f"{PLACEHOLDER}: who found it"
UNRESOLVED_SHOWN = 50
#: How the report names each reason a start is left unresolved (builder.search.definition).
REASON_TEXT = {"steps": "step limit", "magnitude": "magnitude limit", "work": "work limit"}


# --- the report ------------------------------------------------------------------------------


def number(value: int) -> str:
    """A count or magnitude with thousands separators (short form when huge)."""
    return f"{value:,}" if value.bit_length() < 1000 else show(value)


def _formula(mapping: AffineMap) -> str:
    m = mapping.modulus
    parts = []
    for i, (a, b) in enumerate(mapping.branches):
        if b == 0:
            top = "n" if a == 1 else f"{show(a)}n"
            text = f"{top}/{m}"
        else:
            lead = "n" if a == 1 else "-n" if a == -1 else f"{show(a)}n"
            text = f"({lead} {'+' if b > 0 else '-'} {show(abs(b))})/{m}"
        parts.append(f"{text} if n = {i}")
        if len(parts) == 6 and m > 6:
            parts.append("...")
            break
    return f"T(n) = {', '.join(parts)} (mod {m})"


def ranges_text(ranges: list[tuple[int, int]]) -> str:
    if not ranges:
        return "none"
    texts = [f"{number(lo)}..{number(hi)}" for lo, hi in ranges]
    return texts[0] if len(texts) == 1 else ", ".join(texts[:-1]) + " and " + texts[-1]


def _residues(mapping: AffineMap, cycle: CycleFound) -> str:
    counts = [0] * mapping.modulus
    for r in cycle.word:
        counts[r] += 1
    if mapping.modulus == 2:
        return str(counts[1])
    return "/".join(map(str, counts))


def _table(mapping: AffineMap, cycles: dict[int, CycleFound], known: dict[int, Cycle], out: IO[str]) -> None:
    header = [
        "least member",
        "length",
        "odd steps" if mapping.modulus == 2 else "residue counts",
        "minimum",
        "maximum",
        "catalogue",
    ]
    rows = [header]
    for c, cycle in cycles.items():
        entry = known.get(c)
        rows.append(
            [
                show(c),
                number(len(cycle.members)),
                _residues(mapping, cycle),
                show(min(cycle.members)),
                show(max(cycle.members)),
                f"catalogued ({entry.id})" if entry is not None else "new",
            ]
        )
    widths = [max(len(row[i]) for row in rows) for i in range(len(header))]
    for row in rows:
        print("  " + "  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip(), file=out)


def report(survey: Survey, known: dict[int, Cycle], out: IO[str], save: Path | None) -> None:
    mapping = survey.mapping
    bound = survey.bound
    print(f"hunt of {survey.map_id}: {_formula(mapping)}", file=out)
    print(
        f"limits per start: at most {number(survey.max_steps)} steps, members of at most {number(survey.max_bits)} bits",
        file=out,
    )
    within = {c: cy for c, cy in survey.cycles.items() if abs(c) <= bound}
    beyond = {c: cy for c, cy in survey.cycles.items() if abs(c) > bound}
    print(file=out)
    print(f"cycles with least |member| at most {number(bound)}: {len(within)}", file=out)
    if within:
        _table(mapping, within, known, out)
    print(file=out)
    if beyond:
        print(
            f"cycles beyond the bound (least |member| above {number(bound)}, met from starts in the range): {len(beyond)}",
            file=out,
        )
        _table(mapping, beyond, known, out)
    else:
        print("cycles beyond the bound: none", file=out)
    missing = [
        entry
        for c, entry in known.items()
        if c not in survey.cycles and any(lo <= abs(c) <= hi for lo, hi in survey.ranges)
    ]
    if missing:
        print(file=out)
        print("catalogued cycles in the covered range not found under these limits:", file=out)
        for entry in missing:
            note = "its least member is unresolved" if entry.canonical in survey.reasons else "NOT FOUND"
            print(
                f"  {entry.id} (least member {show(entry.canonical)}, length {number(entry.length)}): {note}", file=out
            )
    print(file=out)
    unresolved = list(survey.reasons.items())
    if not unresolved:
        print("unresolved starts: none", file=out)
    else:
        print(f"unresolved starts: {number(len(unresolved))}", file=out)
        for s, reason in unresolved[:UNRESOLVED_SHOWN]:
            print(f"  {show(s)} ({REASON_TEXT[reason]})", file=out)
        if len(unresolved) > UNRESOLVED_SHOWN:
            rest = len(unresolved) - UNRESOLVED_SHOWN
            where = f"{save} has the full list" if save is not None else "--save FILE keeps the full list"
            print(f"  ... and {number(rest)} more; {where}", file=out)
    print(file=out)
    if survey.ranges == [(0, bound)] and bound <= BASIN_LIMIT:
        _basins(survey, out)
    new = sum(1 for c in survey.cycles if c not in known)
    gaps = survey.gaps()
    covered = (
        f"covered every start with |n| in {ranges_text(survey.ranges)} ({number(survey.starts())} starts)"
        if survey.ranges
        else "covered no starts"
    )
    text = (
        f"{covered} of bound {number(bound)}: "
        f"{len(within)} cycles within the bound, {len(beyond)} beyond, {new} new, {number(len(unresolved))} unresolved"
    )
    if gaps:
        text += f"; not covered: {ranges_text(gaps)}"
    print(text, file=out)


def _basins(survey: Survey, out: IO[str]) -> None:
    """Where every start of the hunt ends: the basin of each cycle (builder.search.basins), as a claim gives it."""
    from builder.search.basins import basins  # with numba: only where basins are counted

    found = basins(survey.mapping, survey.bound, survey.max_steps, survey.max_bits, survey.max_work, survey.reasons)
    total = found.starts
    print(f"where the {number(total)} starts end (basins; a claim's basins and unknown):", file=out)
    rows = [["cycle through", "starts", "share", "first start"]]
    for basin in found.basins:
        rows.append([show(basin.cycle), number(basin.starts), f"{100 * basin.starts / total:.2f}%", show(basin.first)])
    if found.unknown:
        rows.append(["unknown", number(found.unknown), f"{100 * found.unknown / total:.2f}%", ""])
    widths = [max(len(row[i]) for row in rows) for i in range(4)]
    for row in rows:
        print("  " + "  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip(), file=out)
    print(file=out)


# --- drafts ----------------------------------------------------------------------------------


def _method(survey: Survey, canonical: int) -> str:
    text = (
        f"periplus hunt: every start n with |n| in {ranges_text(survey.ranges)} followed exactly until it "
        f"returned to itself, reached a value of smaller magnitude (or +|n| from a negative n) or repeated, "
        f"for at most {number(survey.max_steps)} steps and members of at most {number(survey.max_bits)} bits; "
        "this file's start is the cycle's least |member|"
    )
    if abs(canonical) > survey.bound:
        text += f", which lies beyond the hunt's bound {number(survey.bound)}"
    return text


def write_drafts(survey: Survey, known: dict[int, Cycle], folder: Path, out: IO[str]) -> None:
    today = _dt.date.today()
    target = folder / "cycles" / survey.map_id
    for c, cycle in survey.cycles.items():
        if c in known:
            continue
        path = target / f"{cycle_file_id(c)}.yaml"
        if path.exists():
            print(f"draft {path} exists already; left as it was", file=out)
            continue
        target.mkdir(parents=True, exist_ok=True)
        text = entry_text(
            survey.map_id, cycle, survey.mapping.modulus, FOUND_BY_PLACEHOLDER, today.isoformat(), _method(survey, c)
        )
        path.write_text(text, encoding="utf-8")
        print(f"wrote draft {path} (fill in provenance.found_by)", file=out)


# --- the engine's summary ----------------------------------------------------------------------


def engine_lines(end: HuntEnd, engine: str, ledger: Path | None) -> list[str]:
    """How the units of a hunt went: run, read back from the ledger, rechecked, and each disagreement."""
    lines = []
    if ledger is not None:
        lines.append(
            f"units: {number(end.units_run)} run, {number(end.units_reused)} read back from the ledger {ledger}"
        )
    elif end.units_run:
        lines.append(f"units: {number(end.units_run)} run")
    if end.rechecked:
        where = "on another worker" if engine == "dask" else "in this machine's processes"
        if end.rechecked_alone:
            where += f" ({number(end.rechecked_alone)} on the same worker, for want of another)"
        verdict = "all agree" if not end.disagreements else f"{len(end.disagreements)} DISAGREE"
        lines.append(f"rechecked {number(end.rechecked)} units {where}: {verdict}")
    for d in end.disagreements:
        lines.append(
            f"DISAGREEMENT on magnitudes {number(d.low)}..{number(d.high)}: checksum {d.first} from {d.first_worker}, "
            f"{d.second} from {d.second_worker}; the report holds the first, so it is not to be trusted"
        )
    return lines
