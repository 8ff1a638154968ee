"""Reading one file's nodes as typed values, with a positioned "expected X, got Y" problem for each bad one.

:class:`EntryReader` knows the value types of the catalogue format (integers of any size written
plainly in decimal, one-line and multi-line text, dates, ids, lists, words) and checks a mapping's
keys against its :class:`~builder.catalogue.fields.Shape`.  The checks of each kind of entry
(record, references, maps, cycles) are built from it.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import re
from collections.abc import Callable, Collection
from functools import lru_cache
from operator import attrgetter
from pathlib import Path
from typing import Any, TypeVar

import yaml.resolver

from builder.arith.integers import DECIMAL_INTEGER, parse_decimal, show
from builder.catalogue.fields import LINE_MAX_CHARACTERS, NOTES_MAX_CHARACTERS, NOTES_MAX_OPEN_BRACKETS, Reads, Shape
from builder.catalogue.files import ID_PATTERN
from builder.catalogue.nodes import MappingNode, Node, Scalar, SequenceNode
from builder.errors import KeyPath, Position, Problem, Severity, format_key_path

__all__ = ["EntryReader", "describe", "label", "open_brackets", "open_entry", "short", "yaml_type"]

T = TypeVar("T")
_RESOLVER = yaml.resolver.Resolver()


def short(text: str, keep: int = 48) -> str:
    """Shorten long values for messages, saying how long they were."""
    if len(text) <= keep:
        return text
    return f"{text[: keep // 2]}...{text[-12:]} ({len(text)} characters)"


def yaml_type(node: Scalar) -> str:
    """The YAML 1.1 type a plain scalar resolves to: str, int, float, bool, null, timestamp..."""
    return _type_of_plain(node.value)


@lru_cache(maxsize=4096)  # the same texts recur from file to file (map ids, names)
def _type_of_plain(value: str) -> str:
    tag: str = _RESOLVER.resolve(yaml.ScalarNode, value, (True, False))  # type: ignore[no-untyped-call]
    return tag.rsplit(":", 1)[-1]


def describe(node: Node) -> str:
    """Say what a node is, for "expected X, got Y" messages."""
    if isinstance(node, MappingNode):
        return "a mapping"
    if isinstance(node, SequenceNode):
        return "a list"
    assert isinstance(node, Scalar)
    if not node.plain:
        return f"the quoted text '{short(node.value)}'"
    kind = yaml_type(node)
    if kind == "null":
        return "nothing (an empty value)"
    if kind == "bool":
        return f"the boolean {node.value}"
    if kind in ("int", "float"):
        return f"the number {short(node.value)}"
    if kind == "timestamp":
        return f"the date {node.value}"
    return f"'{short(node.value)}'"


class EntryReader:
    """Reads one file's nodes, recording a positioned problem for each bad value."""

    def __init__(self, path: Path, problems: list[Problem]) -> None:
        self.path = path
        self.problems = problems
        self.failed = False

    def error(self, node: Node | None, key_path: KeyPath, message: str, code: str = "invalid") -> None:
        self.failed = True
        line, column = (node.line, node.column) if node is not None else (0, 0)
        prefix = label(key_path)
        self.problems.append(Problem(Position(self.path, line, column, key_path), prefix + message, code))

    def warn(self, node: Node, key_path: KeyPath, message: str, code: str) -> None:
        """A positioned warning: it does not fail the entry."""
        problem = Problem(Position(self.path, node.line, node.column, key_path), label(key_path) + message, code)
        self.problems.append(Problem(problem.position, problem.message, code, Severity.WARNING))

    def fields(self, node: Node | None, key_path: KeyPath, shape: Shape) -> dict[str, Node] | None:
        """Check a mapping's keys against its shape: unknown ones and missing required ones are errors."""
        what, required, optional = shape.what, shape.required, shape.optional
        if not isinstance(node, MappingNode):
            got = describe(node) if node is not None else "an empty file"
            self.error(node, key_path, f"expected {what} (a mapping of fields), got {got}")
            return None
        allowed = required + optional
        found: dict[str, Node] = {}
        for key, (key_node, value) in node.entries.items():
            if key in allowed:
                found[key] = value
                continue
            close = difflib.get_close_matches(key, allowed, n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            self.error(
                key_node,
                key_path + (key,),
                f"unknown field '{short(key)}' in {what}; expected one of: {', '.join(allowed)}{hint}",
                "unknown-field",
            )
        for key in required:
            if key not in found:
                self.error(node, key_path, f"{what} is missing the required field '{key}'", "missing-field")
        return found

    def values(
        self, found: dict[str, Node], shape: Shape, key_path: KeyPath = (), known: Collection[str] | None = None
    ) -> dict[str, Any]:
        """Read every field the file gives whose table entry says how (the others are the kind's own to read).

        A field the file gives maps to its value, or to None when the value is bad (a problem says why);
        fields it does not give are absent.  ``known`` are the reference keys a list of keys may name.
        """
        out: dict[str, Any] = {}
        for f in shape.typed:
            if f.name in found:
                out[f.name] = self.read(f.reads, found[f.name], key_path + (f.name,), known)
        return out

    def read(self, reads: Reads, node: Node, key_path: KeyPath, known: Collection[str] | None = None) -> Any:
        """One value, read as the field table says."""
        if reads is Reads.LINE:
            return self.text(node, key_path, one_line=True)
        if reads is Reads.TEXT:
            return self.text(node, key_path)
        if reads is Reads.NOTES:
            return self.notes(node, key_path)
        if reads is Reads.DATE:
            return self.date(node, key_path)
        if reads is Reads.INTEGER:
            return self.integer(node, key_path)
        if reads is Reads.INTEGERS:
            return self.listing(node, key_path, self.integer)
        if reads is Reads.ID:
            return self.ident(node, key_path)
        if reads is Reads.KEYS:
            return self.reference_keys(node, key_path, known)
        assert reads is Reads.LINES, reads
        return self.listing(node, key_path, lambda n, p: self.text(n, p, one_line=True))

    def integer(self, node: Node, key_path: KeyPath) -> int | None:
        if type(node) is Scalar and node.plain and DECIMAL_INTEGER.fullmatch(node.value):
            # Checked decimal text: short values take the plain int path at once.
            return int(node.value) if len(node.value) < 1000 else parse_decimal(node.value)
        got = describe(node)
        hint = ""
        if isinstance(node, Scalar):
            text = node.value.strip()
            if not node.plain and DECIMAL_INTEGER.fullmatch(text):
                hint = "; write it without quotes"
            elif re.fullmatch(r"[-+]?0[0-9_]+", text):
                hint = f"; leading zeros are not allowed (YAML 1.1 reads {short(text)} as octal)"
            elif re.fullmatch(r"[-+]?[0-9][0-9_]*", text):
                hint = "; write it without underscores"
        self.error(node, key_path, f"expected an integer, got {got}{hint}")
        return None

    def text(self, node: Node, key_path: KeyPath, one_line: bool = False) -> str | None:
        if isinstance(node, Scalar) and (not node.plain or yaml_type(node) == "str"):
            if one_line and "\n" in node.value.strip():
                self.error(node, key_path, "expected one line of text, got several lines")
                return None
            if one_line and len(node.value) > LINE_MAX_CHARACTERS:
                message = f"expected one line of at most {LINE_MAX_CHARACTERS:,} characters, got {len(node.value):,}"
                self.error(node, key_path, message, "line-too-long")
                return None
            if not node.value.strip():
                self.error(node, key_path, "expected some text, got an empty string")
                return None
            return node.value
        hint = "; put it in quotes if it is meant as text" if isinstance(node, Scalar) else ""
        self.error(node, key_path, f"expected text, got {describe(node)}{hint}")
        return None

    def notes(self, node: Node, key_path: KeyPath) -> str | None:
        """Markdown text within the bounds that keep rendering it fast (builder.catalogue.fields)."""
        value = self.text(node, key_path)
        if value is None:
            return None
        if len(value) > NOTES_MAX_CHARACTERS:
            message = f"expected notes of at most {NOTES_MAX_CHARACTERS:,} characters, got {len(value):,}"
            self.error(node, key_path, message, "notes-too-long")
            return None
        unclosed = open_brackets(value)
        if unclosed > NOTES_MAX_OPEN_BRACKETS:
            self.error(
                node, key_path,
                f"expected at most {NOTES_MAX_OPEN_BRACKETS} '[', '(' or '<' that nothing closes, got {unclosed:,}; "
                "write \\[, \\( or \\< for a bracket meant as text",
                "notes-brackets",
            )  # fmt: skip
            return None
        return value

    def date(self, node: Node, key_path: KeyPath) -> _dt.date | None:
        if isinstance(node, Scalar) and re.fullmatch(r"[0-9]{4}-[0-9]{2}-[0-9]{2}", node.value):
            try:
                return _dt.date.fromisoformat(node.value)
            except ValueError:
                self.error(node, key_path, f"expected a real calendar date, got {node.value}")
                return None
        self.error(node, key_path, f"expected a date written YYYY-MM-DD, got {describe(node)}")
        return None

    def listing(self, node: Node, key_path: KeyPath, item: Callable[[Node, KeyPath], T | None]) -> list[T] | None:
        if not isinstance(node, SequenceNode):
            self.error(node, key_path, f"expected a list, got {describe(node)}")
            return None
        if item == self.integer:
            # The common case, a list of plain decimal integers (a cycle's members), read in one pass;
            # anything else is read item by item below, which says what is wrong where.
            plain = _plain_integers(node.items)
            if plain is not None:
                return plain  # type: ignore[return-value]  # T is int here
        out = []
        ok = True
        for i, child in enumerate(node.items):
            value = item(child, key_path + (i,))
            if value is None:
                ok = False
            else:
                out.append(value)
        return out if ok else None

    def ident(self, node: Node, key_path: KeyPath) -> str | None:
        value = self.text(node, key_path)
        if value is None:
            return None
        if ID_PATTERN.fullmatch(value) is None:
            self.error(
                node,
                key_path,
                f"expected an id of lowercase letters, digits and hyphens, got '{short(value)}'",
                "bad-id",
            )
            return None
        return value

    def reference_keys(self, node: Node, key_path: KeyPath, known: Collection[str] | None) -> list[str] | None:
        """A list of reference keys, each of which must be in ``known`` (None: references.yaml unusable)."""
        keys = self.listing(node, key_path, self.ident)
        if keys is None:
            return None
        assert isinstance(node, SequenceNode)
        for i, key in enumerate(keys):
            if known is not None and key not in known:
                self.error(
                    node.items[i],
                    key_path + (i,),
                    f"expected a key of references.yaml, got '{key}'",
                    "unknown-reference",
                )
        return None if self.failed else keys

    def word(self, node: Node, key_path: KeyPath, modulus: int) -> tuple[int, ...] | None:
        """A word: quoted digits when the modulus is at most 10, else a list of residues (catalogue/README.md)."""
        if isinstance(node, SequenceNode) and modulus <= 10:
            digits = [n.value for n in node.items if isinstance(n, Scalar) and re.fullmatch("[0-9]", n.value)]
            example = "".join(digits) if digits and len(digits) == len(node.items) else "0110"
            self.error(
                node, key_path,
                f"expected a quoted string of residue digits (the modulus {modulus} is at most 10), got a list; "
                f'write it as word: "{short(example)}"',
                "word-as-list",
            )  # fmt: skip
            return None
        if isinstance(node, SequenceNode):
            residues = self.listing(node, key_path, self.integer)
            if residues is None:
                return None
            for i, r in enumerate(residues):
                if not 0 <= r < modulus:
                    self.error(
                        node.items[i], key_path + (i,), f"expected a residue 0..{show(modulus - 1)}, got {show(r)}"
                    )
                    return None
            if not residues:
                self.error(node, key_path, "expected at least one residue, got an empty list")
                return None
            return tuple(residues)
        if isinstance(node, Scalar) and node.plain and re.fullmatch(r"[0-9_]+", node.value):
            kind = yaml_type(node)
            reads = (
                "an octal number" if kind == "int" and node.value.startswith("0") and node.value != "0" else "a number"
            )
            self.error(
                node,
                key_path,
                f"expected a quoted string of residue digits, got the unquoted {short(node.value)}, "
                f'which YAML reads as {reads}; write it in quotes: word: "{short(node.value)}"',
                "unquoted-word",
            )
            return None
        if modulus > 10:
            self.error(
                node,
                key_path,
                f"expected a list of residues (the modulus {show(modulus)} is above 10), got {describe(node)}",
            )
            return None
        value = self.text(node, key_path)
        if value is None:
            return None
        if _RESIDUE_DIGITS[modulus].fullmatch(value):
            return tuple(map(int, value))
        for i, ch in enumerate(value):
            if not ("0" <= ch <= "9" and int(ch) < modulus):
                self.error(
                    node,
                    key_path,
                    f"expected residue digits 0..{show(modulus - 1)}, got '{short(ch)}' at position {i + 1}",
                )
                return None
        return tuple(map(int, value))


def _plain_integers(items: list[Node]) -> list[int] | None:
    """The values of ``items`` if every one is a plain decimal integer of fewer than 1,000 digits, else None."""
    try:
        texts = list(map(_VALUE, items))
        plain = all(map(_PLAIN, items))
    except AttributeError:  # a list or a mapping among them
        return None
    # NUL never occurs in a value (parsing refuses it), so it separates the texts unambiguously.
    if not plain or (texts and _INTEGERS.fullmatch("\0".join(texts)) is None):
        return None
    return list(map(int, texts))


_VALUE, _PLAIN = attrgetter("value"), attrgetter("plain")
#: The words of each modulus up to 10 written as digits.
_RESIDUE_DIGITS = {m: re.compile(f"[0-{m - 1}]+") for m in range(2, 11)}
#: DECIMAL_INTEGER of fewer than 1,000 digits, NUL-separated.
_INTEGER = r"[-+]?(?:0|[1-9][0-9]{0,998})"
_INTEGERS = re.compile(f"(?:{_INTEGER}\0)*{_INTEGER}")


def open_brackets(text: str) -> int:
    """How many '[', '(' and tag-like '<' of ``text`` nothing later closes (a backslash escapes the next character).

    Python-Markdown looks for the end of a link from each '[' and each '](', and for the end of a tag
    or an automatic link from each '<' followed by a non-space character, to the end of the note when
    nothing closes it: few such openings keep rendering linear in the note's size.
    """
    unclosed = {"[": 0, "(": 0, "<": 0}
    closes = {"]": "[", ")": "(", ">": "<"}
    escaped = False
    for i, ch in enumerate(text):
        if escaped:
            escaped = False
        elif ch == "\\":
            escaped = True
        elif ch in unclosed:
            if ch != "<" or text[i + 1 : i + 2].strip():
                unclosed[ch] += 1
        elif ch in closes and unclosed[closes[ch]]:
            unclosed[closes[ch]] -= 1
    return sum(unclosed.values())


def label(key_path: KeyPath) -> str:
    return f"{format_key_path(key_path)}: " if key_path else ""


def open_entry(
    path: Path, root: Node | None, problems: list[Problem], shape: Shape
) -> tuple[EntryReader, dict[str, Node]] | None:
    """A reader for a file whose root is an entry of ``shape``, and its fields (None when there are none)."""
    doc = EntryReader(path, problems)
    if root is None:
        return None
    found = doc.fields(root, (), shape)
    return None if found is None else (doc, found)
