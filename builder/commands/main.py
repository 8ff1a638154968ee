"""The ``periplus`` command line: a thin layer over the stages."""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from dataclasses import replace
from pathlib import Path

from builder import __version__
from builder.arith.integers import show
from builder.arith.odds import length_odds, odds_table
from builder.catalogue.draft import draft_cycle
from builder.catalogue.model import Report
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.hunt import add_hunt_command
from builder.commands.options import add_catalogue, add_limits, limits_of
from builder.commands.review import add_review_command
from builder.errors import PeriplusError, UsageError
from builder.history.repo import NoHistory
from builder.site.build import build_site
from builder.site.preview import serve

__all__ = ["main"]


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
    add_catalogue(verify)
    add_limits(verify)
    build = commands.add_parser(
        "build",
        help="verify the catalogue, then write the website",
        description="Verify CATALOGUE exactly; if every claim holds, write the static site to DIR in one step "
        "(built beside it, then swapped in). If anything fails, nothing is written and the problems are printed. "
        "Exit 0 on success, 1 when an entry fails, 2 for usage errors.",
    )
    add_catalogue(build)
    build.add_argument("--out", default="site", type=Path, metavar="DIR", help="where the site goes (default: site)")
    build.add_argument(
        "--base-url",
        default=None,
        metavar="URL",
        help="address the site will be published at (absolute links in the feed, and sitemap.xml)",
    )
    add_limits(build)
    draft = commands.add_parser(
        "draft",
        help="derive a cycle from a start or a word and print its catalogue entry",
        description="Derive the cycle of MAP through --start N (or following --word W) exactly and print a complete "
        "entry with every claim filled in and the provenance left for you. Exit 0 with an entry, 1 when there is "
        "none (not a cycle, already catalogued), 2 for usage errors.",
    )
    draft.add_argument("map", metavar="MAP", help="a map id of the catalogue")
    source = draft.add_mutually_exclusive_group(required=True)
    source.add_argument("--start", metavar="N", help="any member of the cycle")
    source.add_argument("--word", metavar="W", help="the residues along the cycle: digits, or comma-separated")
    draft.add_argument("--write", action="store_true", help="also write the entry where it belongs in the catalogue")
    add_catalogue(draft, positional=False)
    add_limits(draft)
    odds = commands.add_parser(
        "odds",
        help="the heuristic chance of an integer cycle at each length, beside the catalogue's count",
        description="For each length k and count x of letters 1 (odd steps), the number L(k, x) of aperiodic "
        "necklaces, the target m^k - A and the heuristic chance 1 - (1 - g/|target|)^L that one of the L words "
        "gives an integer cycle; beside it, how many catalogued cycles have that length and x. A model, not a "
        "theorem: see DEVELOPERS.md.",
    )
    odds.add_argument("map", metavar="MAP", help="a map id of the catalogue (2 branches)")
    odds.add_argument("--lengths", required=True, metavar="K1..K2", help="the lengths to show, e.g. 1..20 or 11")
    add_catalogue(odds, positional=False)
    add_hunt_command(commands)
    add_review_command(commands)
    preview = commands.add_parser("preview", help="serve a built site on localhost for reading")
    preview.add_argument(
        "site", nargs="?", default="site", type=Path, metavar="DIR", help="the built site (default: site)"
    )
    preview.add_argument("--port", type=int, default=8000, help="port to listen on (default 8000; 0 picks a free one)")
    return parser


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
    warnings = len(report.problems) - len(errors)
    if not errors:
        tail = f" ({_count(warnings, 'warning')})" if warnings else ""
        return f"verified {verified} in {_count(report.files, 'file')}: every claim holds{tail}"
    bad_files = len({p.position.file for p in errors})
    return f"{_count(len(errors), 'error')} in {bad_files} of {_count(report.files, 'file')}; {verified} verified"


def _verify(args: argparse.Namespace) -> int:
    report = verify_catalogue(args.catalogue, limits_of(args))
    for problem in report.problems:
        print(problem)
    print(summary(report))
    return 0 if report.ok else 1


def _build(args: argparse.Namespace) -> int:
    if args.base_url is not None and not args.base_url.startswith(("http://", "https://")):
        raise UsageError(f"--base-url: expected an http or https address, got '{args.base_url}'")
    result = build_site(args.catalogue, args.out, limits_of(args), args.base_url)
    for problem in result.report.problems:
        print(problem)
    print(summary(result.report))
    if not result.report.ok:
        print(f"nothing was written; {args.out} is as it was")
        return 1
    print(f"wrote {result.pages} pages to {args.out}: {result.edition.label if result.edition else 'no edition'}")
    if isinstance(result.history, NoHistory):
        print(f"note: no entry history or changelog, because {result.history.reason}")
    elif result.history is not None:
        if result.history.shallow:
            print("note: the repository is a shallow clone, so entry dates and old releases may be missing")
        for tag, why in result.history.ignored_tags:
            print(f"note: the tag {tag} is not read as a release, because {why}")
    if result.changelog is not None and result.changelog.releases:
        for step in result.changelog.releases:
            if step.stated_version is not None:
                print(
                    f"note: the tag {step.tag} holds a record.yaml that says version {step.stated_version}, "
                    f"not {step.version}"
                )
    return 0


def _verified(args: argparse.Namespace) -> Report:
    """Verify the entries of the catalogue a command works on; print its problems if they do not hold.

    Coverage claims are not re-run: drafting and odds need only the entries.
    """
    limits = Limits(args.max_steps, args.max_bits) if hasattr(args, "max_steps") else Limits()
    report = verify_catalogue(args.catalogue, replace(limits, recheck_up_to=0))
    if not report.ok:
        for problem in report.problems:
            print(problem, file=sys.stderr)
        print(summary(report), file=sys.stderr)
    return report


def _draft(args: argparse.Namespace) -> int:
    report = _verified(args)
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


def _lengths(text: str) -> range:
    lo, sep, hi = text.partition("..")
    try:
        first, last = int(lo), int(hi) if sep else int(lo)
    except ValueError:
        raise UsageError(f"--lengths: expected K or K1..K2, got '{text}'") from None
    if not 1 <= first <= last <= 10_000:
        raise UsageError(f"--lengths: expected 1 <= K1 <= K2 <= 10000, got '{text}'")
    return range(first, last + 1)


def _odds(args: argparse.Namespace) -> int:
    lengths = _lengths(args.lengths)
    report = _verified(args)
    entry = report.catalogue.maps.get(args.map)
    if entry is None:
        raise UsageError(f"expected a map id of the catalogue, got '{args.map}'")
    if entry.modulus != 2:
        raise UsageError(f"odds: expected a map with 2 branches, got {args.map} with modulus {entry.modulus}")
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


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    args = _parser().parse_args(argv)
    try:
        if args.command == "verify":
            return _verify(args)
        if args.command == "build":
            return _build(args)
        if args.command == "draft":
            return _draft(args)
        if args.command == "odds":
            return _odds(args)
        if hasattr(args, "run"):  # commands that define their own runner (hunt, review)
            return int(args.run(args))
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
    except BrokenPipeError:
        # The reader of our output went away (periplus odds ... | head): not an error of ours.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 141
