"""``periplus build``: verify the catalogue, then write the website."""

from __future__ import annotations

import argparse
from pathlib import Path

from builder.catalogue.cache import default_cache_folder
from builder.catalogue.record import SITE_ADDRESS, site_address
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
from builder.errors import UsageError

__all__ = ["register", "run"]

HELP = "verify the catalogue, then write the website"
DESCRIPTION = (
    "Verify CATALOGUE exactly; if every claim holds, write the static site to DIR in one step "
    "(built beside it, then swapped in). If anything fails, nothing is written and the problems are printed. "
    "Exit 0 on success, 1 when an entry fails, 2 for usage errors."
)


def register(subparsers: Subcommands) -> None:
    """Add ``build`` to the subcommands of the ``periplus`` parser."""
    parser = add_command(subparsers, "build", HELP, DESCRIPTION)
    add_catalogue(parser)
    parser.add_argument("--out", default="site", type=Path, metavar="DIR", help="where the site goes (default: site)")
    parser.add_argument(
        "--base-url",
        default=None,
        metavar="URL",
        help="address the site will be published at (absolute links in the feed, and sitemap.xml)",
    )
    parser.add_argument(
        "--no-wait",
        action="store_true",
        help="if another build is writing DIR, stop at once (exit 2) instead of waiting for it to finish",
    )
    add_jobs(parser, "check the cycle files and write the pages")
    add_limits(parser)
    add_cache(parser)
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Run ``periplus build``; return the exit status."""
    from builder.history import NoHistory  # a later stage: imported here (builder.commands.main)
    from builder.site.build import build_site

    base_url = args.base_url
    if base_url is not None:
        base_url = site_address(args.base_url)
        if base_url is None:
            raise UsageError(f"--base-url: expected {SITE_ADDRESS}, got '{args.base_url}'")
    with open_cache(args, default_cache_folder(args.catalogue)) as cache:
        result = build_site(
            args.catalogue,
            args.out,
            limits_of(args),
            base_url,
            wait=not args.no_wait,
            jobs=jobs_of(args),
            reuse=not args.no_cache,  # --no-cache: a clean build, every page written
            remove_later=True,
            cache=cache,
        )
    show_report(result.report)
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
    if result.changelog is not None:
        for tag, why in result.changelog.skipped:
            print(f"note: the tag {tag} is not read as a release, because {why}")
    if result.changelog is not None and result.changelog.releases:
        for step in result.changelog.releases:
            if step.stated_version is not None:
                print(
                    f"note: the tag {step.tag} holds a record.yaml that says version {step.stated_version}, "
                    f"not {step.version}"
                )
    return 0
