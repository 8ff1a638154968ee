"""Stage 1: read a catalogue directory into raw, positioned YAML nodes.

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
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from .errors import CatalogueUnreadable, Position, Problem

__all__ = [
    "ID_PATTERN",
    "MAX_DEPTH",
    "Mapping",
    "Node",
    "RawCatalogue",
    "RawFile",
    "Scalar",
    "Sequence",
    "load_catalogue",
    "parse_yaml",
]

#: Entry ids are file stems: lowercase letters, digits and hyphens.
ID_PATTERN = re.compile(r"[a-z0-9][a-z0-9-]*")
#: Catalogue documents are shallow; anything deeper is refused.
MAX_DEPTH = 16
#: Characters YAML does not allow in a stream (YAML 1.1 section 5.1, the same set PyYAML's reader refuses).
_NON_PRINTABLE = re.compile("[^\x09\x0a\x0d\x20-\x7e\x85\xa0-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")

try:  # the C parser when libyaml is present, else PyYAML's own
    _Loader: type = yaml.CSafeLoader
except AttributeError:  # pragma: no cover - depends on the PyYAML build
    _Loader = yaml.SafeLoader


class Node:
    """A YAML node with its 1-based position."""

    __slots__ = ("line", "column")
    line: int
    column: int

    def kind(self) -> str:
        raise NotImplementedError


class Scalar(Node):
    """A scalar's text, and whether it was written plain (unquoted, not a block)."""

    __slots__ = ("value", "plain")

    def __init__(self, value: str, plain: bool, line: int, column: int) -> None:
        self.value = value
        self.plain = plain
        self.line = line
        self.column = column

    def kind(self) -> str:
        return "scalar"


class Sequence(Node):
    __slots__ = ("items",)

    def __init__(self, line: int, column: int) -> None:
        self.items: list[Node] = []
        self.line = line
        self.column = column

    def kind(self) -> str:
        return "list"


class Mapping(Node):
    """Keys map to (key node, value node), in document order."""

    __slots__ = ("entries",)

    def __init__(self, line: int, column: int) -> None:
        self.entries: dict[str, tuple[Scalar, Node]] = {}
        self.line = line
        self.column = column

    def kind(self) -> str:
        return "mapping"


def _problem(path: Path, line: int, column: int, message: str, code: str) -> Problem:
    return Problem(Position(path, line, column), message, code)


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
            _problem(
                path,
                line,
                column,
                f"expected printable text, got the non-printable character U+{ord(bad.group()):04X}",
                "encoding",
            )
        )
        return None, problems
    parser = _Loader(text)
    root: Node | None = None
    # Each open container with, for mappings, the key awaiting its value.
    stack: list[list[Any]] = []
    documents = 0
    # An alias stands in the tree as an empty placeholder; checking the tree
    # would then report things about a value nobody wrote, so a file with an
    # alias yields no tree (its problems say why).
    aliased = False

    def add(node: Node) -> None:
        nonlocal root
        if not stack:
            root = node
            return
        top = stack[-1]
        container = top[0]
        if isinstance(container, Sequence):
            container.items.append(node)
        elif top[1] is None:
            if not isinstance(node, Scalar):
                problems.append(
                    _problem(path, node.line, node.column, f"expected a plain text key, got a {node.kind()}", "yaml")
                )
                top[1] = Scalar("", True, node.line, node.column)
                top[2] = True
            else:
                top[1] = node
                top[2] = False
                first = container.entries.get(node.value)
                if first is not None:
                    problems.append(
                        _problem(
                            path,
                            node.line,
                            node.column,
                            f"duplicate key '{node.value}' (first given at line {first[0].line})",
                            "duplicate-key",
                        )
                    )
                    top[2] = True
        else:
            key = top[1]
            if not top[2]:
                container.entries[key.value] = (key, node)
            top[1] = None

    try:
        while True:
            event = parser.get_event()
            if event is None or isinstance(event, yaml.StreamEndEvent):
                break
            mark = event.start_mark
            line, column = mark.line + 1, mark.column + 1
            if isinstance(event, yaml.ScalarEvent):
                node: Node = Scalar(event.value, not event.style, line, column)
            elif isinstance(event, yaml.SequenceStartEvent):
                node = Sequence(line, column)
            elif isinstance(event, yaml.MappingStartEvent):
                node = Mapping(line, column)
            elif isinstance(event, yaml.CollectionEndEvent):
                stack.pop()
                continue
            elif isinstance(event, yaml.AliasEvent):
                problems.append(
                    _problem(
                        path,
                        line,
                        column,
                        f"expected a value, got the alias *{event.anchor}; "
                        "anchors and aliases are not allowed in catalogue files",
                        "yaml",
                    )
                )
                add(Scalar("", False, line, column))
                aliased = True
                continue
            elif isinstance(event, yaml.DocumentStartEvent):
                documents += 1
                if documents > 1:
                    problems.append(_problem(path, line, column, "expected one YAML document, got several", "yaml"))
                    break
                continue
            else:
                continue
            if getattr(event, "anchor", None):
                problems.append(
                    _problem(path, line, column, f"anchor &{event.anchor} is not allowed in catalogue files", "yaml")
                )
            if getattr(event, "tag", None) and event.tag != "!":
                problems.append(
                    _problem(path, line, column, f"explicit tag {event.tag} is not allowed in catalogue files", "yaml")
                )
            add(node)
            if not isinstance(node, Scalar):
                if len(stack) >= MAX_DEPTH:
                    problems.append(
                        _problem(
                            path, line, column, f"expected at most {MAX_DEPTH} levels of nesting, got more", "yaml"
                        )
                    )
                    return None, problems
                stack.append([node, None, False])
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        reason = exc.problem or exc.context or "invalid YAML"
        if exc.context and exc.problem:
            reason = f"{exc.context}: {exc.problem}"
        line, column = (mark.line + 1, mark.column + 1) if mark else (0, 0)
        rows = text.split("\n")
        row = rows[line - 1] if 0 < line <= len(rows) else ""
        if 0 < column <= len(row) and row[column - 1] == "\t" and "tab" not in reason:
            reason += " (a tab character; indent with spaces)"
        problems.append(_problem(path, line, column, f"YAML syntax: {reason}", "yaml"))
        return None, problems
    except yaml.YAMLError as exc:  # pragma: no cover - unmarked errors are rare
        problems.append(_problem(path, 0, 0, "YAML syntax: " + " ".join(str(exc).split()), "yaml"))
        return None, problems
    finally:
        parser.dispose()
    return (None if aliased else root), problems


@dataclass(slots=True)
class RawFile:
    """One catalogue file as loaded: its kind, id and parsed root node (None if unparsable)."""

    path: Path
    kind: str  # "map", "cycle" or "references"
    id: str
    folder: str | None  # for cycles, the map folder the file sits in
    root: Node | None


@dataclass(slots=True)
class RawCatalogue:
    root: Path
    files: list[RawFile] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)

    def of_kind(self, kind: str) -> Iterator[RawFile]:
        return (f for f in self.files if f.kind == kind)


def _read_text(path: Path, problems: list[Problem]) -> str | None:
    try:
        data = path.read_bytes()
    except OSError as exc:
        problems.append(_problem(path, 0, 0, f"cannot read the file: {exc.strerror}", "unreadable"))
        return None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        before = data[: exc.start]
        line = before.count(b"\n") + 1
        column = exc.start - (before.rfind(b"\n") + 1) + 1
        problems.append(
            _problem(path, line, column, f"expected UTF-8 text, got the byte 0x{data[exc.start]:02x}", "encoding")
        )
        return None


def _entry_files(folder: Path, what: str, problems: list[Problem]) -> Iterator[tuple[str, Path]]:
    """Yield (id, path) for each ``<id>.yaml`` in folder, reporting anything else there."""
    for path in sorted(folder.iterdir()):
        name = path.name
        if name.startswith("."):
            continue  # .gitkeep and editor files
        if path.is_symlink():
            problems.append(_problem(path, 0, 0, "expected a regular file, got a symbolic link", "layout"))
            continue
        if not path.is_file():
            problems.append(
                _problem(path, 0, 0, f"expected only {what} files (<id>.yaml) here, got a folder", "layout")
            )
            continue
        stem, dot, ext = name.rpartition(".")
        if not dot or ext != "yaml":
            hint = " (use the extension .yaml)" if ext == "yml" else ""
            problems.append(_problem(path, 0, 0, f"expected a file named <id>.yaml, got '{name}'{hint}", "layout"))
            continue
        if ID_PATTERN.fullmatch(stem) is None:
            problems.append(
                _problem(
                    path,
                    0,
                    0,
                    f"expected an id of lowercase letters, digits and hyphens ([a-z0-9][a-z0-9-]*), got '{stem}'",
                    "bad-id",
                )
            )
            continue
        yield stem, path


def load_catalogue(root: Path) -> RawCatalogue:
    """Read every file of the catalogue at ``root``.

    Raises CatalogueUnreadable if ``root`` is not a catalogue directory; every
    problem with individual files is collected in the result instead.
    """
    if not root.is_dir():
        raise CatalogueUnreadable(
            root, "expected a catalogue directory, got " + ("a file" if root.exists() else "nothing")
        )
    maps_dir = root / "maps"
    if not maps_dir.is_dir() or maps_dir.is_symlink():
        raise CatalogueUnreadable(root, "expected a catalogue directory with a maps/ folder, got none")
    raw = RawCatalogue(root)
    problems = raw.problems

    def add(path: Path, kind: str, entry_id: str, folder: str | None) -> None:
        text = _read_text(path, problems)
        node = None
        if text is not None:
            node, found = parse_yaml(text, path)
            problems.extend(found)
        raw.files.append(RawFile(path, kind, entry_id, folder, node))

    refs = root / "references.yaml"
    if refs.is_symlink():
        problems.append(_problem(refs, 0, 0, "expected a regular file, got a symbolic link", "layout"))
    elif refs.is_file():
        add(refs, "references", "references", None)
    for map_id, path in _entry_files(maps_dir, "map", problems):
        add(path, "map", map_id, None)
    cycles_dir = root / "cycles"
    if cycles_dir.is_symlink():
        problems.append(_problem(cycles_dir, 0, 0, "expected a folder, got a symbolic link", "layout"))
    elif cycles_dir.is_dir():
        for folder in sorted(cycles_dir.iterdir()):
            if folder.name.startswith("."):
                continue
            if folder.is_symlink() or not folder.is_dir():
                problems.append(
                    _problem(folder, 0, 0, "expected a folder named after a map id, got a file or link", "layout")
                )
                continue
            if ID_PATTERN.fullmatch(folder.name) is None:
                problems.append(
                    _problem(folder, 0, 0, f"expected a folder named after a map id, got '{folder.name}'", "bad-id")
                )
                continue
            for cycle_id, path in _entry_files(folder, "cycle", problems):
                add(path, "cycle", cycle_id, folder.name)
    return raw
