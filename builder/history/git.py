"""The one way Periplus runs git: a clean environment, a fixed locale, and failures as exceptions.

Every git command of the history stage goes through :func:`run_git`.  Variables that steer git
from outside (``GIT_DIR``, ``GIT_WORK_TREE``, ``GIT_INDEX_FILE``...) are removed, the system
configuration is skipped, the locale is ``C`` so messages are stable, git never prompts, and
configuration that would change output (path quoting, signatures, rename detection by default)
is set on the command line.  A failure raises :class:`GitFailed` with git's last line of error;
a machine without git raises :class:`GitMissing`.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

from builder.errors import PeriplusError

__all__ = ["GitFailed", "GitMissing", "run_git"]

_OPTIONS = ("-c", "core.quotepath=off", "-c", "log.showSignature=false", "-c", "diff.renames=false")


class GitFailed(PeriplusError):
    """git ran and refused: ``reason`` is its last line of error, ``command`` the git subcommand."""

    def __init__(self, command: str, reason: str) -> None:
        super().__init__(reason)
        self.command = command
        self.reason = reason


class GitMissing(PeriplusError):
    """The git program is not installed (or not on PATH)."""


def _environment() -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if not k.startswith("GIT_")}
    env.update(LC_ALL="C", GIT_CONFIG_NOSYSTEM="1", GIT_TERMINAL_PROMPT="0")
    return env


def run_git(cwd: Path, *args: str, data: bytes | None = None) -> bytes:
    """Run ``git ARGS`` in ``cwd`` with ``data`` on its standard input; return its standard output."""
    try:
        done = subprocess.run(
            ["git", "-C", str(cwd), *_OPTIONS, *args], env=_environment(), input=data, capture_output=True, check=False
        )
    except FileNotFoundError:
        raise GitMissing("the git program was not found") from None
    if done.returncode:
        lines = done.stderr.decode("utf-8", "replace").strip().splitlines()
        raise GitFailed(args[0], lines[-1] if lines else f"exit status {done.returncode}")
    return done.stdout
