"""The ``periplus`` command line: the parser built from the command modules, and the one error handler.

Every command module is imported to build the parser, so a module imports at its top only what its
parser and the catalogue stage need; a command that needs a later stage (the site, the diff, the
history) imports it in its ``run``.  ``periplus verify`` then does not load Jinja, Markdown and the page
code it never uses (tests/commands/test_cli.py checks which stages the command line loads).
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from typing import NoReturn, Protocol

from builder import __version__
from builder.commands import build, census, draft, hunt, odds, preview, review, verify
from builder.commands.options import Subcommands
from builder.errors import PeriplusError, printable
from builder.processes import kept_to_the_end

__all__ = ["COMMANDS", "Command", "execute", "main", "parser", "program"]


class Command(Protocol):
    """A command module: ``register`` adds its parser and sets ``run`` (args -> exit status) as its default.

    It may also set ``interrupted``, what ``periplus:`` says when Ctrl-C stops the command.
    """

    def register(self, subparsers: Subcommands, /) -> object: ...


#: The command modules, in the order ``periplus --help`` lists them.
COMMANDS: tuple[Command, ...] = (verify, build, draft, odds, hunt, census, review, preview)


def parser() -> argparse.ArgumentParser:
    """The ``periplus`` argument parser, with every command of COMMANDS."""
    top = argparse.ArgumentParser(
        prog="periplus",
        description="Verify and publish a record of cycles of Collatz-type maps.",
    )
    top.add_argument("--version", action="version", version=f"periplus {__version__}")
    subparsers = top.add_subparsers(dest="command", required=True, metavar="COMMAND")
    for command in COMMANDS:
        command.register(subparsers)
    return top


def execute(args: argparse.Namespace) -> int:
    """Run the command ``args`` were parsed for (its ``run`` default); return the exit status.

    The one place that turns what stops a command into an exit status: a PeriplusError prints
    "periplus: error: ..." and exits with its code; Ctrl-C prints "periplus: " and the command's
    ``interrupted`` default ("interrupted" when it sets none) and exits 130; a reader that went away
    (periplus odds ... | head) is not an error of ours and exits 141 quietly.
    """
    try:
        return int(args.run(args))
    except PeriplusError as exc:
        print(f"periplus: error: {printable(str(exc))}", file=sys.stderr)
        return exc.exit_code
    except KeyboardInterrupt:
        print(f"periplus: {getattr(args, 'interrupted', 'interrupted')}", file=sys.stderr)
        return 130
    except BrokenPipeError:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return 141


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    return execute(parser().parse_args(argv))


def program() -> NoReturn:
    """Run the command line as the program (``periplus``, ``python -m builder``) and exit with its status.

    When the command kept objects to the end (builder.processes.keep_to_the_end: a build's model), the
    process ends at once, its output flushed, instead of freeing them one by one.  The commands that keep
    objects have closed their files and reaped their workers by then, and leave nothing to an exit handler."""
    with kept_to_the_end() as kept:
        status = main()
        if kept:
            try:
                sys.stdout.flush()
                sys.stderr.flush()
            except OSError:  # a reader gone: the status the interpreter's own exit would give
                status = status or 120
            os._exit(status)
    sys.exit(status)
