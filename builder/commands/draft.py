"""``periplus draft``: derive a cycle from a start or a word and print its catalogue entry."""

from __future__ import annotations

import argparse
import sys

from builder.catalogue.draft import draft_cycle
from builder.commands.options import Subcommands, add_cache, add_catalogue, add_command, add_limits, limits_of
from builder.commands.summary import verified_entries
from builder.errors import UsageError

__all__ = ["register", "run"]

HELP = "derive a cycle from a start or a word and print its catalogue entry"
DESCRIPTION = (
    "Derive the cycle of MAP through --start N (or following --word W) exactly and print a complete "
    "entry with every claim filled in and the provenance left for you. Exit 0 with an entry, 1 when there is "
    "none (not a cycle, already catalogued), 2 for usage errors."
)


def register(subparsers: Subcommands) -> None:
    """Add ``draft`` to the subcommands of the ``periplus`` parser."""
    parser = add_command(subparsers, "draft", HELP, DESCRIPTION)
    parser.add_argument("map", metavar="MAP", help="a map id of the catalogue")
    source = parser.add_mutually_exclusive_group(required=True)
    source.add_argument("--start", metavar="N", help="any member of the cycle")
    source.add_argument("--word", metavar="W", help="the residues along the cycle: digits, or comma-separated")
    parser.add_argument("--write", action="store_true", help="also write the entry where it belongs in the catalogue")
    add_catalogue(parser, positional=False)
    add_cache(parser)
    add_limits(parser)
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Run ``periplus draft``; return the exit status."""
    report = verified_entries(args)
    if not report.ok and args.map not in report.catalogue.maps:
        return 1
    result = draft_cycle(report.catalogue, args.catalogue, args.map, args.start, args.word, limits_of(args))
    if not result.ok or result.text is None or result.path is None:
        print(f"periplus: {result.message}", file=sys.stderr)
        return 1
    sys.stdout.write(result.text)
    if args.write:
        if result.path.exists():
            raise UsageError(f"{result.path} exists already; not overwritten")
        result.path.parent.mkdir(parents=True, exist_ok=True)
        result.path.write_text(result.text, encoding="utf-8")
        print(f"wrote {result.path}; fill in found_by and method before proposing it", file=sys.stderr)
    return 0
