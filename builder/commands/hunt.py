"""``periplus hunt``: search a catalogued map for cycles among all starts up to a bound.

    periplus hunt MAP --bound N [--from A --to B] [--jobs J] [--catalogue DIR]
                  [--max-steps S] [--max-bits B] [--save FILE] [--merge FILE ...] [--drafts DIR]
                  [--engine local|dask] [--scheduler ADDRESS] [--ledger FILE] [--unit-size U]
                  [--recheck-fraction P] [--seed S]

Every start n with A <= |n| <= B (by default 0 <= |n| <= N) is decided as
builder.search.definition defines it; the range is cut into chunks shared by J processes
and the chunks' results are merged by union, so the output is the same for
any J.  --from/--to restrict the magnitudes this run covers to a slice of
0..N; N still decides which cycles count as "beyond the bound".  --save
writes the result as JSON; --merge joins saved results of disjoint slices
(same map, bound and limits) and reports their union exactly as one run
over it would, naming any gaps.  --drafts writes a catalogue entry for each
cycle the catalogue does not have yet.

--engine dask runs the units of work on the Dask cluster whose scheduler is at --scheduler;
--ledger keeps every completed unit in a SQLite file, from which the same command resumes;
--recheck-fraction reruns that share of the units on another worker and compares checksums
(builder.search.cluster).  A disagreement is reported and makes the exit status 1.

Exit status: 0 on success, 1 when the catalogue does not verify or a recheck disagrees, 2 for
usage errors, 130 when interrupted (after reporting what was covered).
The search itself is builder.search (survey, cluster, ledger); this module parses the
arguments and shows progress; builder.commands.hunt_report writes the report.
"""

from __future__ import annotations

import argparse
import difflib
import os
import sys
from pathlib import Path
from typing import IO, Any

from tqdm import tqdm

from builder.arith.integers import show
from builder.catalogue.cache import default_cache_folder
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import Catalogue
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.family import add_family_arguments, run_family
from builder.commands.hunt_report import engine_lines, number, ranges_text, report, write_drafts
from builder.commands.options import (
    Subcommands,
    add_cache,
    add_command,
    add_max_work,
    natural,
    open_cache,
    open_ledger,
    positive,
)
from builder.errors import UsageError
from builder.search.cluster import ENGINES, ClusterUnavailable, HuntEnd, Plan, run_hunt
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS
from builder.search.ledger import LedgerError
from builder.search.survey import SavedSurveyError, Survey, SurveyMismatch, merge_surveys, save_survey, starts_in
from builder.wording import count

__all__ = ["register", "run"]

#: What ``periplus`` says when Ctrl-C stops a hunt outside the search itself (the search reports its own).
INTERRUPTED = "interrupted before any start was covered"


# --- arguments -----------------------------------------------------------------------------

HELP = "search a map for cycles among all starts up to a bound"
DESCRIPTION = (
    "Follow every start n with |n| up to a bound exactly and report the cycles met, "
    "marked as catalogued or new, and every start whose orbit was not decided within the limits. "
    "Exit 0 on success, 1 when the catalogue does not verify or two runs of a unit disagree, 2 for usage errors, "
    "130 when interrupted."
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
    _add_engine(hunt)
    add_family_arguments(hunt)
    hunt.set_defaults(run=run, interrupted=INTERRUPTED)


def fraction(text: str) -> float:
    """An argparse type: a number from 0 to 1."""
    try:
        value = float(text)
    except ValueError:
        value = float("nan")
    if not 0 <= value <= 1:
        raise argparse.ArgumentTypeError(f"expected a number from 0 to 1, got '{text[:40]}'")
    return value


def _add_engine(hunt: argparse.ArgumentParser) -> None:
    """Where the units of work run, what is kept of them, and how many are run twice."""
    group = hunt.add_argument_group("engine", "where the units of work run, what is kept of them, rechecks")
    group.add_argument(
        "--engine",
        choices=ENGINES,
        default="local",
        help="local: processes of this machine (default); dask: the workers of a Dask cluster (--scheduler)",
    )
    group.add_argument(
        "--scheduler", metavar="ADDRESS", help="the Dask scheduler of --engine dask, such as tcp://host:8786"
    )
    group.add_argument(
        "--ledger",
        type=Path,
        metavar="FILE",
        help="record every completed unit in this SQLite file; the same command resumes from it",
    )
    group.add_argument(
        "--unit-size",
        type=positive,
        metavar="U",
        help="magnitudes per unit of work, when the hunt runs in units (--ledger, --engine dask or --recheck-fraction); "
        "default: the ledger's, else 4,194,304, or less to make 64 units of a smaller range",
    )
    group.add_argument(
        "--recheck-fraction",
        type=fraction,
        default=0.0,
        metavar="P",
        help="run this share of the units again on another worker and compare checksums (0 to 1, default 0)",
    )
    group.add_argument(
        "--seed", type=natural, default=0, metavar="S", help="which units --recheck-fraction picks (default 0)"
    )


# --- progress ---------------------------------------------------------------------------------


class _Bar:
    """A hunt's progress on a terminal through tqdm: starts decided, rate and time left (nothing off a terminal).

    Made at the first report, so that the starts a ledger held already are its initial count and
    do not count in the rate.
    """

    def __init__(self, stream: IO[str], total: int) -> None:
        self.stream = stream
        self.total = total
        self.bar: Any = None

    def __call__(self, done: int) -> None:
        if self.bar is None:
            self.bar = tqdm(
                total=self.total,
                initial=done,
                file=self.stream,
                disable=not self.stream.isatty(),
                unit=" starts",
                unit_scale=True,
                dynamic_ncols=True,
                smoothing=0.1,
                bar_format="{n:,}/{total:,} starts {percentage:3.0f}%|{bar}| {rate_fmt}, {remaining} left",
            )
        else:
            self.bar.update(done - self.bar.n)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()


def _merge(paths: list[Path]) -> Survey:
    """The union of saved surveys; a file that is none, or files that do not join, are usage errors."""
    try:
        return merge_surveys(paths)
    except SurveyMismatch as exc:
        raise UsageError(f"--merge: {exc}") from None
    except SavedSurveyError as exc:
        raise UsageError(str(exc)) from None


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


def _check_engine(args: argparse.Namespace) -> None:
    """The engine options that do not go together, refused before anything runs."""
    if args.engine == "dask" and args.scheduler is None:
        raise UsageError("--engine dask: expected --scheduler ADDRESS (the Dask scheduler, such as tcp://host:8786)")
    if args.engine == "local" and args.scheduler is not None:
        raise UsageError(f"--scheduler: expected --engine dask with it, got --engine {args.engine}")
    engine_options = args.ledger, args.unit_size, args.scheduler
    if args.merge is not None and (any(o is not None for o in engine_options) or args.recheck_fraction):
        raise UsageError("hunt: --ledger, --unit-size, --scheduler and --recheck-fraction do not apply to --merge")
    if args.ledger is not None and args.ledger.is_dir():
        raise UsageError(f"--ledger: expected a file, got the folder {args.ledger}")


def _run(args: argparse.Namespace, out: IO[str], err: IO[str]) -> int:
    if args.qx is not None:
        return run_family(args, out, err)
    if args.merge is None and (args.map is None or args.bound is None):
        raise UsageError("hunt: give MAP and --bound N (or --merge FILE ...)")
    if args.merge is not None and (args.low is not None or args.high is not None):
        raise UsageError("hunt: --from and --to do not apply to --merge")
    _check_engine(args)
    if args.save is not None:
        _check_writable(args.save)
    # Only the entries matter for marking cycles new or catalogued: coverage claims are not re-run here.
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        verified = verify_catalogue(args.catalogue, Limits(recheck_up_to=NO_RECHECK), cache)
    if not verified.ok:
        for problem in verified.problems:
            print(problem, file=out)
        print(f"{args.catalogue} does not verify ({len(verified.errors)} errors); fix it before hunting", file=out)
        return 1
    if args.merge is not None:
        survey, end = _merged(args, verified.catalogue), HuntEnd(False, {})
    else:
        survey, end = _hunted(args, verified.catalogue, err)
    known = {c.canonical: c for c in verified.catalogue.cycles.get(survey.map_id, ())}
    report(survey, known, out, args.save)
    lines = engine_lines(end, args.engine, args.ledger)
    if lines:
        print(file=out)
        for line in lines:
            print(line, file=out)
    if end.interrupted:
        _say_interrupted(survey, end, args.ledger, out)
    if args.save is not None:
        save_survey(survey, args.save)
        print(f"saved to {args.save}", file=out)
    if args.drafts is not None:
        write_drafts(survey, known, args.drafts, out)
    if end.interrupted:
        print("periplus: interrupted", file=err)
        return 130
    if end.disagreements:
        units = count(len(end.disagreements), "unit")
        print(f"periplus: two runs of {units} disagree; see DISAGREEMENT above", file=err)
        return 1
    return 0


def _merged(args: argparse.Namespace, catalogue: Catalogue) -> Survey:
    """The union of the saved results of --merge, checked against the command line and the catalogue."""
    survey = _merge(list(args.merge))
    if args.map is not None and args.map != survey.map_id:
        raise UsageError(f"--merge: the files are for '{survey.map_id}', not '{args.map}'")
    if args.bound is not None and args.bound != survey.bound:
        raise UsageError(f"--merge: the files are for bound {number(survey.bound)}, not {number(args.bound)}")
    entry = catalogue.maps.get(survey.map_id)
    if entry is None:
        raise UsageError(f"--merge: the catalogue {args.catalogue} has no map '{survey.map_id}'")
    if entry.dynamics != survey.mapping:
        raise UsageError(f"--merge: the saved results define '{survey.map_id}' otherwise than the catalogue does")
    return survey


def _hunted(args: argparse.Namespace, catalogue: Catalogue, err: IO[str]) -> tuple[Survey, HuntEnd]:
    """Hunt one map of the catalogue as the options say; the survey and how the hunt ended."""
    maps = catalogue.maps
    entry = maps.get(args.map)
    if entry is None:
        close = difflib.get_close_matches(args.map, list(maps), n=3)
        hint = f"; did you mean {', '.join(close)}?" if close else ""
        raise UsageError(f"hunt: no map '{args.map}' in {args.catalogue}{hint}")
    low = 0 if args.low is None else args.low
    high = args.bound if args.high is None else args.high
    if not low <= high <= args.bound:
        raise UsageError(
            f"hunt: expected 0 <= --from <= --to <= --bound, got {number(low)}, {number(high)}, {number(args.bound)}"
        )
    survey = Survey(args.map, entry.dynamics, args.bound, args.max_steps, args.max_bits, args.max_work)
    ledger = open_ledger(args.ledger)
    bar = _Bar(err, starts_in(low, high))
    try:
        plan = Plan(args.engine, args.jobs, args.scheduler, ledger, args.unit_size, args.recheck_fraction, args.seed)
        end = run_hunt(survey, low, high, plan, bar)
    except ClusterUnavailable as exc:
        raise UsageError(f"--engine {args.engine}: {exc}") from None
    except LedgerError as exc:
        raise UsageError(f"--ledger: {exc}") from None
    finally:
        bar.close()
        if ledger is not None:
            ledger.close()
    return survey, end


def _say_interrupted(survey: Survey, end: HuntEnd, ledger: Path | None, out: IO[str]) -> None:
    """What an interrupted hunt covered, and how to go on."""
    print(file=out)
    if survey.ranges:
        print(f"interrupted: only magnitudes {ranges_text(survey.ranges)} were fully covered", file=out)
    else:
        print("interrupted before the first chunk of the range was finished: nothing was covered", file=out)
    if end.met_past_prefix:
        listed = ", ".join(show(c) for c in end.met_past_prefix)
        print(f"also met in chunks finished past that range (not part of the result): {listed}", file=out)
    if ledger is not None:
        print(f"the ledger {ledger} keeps every unit finished; run the same command again to resume", file=out)
