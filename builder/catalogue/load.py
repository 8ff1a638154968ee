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

import os
import re
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import yaml

from builder.errors import CatalogueUnreadable, Position, Problem

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
    "read_file",
    "scan_catalogue",
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
            _problem(path, node.line, node.column, f"anchor &{event.anchor} is not allowed in catalogue files", "yaml")
        )
    if event.tag and event.tag != "!":
        problems.append(
            _problem(
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
            _problem(
                path,
                line,
                column,
                f"expected printable text, got the non-printable character U+{ord(bad.group()):04X}",
                "encoding",
            )
        )
        return None, problems
    try:
        return _parse_events(text, path, _Loader, problems)
    except _DepthLimit:
        # Newer libyaml builds stop at their own nesting limit while scanning
        # ahead, before this loader sees the level it refuses at.  PyYAML's
        # pure-Python parser has no such limit (and no recursion), so the
        # file is parsed again with it to give the same message and position
        # whatever libyaml is installed.  Only deeply nested files pay for it.
        return _parse_events(text, path, yaml.SafeLoader, [])


class _DepthLimit(Exception):
    """libyaml refused the nesting depth before the loader's own limit was reached."""


def _parse_events(text: str, path: Path, loader: type, problems: list[Problem]) -> tuple[Node | None, list[Problem]]:
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
                node = (Mapping if cls is _MAPPING_START else Sequence)(mark.line + 1, mark.column + 1)
                if event.anchor is not None or event.tag is not None:
                    _decorations(event, node, path, problems)
            elif cls is _ALIAS:
                mark = event.start_mark
                problems.append(
                    _problem(
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
                        _problem(
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
                        _problem(
                            path, node.line, node.column, f"expected a plain text key, got a {node.kind()}", "yaml"
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
                            _problem(
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
                        _problem(
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
    """One catalogue file: its kind and id, and once parsed its root node and problems.

    ``problems`` is None until the file has been parsed; ``root`` is None
    when it could not be (or holds no document).
    """

    path: Path
    kind: str  # "record", "references", "map" or "cycle"
    id: str
    folder: str | None  # for cycles, the map folder the file sits in
    root: Node | None = None
    problems: list[Problem] | None = None


@dataclass(slots=True)
class RawCatalogue:
    """The files of a catalogue directory, and the problems with its layout."""

    root: Path
    files: list[RawFile] = field(default_factory=list)
    layout_problems: list[Problem] = field(default_factory=list)

    @property
    def problems(self) -> list[Problem]:
        """Layout problems, then those of every file parsed so far."""
        out = list(self.layout_problems)
        for f in self.files:
            out.extend(f.problems or ())
        return out

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


def read_file(file: RawFile) -> tuple[Node | None, list[Problem]]:
    """Return the file's root node and problems, parsing it now unless already parsed.

    Nothing is cached: a caller that streams through a large catalogue keeps
    only the file at hand alive.
    """
    if file.problems is not None:
        return file.root, file.problems
    problems: list[Problem] = []
    text = _read_text(file.path, problems)
    if text is None:
        return None, problems
    node, found = parse_yaml(text, file.path)
    problems.extend(found)
    return node, problems


def _entry_files(folder: Path, what: str, problems: list[Problem]) -> Iterator[tuple[str, Path]]:
    """Yield (id, path) for each ``<id>.yaml`` in folder, reporting anything else there."""
    with os.scandir(folder) as listing:
        entries = sorted(listing, key=lambda e: e.name)
    for entry in entries:
        name = entry.name
        if name.startswith("."):
            continue  # .gitkeep and editor files
        path = folder / name
        if entry.is_symlink():
            problems.append(_problem(path, 0, 0, "expected a regular file, got a symbolic link", "layout"))
            continue
        if not entry.is_file():
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


def scan_catalogue(root: Path) -> RawCatalogue:
    """List the files of the catalogue at ``root`` without parsing them.

    Raises CatalogueUnreadable if ``root`` is not a catalogue directory; every
    problem with the layout (bad names, links, stray folders) is collected.
    """
    if not root.is_dir():
        raise CatalogueUnreadable(
            root, "expected a catalogue directory, got " + ("a file" if root.exists() else "nothing")
        )
    maps_dir = root / "maps"
    if not maps_dir.is_dir() or maps_dir.is_symlink():
        raise CatalogueUnreadable(root, "expected a catalogue directory with a maps/ folder, got none")
    raw = RawCatalogue(root)
    problems = raw.layout_problems
    for kind in ("record", "references"):
        path = root / f"{kind}.yaml"
        if path.is_symlink():
            problems.append(_problem(path, 0, 0, "expected a regular file, got a symbolic link", "layout"))
        elif path.is_file():
            raw.files.append(RawFile(path, kind, kind, None))
    for map_id, path in _entry_files(maps_dir, "map", problems):
        raw.files.append(RawFile(path, "map", map_id, None))
    cycles_dir = root / "cycles"
    if cycles_dir.is_symlink():
        problems.append(_problem(cycles_dir, 0, 0, "expected a folder, got a symbolic link", "layout"))
    elif cycles_dir.is_dir():
        with os.scandir(cycles_dir) as listing:
            folders = sorted(listing, key=lambda e: e.name)
        for entry in folders:
            if entry.name.startswith("."):
                continue
            folder = cycles_dir / entry.name
            if entry.is_symlink() or not entry.is_dir():
                problems.append(
                    _problem(folder, 0, 0, "expected a folder named after a map id, got a file or link", "layout")
                )
                continue
            if ID_PATTERN.fullmatch(entry.name) is None:
                problems.append(
                    _problem(folder, 0, 0, f"expected a folder named after a map id, got '{entry.name}'", "bad-id")
                )
                continue
            for cycle_id, path in _entry_files(folder, "cycle", problems):
                raw.files.append(RawFile(path, "cycle", cycle_id, entry.name))
    return raw


def load_catalogue(root: Path) -> RawCatalogue:
    """Scan the catalogue at ``root`` and parse every file (the whole raw layer in memory).

    Raises CatalogueUnreadable if ``root`` is not a catalogue directory; every
    problem with individual files is collected in the result instead.
    """
    raw = scan_catalogue(root)
    for file in raw.files:
        file.root, file.problems = read_file(file)
    return raw
