"""Entries as their authors wrote them: fields as text, with positions, kept beside the verified record.

A review or a changelog compares two catalogues field by field as written (``5`` and ``"5"``
differ, comments and key order do not), and tells a file edited only in comments or layout by its
bytes.  Verification keeps that here, once, while it reads each file, so nothing is read again:
each field as a :class:`WrittenValue` (a scalar's text, or the size and a digest of a list or
mapping), where it is in the file, and the few facts a review's dependency warnings need (the
references an entry cites, the map a cycle names, the bounds of a map's coverage claims).
"""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, field
from operator import attrgetter
from typing import Any, NamedTuple

from builder.arith.integers import DECIMAL_INTEGER, parse_decimal
from builder.catalogue.nodes import MappingNode, Node, Scalar, SequenceNode
from builder.errors import KeyPath, format_key_path

__all__ = ["WrittenEntry", "WrittenValue", "coverage_bounds", "plain_data", "written_entries"]


class WrittenValue(NamedTuple):
    """One field as written: a scalar's text and whether it was plain, or a list's or mapping's size and digest.

    Two values are equal exactly when they were written the same way (a mapping's keys in any order).
    A named tuple rather than a dataclass: verification makes one per field of every entry.
    """

    kind: str  # "scalar", "list" or "mapping"
    text: str | None = None
    plain: bool = False
    size: int = 0
    digest: bytes = b""

    def describe(self) -> str:
        """The value for a reader: a scalar's text, else "a list of 3" or "a mapping"."""
        if self.kind == "scalar":
            return str(self.text)
        if self.kind == "list":
            return f"a list of {self.size}"
        return "a mapping"


@dataclass(frozen=True, slots=True)
class WrittenEntry:
    """One entry as written: a whole file (the record, a map, a cycle) or one key of references.yaml.

    ``kind`` is "record", "map", "cycle" or "reference"; ``key`` the entry's name in a review
    (``map-id/cycle-id`` for a cycle); ``path`` its file relative to the catalogue root.  ``fields``
    maps dotted names (``provenance.found_by``) to values, None when the file cannot be read as an
    entry.  ``digest`` is the SHA-256 of the file's bytes (None for a reference, or unreadable).
    """

    kind: str
    key: str
    path: str
    fields: Mapping[str, WrittenValue] | None
    digest: bytes | None
    cites: tuple[str, ...] = ()  # the reference keys a map or cycle cites
    names_map: str | None = None  # the map a cycle's ``map`` field names
    coverage_bounds: tuple[int, ...] = ()  # the bounds of a map's coverage claims
    positions: Mapping[str, tuple[int, int]] = field(default_factory=dict)  # by dotted path, "coverage[0]"

    def position(self, key_path: KeyPath) -> tuple[int, int]:
        """Line and column of the value at ``key_path`` (0, 0 when the file does not have it)."""
        return self.positions.get(format_key_path(key_path), (0, 0))


_TEXT, _PLAIN = attrgetter("value"), attrgetter("plain")
#: Makes a WrittenValue without the named tuple's Python-level constructor (one per field of every entry).
_new = tuple.__new__


def _feed(node: Node, h: Any) -> None:
    """Feed a canonical serialisation of a node as written into the hash ``h``."""
    if isinstance(node, Scalar):
        data = node.value.encode("utf-8", "surrogatepass")
        h.update(b"s%d:%d:" % (node.plain, len(data)) + data)
    elif isinstance(node, SequenceNode):
        items = node.items
        h.update(b"l%d:" % len(items))
        try:
            # The common case, a list of numbers, in one piece: the texts (their repr is unambiguous),
            # then every plainness flag.
            texts = list(map(_TEXT, items))
        except AttributeError:  # a list that holds lists or mappings
            for item in items:
                _feed(item, h)
            return
        h.update(repr(texts).encode("utf-8", "surrogatepass"))
        h.update(bytes(map(_PLAIN, items)))
    elif isinstance(node, MappingNode):
        h.update(b"m%d:" % len(node.entries))
        for key in sorted(node.entries):
            data = key.encode("utf-8", "surrogatepass")
            h.update(b"%d:" % len(data) + data)
            _feed(node.entries[key][1], h)


def _value(node: Node) -> WrittenValue:
    if isinstance(node, Scalar):
        return WrittenValue("scalar", node.value, node.plain)
    h = hashlib.sha256()
    _feed(node, h)
    if isinstance(node, SequenceNode):
        return WrittenValue("list", None, False, len(node.items), h.digest())
    assert isinstance(node, MappingNode), node
    return WrittenValue("mapping", None, False, len(node.entries), h.digest())


def _flatten(node: Node, prefix: str, out: dict[str, WrittenValue], at: dict[str, tuple[int, int]]) -> None:
    """Fields by dotted name, descending into mappings (``provenance.found_by``); lists are one field.

    Also notes where each field is, and where each mapping or list inside a list is (``coverage[0]``).
    """
    if not isinstance(node, MappingNode):
        out[prefix] = _value(node)
        return
    if not node.entries and prefix:
        out[prefix] = _value(node)
    for key, (_, value) in node.entries.items():
        name = f"{prefix}.{key}" if prefix else key
        at[name] = (value.line, value.column)
        if type(value) is Scalar:
            out[name] = _new(WrittenValue, ("scalar", value.value, value.plain, 0, b""))
        elif isinstance(value, MappingNode):
            _flatten(value, name, out, at)
        else:
            assert isinstance(value, SequenceNode), value
            out[name] = _value(value)
            if set(map(type, value.items)) - {Scalar}:  # the mappings or lists inside (coverage claims, branches)
                for i, item in enumerate(value.items):
                    if type(item) is not Scalar:
                        at[f"{name}[{i}]"] = (item.line, item.column)


def _written(node: Node) -> tuple[dict[str, WrittenValue], dict[str, tuple[int, int]]]:
    fields: dict[str, WrittenValue] = {}
    positions: dict[str, tuple[int, int]] = {}
    _flatten(node, "", fields, positions)
    return fields, positions


def plain_data(node: Node | None) -> Any:
    """A node as plain Python data: mappings, lists, integers (of any size) and strings."""
    if isinstance(node, MappingNode):
        return {k: plain_data(v) for k, (_, v) in node.entries.items()}
    if isinstance(node, SequenceNode):
        return [plain_data(n) for n in node.items]
    if isinstance(node, Scalar):
        if node.plain and DECIMAL_INTEGER.fullmatch(node.value):
            return parse_decimal(node.value)
        return node.value
    return None


def coverage_bounds(map_yaml: Mapping[str, Any]) -> list[int]:
    """The bounds of a map entry's coverage claims, read from its YAML as plain data.

    A claim ``{kind, bound, found_on, method, max_steps, max_bits, unresolved}`` says that every
    cycle of the map whose canonical member has ``|member| <= bound`` is listed.  Claims without a
    whole-number bound are left out (verification reports them).
    """
    claims = map_yaml.get("coverage") if isinstance(map_yaml, Mapping) else None
    if not isinstance(claims, list):
        return []
    bounds = []
    for claim in claims:
        bound = claim.get("bound") if isinstance(claim, Mapping) else None
        if isinstance(bound, int) and not isinstance(bound, bool) and bound >= 0:
            bounds.append(bound)
    return bounds


def _field(root: MappingNode, *path: str) -> Node | None:
    node: Node | None = root
    for key in path:
        node = node.entries[key][1] if isinstance(node, MappingNode) and key in node.entries else None
    return node


def written_entries(kind: str, key: str, path: str, root: Node | None, digest: bytes | None) -> list[WrittenEntry]:
    """The entries of one parsed file: itself, or each key of references.yaml (none if that is no mapping)."""
    if kind == "references":
        if not isinstance(root, MappingNode):
            return []
        entries = []
        for ref, (_, value) in root.entries.items():
            fields, positions = _written(value)
            entries.append(WrittenEntry("reference", ref, path, fields, None, positions=positions))
        return entries
    if not isinstance(root, MappingNode):
        return [WrittenEntry(kind, key, path, None, digest)]
    cited = plain_data(_field(root, "references") if kind == "map" else _field(root, "provenance", "references"))
    cites = tuple(k for k in cited if isinstance(k, str)) if isinstance(cited, list) and kind != "record" else ()
    names = plain_data(_field(root, "map")) if kind == "cycle" else None
    bounds = coverage_bounds({"coverage": _bounds_only(_field(root, "coverage"))}) if kind == "map" else []
    fields, positions = _written(root)
    return [
        WrittenEntry(
            kind, key, path, fields, digest, cites, names if isinstance(names, str) else None, tuple(bounds), positions
        )
    ]


def _bounds_only(claims: Node | None) -> Any:
    """The coverage claims as plain data, keeping of each claim only its bound (all ``coverage_bounds`` reads)."""
    if not isinstance(claims, SequenceNode):
        return None
    return [
        {"bound": plain_data(c.entries["bound"][1])} if isinstance(c, MappingNode) and "bound" in c.entries else None
        for c in claims.items
    ]
