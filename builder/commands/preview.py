"""``periplus preview``: serve a built site on localhost for reading."""

from __future__ import annotations

import argparse
from pathlib import Path

from builder.commands.options import Subcommands

__all__ = ["register", "run"]

HOST = "127.0.0.1"


def register(subparsers: Subcommands) -> None:
    """Add ``preview`` to the subcommands of the ``periplus`` parser."""
    parser = subparsers.add_parser("preview", help="serve a built site on localhost for reading")
    parser.add_argument(
        "site", nargs="?", default="site", type=Path, metavar="DIR", help="the built site (default: site)"
    )
    parser.add_argument("--port", type=int, default=8000, help="port to listen on (default 8000; 0 picks a free one)")
    parser.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Run ``periplus preview`` until Ctrl-C (which the shared handler turns into exit status 130)."""
    from builder.site.preview import open_server, serving_text  # a later stage: imported here (builder.commands.main)

    server = open_server(args.site, args.port, HOST)
    with server:
        print(serving_text(args.site, HOST, server), flush=True)
        server.serve_forever()
    return 0
