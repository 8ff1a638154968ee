"""Regenerate the shipped catalogue's 3x+d maps with the family hunt, and compare them with the shipped ones.

    python scripts/regenerate_catalogue.py OUT [--bound N ...] [--compare CATALOGUE] [--jobs J]

Hunts every map n/2, (3n+d)/2 with d odd in -97..97 and 3 not dividing d (66 maps: 3x+1, 3x-1 and the 64
of |d| > 1) into the new catalogue OUT, once for each bound (default 100,000 then 1,000,000, the bounds
of the shipped claims), with the hunt's default limits (100,000 steps, 4,096 bits: the shipped claims'),
exactly as these command lines would:

    periplus hunt --qx 3 --d -97..97 --bound 100000 --into OUT --found-by "Periplus starter search"
    periplus hunt --qx 3 --d -97..97 --bound 1000000 --into OUT --found-by "Periplus starter search"

With --compare CATALOGUE (the shipped catalogue: --compare catalogue), each map of OUT is compared with
the map of CATALOGUE that has the same definition: the cycles whose least |member| is at most the
largest bound must be the same, every other cycle OUT holds must be in CATALOGUE too, and every claim
of OUT whose bound CATALOGUE also claims must state the same limits and unresolved starts.  Exit 1 on
any difference.  The other maps of the shipped catalogue (3x-plus-1-standard, 5x-plus-1, 181x-plus-1,
mod-3-permutation) are no such family; scripts/make_starter.py writes them.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.arith.dynamics import DEFAULT_MAX_WORK  # noqa: E402
from builder.catalogue.cache import VerifyCache  # noqa: E402
from builder.catalogue.family import Target  # noqa: E402
from builder.catalogue.limits import NO_RECHECK  # noqa: E402
from builder.catalogue.model import Catalogue, Coverage  # noqa: E402
from builder.catalogue.verify import Limits, verify_catalogue  # noqa: E402
from builder.commands.family import hunt_family  # noqa: E402
from builder.processes import default_jobs  # noqa: E402
from builder.search.cluster import Plan  # noqa: E402
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS  # noqa: E402

Q, LOW, HIGH = 3, -97, 97
BOUNDS = (100_000, 1_000_000)
FOUND_BY = "Periplus starter search"


def verified(root: Path) -> Catalogue:
    """The catalogue at ``root``, its entries verified (claims not searched again); exit 1 if it fails."""
    report = verify_catalogue(root, Limits(recheck_up_to=NO_RECHECK), VerifyCache.memory())
    if not report.ok:
        for problem in report.errors:
            print(problem, file=sys.stderr)
        raise SystemExit(f"{root} does not verify")
    return report.catalogue


def regenerate(out: Path, bounds: list[int], jobs: int) -> int:
    """Hunt the family into the new catalogue ``out`` once per bound; return the exit status."""
    target = Target.new(out)
    for bound in bounds:
        limits = (HUNT_MAX_STEPS, HUNT_MAX_BITS, DEFAULT_MAX_WORK)
        status = hunt_family(Q, LOW, HIGH, bound, target, FOUND_BY, limits, Plan(jobs=jobs), sys.stdout, sys.stderr)
        if status:
            return status
        target = Target.of(out, verify_catalogue(out, Limits(recheck_up_to=NO_RECHECK), VerifyCache.memory()))
    return 0


def _claim(claim: Coverage) -> tuple[int, int, frozenset[int]]:
    return claim.max_steps, claim.max_bits, frozenset(claim.unresolved)


def differences(fresh: Catalogue, shipped: Catalogue, up_to: int) -> list[str]:
    """How the maps of ``fresh`` differ from the maps of ``shipped`` with the same definitions."""
    by_definition = {entry.dynamics: entry for entry in shipped.maps.values()}
    out = []
    for entry in fresh.maps.values():
        other = by_definition.get(entry.dynamics)
        if other is None:
            out.append(f"{entry.id}: not in the compared catalogue")
            continue
        mine = {c.canonical for c in fresh.cycles.get(entry.id, ())}
        theirs = {c.canonical for c in shipped.cycles.get(other.id, ())}
        missing = sorted((c for c in theirs - mine if abs(c) <= up_to), key=abs)
        extra = sorted(mine - theirs, key=abs)
        if missing:
            out.append(f"{entry.id}: cycles not found by the family hunt: {missing}")
        if extra:
            out.append(f"{entry.id}: cycles found that {other.path} lacks: {extra}")
        claimed = {claim.bound: _claim(claim) for claim in other.coverage}
        for claim in entry.coverage:
            if claim.bound in claimed and claimed[claim.bound] != _claim(claim):
                out.append(f"{entry.id}: the claim to {claim.bound:,} differs from that of {other.path}")
    return out


def main(argv: list[str]) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("out", type=Path, help="the new catalogue to write (must not exist)")
    parser.add_argument("--bound", type=int, action="append", help="a bound to hunt to (repeat; default 10^5, 10^6)")
    parser.add_argument("--compare", type=Path, help="compare the result with this catalogue")
    parser.add_argument("--jobs", type=int, default=default_jobs(), help="processes per map's hunt")
    args = parser.parse_args(argv)
    if args.out.exists():
        parser.error(f"expected a new folder for OUT, got {args.out}, which exists")
    bounds = sorted(args.bound or BOUNDS)
    status = regenerate(args.out, bounds, args.jobs)
    if status or args.compare is None:
        return status
    found = differences(verified(args.out), verified(args.compare), bounds[-1])
    for line in found:
        print(line)
    if found:
        print(f"{len(found)} differences from {args.compare}")
    else:
        print(f"the family hunt reproduces the maps of {args.compare} with the same definitions, up to {bounds[-1]:,}")
    return 1 if found else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
