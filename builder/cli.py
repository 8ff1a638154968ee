"""The ``periplus`` command line: a thin layer over the stages."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

from . import __version__
from .errors import PeriplusError
from .model import Report
from .verify import DEFAULT_MAX_STEPS, Limits, verify_catalogue

__all__ = ["main"]


def _positive(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got '{text}'") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {value}")
    return value


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="periplus",
        description="Verify and publish a record of cycles of Collatz-type maps.",
    )
    parser.add_argument("--version", action="version", version=f"periplus {__version__}")
    commands = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    verify = commands.add_parser(
        "verify",
        help="re-derive every entry of a catalogue exactly and report what does not hold",
        description="Re-derive every map and cycle of CATALOGUE with exact integer arithmetic. "
        "Exit 0 when every claim holds, 1 when any entry fails, 2 for usage errors or an unreadable catalogue.",
    )
    verify.add_argument(
        "catalogue",
        nargs="?",
        default="catalogue",
        type=Path,
        metavar="CATALOGUE",
        help="catalogue directory (default: catalogue)",
    )
    _add_limits(verify)
    return parser


def _add_limits(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--max-steps",
        type=_positive,
        default=DEFAULT_MAX_STEPS,
        metavar="N",
        help=f"give up on an orbit after N steps (default {DEFAULT_MAX_STEPS:,})",
    )
    parser.add_argument(
        "--max-bits",
        type=_positive,
        default=None,
        metavar="B",
        help="give up on an orbit once a member exceeds B bits "
        "(default: 65,536 plus 8 times the size of the entry's numbers)",
    )


def _count(n: int, noun: str) -> str:
    return f"{n} {noun}" if n == 1 else f"{n} {noun}s"


def summary(report: Report) -> str:
    """The closing line of a verification run."""
    cat = report.catalogue
    cycles = sum(len(c) for c in cat.cycles.values())
    verified = (
        f"{_count(len(cat.maps), 'map')}, {_count(cycles, 'cycle')} and {_count(len(cat.references), 'reference')}"
    )
    errors = report.errors
    if not errors:
        return f"verified {verified} in {_count(report.files, 'file')}: every claim holds"
    bad_files = len({p.position.file for p in errors})
    return f"{_count(len(errors), 'error')} in {bad_files} of {_count(report.files, 'file')}; {verified} verified"


def _verify(args: argparse.Namespace) -> int:
    report = verify_catalogue(args.catalogue, Limits(args.max_steps, args.max_bits))
    for problem in report.problems:
        print(problem)
    print(summary(report))
    return 0 if report.ok else 1


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    args = _parser().parse_args(argv)
    try:
        if args.command == "verify":
            return _verify(args)
        raise AssertionError(f"unhandled command {args.command}")
    except PeriplusError as exc:
        print(f"periplus: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("periplus: interrupted", file=sys.stderr)
        return 130
