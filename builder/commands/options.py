"""Command-line argument types and options shared by the periplus commands.

Every command is a module of builder.commands with ``register(subparsers: Subcommands) -> None``,
which adds its parser and sets ``run`` (a function of the parsed arguments returning the exit status)
as that parser's default; builder.commands.main runs it and handles errors for all of them.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TypeAlias

from builder.arith.integers import parse_decimal
from builder.catalogue.cache import FOLDER_NAME, VerifyCache
from builder.catalogue.limits import (
    DEFAULT_CENSUS_WORDS,
    DEFAULT_MAX_STEPS,
    DEFAULT_MAX_WORK,
    DEFAULT_RECHECK_UP_TO,
    MAP_WORK_ORBITS,
    Limits,
)
from builder.errors import UsageError
from builder.processes import default_jobs
from builder.search.ledger import Ledger, LedgerError

__all__ = [
    "Subcommands",
    "add_cache",
    "add_catalogue",
    "add_command",
    "add_limits",
    "add_max_work",
    "limits_of",
    "natural",
    "open_cache",
    "positive",
    "add_jobs",
    "jobs_of",
]

#: What ``register`` receives: the subcommands of the ``periplus`` parser.
Subcommands: TypeAlias = "argparse._SubParsersAction[argparse.ArgumentParser]"


def _at_least(text: str, least: int, what: str) -> int:
    try:
        value = parse_decimal(text.strip())
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected {what}, got '{text[:40]}'") from None
    if value < least:
        raise argparse.ArgumentTypeError(f"expected {what}, got {value}")
    return value


def natural(text: str) -> int:
    """An argparse type: a whole number (0, 1, 2, ...) of any size."""
    return _at_least(text, 0, "a whole number")


def positive(text: str) -> int:
    """An argparse type: a positive integer."""
    return _at_least(text, 1, "a positive integer")


def add_catalogue(parser: argparse.ArgumentParser, positional: bool = True) -> None:
    """The catalogue directory, as an optional positional argument or as --catalogue."""
    help_text = "catalogue directory (default: catalogue)"
    if positional:
        parser.add_argument("catalogue", nargs="?", default=Path("catalogue"), type=Path, metavar="CATALOGUE",
                            help=help_text)  # fmt: skip
    else:
        parser.add_argument("--catalogue", default=Path("catalogue"), type=Path, metavar="CATALOGUE", help=help_text)


def limits_of(args: argparse.Namespace) -> Limits:
    """The verification limits given by add_limits' options."""
    return Limits(args.max_steps, args.max_bits, args.recheck_up_to, args.max_work, args.census_words)


def add_max_work(parser: argparse.ArgumentParser, extra: str = "") -> None:
    """--max-work, the work budget of every orbit followed, in bit-operations."""
    parser.add_argument(
        "--max-work",
        type=positive,
        default=DEFAULT_MAX_WORK,
        metavar="W",
        help="give up on an orbit once following it has taken W bit-operations, a step on a member of b bits "
        f"costing about b (default {DEFAULT_MAX_WORK:,}, one to three seconds){extra}",
    )


def add_limits(parser: argparse.ArgumentParser) -> None:
    """--max-steps, --max-bits, --max-work and --recheck-up-to, the limits of a verification."""
    parser.add_argument(
        "--max-steps",
        type=positive,
        default=DEFAULT_MAX_STEPS,
        metavar="N",
        help=f"give up on an orbit after N steps (default {DEFAULT_MAX_STEPS:,})",
    )
    parser.add_argument(
        "--max-bits",
        type=positive,
        default=None,
        metavar="B",
        help="give up on an orbit once a member exceeds B bits "
        "(default: 65,536 plus 8 times the size of the entry's numbers)",
    )
    add_max_work(parser, f"; the coverage claims of one map may take {MAP_WORK_ORBITS} times W in all")
    parser.add_argument(
        "--recheck-up-to",
        type=natural,
        default=DEFAULT_RECHECK_UP_TO,
        metavar="N",
        help="re-run every coverage claim for the starts with |n| up to N; the part of a claim beyond N "
        f"is shown as attested (default {DEFAULT_RECHECK_UP_TO:,})",
    )
    parser.add_argument(
        "--census-words",
        type=natural,
        default=DEFAULT_CENSUS_WORDS,
        metavar="W",
        help="prove census claims again trying at most W words in all, shortest lengths first; a claim left "
        f"beyond them is shown as attested (default {DEFAULT_CENSUS_WORDS:,})",
    )


def add_cache(parser: argparse.ArgumentParser, where: str = "beside the catalogue folder") -> None:
    """--cache DIR and --no-cache: where verification results are kept between runs, or that none are used."""
    group = parser.add_mutually_exclusive_group()
    group.add_argument(
        "--cache",
        type=Path,
        default=None,
        metavar="DIR",
        help=f"keep verification results in DIR, so that unchanged files are not checked again "
        f"(default: {FOLDER_NAME} {where}; deleting it is always safe)",
    )
    group.add_argument(
        "--no-cache", action="store_true", help="neither read nor write the cache: check every file afresh"
    )


def open_cache(args: argparse.Namespace, default: Path) -> VerifyCache:
    """The cache add_cache's options ask for (``default``: the folder used without --cache); notes go to stderr."""
    if getattr(args, "no_cache", True):
        return VerifyCache.memory()
    cache = VerifyCache.open(args.cache if args.cache is not None else default)
    for note in cache.notes:
        print(f"note: {note}", file=sys.stderr)
    return cache


def add_jobs(parser: argparse.ArgumentParser, what: str) -> None:
    """Add ``--jobs N``: how many processes do ``what`` (default: one per usable core)."""
    parser.add_argument(
        "--jobs",
        type=positive,
        default=None,
        metavar="N",
        help=f"processes that {what} (default: the number of CPUs); the result does not depend on it",
    )


def jobs_of(args: argparse.Namespace) -> int:
    """The processes ``--jobs`` asks for, or one per usable core."""
    return args.jobs if args.jobs is not None else default_jobs()


def add_command(subparsers: Subcommands, name: str, help_text: str, description: str) -> argparse.ArgumentParser:
    """A command's parser: its one-line help for ``periplus --help`` and its description for its own."""
    return subparsers.add_parser(name, help=help_text, description=description)


def open_ledger(path: Path | None) -> Ledger | None:
    """The ledger of --ledger (None without one); a file that is none is a usage error."""
    if path is None:
        return None
    try:
        return Ledger(path)
    except LedgerError as exc:
        raise UsageError(f"--ledger: {exc}") from None
