"""``periplus census --qx Q --d A..B --up-to K``: one enumeration of the words serves a whole family.

Every aperiodic necklace of length 1..K is tried once (builder.search.census): a word whose rational cycle
of n/2, (Qn+1)/2 reduces to the denominator e gives, scaled by d/e, an integer cycle of every map of the
family whose d it divides, primitive when e = |d|.  The command lists each map's primitive cycles, marked
catalogued or new against the catalogue; with ``--into`` it writes every map's cycles of length at most K
(primitive or not) and a census claim up to K.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import sys
import time
from math import gcd
from pathlib import Path

from builder.arith.dynamics import CycleFound
from builder.arith.integers import show
from builder.arith.words import divisors
from builder.catalogue.cache import default_cache_folder
from builder.catalogue.family import FamilyError, FamilyMap, create_catalogue, family_maps, place
from builder.catalogue.limits import NO_RECHECK, Limits
from builder.catalogue.verify import verify_catalogue
from builder.commands.family import target_catalogue
from builder.commands.options import jobs_of, open_cache
from builder.errors import UsageError

__all__ = ["run_family_census"]


def run_family_census(args: argparse.Namespace) -> int:
    """Run the family census with parsed arguments; return the exit status."""
    from builder.search.census import class_divisors, close, scan_words, words_in_length

    q, (low, high), up_to = args.qx, args.d_range, args.up_to
    try:
        members = family_maps(q, low, high)
    except FamilyError as exc:
        raise UsageError(str(exc)) from None
    words = sum(words_in_length(k) for k in range(1, up_to + 1))
    if words > args.census_words:
        raise UsageError(
            f"census: expected at most --census-words {args.census_words:,} words, got {words:,} in lengths "
            f"1..{up_to}; raise --census-words or lower --up-to"
        )
    admissible = sorted({e for member in members for e in divisors(abs(member.d))})
    started = time.perf_counter()
    scan = scan_words(q, range(1, up_to + 1), lambda k, x: class_divisors(q, k, x, admissible), jobs_of(args))
    seconds = time.perf_counter() - started
    print(
        f"census of the {len(members):,} maps n/2, ({q}n+d)/2 with d odd in {low}..{high} and {q} not dividing d, "
        f"every cycle of at most {up_to} steps"
    )
    rate = f" ({scan.words / seconds / 1e6:.1f} million words/s)" if seconds > 0 else ""
    print(f"tried every aperiodic necklace of length 1..{up_to} once: {scan.words:,} words in {seconds:.1f} s{rate}")
    by_map: dict[int, list[CycleFound]] = {member.d: [] for member in members}
    for hit in scan.hits:
        for d in by_map:
            cycle = close(q, d, hit)
            if cycle is not None:
                by_map[d].append(cycle)
    listed = _listed(args, members)
    for member in members:
        cycles = sorted(by_map[member.d], key=lambda c: (abs(c.members[0]), c.members[0] < 0))
        primitive = [c for c in cycles if _primitive(c, member.d)]
        known = listed.get(member.d)
        marks = [
            f"{show(c.members[0])} ({len(c.members)}, {sum(c.word)}) "
            f"{'new' if known is None or c.members[0] not in known else 'catalogued'}"
            for c in primitive
        ]
        print(f"{member.name}: {'; '.join(marks) if marks else 'no primitive cycle'}")
    if args.into is not None:
        return _write_into(args, members, by_map)
    return 0


def _primitive(cycle: CycleFound, d: int) -> bool:
    """Whether the cycle's members are coprime to d (it is not g times a cycle of d/g)."""
    g = abs(d)
    for n in cycle.members:
        g = gcd(g, n)
    return g == 1


def _listed(args: argparse.Namespace, members: list[FamilyMap]) -> dict[int, set[int]]:
    """The canonical members the catalogue lists for each map of the family it holds, by d ({} without one)."""
    root: Path = args.catalogue
    if not root.is_dir():
        print(f"note: no catalogue at {root}: every cycle is marked new", file=sys.stderr)
        return {}
    with open_cache(args, default_cache_folder(root)) as cache:
        report = verify_catalogue(root, Limits(recheck_up_to=NO_RECHECK), cache)
    by_mapping = {member.mapping: member.d for member in members}
    listed: dict[int, set[int]] = {}
    for entry in report.catalogue.maps.values():
        d = by_mapping.get(entry.dynamics)
        if d is not None:
            listed[d] = {c.canonical for c in report.catalogue.cycles.get(entry.id, ())}
    return listed


def _write_into(args: argparse.Namespace, members: list[FamilyMap], by_map: dict[int, list[CycleFound]]) -> int:
    from builder.catalogue.census_entries import write_census

    into: Path = args.into
    found_by = " ".join(str(args.found_by).split())
    if not found_by:
        raise UsageError("--found-by: expected who found the cycles, got nothing")
    target = target_catalogue(args, into, sys.stdout)
    if target is None:
        return 1
    try:
        placements = [place(target, member) for member in members]
        if not target.exists:
            target = create_catalogue(target.root, found_by, args.qx)
        low, high = args.d_range
        command = f"periplus census --qx {args.qx} --d {low}..{high} --up-to {args.up_to}"
        today = _dt.date.today()
        maps = cycles = claims = 0
        for placement in placements:
            found = sorted(by_map[placement.member.d], key=lambda c: (abs(c.members[0]), c.members[0] < 0))
            written = write_census(target, placement, found, args.up_to, (found_by, today, command))
            maps += written.new_map
            cycles += len(written.new_cycles)
            claims += written.claim_added
    except FamilyError as exc:
        raise UsageError(str(exc)) from None
    print(f"wrote {maps:,} new maps, {cycles:,} new cycle entries and {claims:,} census claims into {into}")
    return 0
