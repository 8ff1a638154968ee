"""What the commands say about a verification: the problems, then one closing line."""

from __future__ import annotations

import argparse
import sys
from dataclasses import replace
from typing import IO

from builder.catalogue.cache import default_cache_folder
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import Report
from builder.catalogue.verify import Limits, verify_catalogue
from builder.commands.options import limits_of, open_cache
from builder.wording import count

__all__ = ["show_report", "summary", "verified_entries"]


def summary(report: Report) -> str:
    """The closing line of a verification run."""
    cat = report.catalogue
    cycles = sum(len(c) for c in cat.cycles.values())
    verified = f"{count(len(cat.maps), 'map')}, {count(cycles, 'cycle')} and {count(len(cat.references), 'reference')}"
    errors = report.errors
    warnings = len(report.problems) - len(errors)
    attested = sum(claim.attested for entry in cat.maps.values() for claim in entry.coverage)
    partly = f"; {count(attested, 'coverage claim')} attested beyond what this run searched again" if attested else ""
    by_word = sum(claim.attested for entry in cat.maps.values() for claim in entry.census)
    if by_word:
        partly += f"; {count(by_word, 'census claim')} attested beyond what this run proved"
    attested += by_word
    if not errors:
        tail = f" ({count(warnings, 'warning')})" if warnings else ""
        holds = "every claim holds" if not attested else "every claim holds as far as it was checked"
        return f"verified {verified} in {count(report.files, 'file')}: {holds}{tail}{partly}"
    bad_files = len({p.position.file for p in errors})
    return f"{count(len(errors), 'error')} in {bad_files} of {count(report.files, 'file')}; {verified} verified{partly}"


def show_report(report: Report, stream: IO[str] | None = None) -> None:
    """Print every problem of ``report``, then its closing line (to stdout unless ``stream`` is given)."""
    for problem in report.problems:
        print(problem, file=stream)
    print(summary(report), file=stream)


def verified_entries(args: argparse.Namespace) -> Report:
    """Verify the entries of the catalogue a command works on; print its problems if they do not hold.

    Coverage claims are not re-run: drafting and odds need only the entries.
    """
    limits = limits_of(args) if hasattr(args, "max_steps") else Limits()
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        report = verify_catalogue(args.catalogue, replace(limits, recheck_up_to=NO_RECHECK), cache)
    if not report.ok:
        show_report(report, sys.stderr)
    return report
