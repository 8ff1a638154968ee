"""YAML text to raw, positioned nodes: the first layer of reading a catalogue file.

Nothing here interprets a value: a scalar keeps its text and whether it was
written plain (unquoted), so the next stage can say "expected an integer,
got the quoted string '27'" or "write the word 0110 in quotes".  Parsing
goes through the YAML *event* stream, never a constructor: only the safe
subset is possible, duplicate keys are caught, aliases and tags are refused,
and nesting depth is bounded without recursion (libyaml's C composer
recurses and crashes on a deeply nested document).
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

import yaml

from builder.errors import Position, Problem

__all__ = ["MAX_DEPTH", "MappingNode", "Node", "Scalar", "SequenceNode", "parse_yaml", "problem_at"]

#: Catalogue documents are shallow; anything deeper is refused.
MAX_DEPTH = 16
#: Characters YAML does not allow in a stream (YAML 1.1 section 5.1, the same set PyYAML's reader refuses).
_NON_PRINTABLE = re.compile("[^\x09\x0a\x0d\x20-\x7e\x85\xa0-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")

try:  # the C parser when libyaml is present, else PyYAML's own
    _Loader: type = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on the PyYAML build
    _Loader = yaml.SafeLoader


class Node:
    """A YAML node with its 1-based position; ``KIND`` names it in messages."""

    __slots__ = ("line", "column")
    KIND = "node"
    line: int
    column: int


class Scalar(Node):
    """A scalar's text, and whether it was written plain (unquoted, not a block)."""

    __slots__ = ("value", "plain")
    KIND = "scalar"

    def __init__(self, value: str, plain: bool, line: int, column: int) -> None:
        self.value, self.plain = value, plain
        self.line, self.column = line, column


class SequenceNode(Node):
    """Items in document order."""

    __slots__ = ("items",)
    KIND = "list"

    def __init__(self, line: int, column: int) -> None:
        self.items: list[Node] = []
        self.line, self.column = line, column


class MappingNode(Node):
    """Keys map to (key node, value node), in document order."""

    __slots__ = ("entries",)
    KIND = "mapping"

    def __init__(self, line: int, column: int) -> None:
        self.entries: dict[str, tuple[Scalar, Node]] = {}
        self.line, self.column = line, column


def problem_at(path: Path, line: int, column: int, message: str, code: str) -> Problem:
    """A problem at a line and column of a file (0, 0: the file as a whole)."""
    return Problem(Position(path, line, column), message, code)


_SCALAR = yaml.ScalarEvent
_MAPPING_START = yaml.MappingStartEvent
_MAPPING_END = yaml.MappingEndEvent
_SEQUENCE_START = yaml.SequenceStartEvent
_SEQUENCE_END = yaml.SequenceEndEvent
_ALIAS = yaml.AliasEvent
_DOCUMENT_START = yaml.DocumentStartEvent
_STREAM_END = yaml.StreamEndEvent


def _decorations(event: Any, node: Node, path: Path, problems: list[Problem]) -> None:
    """Report an anchor or an explicit tag on a node: catalogue files use neither."""
    if event.anchor:
        problems.append(
            problem_at(
                path, node.line, node.column, f"anchor &{event.anchor} is not allowed in catalogue files", "yaml"
            )
        )
    if event.tag and event.tag != "!":
        problems.append(
            problem_at(
                path, node.line, node.column, f"explicit tag {event.tag} is not allowed in catalogue files", "yaml"
            )
        )


def parse_yaml(text: str, path: Path) -> tuple[Node | None, list[Problem]]:
    """Parse one YAML document into nodes; return (root or None, problems)."""
    problems: list[Problem] = []
    bad = _NON_PRINTABLE.search(text)
    if bad is not None:
        # The YAML reader refuses these too, but reports an offset (in bytes
        # for libyaml, in characters for PyYAML) instead of a line and column.
        line = text.count("\n", 0, bad.start()) + 1
        column = bad.start() - (text.rfind("\n", 0, bad.start()) + 1) + 1
        problems.append(
            problem_at(
                path,
                line,
                column,
                f"expected printable text, got the non-printable character U+{ord(bad.group()):04X}",
                "encoding",
            )
        )
        return None, problems
    root = _parse_simple(text)
    if root is not None:
        return root, problems
    try:
        return _parse_events(text, path, _Loader, problems)
    except _DepthLimit:
        # Newer libyaml builds stop at their own nesting limit while scanning
        # ahead, before this loader sees the level it refuses at.  PyYAML's
        # pure-Python parser has no such limit (and no recursion), so the
        # file is parsed again with it to give the same message and position
        # whatever libyaml is installed.  Only deeply nested files pay for it.
        return _parse_events(text, path, yaml.SafeLoader, [])


#: A plain scalar of the simple shape: an id, a number, a date (no spaces, colons, commas or brackets).
_WORD = r"[-+]?[A-Za-z0-9][A-Za-z0-9_.+-]*"
#: One line of the simple shape: blank, a comment, or ``key:`` at indent 0 or 2 followed by nothing (a
#: mapping follows, indented by 2), a double- or single-quoted scalar without escapes, a flow list of
#: plain scalars separated by ", ", or a plain scalar; each ends the line.
_SIMPLE_LINE = re.compile(
    r"[ ]*(?:#[^\n]*)?\n"
    r"|((?:  )?)([a-z_][a-z0-9_]*):"
    r"(?:\n|[ ](?:\"([^\"\\\n]*)\"|'([^'\n]*)'|\[((?:" + _WORD + r"(?:, " + _WORD + r")*)?)\]|(" + _WORD + r"))\n)"
)
#: Characters that YAML reads as line breaks besides \n, or as a byte order mark: not in the simple shape.
_NOT_SIMPLE = re.compile("[\r\x85\u2028\u2029\ufeff]")


def _parse_simple(text: str) -> MappingNode | None:
    """The nodes of a document in the simple shape most entries are written in, or None for any other.

    The shape: lines of ``key: value`` at the top level, and for a key with nothing after its colon,
    lines of ``key: value`` indented by two spaces; each value a plain scalar of :data:`_WORD`, a
    quoted scalar on one line without escapes or doubled quotes, or a flow list of plain scalars
    written ``[a, b, c]``; comment lines and blank lines; no tab, no line break but \\n, and a final
    line break.  In it a value is its text (quotes aside), and every position follows from the line
    and the lengths before it, so the tree is the one the event stream gives (the tests compare
    them over every catalogue at hand).  Whatever else a file holds, even a repeated key, sends it
    to the event stream, which says what is wrong where.
    """
    if not text.endswith("\n") or _NOT_SIMPLE.search(text):
        return None
    match = _SIMPLE_LINE.match
    root: MappingNode | None = None
    nested: MappingNode | None = None  # the mapping under ``opened``, once it has an entry
    opened: Scalar | None = None  # a top-level key with nothing after its colon
    pos, end, line = 0, len(text), 0
    while pos < end:
        found = match(text, pos)
        if found is None:
            return None
        pos = found.end()
        line += 1
        indent, key, double, single, items, plain = found.groups()
        if key is None:
            continue  # a blank line or a comment
        at = len(indent) + len(key) + 3  # the column of the value
        node: Node | None
        if plain is not None:
            node = Scalar(plain, True, line, at)
        elif double is not None:
            node = Scalar(double, False, line, at)
        elif items is not None:
            node = SequenceNode(line, at)
            column = at + 1
            for item in items.split(", ") if items else ():
                node.items.append(Scalar(item, True, line, column))
                column += len(item) + 2
        elif single is not None:
            node = Scalar(single, False, line, at)
        else:
            node = None
        if not indent:
            if (opened is not None and nested is None) or (root is not None and key in root.entries):
                return None  # a key with nothing under it, or a repeated key
            if root is None:
                root = MappingNode(line, 1)
            opened, nested = (Scalar(key, True, line, 1), None) if node is None else (None, None)
            if node is not None:
                root.entries[key] = (Scalar(key, True, line, 1), node)
        else:
            if root is None or opened is None or node is None or (nested is not None and key in nested.entries):
                return None
            if nested is None:
                nested = MappingNode(line, 3)
                root.entries[opened.value] = (opened, nested)
            nested.entries[key] = (Scalar(key, True, line, 3), node)
    return None if opened is not None and nested is None else root


class _DepthLimit(Exception):
    """libyaml refused the nesting depth before the loader's own limit was reached."""


def _parse_events(text: str, path: Path, loader: type, problems: list[Problem]) -> tuple[Node | None, list[Problem]]:
    # kept whole: this loop runs once per YAML event of every file, so its state lives in locals
    # rather than in helper calls (the verify benchmark measures it against the bare parse).
    parser = loader(text)
    get_event = parser.get_event
    root: Node | None = None
    # The open container, whether it is a mapping, the key awaiting its value
    # and whether that value is to be dropped (after a bad or repeated key);
    # the enclosing containers' states are saved on the stack.  Kept in
    # locals because this loop runs once per YAML event of every file.
    container: Any = None
    is_map = False
    key: Scalar | None = None
    drop = False
    stack: list[tuple[Any, bool, Scalar | None, bool]] = []
    documents = 0
    # An alias stands in the tree as an empty placeholder; checking the tree
    # would then report things about a value nobody wrote, so a file with an
    # alias yields no tree (its problems say why).
    aliased = False
    try:
        while True:
            event = get_event()
            cls = type(event)
            if cls is _SCALAR:
                mark = event.start_mark
                node: Node = Scalar(event.value, not event.style, mark.line + 1, mark.column + 1)
                if event.anchor is not None or event.tag is not None:
                    _decorations(event, node, path, problems)
            elif cls is _MAPPING_END or cls is _SEQUENCE_END:
                container, is_map, key, drop = stack.pop()
                continue
            elif cls is _MAPPING_START or cls is _SEQUENCE_START:
                mark = event.start_mark
                node = (MappingNode if cls is _MAPPING_START else SequenceNode)(mark.line + 1, mark.column + 1)
                if event.anchor is not None or event.tag is not None:
                    _decorations(event, node, path, problems)
            elif cls is _ALIAS:
                mark = event.start_mark
                problems.append(
                    problem_at(
                        path,
                        mark.line + 1,
                        mark.column + 1,
                        f"expected a value, got the alias *{event.anchor}; "
                        "anchors and aliases are not allowed in catalogue files",
                        "yaml",
                    )
                )
                node = Scalar("", False, mark.line + 1, mark.column + 1)
                aliased = True
            elif cls is _DOCUMENT_START:
                documents += 1
                if documents > 1:
                    mark = event.start_mark
                    problems.append(
                        problem_at(
                            path, mark.line + 1, mark.column + 1, "expected one YAML document, got several", "yaml"
                        )
                    )
                    break
                continue
            elif cls is _STREAM_END or event is None:
                break
            else:
                continue
            # Attach the node to the open container.
            if container is None:
                root = node
            elif not is_map:
                container.items.append(node)
            elif key is None:
                if type(node) is not Scalar:
                    problems.append(
                        problem_at(
                            path, node.line, node.column, f"expected a plain text key, got a {node.KIND}", "yaml"
                        )
                    )
                    key = Scalar("", True, node.line, node.column)
                    drop = True
                else:
                    key = node
                    first = container.entries.get(node.value)
                    drop = first is not None
                    if drop:
                        problems.append(
                            problem_at(
                                path,
                                node.line,
                                node.column,
                                f"duplicate key '{node.value}' (first given at line {first[0].line})",
                                "duplicate-key",
                            )
                        )
            else:
                if not drop:
                    container.entries[key.value] = (key, node)
                key = None
            if cls is _MAPPING_START or cls is _SEQUENCE_START:
                if len(stack) >= MAX_DEPTH:
                    problems.append(
                        problem_at(
                            path,
                            node.line,
                            node.column,
                            f"expected at most {MAX_DEPTH} levels of nesting, got more",
                            "yaml",
                        )
                    )
                    return None, problems
                stack.append((container, is_map, key, drop))
                container, is_map, key, drop = node, cls is _MAPPING_START, None, False
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        reason = exc.problem or exc.context or "invalid YAML"
        if exc.context and exc.problem:
            reason = f"{exc.context}: {exc.problem}"
        if "nesting depth" in reason and loader is not yaml.SafeLoader:
            raise _DepthLimit from exc
        line, column = (mark.line + 1, mark.column + 1) if mark else (0, 0)
        rows = text.split("\n")
        row = rows[line - 1] if 0 < line <= len(rows) else ""
        if 0 < column <= len(row) and row[column - 1] == "\t" and "tab" not in reason:
            reason += " (a tab character; indent with spaces)"
        problems.append(problem_at(path, line, column, f"YAML syntax: {reason}", "yaml"))
        return None, problems
    except yaml.YAMLError as exc:  # pragma: no cover - unmarked errors are rare
        problems.append(problem_at(path, 0, 0, "YAML syntax: " + " ".join(str(exc).split()), "yaml"))
        return None, problems
    finally:
        parser.dispose()
    return (None if aliased else root), problems
