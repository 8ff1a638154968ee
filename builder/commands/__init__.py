"""The ``periplus`` command line: the only layer that parses arguments, prints and picks exit codes."""

from builder.commands.main import main, program

__all__ = ["main", "program"]
