"""``periplus verify``: re-derive every entry of a catalogue exactly and report what does not hold."""

from __future__ import annotations

import argparse

from builder.catalogue.cache import default_cache_folder
from builder.catalogue.verify import verify_catalogue
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
from builder.processes import keep_to_the_end

__all__ = ["register", "run"]

HELP = "re-derive every entry of a catalogue exactly and report what does not hold"
DESCRIPTION = (
    "Re-derive every map and cycle of CATALOGUE with exact integer arithmetic. "
    "Exit 0 when every claim holds, 1 when any entry fails, 2 for usage errors or an unreadable catalogue."
)


def register(subparsers: Subcommands) -> None:
    """Add ``verify`` to the subcommands of the ``periplus`` parser."""
    parser = add_command(subparsers, "verify", HELP, DESCRIPTION)
    add_catalogue(parser)
    add_limits(parser)
    add_cache(parser)
    add_jobs(parser, "check the cycle files")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Run ``periplus verify``; return the exit status."""
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        report = verify_catalogue(args.catalogue, limits_of(args), cache, jobs_of(args))
    show_report(report)
    keep_to_the_end(report)  # the model: dropped with the process, not freed object by object
    return 0 if report.ok else 1
