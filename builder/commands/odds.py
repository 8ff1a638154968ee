"""``periplus odds``: the heuristic chance of an integer cycle at each length, beside the catalogue's count."""

from __future__ import annotations

import argparse

from builder.arith.integers import show
from builder.arith.odds import MODEL_MULTIPLIER_BITS, length_odds, modelled, odds_table
from builder.commands.options import Subcommands, add_cache, add_catalogue, add_command
from builder.commands.summary import verified_entries
from builder.errors import UsageError

__all__ = ["register", "run"]

HELP = "the heuristic chance of an integer cycle at each length, beside the catalogue's count"
DESCRIPTION = (
    "For each length k and count x of letters 1 (odd steps), the number L(k, x) of aperiodic "
    "necklaces, the target m^k - A and the heuristic chance 1 - (1 - g/|target|)^L that one of the L words "
    "gives an integer cycle; beside it, how many catalogued cycles have that length and x. A model, not a "
    "theorem: see DEVELOPERS.md."
)


def register(subparsers: Subcommands) -> None:
    """Add ``odds`` to the subcommands of the ``periplus`` parser."""
    parser = add_command(subparsers, "odds", HELP, DESCRIPTION)
    parser.add_argument("map", metavar="MAP", help="a map id of the catalogue (2 branches)")
    parser.add_argument("--lengths", required=True, metavar="K1..K2", help="the lengths to show, e.g. 1..20 or 11")
    add_catalogue(parser, positional=False)
    add_cache(parser)
    parser.set_defaults(run=run)


#: The table has at most this many rows (one per length k and number x of odd steps: k + 1 per length).
MAX_ROWS = 100_000


def _lengths(text: str) -> range:
    lo, sep, hi = text.partition("..")
    try:
        first, last = int(lo), int(hi) if sep else int(lo)
    except ValueError:
        raise UsageError(f"--lengths: expected K or K1..K2, got '{text}'") from None
    if not 1 <= first <= last <= 10_000:
        raise UsageError(f"--lengths: expected 1 <= K1 <= K2 <= 10000, got '{text}'")
    rows = (last + 2) * (last + 1) // 2 - (first + 1) * first // 2
    if rows > MAX_ROWS:
        raise UsageError(
            f"--lengths: expected at most {MAX_ROWS:,} rows (k + 1 for each length k), got {rows:,} for '{text}'; "
            "ask for fewer lengths"
        )
    return range(first, last + 1)


def run(args: argparse.Namespace) -> int:
    """Run ``periplus odds``; return the exit status."""
    lengths = _lengths(args.lengths)
    report = verified_entries(args)
    entry = report.catalogue.maps.get(args.map)
    if entry is None:
        raise UsageError(f"expected a map id of the catalogue, got '{args.map}'")
    if entry.modulus != 2:
        raise UsageError(f"odds: expected a map with 2 branches, got {args.map} with modulus {entry.modulus}")
    if not modelled(entry.dynamics):
        raise UsageError(
            f"odds: expected multipliers of at most {MODEL_MULTIPLIER_BITS} bits, got larger ones in {args.map} "
            "(the model's targets would have millions of bits and every chance would be 0)"
        )
    counts: dict[tuple[int, int], int] = {}
    for cycle in report.catalogue.cycles.get(args.map, ()):
        key = (cycle.length, cycle.residue_counts[1])
        counts[key] = counts.get(key, 0) + 1
    print(f"{'k':>5} {'x':>5} {'L(k,x)':>14} {'target 2^k - A':>24} {'chance':>9} {'catalogued':>10}")
    for k in lengths:
        rows = odds_table(entry.dynamics, k)
        for row in rows:
            if row.necklaces == 0:
                continue
            print(
                f"{k:>5} {row.x:>5} {show(row.necklaces):>14} {show(row.target):>24} "
                f"{100 * row.chance:>8.2f}% {counts.get((k, row.x), 0):>10}"
            )
        total = sum(counts.get((k, x), 0) for x in range(k + 1))
        print(f"{k:>5} {'all':>5} {'':>14} {'':>24} {100 * length_odds(entry.dynamics, k):>8.2f}% {total:>10}")
    return 0
