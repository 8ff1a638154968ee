"""Adding a claim (coverage or census) to the text of a map file, keeping every other line (comments included) as
written.

The claim goes after the last item of the file's ``coverage:`` (or ``census:``) block list, at the indent of its
items, or, when the file has no such field, into a new one at the end of the file.  The result is read back
and compared with the original: every other field must read the same and the list must have gained exactly
the claim, or nothing is returned but a ClaimError.  A ``coverage`` written as a flow list (``[...]``) is
refused with a message saying how to write it.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import yaml

from builder.catalogue.nodes import MappingNode, SequenceNode, parse_yaml

__all__ = ["ClaimError", "append_claim"]

#: The field a map file's claims are listed under.
FIELD = "coverage"


class ClaimError(ValueError):
    """A map file a claim cannot be added to as written; the message names the file and says why."""


def append_claim(text: str, path: Path, item: Callable[[str], str], field: str = FIELD) -> str:
    """``text`` (a map file's) with one more claim in the list ``field`` ("coverage" or "census");
    ``item(indent)`` gives the claim as a list item.

    ``indent`` is what stands before the item's dash; ``item`` returns whole lines.
    """
    root, problems = parse_yaml(text, path)
    if problems or not isinstance(root, MappingNode):
        raise ClaimError(
            f"{path}: expected a map file that reads as a mapping, got {problems[0] if problems else root}"
        )
    lines = text.splitlines(keepends=True)
    if lines and not lines[-1].endswith("\n"):
        lines[-1] += "\n"
    if field not in root.entries:
        updated = "".join(lines) + f"{field}:\n" + item("  ")
    else:
        key, value = root.entries[field]
        if not isinstance(value, SequenceNode) or _at(lines, value.line, value.column) != "-":
            raise ClaimError(
                f"{path}:{key.line}:{key.column}: {field}: expected a block list (each claim an item "
                "starting '- ') to add a claim to, got a flow list or another value; write it as a block list"
            )
        later = [k.line for k, _ in root.entries.values() if k.line > key.line]
        end = min(later) - 1 if later else len(lines)  # the last line (1-based) that may belong to the list
        last = end
        while last > key.line and _blank_or_comment(lines[last - 1]):
            last -= 1
        indent = " " * (value.column - 1)
        updated = "".join(lines[:last]) + item(indent) + "".join(lines[last:])
    _check(text, updated, item(""), path, field)
    return updated


def _at(lines: list[str], line: int, column: int) -> str:
    """The character at a 1-based line and column ("" past the text)."""
    if not 1 <= line <= len(lines):
        return ""
    row = lines[line - 1]
    return row[column - 1] if 1 <= column <= len(row) else ""


def _blank_or_comment(line: str) -> bool:
    stripped = line.strip()
    return not stripped or stripped.startswith("#")


#: The C parser when libyaml is present (20 times faster on a map file with basins), else PyYAML's own.
_LOADER: type = getattr(yaml, "CSafeLoader", yaml.SafeLoader)


def _check(before: str, after: str, claim: str, path: Path, field: str) -> None:
    """The updated text must read as the original with exactly one more claim at the end of the list."""
    old: Any = yaml.load(before, Loader=_LOADER)
    new: Any = yaml.load(after, Loader=_LOADER)
    added: Any = yaml.load(claim, Loader=_LOADER)
    expected = dict(old)
    expected[field] = list(old.get(field) or []) + list(added)
    if new != expected:
        raise ClaimError(
            f"{path}: expected the file to read as before with one more {field} claim once it is added, "
            "got a file that reads otherwise; add the claim by hand"
        )
