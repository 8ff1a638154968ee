"""``periplus hunt``: search a catalogued map for cycles among all starts up to a bound.

    periplus hunt MAP --bound N [--from A --to B] [--jobs J] [--catalogue DIR]
                  [--max-steps S] [--max-bits B] [--save FILE] [--merge FILE ...] [--drafts DIR]

Every start n with A <= |n| <= B (by default 0 <= |n| <= N) is decided as
builder.search.definition defines it; the range is cut into chunks shared by J processes
and the chunks' results are merged by union, so the output is the same for
any J.  --from/--to restrict the magnitudes this run covers to a slice of
0..N; N still decides which cycles count as "beyond the bound".  --save
writes the result as JSON; --merge joins saved results of disjoint slices
(same map, bound and limits) and reports their union exactly as one run
over it would, naming any gaps.  --drafts writes a catalogue entry for each
cycle the catalogue does not have yet.

Exit status: 0 on success, 1 when the catalogue does not verify, 2 for
usage errors, 130 when interrupted (after reporting what was covered).
The search itself (chunks, processes, saved files) is builder.search.survey;
this module parses the arguments, shows progress and writes the report.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import difflib
import os
import sys
import time
from pathlib import Path
from typing import IO

from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import show
from builder.catalogue.cache import default_cache_folder
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import PLACEHOLDER, Cycle
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.options import Subcommands, add_cache, add_command, add_max_work, natural, open_cache, positive
from builder.errors import UsageError
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS
from builder.search.survey import (
    SavedSurveyError,
    Survey,
    SurveyMismatch,
    cover,
    merge_surveys,
    save_survey,
    starts_in,
)

__all__ = ["register", "run"]

FOUND_BY_PLACEHOLDER = f"{PLACEHOLDER}: who found it"
UNRESOLVED_SHOWN = 50
#: What ``periplus`` says when Ctrl-C stops a hunt outside the search itself (the search reports its own).
INTERRUPTED = "interrupted before any start was covered"


# --- arguments -----------------------------------------------------------------------------

HELP = "search a map for cycles among all starts up to a bound"
DESCRIPTION = (
    "Follow every start n with |n| up to a bound exactly and report the cycles met, "
    "marked as catalogued or new, and every start whose orbit was not decided within the limits. "
    "Exit 0 on success, 1 when the catalogue does not verify, 2 for usage errors, 130 when interrupted."
)


def register(subparsers: Subcommands) -> None:
    """Add ``hunt`` to the subcommands of the ``periplus`` parser."""
    hunt = add_command(subparsers, "hunt", HELP, DESCRIPTION)
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
        default=HUNT_MAX_STEPS,
        metavar="S",
        help=f"leave a start unresolved after S steps (default {HUNT_MAX_STEPS:,})",
    )
    hunt.add_argument(
        "--max-bits",
        type=positive,
        default=HUNT_MAX_BITS,
        metavar="B",
        help=f"leave a start unresolved once a member exceeds B bits (default {HUNT_MAX_BITS:,})",
    )
    add_max_work(hunt)
    add_cache(hunt)
    hunt.add_argument("--save", type=Path, metavar="FILE", help="write the result as JSON, for --merge")
    hunt.add_argument(
        "--merge", type=Path, nargs="+", metavar="FILE", help="report the union of saved results instead of hunting"
    )
    hunt.add_argument("--drafts", type=Path, metavar="DIR", help="write a catalogue entry under DIR for each new cycle")
    hunt.set_defaults(run=run, interrupted=INTERRUPTED)


# --- progress ---------------------------------------------------------------------------------


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


def _merge(paths: list[Path]) -> Survey:
    """The union of saved surveys; a file that is none, or files that do not join, are usage errors."""
    try:
        return merge_surveys(paths)
    except SurveyMismatch as exc:
        raise UsageError(f"--merge: {exc}") from None
    except SavedSurveyError as exc:
        raise UsageError(str(exc)) from None


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


def run(args: argparse.Namespace) -> int:
    """Run ``periplus hunt`` with parsed arguments; return the exit status."""
    return _run(args, sys.stdout, sys.stderr)


def _check_writable(path: Path) -> None:
    """Refuse, before the hunt, a --save file that could not be written after it (results would be lost)."""
    folder = path.absolute().parent
    if path.is_dir():
        raise UsageError(f"--save: expected a file to write, got the folder {path}")
    if not folder.is_dir():
        raise UsageError(f"--save: expected a file in an existing folder, got {path} ({folder} does not exist)")
    if not os.access(folder, os.W_OK | os.X_OK) or (path.exists() and not os.access(path, os.W_OK)):
        raise UsageError(f"--save: cannot write {path}")


def _run(args: argparse.Namespace, out: IO[str], err: IO[str]) -> int:
    if args.merge is None and (args.map is None or args.bound is None):
        raise UsageError("hunt: give MAP and --bound N (or --merge FILE ...)")
    if args.merge is not None and (args.low is not None or args.high is not None):
        raise UsageError("hunt: --from and --to do not apply to --merge")
    if args.save is not None:
        _check_writable(args.save)
    # Only the entries matter for marking cycles new or catalogued: coverage claims are not re-run here.
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        report = verify_catalogue(args.catalogue, Limits(recheck_up_to=NO_RECHECK), cache)
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
        survey = Survey(args.map, entry.dynamics, args.bound, args.max_steps, args.max_bits, args.max_work)
        progress = _Progress(err, starts_in(low, high))
        try:
            coverage = cover(survey, low, high, args.jobs, progress.update)
        finally:
            progress.close()
        interrupted, extra = coverage.interrupted, coverage.met_past_prefix
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
        save_survey(survey, args.save)
        print(f"saved to {args.save}", file=out)
    if args.drafts is not None:
        _write_drafts(survey, known, args.drafts, out)
    if interrupted:
        print("periplus: interrupted", file=err)
        return 130
    return 0
