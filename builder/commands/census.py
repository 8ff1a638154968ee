"""``periplus census``: every cycle up to a length, proved from the necklaces and the divisibility target.

Two forms.  ``periplus census MAP --up-to K`` takes one map of the catalogue (n/2, (qn+d)/2 with q, d
odd) from the bound its coverage claims were searched again to: each class (k, x) of each length is
excluded by that bound, enumerated, or over the word budget; the lengths whose classes are all settled
are claimed, and ``--write`` records that claim in the map file.  ``periplus census --qx Q --d A..B
--up-to K`` tries every aperiodic necklace of length 1..K once and lists, for every odd d in A..B that
Q does not divide, the primitive cycles of length at most K (J. C. Lagarias, Acta Arith. 56 (1990)
33-53: each word is the parity vector of one rational cycle, an integer cycle of the maps whose d its
reduced denominator divides); ``--into`` writes the maps, the cycles and a census claim for each map.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import sys
import time
from pathlib import Path
from typing import TYPE_CHECKING

from builder.arith.dynamics import shortcut_form
from builder.arith.integers import show
from builder.arith.words import aperiodic_necklace_count
from builder.catalogue.cache import default_cache_folder
from builder.catalogue.census import searched_bound
from builder.catalogue.model import MapEntry, Report
from builder.catalogue.verify import verify_catalogue
from builder.commands.family import d_range, multiplier
from builder.commands.options import (
    Subcommands,
    add_cache,
    add_catalogue,
    add_command,
    add_jobs,
    add_limits,
    jobs_of,
    limits_of,
    open_cache,
)
from builder.commands.summary import show_report
from builder.errors import UsageError

if TYPE_CHECKING:
    from builder.search.census_map import MapCensus

__all__ = ["register", "run"]

HELP = "every cycle up to a length: proved from the necklaces, for one map or a whole family"
DESCRIPTION = (
    "With MAP: the census of one map n/2, (qn+d)/2 of the catalogue up to length K, from the bound its coverage "
    "claims were searched again to: each class (k, x) is excluded by that bound, enumerated word by word, or over "
    "the word budget (--census-words); --write records the lengths it settles as a census claim. With --qx and "
    "--d: every aperiodic necklace of length 1..K tried once, and the primitive cycles it gives to every map of "
    "the family, each marked catalogued or new; --into writes them, with a census claim for each map."
)


def register(subparsers: Subcommands) -> None:
    """Add ``census`` to the subcommands of the ``periplus`` parser."""
    parser = add_command(subparsers, "census", HELP, DESCRIPTION)
    parser.add_argument("map", nargs="?", metavar="MAP", help="a map id of the catalogue (without --qx)")
    parser.add_argument("--up-to", type=_length, required=True, metavar="K", help="the longest cycle length, in steps")
    parser.add_argument("--write", action="store_true", help="with MAP: add the census claim to the map file")
    parser.add_argument(
        "--every-class", action="store_true", help="with MAP: list every class (k, x), the excluded ones too"
    )
    family = parser.add_argument_group("whole families", "every map n/2, (Qn+d)/2 with d odd in A..B, Q not dividing d")
    family.add_argument("--qx", type=multiplier, metavar="Q", help="the family's multiplier: an odd Q >= 3")
    family.add_argument("--d", dest="d_range", type=d_range, metavar="A..B", help="the increments d (-999..999)")
    family.add_argument("--into", type=Path, metavar="CATALOGUE", help="write maps, cycles and census claims here")
    family.add_argument("--found-by", default="Periplus census", metavar="TEXT", help="who found the cycles")
    add_catalogue(parser, positional=False)
    add_limits(parser)
    add_cache(parser)
    add_jobs(parser, "try the words")
    parser.set_defaults(run=run)
    import re

    parser._negative_number_matcher = re.compile(r"^-\d")  # "-999..999" is a value (builder.commands.family)


def _length(text: str) -> int:
    from builder.catalogue.fields import CENSUS_MAX_LENGTH

    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a length from 1 to {CENSUS_MAX_LENGTH:,}, got '{text[:40]}'"
        ) from None
    if not 1 <= value <= CENSUS_MAX_LENGTH:
        raise argparse.ArgumentTypeError(f"expected a length from 1 to {CENSUS_MAX_LENGTH:,}, got {value}")
    return value


def run(args: argparse.Namespace) -> int:
    """Run ``periplus census``; return the exit status."""
    if args.qx is not None or args.d_range is not None:
        if args.map is not None or args.write:
            raise UsageError("census: expected either MAP (with --write) or --qx Q --d A..B (with --into), got both")
        if args.qx is None or args.d_range is None:
            raise UsageError("census: expected --qx Q and --d A..B together")
        from builder.commands.census_family import run_family_census

        return run_family_census(args)
    if args.map is None:
        raise UsageError("census: expected a MAP of the catalogue, or --qx Q --d A..B for a family")
    if args.into is not None:
        raise UsageError("census: --into applies to a family (--qx, --d); for one map, use --write")
    return _run_map(args)


def _verified(args: argparse.Namespace) -> Report:
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        report = verify_catalogue(args.catalogue, limits_of(args), cache)
    if not report.ok:
        show_report(report, sys.stderr)
        raise UsageError(f"census: expected a catalogue that verifies, got errors in {args.catalogue}")
    return report


def _run_map(args: argparse.Namespace) -> int:
    from builder.search.census_map import ENUMERATED, map_census

    report = _verified(args)
    entry = report.catalogue.maps.get(args.map)
    if entry is None:
        raise UsageError(f"census: expected a map id of the catalogue, got '{args.map}'")
    form = shortcut_form(entry.dynamics)
    if form is None or form[0] < 1:
        return _run_residue(args, report, entry)
    q, d = form
    bound = searched_bound(entry.coverage)
    started = time.perf_counter()
    census = map_census(q, d, args.up_to, bound, args.census_words, jobs_of(args))
    seconds = time.perf_counter() - started
    listed = {c.canonical for c in report.catalogue.cycles.get(entry.id, ())}
    where = "no coverage claim searched again" if bound < 0 else f"every start with |n| <= {show(bound)} searched again"
    print(f"census of {entry.name} ({entry.id}) up to {args.up_to:,} steps, from its searched bound: {where}")
    excluded = sum(census.excluded.values())
    print(f"  {excluded:,} classes (k, x) excluded by it: each cycle of such a class has a member no larger than")
    print("  the class's bound, and that bound is at most the searched bound")
    if census.rows or args.every_class:
        print(f"  {'k':>6} {'x':>6} {'L(k,x)':>12} {'target 2^k - q^x':>22} {'bound':>14}  status")
    rows = {(row.k, row.x): row for row in census.rows}
    for k, x in _classes(args.up_to) if args.every_class else sorted(rows):
        row = rows.get((k, x))
        if row is None:  # excluded: its bound is at most the searched bound (not computed: that is all it needs)
            words, goal = aperiodic_necklace_count(k, x), (1 << k) - q**x
            print(f"  {k:>6} {x:>6} {_short(words):>12} {_short(goal):>22} {'<= ' + show(bound):>14}  excluded")
            continue
        status = row.status
        if row.status == ENUMERATED:
            marks = [f"{show(c)} ({'catalogued' if c in listed else 'new'})" for c in row.cycles]
            status += f": {row.tried:,} words, " + (", ".join(marks) if marks else "no cycle")
        print(
            f"  {row.k:>6} {row.x:>6} {_short(row.words):>12} {_short(row.target):>22} {_short(row.bound):>14}  {status}"
        )
    print(f"words tried: {census.words:,} in {seconds:.1f} s")
    return _conclude(args, entry, census, listed, bound)


def _conclude(args: argparse.Namespace, entry: MapEntry, census: MapCensus, listed: set[int], bound: int) -> int:
    """Say what the census settled and what it found; with --write, record the claim when everything is listed."""
    new = [c.members[0] for c in census.cycles if c.members[0] not in listed]
    if census.stopped_by is not None:
        k, x = census.stopped_by
        where = f"the class ({k}, {x})" if x >= 0 else f"the length {k}"
        print(f"stopped by {where}: its words pass what is left of --census-words, or cannot all be settled")
    if census.complete_to == 0:
        print("no length is settled: nothing to claim")
        return 0
    if new:
        print(f"{len(new)} cycle{'s' if len(new) != 1 else ''} the catalogue lacks: {', '.join(map(show, new))}")
        print(f"every cycle of at most {census.complete_to:,} steps is one of these or listed; add them to claim it")
        return 0
    print(f"every cycle of at most {census.complete_to:,} steps is listed")
    if args.write:
        _write(entry.path, census.complete_to, bound, census.words, args)
    return 0


def _run_residue(args: argparse.Namespace, report: Report, entry: MapEntry) -> int:
    """The census of a map by residue classes with positive multipliers: every word of each length tried."""
    from builder.search.census_residue import applies, residue_census

    if not applies(entry.dynamics):
        raise UsageError(
            f"census: expected a map n/2, (qn+d)/2 with q and d odd, or one whose multipliers are all positive, got "
            f"{args.map} (modulus {entry.modulus}, branches {', '.join(map(str, entry.branches))})"
        )
    started = time.perf_counter()
    census = residue_census(entry.dynamics, args.up_to, args.census_words)
    seconds = time.perf_counter() - started
    listed = {c.canonical for c in report.catalogue.cycles.get(entry.id, ())}
    print(f"census of {entry.name} ({entry.id}) up to {args.up_to:,} steps: every word of each length tried")
    print(f"  {'k':>6} {'words':>12}  status")
    for row in census.rows:
        marks = [f"{show(c)} ({'catalogued' if c in listed else 'new'})" for c in row.cycles]
        status = row.status + (": " + (", ".join(marks) if marks else "no cycle") if row.status == "enumerated" else "")
        print(f"  {row.k:>6} {_short(row.words):>12}  {status}")
    print(f"words tried: {census.words:,} in {seconds:.1f} s (in Python integers)")
    return _conclude(args, entry, census, listed, -1)


def _write(path: Path, up_to: int, bound: int, words: int, args: argparse.Namespace) -> None:
    from builder.catalogue.census_entries import add_census_claim
    from builder.catalogue.claims import ClaimError

    base = f"classes excluded by the searched bound {bound:,}" if bound >= 0 else "no searched bound"
    method = f"periplus census {args.map} --up-to {args.up_to}: {base}, {words:,} words tried"
    try:
        add_census_claim(path, up_to, _dt.date.today(), method)
    except ClaimError as exc:
        raise UsageError(str(exc)) from None
    print(f"wrote the census claim (up_to: {up_to}) to {path}")


def _classes(up_to: int) -> list[tuple[int, int]]:
    """Every class (k, x) with words, k = 1..up_to: both x of length 1, and 0 < x < k beyond it."""
    return [(k, x) for k in range(1, up_to + 1) for x in range(k + 1) if (k == 1 or 0 < x < k)]


def _short(n: int) -> str:
    """A number for a table column: in full up to 12 digits, else its first digits and its size."""
    text = str(n)
    digits = len(text.lstrip("-"))
    return text if digits <= 12 else f"{text[: 4 + (n < 0)]}...({digits} digits)"
