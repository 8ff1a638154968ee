"""``periplus hunt --qx Q --d A..B --bound N --into CATALOGUE``: hunt every map of a family, write what it finds.

    periplus hunt --qx Q --d A..B --bound N --into CATALOGUE [--found-by TEXT]
                  [--jobs J] [--max-steps S] [--max-bits B] [--max-work W] [--cache DIR | --no-cache]

The family is every map n/2, (Qn+d)/2 with d odd in A..B and Q not dividing d
(builder.catalogue.family).  Each map is hunted in turn over every start with |n| <= N,
exactly as ``periplus hunt MAP --bound N`` would, and its results are written into
CATALOGUE as soon as its hunt is complete: the map file when the catalogue lacks the map,
an entry for every cycle it lacks, and the coverage claim the hunt supports (with its basins,
for a bound up to 2^22).  CATALOGUE is
created (with a record.yaml) when it does not exist; an existing one must verify first.
Ctrl-C stops after the maps finished so far: the map being hunted is not written.

Exit status: 0 on success, 1 when CATALOGUE does not verify, 2 for usage errors (a map id of
the family that CATALOGUE gives another definition among them), 130 when interrupted.

The hunt command calls ``add_family_arguments`` on its parser and ``run_family`` when --qx is given.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import re
import signal
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import replace
from pathlib import Path
from typing import IO

from builder.arith.integers import parse_decimal
from builder.catalogue.cache import default_cache_folder
from builder.catalogue.family import (
    DEFAULT_FOUND_BY,
    FamilyError,
    Placement,
    Target,
    Written,
    create_catalogue,
    family_maps,
    hunt_basins,
    place,
    skipped_increments,
    write_results,
)
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import Basins
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.hunt_report import engine_lines
from builder.commands.options import open_cache, open_ledger
from builder.errors import UsageError
from builder.search.cluster import ClusterUnavailable, HuntEnd, Plan, run_hunt
from builder.search.ledger import LedgerError
from builder.search.survey import Survey

__all__ = ["add_family_arguments", "d_range", "hunt_family", "multiplier", "run_family", "target_catalogue"]

#: Below this many magnitudes a map is hunted in this process: a pool of workers would cost more than it saves.
_ONE_PROCESS_BELOW = 1 << 16
_RANGE = re.compile(r"\s*([+-]?[0-9]+)\s*\.\.\s*([+-]?[0-9]+)\s*")
#: Options of ``periplus hunt`` that do not apply to a family hunt, by their attribute.
_NOT_FOR_FAMILIES = {
    "low": "--from",
    "high": "--to",
    "save": "--save",
    "merge": "--merge",
    "drafts": "--drafts",
}


# --- arguments -----------------------------------------------------------------------------------


def d_range(text: str) -> tuple[int, int]:
    """An argparse type: ``A..B`` with whole numbers A <= B, either of them negative."""
    found = _RANGE.fullmatch(text)
    if found is not None:
        low, high = parse_decimal(found.group(1).lstrip("+")), parse_decimal(found.group(2).lstrip("+"))
        if low <= high:
            return low, high
    raise argparse.ArgumentTypeError(f"expected A..B with A <= B, got '{text[:40]}'")


def multiplier(text: str) -> int:
    """An argparse type: Q, an odd whole number of at least 3."""
    try:
        q = parse_decimal(text.strip())
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected an odd multiplier of at least 3, got '{text[:40]}'") from None
    if q < 3 or q % 2 == 0:
        raise argparse.ArgumentTypeError(f"expected an odd multiplier of at least 3, got {q}")
    return q


def add_family_arguments(parser: argparse.ArgumentParser) -> None:
    """Add --qx, --d, --into and --found-by (the family hunt) to the hunt command's parser."""
    group = parser.add_argument_group(
        "whole families", "hunt every map n/2, (Qn+d)/2 with d odd in A..B and Q not dividing d, into a catalogue"
    )
    group.add_argument("--qx", type=multiplier, metavar="Q", help="the family's multiplier: an odd Q >= 3")
    group.add_argument(
        "--d", dest="d_range", type=d_range, metavar="A..B", help="the increments d: every odd d in A..B (-97..97)"
    )
    group.add_argument(
        "--into", type=Path, metavar="CATALOGUE", help="write map files, cycle entries and claims here (made if new)"
    )
    group.add_argument(
        "--found-by",
        default=DEFAULT_FOUND_BY,
        metavar="TEXT",
        help=f"who found the cycles, for the entries' provenance (default: {DEFAULT_FOUND_BY})",
    )
    # "-97..97" is a value, not an option: read an argument that starts with a minus and a digit as a
    # value, as Python 3.12's argparse does (3.11 takes only plain negative numbers so).
    parser._negative_number_matcher = re.compile(r"^-\d")


# --- the command ---------------------------------------------------------------------------------


def run_family(args: argparse.Namespace, out: IO[str], err: IO[str]) -> int:
    """Run a family hunt (``periplus hunt --qx ...``) with parsed arguments; return the exit status."""
    if args.d_range is None or args.bound is None or args.into is None:
        raise UsageError("hunt --qx: give --d A..B, --bound N and --into CATALOGUE")
    if getattr(args, "map", None) is not None:
        raise UsageError(f"hunt --qx: expected no MAP (the family names its maps), got '{args.map}'")
    for attribute, option in _NOT_FOR_FAMILIES.items():
        if getattr(args, attribute, None) is not None:
            raise UsageError(f"hunt --qx: {option} does not apply to a family hunt")
    found_by = " ".join(str(args.found_by).split())
    if not found_by:
        raise UsageError("--found-by: expected who found the cycles, got nothing")
    low, high = args.d_range
    target = target_catalogue(args, args.into, out)
    if target is None:
        return 1
    limits = (args.max_steps, args.max_bits, args.max_work)
    ledger = open_ledger(getattr(args, "ledger", None))
    try:
        plan = Plan(
            getattr(args, "engine", "local"),
            args.jobs,
            getattr(args, "scheduler", None),
            ledger,
            getattr(args, "unit_size", None),
            getattr(args, "recheck_fraction", 0.0),
            getattr(args, "seed", 0),
        )
        return hunt_family(args.qx, low, high, args.bound, target, found_by, limits, plan, out, err)
    finally:
        if ledger is not None:
            ledger.close()


def target_catalogue(args: argparse.Namespace, into: Path, out: IO[str]) -> Target | None:
    """The catalogue to write into (verified first when it exists), or None after saying why it does not verify."""
    if not into.exists() or (into.is_dir() and not any(into.iterdir())):
        return Target.new(into)
    with open_cache(args, default_cache_folder(into)) as cache:
        report = verify_catalogue(into, Limits(recheck_up_to=NO_RECHECK), cache)
    if not report.ok:
        for problem in report.problems:
            print(problem, file=out)
        print(f"{into} does not verify ({len(report.errors)} errors); fix it before hunting into it", file=out)
        return None
    return Target.of(into, report)


def hunt_family(
    q: int,
    low: int,
    high: int,
    bound: int,
    target: Target,
    found_by: str,
    limits: tuple[int, int, int],
    plan: Plan,
    out: IO[str],
    err: IO[str],
) -> int:
    """Hunt every map of the family to ``bound`` and write each into ``target`` once its hunt is complete.

    ``limits`` are (max_steps, max_bits, max_work) per start; ``plan`` says where the hunts run (the
    engine, a ledger shared by the maps, rechecks: builder.search.cluster).  Returns the exit status: 0;
    1 when two runs of a unit disagree (that map is not written, nor any after it); 130 when Ctrl-C
    stopped it (the maps finished before it are written, the one being hunted is not).
    """
    try:
        members = family_maps(q, low, high)
        skipped = skipped_increments(q, low, high)
        placements = [place(target, member) for member in members]
    except FamilyError as exc:
        raise UsageError(str(exc)) from None
    created = not target.exists
    if created:
        try:
            target = create_catalogue(target.root, found_by, q)
        except FamilyError as exc:
            raise UsageError(str(exc)) from None
        except OSError as exc:
            raise UsageError(f"--into: cannot create the catalogue {target.root}: {exc.strerror or exc}") from None
    print(
        f"hunting {len(members)} maps n/2, ({q}n+d)/2 (odd d in {low}..{high}; {len(skipped)} skipped, "
        f"where {q} divides d) to bound {bound:,} into {target.root}" + (" (a new catalogue)" if created else ""),
        file=out,
    )
    command = f"periplus hunt --qx {q} --d {low}..{high} --bound {bound}"
    today = _dt.date.today()
    done: list[Written] = []
    unresolved = 0
    interrupted = False
    stopped: Placement | None = None  # the first map not written, when interrupted before the last
    if bound < _ONE_PROCESS_BELOW and plan.engine == "local":
        plan = replace(plan, jobs=1)  # the result does not depend on it (builder.search.survey.cover)
    for i, placement in enumerate(placements):
        survey = Survey(placement.map_id, placement.member.mapping, bound, *limits)
        end, basins = _hunt_map(survey, plan)
        if end is not None and end.disagreements:
            for line in engine_lines(end, plan.engine, None):
                print(line, file=out)
            print(f"{placement.map_id}: two runs of a unit disagree; not written, and the hunt stops here", file=out)
            _summary(done, len(placements), unresolved, target.root, out)
            return 1
        if end is None:
            interrupted, stopped = True, placement
            break
        with _holding_interrupts() as held:
            try:
                written = write_results(target, placement, survey, found_by, today, command, basins)
            except FamilyError as exc:
                raise UsageError(str(exc)) from None
            done.append(written)
            unresolved += len(survey.reasons)
            print(_line(written, survey), file=out)
        if held:
            interrupted, stopped = True, placements[i + 1] if i + 1 < len(placements) else None
            break
    _summary(done, len(placements), unresolved, target.root, out)
    if interrupted:
        _interrupted(done, stopped, high, out)
        print("periplus: interrupted", file=err)
        return 130
    return 0


def _hunt_map(survey: Survey, plan: Plan) -> tuple[HuntEnd | None, Basins | None]:
    """Hunt one map of the family as ``plan`` says, and count its basins unless two runs of a unit disagree;
    (None, None) when Ctrl-C stopped it (the basins are counted before anything is written)."""
    try:
        end = run_hunt(survey, 0, survey.bound, plan)
        if end.interrupted:
            return None, None
        return end, hunt_basins(survey) if not end.disagreements else None
    except KeyboardInterrupt:
        return None, None
    except ClusterUnavailable as exc:
        raise UsageError(f"--engine {plan.engine}: {exc}") from None
    except LedgerError as exc:
        raise UsageError(f"--ledger: {exc}") from None


def _line(written: Written, survey: Survey) -> str:
    what = ["new map file" if written.new_map else "map file kept",
            "claim added" if written.claim_added else "claim there already"]  # fmt: skip
    return (
        f"  {written.map_id}: {len(survey.cycles)} cycles, {len(written.new_cycles)} new, "
        f"{len(survey.reasons):,} unresolved ({', '.join(what)})"
    )


def _summary(done: list[Written], total: int, unresolved: int, root: Path, out: IO[str]) -> None:
    new_maps = sum(w.new_map for w in done)
    entries = sum(len(w.new_cycles) for w in done)
    claims = sum(w.claim_added for w in done)
    print(
        f"{len(done)} of {total} maps hunted and written into {root}: {new_maps} new map files, "
        f"{entries} new cycle entries, {claims} claims added, {unresolved:,} unresolved starts",
        file=out,
    )


def _interrupted(done: list[Written], stopped: Placement | None, high: int, out: IO[str]) -> None:
    finished = ", ".join(w.map_id for w in done) or "none"
    if stopped is None:
        print(f"interrupted after the last map was written; maps written: {finished}", file=out)
    else:
        print(
            f"interrupted: maps written: {finished}; {stopped.map_id} and the maps after it were not written "
            f"(to go on, give --d {stopped.member.d}..{high})",
            file=out,
        )


@contextmanager
def _holding_interrupts() -> Iterator[list[int]]:
    """Hold Ctrl-C while a map's files are written, so that a map is written whole; yield what was held."""
    held: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        yield held
        return
    previous = signal.getsignal(signal.SIGINT)
    signal.signal(signal.SIGINT, lambda signum, frame: held.append(signum))
    try:
        yield held
    finally:
        signal.signal(signal.SIGINT, previous)
