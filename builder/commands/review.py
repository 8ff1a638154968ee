"""``periplus review BASE HEAD``: what a pull request changes in the catalogue, and whether it holds."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from builder.catalogue import Report, verify_catalogue, verify_source
from builder.catalogue.cache import FOLDER_NAME, default_cache_folder
from builder.commands.options import Subcommands, add_cache, add_command, add_limits, limits_of, open_cache
from builder.errors import NoCatalogueAtRevision, UsageError

__all__ = ["register", "run"]

HELP = "report what a pull request changes in the catalogue and whether it holds"
DESCRIPTION = (
    "Verify the catalogues BASE and HEAD and report, entry by entry, what HEAD adds, changes, "
    "renames and removes, with the verification result of every added or changed entry. BASE and HEAD are "
    "catalogue directories, or with --git revisions of a git repository. Exit 1 when an added or changed "
    "entry fails, or an untouched entry fails in HEAD although it held in BASE (a removal that breaks a "
    "dependency); warnings alone exit 0; 2 for usage errors."
)


def register(subparsers: Subcommands) -> None:
    """Add ``review`` to the subcommands of the ``periplus`` parser."""
    review = add_command(subparsers, "review", HELP, DESCRIPTION)
    review.add_argument("base", metavar="BASE", help="the catalogue before the change (a directory or a revision)")
    review.add_argument("head", metavar="HEAD", help="the catalogue after the change (a directory or a revision)")
    review.add_argument("--git", action="store_true", help="read BASE and HEAD as git revisions, without checkout")
    review.add_argument(
        "--repo", type=Path, default=None, metavar="DIR", help="the git repository (default: the current directory)"
    )
    review.add_argument(
        "--path",
        default=None,
        metavar="PATH",
        help="with --git, the catalogue's path inside each revision (default: catalogue)",
    )
    review.add_argument(
        "--format",
        choices=("markdown", "github"),
        default="markdown",
        help="github: print a GitHub Actions ::error command per problem before the Markdown",
    )
    add_limits(review)
    add_cache(review, "beside HEAD's catalogue folder, or with --git at the top of the repository")
    review.set_defaults(run=run)


def _reports(args: argparse.Namespace) -> tuple[Report, Report, str, str, str]:
    """The verified base and head, the head's path prefix for annotations, and the two labels."""
    if not args.git:
        if args.repo is not None or args.path is not None:
            raise UsageError("--repo and --path apply only with --git")
        base_root, head_root = Path(args.base), Path(args.head)
        # One cache for both sides: what the two share (a coverage search, say) is worked out once.
        with open_cache(args, default_cache_folder(head_root)) as cache:
            base = verify_catalogue(base_root, limits_of(args), cache)
            head = verify_catalogue(head_root, limits_of(args), cache)
        return base, head, head_root.as_posix(), args.base, args.head
    from builder.history.revisions import catalogue_path, empty_source, repository_top, revision_source

    repo = args.repo if args.repo is not None else Path.cwd()
    path = args.path if args.path is not None else "catalogue"
    top = repository_top(repo)
    base_label = args.base
    try:
        base_source = revision_source(top, args.base, path)
    except NoCatalogueAtRevision:
        # The change that starts the record: everything in HEAD is added.  A HEAD without the
        # catalogue stays an error, since removing the whole record is no reviewable change.
        base_source = empty_source(f"{args.base}:(no catalogue yet)")
        base_label = f"{args.base} (no catalogue yet)"
    head_source = revision_source(top, args.head, path)
    with open_cache(args, top / FOLDER_NAME) as cache:
        base = verify_source(base_source, limits_of(args), cache)
        head = verify_source(head_source, limits_of(args), cache)
    return base, head, catalogue_path(path).as_posix(), base_label, args.head


def run(args: argparse.Namespace) -> int:
    """Run ``periplus review``; return the exit status."""
    # a later stage: imported here (builder.commands.main)
    from builder.diff import compare, github_commands, render_markdown

    base, head, prefix, base_label, head_label = _reports(args)
    comparison = compare(base, head)
    if args.format == "github":
        for line in github_commands(comparison, prefix):
            print(line)
    sys.stdout.write(render_markdown(comparison, base_label, head_label))
    return 0 if comparison.ok else 1
