"""GitHub Actions workflow commands for a review: one annotation per problem, shown on the file at fault."""

from __future__ import annotations

from builder.diff.changes import Comparison
from builder.errors import Problem, Severity

__all__ = ["github_commands", "workflow_command"]


def _escape_data(text: str) -> str:
    return text.replace("%", "%25").replace("\r", "%0D").replace("\n", "%0A")


def _escape_property(text: str) -> str:
    return _escape_data(text).replace(":", "%3A").replace(",", "%2C")


def workflow_command(command: str, message: str, file: str | None = None, line: int = 0, col: int = 0) -> str:
    """One GitHub Actions workflow command: ``::error file=F,line=L,col=C::message``.

    Line and column are left out when 0 (a problem with the file as a whole).
    """
    props = []
    if file is not None:
        props.append(f"file={_escape_property(file)}")
        if line:
            props.append(f"line={line}")
            if col:
                props.append(f"col={col}")
    head = f"::{command} {','.join(props)}" if props else f"::{command}"
    # A file name that is not UTF-8 holds lone surrogates (PEP 383), which no UTF-8 log can take.
    return f"{head}::{_escape_data(message)}".encode("utf-8", "backslashreplace").decode("utf-8")


def github_commands(comparison: Comparison, prefix: str) -> list[str]:
    """A command per problem of an added, changed, renamed or newly failing entry, and per new other problem.

    ``prefix`` is the catalogue's path from the repository root (``catalogue``), put before each file.
    """
    out: list[str] = []
    seen: set[str] = set()

    def emit(p: Problem) -> None:
        command = "error" if p.severity == Severity.ERROR else "warning"
        rel = p.position.file.as_posix()
        file = rel if prefix in ("", ".") else f"{prefix.rstrip('/')}/{rel}"
        text = workflow_command(command, p.message, file, p.position.line, p.position.column)
        if text not in seen:
            seen.add(text)
            out.append(text)

    for c in comparison.changes:
        if c.check is not None:
            for p in c.check.problems:
                emit(p)
    for p in comparison.other_problems:
        emit(p)
    for w in comparison.warnings:
        file = None
        if w.path is not None:
            file = w.path if prefix in ("", ".") else f"{prefix.rstrip('/')}/{w.path}"
        out.append(workflow_command("warning", w.message, file))
    return out
