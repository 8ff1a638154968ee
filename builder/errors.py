"""Problems found in a catalogue, and the exceptions that carry them.

Problems are data: a position (file, line, column, key path) and a message,
formatted only when printed.  Bad catalogue content is always reported as a
Problem; an exception that is not a PeriplusError is a bug in Periplus.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from enum import StrEnum
from pathlib import Path

__all__ = [
    "CatalogueUnreadable",
    "NoCatalogueAtRevision",
    "PeriplusError",
    "Position",
    "Problem",
    "Severity",
    "UsageError",
    "Verdict",
    "format_key_path",
    "printable",
]

KeyPath = tuple[str | int, ...]

#: Characters that would split or disguise a printed diagnostic line: C0 and C1 controls, DEL, and the
#: Unicode line and paragraph separators (Unicode 15, chapter 5.8, "Newline Guidelines"); the
#: bidirectional marks, embeddings, overrides and isolates, which reorder what a reader sees (Unicode
#: UAX #9, section 2); and the lone surrogates by which Python keeps the bytes of a file name that is
#: not UTF-8 (PEP 383), which no UTF-8 output can write.
_UNPRINTABLE = re.compile("[\x00-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069\ud800-\udfff]")
_NAMED = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def printable(text: str) -> str:
    """``text`` for one line of a terminal or a CI log: every control character written as an escape.

    A file name or a key that holds a line feed would otherwise start a forged diagnostic line (or a
    workflow command when verify runs in CI).
    """
    return _UNPRINTABLE.sub(_escape, text) if _UNPRINTABLE.search(text) else text


def _escape(match: re.Match[str]) -> str:
    ch = match[0]
    code = ord(ch)
    if 0xDC80 <= code <= 0xDCFF:  # a byte that is not UTF-8, kept by the surrogateescape handler
        return f"\\x{code - 0xDC00:02x}"
    return _NAMED.get(ch) or (f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")


def format_key_path(path: KeyPath) -> str:
    """Render ("provenance", "references", 2) as provenance.references[2]."""
    out = ""
    for part in path:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += f".{part}" if out else part
    return out


@dataclass(frozen=True, order=True, slots=True)
class Position:
    """Where a problem is: a file, a 1-based line and column, and a key path in the document."""

    file: Path
    line: int = 0  # 0 when the problem concerns the file as a whole
    column: int = 0
    key_path: KeyPath = field(default=(), compare=False)

    def __str__(self) -> str:
        file = printable(str(self.file))
        if self.line:
            return f"{file}:{self.line}:{self.column}"
        return file


class Severity(StrEnum):
    """How bad a problem is: an error fails verification, a warning asks a person to look."""

    ERROR = "error"
    WARNING = "warning"


class Verdict(StrEnum):
    """How a verification judged one entry of a catalogue."""

    HOLDS = "holds"  # it reached the verified record and has no error of its own
    FAILS = "fails"  # it has errors of its own
    NOT_VERIFIED = "not verified"  # no error of its own, but something it depends on fails


@dataclass(frozen=True, order=True, slots=True)
class Problem:
    """One thing wrong with a catalogue.

    ``code`` is a short stable name for the kind of problem (for tools and
    tests); ``message`` is for people and names what was expected and got.
    """

    position: Position
    message: str = field(compare=False)
    code: str = field(default="invalid", compare=False)
    severity: Severity = field(default=Severity.ERROR, compare=False)

    def __str__(self) -> str:
        return f"{self.position}: {self.severity}: {printable(self.message)}"


class PeriplusError(Exception):
    """Base of every error Periplus raises on purpose."""

    exit_code = 1


class UsageError(PeriplusError):
    """The command line asks for something impossible."""

    exit_code = 2


class NoCatalogueAtRevision(UsageError):
    """A git revision holds no files under the catalogue's path (the record did not exist yet)."""

    def __init__(self, revision: str, path: str) -> None:
        self.revision = revision
        self.path = path
        super().__init__(f"revision '{revision}' has no files under '{path}'")


class CatalogueUnreadable(PeriplusError):
    """The catalogue as a whole cannot be read (missing directory, not a catalogue)."""

    exit_code = 2

    def __init__(self, path: Path, reason: str) -> None:
        super().__init__(f"{path}: {reason}")
        self.path = path
        self.reason = reason
