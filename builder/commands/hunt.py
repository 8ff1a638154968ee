"""``periplus hunt``: search a catalogued map for cycles among all starts up to a bound.

    periplus hunt MAP --bound N [--from A --to B] [--jobs J] [--catalogue DIR]
                  [--max-steps S] [--max-bits B] [--save FILE] [--merge FILE ...] [--drafts DIR]

Every start n with A <= |n| <= B (by default 0 <= |n| <= N) is decided as
builder.hunt defines it; the range is cut into chunks shared by J processes
and the chunks' results are merged by union, so the output is the same for
any J.  --from/--to restrict the magnitudes this run covers to a slice of
0..N; N still decides which cycles count as "beyond the bound".  --save
writes the result as JSON; --merge joins saved results of disjoint slices
(same map, bound and limits) and reports their union exactly as one run
over it would, naming any gaps.  --drafts writes a catalogue entry for each
cycle the catalogue does not have yet.

Exit status: 0 on success, 1 when the catalogue does not verify, 2 for
usage errors, 130 when interrupted (after reporting what was covered).
"""

from __future__ import annotations

import argparse
import datetime as _dt
import difflib
import json
import multiprocessing
import os
import signal
import sys
import time
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import parse_decimal, show, to_decimal
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.catalogue.model import PLACEHOLDER, Cycle
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.options import natural, positive
from builder.errors import PeriplusError, UsageError
from builder.search import engine as _fastiter
from builder.search.definition import (
    DEFAULT_MAX_BITS,
    DEFAULT_MAX_STEPS,
    HuntResult,
    canonical_member,
    cycle_at,
    merge_results,
    order_key,
)

__all__ = ["add_hunt_command", "run_hunt"]

FORMAT = "periplus-hunt/1"
FOUND_BY_PLACEHOLDER = f"{PLACEHOLDER}: who found it"
UNRESOLVED_SHOWN = 50
# Chunks: at most this many magnitudes each, and about this many per process.
_CHUNK_MAX = 1 << 16
_CHUNKS_PER_JOB = 16


# --- arguments -----------------------------------------------------------------------------


def add_hunt_command(subparsers: Any) -> argparse.ArgumentParser:
    """Add the ``hunt`` command to an argparse subparsers object; its ``run`` default is run_hunt."""
    hunt: argparse.ArgumentParser = subparsers.add_parser(
        "hunt",
        help="search a map for cycles among all starts up to a bound",
        description="Follow every start n with |n| up to a bound exactly and report the cycles met, "
        "marked as catalogued or new, and every start whose orbit was not decided within the limits. "
        "Exit 0 on success, 1 when the catalogue does not verify, 2 for usage errors, 130 when interrupted.",
    )
    hunt.add_argument(
        "map", nargs="?", metavar="MAP", help="id of a map in the catalogue (from the saved files with --merge)"
    )
    hunt.add_argument(
        "--bound", type=natural, metavar="N", help="cover every start with |n| <= N (required unless --merge)"
    )
    hunt.add_argument("--from", dest="low", type=natural, metavar="A", help="cover only magnitudes from A (default 0)")
    hunt.add_argument("--to", dest="high", type=natural, metavar="B", help="cover only magnitudes up to B (default N)")
    hunt.add_argument(
        "--jobs",
        type=positive,
        default=os.cpu_count() or 1,
        metavar="J",
        help="processes to share the range (default: the number of CPUs); the result does not depend on it",
    )
    hunt.add_argument(
        "--catalogue",
        type=Path,
        default=Path("catalogue"),
        metavar="DIR",
        help="catalogue directory (default: catalogue)",
    )
    hunt.add_argument(
        "--max-steps",
        type=positive,
        default=DEFAULT_MAX_STEPS,
        metavar="S",
        help=f"leave a start unresolved after S steps (default {DEFAULT_MAX_STEPS:,})",
    )
    hunt.add_argument(
        "--max-bits",
        type=positive,
        default=DEFAULT_MAX_BITS,
        metavar="B",
        help=f"leave a start unresolved once a member exceeds B bits (default {DEFAULT_MAX_BITS:,})",
    )
    hunt.add_argument("--save", type=Path, metavar="FILE", help="write the result as JSON, for --merge")
    hunt.add_argument(
        "--merge", type=Path, nargs="+", metavar="FILE", help="report the union of saved results instead of hunting"
    )
    hunt.add_argument("--drafts", type=Path, metavar="DIR", help="write a catalogue entry under DIR for each new cycle")
    hunt.set_defaults(run=run_hunt)
    return hunt


# --- the result of a run, or of merged runs --------------------------------------------------


@dataclass(slots=True)
class Survey:
    """Disjoint magnitude ranges covered for one map under one bound and limits, and what they gave."""

    map_id: str
    mapping: AffineMap
    bound: int
    max_steps: int
    max_bits: int
    ranges: list[tuple[int, int]] = field(default_factory=list)
    cycles: dict[int, CycleFound] = field(default_factory=dict)
    reasons: dict[int, str] = field(default_factory=dict)  # unresolved start -> "steps" | "magnitude"

    def absorb(self, pieces: Iterable[HuntResult]) -> None:
        """Add the results of ranges disjoint from those already covered (ValueError on overlap)."""
        pieces = list(pieces)
        joined = merge_results([HuntResult(hi, {}, [], lo) for lo, hi in self.ranges] + pieces)
        for piece in pieces:
            for c, cycle in piece.cycles.items():
                self.cycles.setdefault(c, cycle)
            for s in piece.unresolved:
                self.reasons[s] = piece.reasons.get(s, "steps")
        self.ranges = [(p.low, p.bound) for p in joined]
        self.cycles = dict(sorted(self.cycles.items(), key=lambda kv: order_key(kv[0])))
        self.reasons = {s: self.reasons[s] for s in sorted(self.reasons, key=order_key)}

    def pieces(self) -> list[HuntResult]:
        """The covered ranges as results, each with its unresolved starts (the cycles go with the first)."""
        out = []
        for i, (lo, hi) in enumerate(self.ranges):
            starts = [s for s in self.reasons if lo <= abs(s) <= hi]
            out.append(
                HuntResult(hi, dict(self.cycles) if i == 0 else {}, starts, lo, {s: self.reasons[s] for s in starts})
            )
        return out

    def gaps(self) -> list[tuple[int, int]]:
        """Magnitude ranges of 0..bound not covered."""
        out = []
        at = 0
        for lo, hi in self.ranges:
            if lo > at:
                out.append((at, lo - 1))
            at = hi + 1
        if at <= self.bound:
            out.append((at, self.bound))
        return out

    def starts(self) -> int:
        return sum(2 * (hi - lo + 1) - (lo == 0) for lo, hi in self.ranges)


# --- running ---------------------------------------------------------------------------------


def _ignore_sigint() -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _work(task: tuple[AffineMap, int, int, int, int]) -> HuntResult:
    mapping, lo, hi, max_steps, max_bits = task
    return _fastiter.hunt_range(mapping, lo, hi, max_steps, max_bits)


def _chunks(low: int, high: int, jobs: int) -> list[tuple[int, int]]:
    count = high - low + 1
    size = max(1, min(_CHUNK_MAX, -(-count // (jobs * _CHUNKS_PER_JOB))))
    return [(lo, min(high, lo + size - 1)) for lo in range(low, high + 1, size)]


class _Progress:
    """Done/total starts, rate and time left on one terminal line; silent when the stream is not a terminal."""

    def __init__(self, stream: IO[str], total: int) -> None:
        self.stream = stream
        self.total = total
        self.live = stream.isatty()
        self.began = time.monotonic()
        self.shown = 0.0

    def update(self, done: int) -> None:
        if not self.live:
            return
        now = time.monotonic()
        if now - self.shown < 0.1 and done < self.total:
            return
        self.shown = now
        elapsed = max(now - self.began, 1e-9)
        rate = done / elapsed
        left = (self.total - done) / rate if rate > 0 else 0.0
        minutes, seconds = divmod(int(left + 0.5), 60)
        self.stream.write(f"\r{done:,}/{self.total:,} starts  {rate:,.0f}/s  {minutes}:{seconds:02d} left  ")
        self.stream.flush()

    def close(self) -> None:
        if self.live:
            self.stream.write("\n")
            self.stream.flush()


def _starts_in(lo: int, hi: int) -> int:
    return 2 * (hi - lo + 1) - (lo == 0)


def _compute(survey: Survey, low: int, high: int, jobs: int, err: IO[str]) -> tuple[bool, dict[int, CycleFound]]:
    """Hunt low..high into ``survey``; on Ctrl-C keep the contiguous prefix done.

    Returns (interrupted, cycles found in chunks completed past that prefix).
    """
    chunks = _chunks(low, high, jobs)
    tasks = [(survey.mapping, lo, hi, survey.max_steps, survey.max_bits) for lo, hi in chunks]
    done: dict[int, HuntResult] = {}
    progress = _Progress(err, sum(_starts_in(lo, hi) for lo, hi in chunks))
    finished = 0
    interrupted = False
    try:
        progress.update(0)
        if jobs == 1 or len(tasks) == 1:
            for i, task in enumerate(tasks):
                done[i] = _work(task)
                finished += _starts_in(*chunks[i])
                progress.update(finished)
        else:
            # fork where the platform has it: children start at once and need not re-import the
            # entry script (spawn would re-run one that lacks an ``if __name__ == "__main__"`` guard).
            method = "fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn"
            context = multiprocessing.get_context(method)
            with context.Pool(min(jobs, len(tasks)), initializer=_ignore_sigint) as pool:
                try:
                    for i, result in pool.imap_unordered(_indexed, enumerate(tasks)):
                        done[i] = result
                        finished += _starts_in(*chunks[i])
                        progress.update(finished)
                except BaseException:
                    pool.terminate()
                    raise
    except KeyboardInterrupt:
        interrupted = True
    finally:
        progress.close()
    prefix = []
    for i in range(len(tasks)):
        if i not in done:
            break
        prefix.append(done.pop(i))
    survey.absorb(prefix)
    extra: dict[int, CycleFound] = {}
    for result in done.values():
        for c, cycle in result.cycles.items():
            if c not in survey.cycles:
                extra.setdefault(c, cycle)
    return interrupted, dict(sorted(extra.items(), key=lambda kv: order_key(kv[0])))


def _indexed(item: tuple[int, tuple[AffineMap, int, int, int, int]]) -> tuple[int, HuntResult]:
    return item[0], _work(item[1])


# --- saving and merging ----------------------------------------------------------------------


def _save(survey: Survey, path: Path) -> None:
    data = {
        "format": FORMAT,
        "map": {
            "id": survey.map_id,
            "modulus": to_decimal(survey.mapping.modulus),
            "branches": [
                {"residue": i, "multiplier": to_decimal(a), "increment": to_decimal(b)}
                for i, (a, b) in enumerate(survey.mapping.branches)
            ],
        },
        "bound": to_decimal(survey.bound),
        "limits": {"max_steps": survey.max_steps, "max_bits": survey.max_bits},
        "covered": [{"from": to_decimal(lo), "to": to_decimal(hi)} for lo, hi in survey.ranges],
        "cycles": [
            {
                "canonical": to_decimal(c),
                "length": len(cycle.members),
                "members": [to_decimal(v) for v in cycle.members],
            }
            for c, cycle in survey.cycles.items()
        ],
        "unresolved": [{"start": to_decimal(s), "reason": r} for s, r in survey.reasons.items()],
    }
    path.write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")


def _load(path: Path) -> Survey:
    """Read a saved result, checking every cycle in it by exact iteration."""

    def bad(why: str) -> UsageError:
        return UsageError(f"{path}: not a saved hunt result: {why}")

    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise UsageError(f"{path}: cannot read: {exc.strerror}") from None
    except (ValueError, UnicodeDecodeError) as exc:
        raise bad(f"invalid JSON ({exc})") from None
    try:
        if data["format"] != FORMAT:
            raise bad(f"expected format '{FORMAT}', got {data['format']!r}")
        spec = data["map"]
        branches = {
            int(b["residue"]): (parse_decimal(b["multiplier"]), parse_decimal(b["increment"])) for b in spec["branches"]
        }
        modulus = parse_decimal(spec["modulus"])
        mapping = AffineMap(modulus, tuple(branches[r] for r in range(modulus)))
        survey = Survey(
            str(spec["id"]),
            mapping,
            parse_decimal(data["bound"]),
            int(data["limits"]["max_steps"]),
            int(data["limits"]["max_bits"]),
        )
        pieces = [HuntResult(parse_decimal(r["to"]), {}, [], parse_decimal(r["from"])) for r in data["covered"]]
        for item in data["cycles"]:
            members = tuple(parse_decimal(v) for v in item["members"])
            canonical = parse_decimal(item["canonical"])
            if not members or members[0] != canonical or canonical_member(members) != canonical:
                raise bad(f"cycle {show(canonical)}: members must start at the least |member|")
            cycle = cycle_at(mapping, canonical, len(members))
            if cycle.members != members or int(item["length"]) != len(members):
                raise bad(f"cycle {show(canonical)}: the members are not an orbit of the map")
            pieces[0].cycles[canonical] = cycle
        for item in data["unresolved"]:
            s = parse_decimal(item["start"])
            reason = str(item["reason"])
            home = [p for p in pieces if p.low <= abs(s) <= p.bound]
            if not home or reason not in ("steps", "magnitude"):
                raise bad(f"unresolved start {show(s)}: outside the covered ranges, or an unknown reason")
            home[0].unresolved.append(s)
            home[0].reasons[s] = reason
        survey.absorb(pieces)
    except UsageError:
        raise
    except (KeyError, TypeError, ValueError, IndexError, AssertionError) as exc:
        raise bad(f"{type(exc).__name__}: {exc}") from None
    return survey


def _merge(paths: list[Path]) -> Survey:
    surveys = [_load(p) for p in paths]
    first = surveys[0]
    for path, other in zip(paths[1:], surveys[1:], strict=True):
        for what, mine, theirs in (
            ("map", first.map_id, other.map_id),
            ("map definition", first.mapping, other.mapping),
            ("bound", first.bound, other.bound),
            ("max_steps", first.max_steps, other.max_steps),
            ("max_bits", first.max_bits, other.max_bits),
        ):
            if mine != theirs:
                raise UsageError(f"--merge: {path} has a different {what} from {paths[0]} ({theirs} against {mine})")
        try:
            first.absorb(other.pieces())
        except ValueError as exc:
            raise UsageError(f"--merge: {path}: {exc}") from None
    return first


# --- the report ------------------------------------------------------------------------------


def _n(value: int) -> str:
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


def _ranges_text(ranges: list[tuple[int, int]]) -> str:
    if not ranges:
        return "none"
    texts = [f"{_n(lo)}..{_n(hi)}" for lo, hi in ranges]
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
                _n(len(cycle.members)),
                _residues(mapping, cycle),
                show(min(cycle.members)),
                show(max(cycle.members)),
                f"catalogued ({entry.id})" if entry is not None else "new",
            ]
        )
    widths = [max(len(row[i]) for row in rows) for i in range(len(header))]
    for row in rows:
        print("  " + "  ".join(cell.ljust(w) for cell, w in zip(row, widths, strict=True)).rstrip(), file=out)


def _report(survey: Survey, known: dict[int, Cycle], out: IO[str], save: Path | None) -> None:
    mapping = survey.mapping
    bound = survey.bound
    print(f"hunt of {survey.map_id}: {_formula(mapping)}", file=out)
    print(
        f"limits per start: at most {_n(survey.max_steps)} steps, members of at most {_n(survey.max_bits)} bits",
        file=out,
    )
    within = {c: cy for c, cy in survey.cycles.items() if abs(c) <= bound}
    beyond = {c: cy for c, cy in survey.cycles.items() if abs(c) > bound}
    print(file=out)
    print(f"cycles with least |member| at most {_n(bound)}: {len(within)}", file=out)
    if within:
        _table(mapping, within, known, out)
    print(file=out)
    if beyond:
        print(
            f"cycles beyond the bound (least |member| above {_n(bound)}, met from starts in the range): {len(beyond)}",
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
            print(f"  {entry.id} (least member {show(entry.canonical)}, length {_n(entry.length)}): {note}", file=out)
    print(file=out)
    unresolved = list(survey.reasons.items())
    if not unresolved:
        print("unresolved starts: none", file=out)
    else:
        print(f"unresolved starts: {_n(len(unresolved))}", file=out)
        for s, reason in unresolved[:UNRESOLVED_SHOWN]:
            print(f"  {show(s)} ({'step limit' if reason == 'steps' else 'magnitude limit'})", file=out)
        if len(unresolved) > UNRESOLVED_SHOWN:
            rest = len(unresolved) - UNRESOLVED_SHOWN
            where = f"{save} has the full list" if save is not None else "--save FILE keeps the full list"
            print(f"  ... and {_n(rest)} more; {where}", file=out)
    print(file=out)
    new = sum(1 for c in survey.cycles if c not in known)
    gaps = survey.gaps()
    covered = (
        f"covered every start with |n| in {_ranges_text(survey.ranges)} ({_n(survey.starts())} starts)"
        if survey.ranges
        else "covered no starts"
    )
    text = (
        f"{covered} of bound {_n(bound)}: "
        f"{len(within)} cycles within the bound, {len(beyond)} beyond, {new} new, {_n(len(unresolved))} unresolved"
    )
    if gaps:
        text += f"; not covered: {_ranges_text(gaps)}"
    print(text, file=out)


# --- drafts ----------------------------------------------------------------------------------


def _method(survey: Survey, canonical: int) -> str:
    text = (
        f"periplus hunt: every start n with |n| in {_ranges_text(survey.ranges)} followed exactly until it "
        f"returned to itself, reached a value of smaller magnitude (or +|n| from a negative n) or repeated, "
        f"for at most {_n(survey.max_steps)} steps and members of at most {_n(survey.max_bits)} bits; "
        "this file's start is the cycle's least |member|"
    )
    if abs(canonical) > survey.bound:
        text += f", which lies beyond the hunt's bound {_n(survey.bound)}"
    return text


def _write_drafts(survey: Survey, known: dict[int, Cycle], folder: Path, out: IO[str]) -> None:
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


# --- the command -----------------------------------------------------------------------------


def run_hunt(args: argparse.Namespace) -> int:
    """Run ``periplus hunt`` with parsed arguments; return the exit status."""
    try:
        return _run(args, sys.stdout, sys.stderr)
    except PeriplusError as exc:
        print(f"periplus: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("periplus: interrupted before any start was covered", file=sys.stderr)
        return 130


def _run(args: argparse.Namespace, out: IO[str], err: IO[str]) -> int:
    if args.merge is None and (args.map is None or args.bound is None):
        raise UsageError("hunt: give MAP and --bound N (or --merge FILE ...)")
    if args.merge is not None and (args.low is not None or args.high is not None):
        raise UsageError("hunt: --from and --to do not apply to --merge")
    # Only the entries matter for marking cycles new or catalogued: coverage claims are not re-run here.
    report = verify_catalogue(args.catalogue, Limits(recheck_up_to=0))
    if not report.ok:
        for problem in report.problems:
            print(problem, file=out)
        print(f"{args.catalogue} does not verify ({len(report.errors)} errors); fix it before hunting", file=out)
        return 1
    maps = report.catalogue.maps
    if args.merge is not None:
        survey = _merge(list(args.merge))
        if args.map is not None and args.map != survey.map_id:
            raise UsageError(f"--merge: the files are for '{survey.map_id}', not '{args.map}'")
        if args.bound is not None and args.bound != survey.bound:
            raise UsageError(f"--merge: the files are for bound {_n(survey.bound)}, not {_n(args.bound)}")
        entry = maps.get(survey.map_id)
        if entry is None:
            raise UsageError(f"--merge: the catalogue {args.catalogue} has no map '{survey.map_id}'")
        if entry.dynamics != survey.mapping:
            raise UsageError(f"--merge: the saved results define '{survey.map_id}' otherwise than the catalogue does")
        interrupted = False
        extra: dict[int, CycleFound] = {}
    else:
        entry = maps.get(args.map)
        if entry is None:
            close = difflib.get_close_matches(args.map, list(maps), n=3)
            hint = f"; did you mean {', '.join(close)}?" if close else ""
            raise UsageError(f"hunt: no map '{args.map}' in {args.catalogue}{hint}")
        low = 0 if args.low is None else args.low
        high = args.bound if args.high is None else args.high
        if not low <= high <= args.bound:
            raise UsageError(
                f"hunt: expected 0 <= --from <= --to <= --bound, got {_n(low)}, {_n(high)}, {_n(args.bound)}"
            )
        survey = Survey(args.map, entry.dynamics, args.bound, args.max_steps, args.max_bits)
        interrupted, extra = _compute(survey, low, high, args.jobs, err)
    known = {c.canonical: c for c in report.catalogue.cycles.get(survey.map_id, ())}
    _report(survey, known, out, args.save)
    if interrupted:
        print(file=out)
        if survey.ranges:
            print(f"interrupted: only magnitudes {_ranges_text(survey.ranges)} were fully covered", file=out)
        else:
            print("interrupted before the first chunk of the range was finished: nothing was covered", file=out)
        if extra:
            listed = ", ".join(show(c) for c in extra)
            print(f"also met in chunks finished past that range (not part of the result): {listed}", file=out)
    if args.save is not None:
        _save(survey, args.save)
        print(f"saved to {args.save}", file=out)
    if args.drafts is not None:
        _write_drafts(survey, known, args.drafts, out)
    if interrupted:
        print("periplus: interrupted", file=err)
        return 130
    return 0
