"""The ``periplus`` command line: a thin layer over the stages."""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence
from pathlib import Path

from . import __version__
from .build import build_site
from .errors import PeriplusError, UsageError
from .model import Report
from .preview import serve
from .verify import DEFAULT_MAX_STEPS, DEFAULT_RECHECK_UP_TO, Limits, verify_catalogue

__all__ = ["main"]


def _positive(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got '{text}'") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"expected a positive integer, got {value}")
    return value


def _natural(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got '{text}'") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {value}")
    return value


def _limits(args: argparse.Namespace) -> Limits:
    return Limits(args.max_steps, args.max_bits, args.recheck_up_to)


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
    build = commands.add_parser(
        "build",
        help="verify the catalogue, then write the website",
        description="Verify CATALOGUE exactly; if every claim holds, write the static site to DIR in one step "
        "(built beside it, then swapped in). If anything fails, nothing is written and the problems are printed. "
        "Exit 0 on success, 1 when an entry fails, 2 for usage errors.",
    )
    build.add_argument(
        "catalogue",
        nargs="?",
        default="catalogue",
        type=Path,
        metavar="CATALOGUE",
        help="catalogue directory (default: catalogue)",
    )
    build.add_argument("--out", default="site", type=Path, metavar="DIR", help="where the site goes (default: site)")
    build.add_argument(
        "--base-url",
        default=None,
        metavar="URL",
        help="address the site will be published at (absolute links in the feed, and sitemap.xml)",
    )
    _add_limits(build)
    preview = commands.add_parser("preview", help="serve a built site on localhost for reading")
    preview.add_argument(
        "site", nargs="?", default="site", type=Path, metavar="DIR", help="the built site (default: site)"
    )
    preview.add_argument("--port", type=int, default=8000, help="port to listen on (default 8000; 0 picks a free one)")
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
    parser.add_argument(
        "--recheck-up-to",
        type=_natural,
        default=DEFAULT_RECHECK_UP_TO,
        metavar="N",
        help="re-run every coverage claim whose bound is at most N; larger ones are shown as attested "
        f"(default {DEFAULT_RECHECK_UP_TO:,})",
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
    report = verify_catalogue(args.catalogue, _limits(args))
    for problem in report.problems:
        print(problem)
    print(summary(report))
    return 0 if report.ok else 1


def _build(args: argparse.Namespace) -> int:
    if args.base_url is not None and not args.base_url.startswith(("http://", "https://")):
        raise UsageError(f"--base-url: expected an http or https address, got '{args.base_url}'")
    result = build_site(args.catalogue, args.out, _limits(args), args.base_url)
    for problem in result.report.problems:
        print(problem)
    print(summary(result.report))
    if not result.report.ok:
        print(f"nothing was written; {args.out} is as it was")
        return 1
    print(f"wrote {result.pages} pages to {args.out}")
    return 0


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    args = _parser().parse_args(argv)
    try:
        if args.command == "verify":
            return _verify(args)
        if args.command == "build":
            return _build(args)
        if args.command == "preview":
            serve(args.site, args.port)
            return 0
        raise AssertionError(f"unhandled command {args.command}")
    except PeriplusError as exc:
        print(f"periplus: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print("periplus: interrupted", file=sys.stderr)
        return 130
