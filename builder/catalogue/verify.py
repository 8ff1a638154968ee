"""Stage 2: check raw entries field by field, re-derive every cycle, build the model.

Every file is checked even after others fail; each problem is reported at
the YAML node at fault, with what was expected and what was got.  A cycle
is accepted only when exact iteration from its start returns to the start,
the cycle equation computed independently from the word agrees, and every
claim the entry makes (word, length, members) matches what was derived.
"""

from __future__ import annotations

import datetime as _dt
import difflib
import re
from collections.abc import Callable, Collection
from dataclasses import dataclass, replace
from pathlib import Path
from types import MappingProxyType
from typing import TypeVar

import yaml.resolver

from builder.arith.dynamics import (
    AffineMap,
    CycleFound,
    EntersCycle,
    Unresolved,
    branch_defects,
    canonical_index,
    cycle_equation,
    trace,
)
from builder.arith.fingerprint import cycle_fingerprint
from builder.arith.integers import DECIMAL_INTEGER, parse_decimal, show
from builder.arith.words import is_rotation, least_period, word_text
from builder.catalogue.licences import check_licence
from builder.catalogue.load import (
    ID_PATTERN,
    Mapping,
    Node,
    RawCatalogue,
    RawFile,
    Scalar,
    Sequence,
    parse_yaml,
    read_file,
    scan_catalogue,
)
from builder.catalogue.model import (
    PLACEHOLDER,
    Catalogue,
    Coverage,
    Cycle,
    MapEntry,
    Provenance,
    Record,
    Reference,
    Report,
)
from builder.catalogue.versions import UNRELEASED, version_problem
from builder.errors import KeyPath, Position, Problem, format_key_path
from builder.search.engine import hunt_range

__all__ = ["DEFAULT_MAX_STEPS", "RECORD_FILE", "Limits", "verify_catalogue", "verify_raw"]

DEFAULT_MAX_STEPS = 1_000_000
#: Coverage claims with a bound up to this are re-run by every verification.
DEFAULT_RECHECK_UP_TO = 100_000
COVERAGE_KINDS = ("all-starts",)
T = TypeVar("T")

_RESOLVER = yaml.resolver.Resolver()
_DOI = re.compile(r"10\.[0-9]{4,9}/\S+")
_URL = re.compile(r"https?://[^\s/$.?#][^\s]*", re.IGNORECASE)
_STATUSES = ("read", "secondary", "memory")
_WHAT = {
    "record": "the record's description (a mapping of fields)",
    "map": "a map entry (a mapping of fields)",
    "cycle": "a cycle entry (a mapping of fields)",
    "references": "a mapping from reference keys to references",
}


@dataclass(frozen=True, slots=True)
class Limits:
    """Bounds on each trace: steps, and member size in bits (None: grows with the entry's size)."""

    max_steps: int = DEFAULT_MAX_STEPS
    max_bits: int | None = None
    recheck_up_to: int = DEFAULT_RECHECK_UP_TO


def short(text: str, keep: int = 48) -> str:
    """Shorten long values for messages, saying how long they were."""
    if len(text) <= keep:
        return text
    return f"{text[: keep // 2]}...{text[-12:]} ({len(text)} characters)"


def _yaml_type(node: Scalar) -> str:
    """The YAML 1.1 type a plain scalar resolves to: str, int, float, bool, null, timestamp..."""
    tag: str = _RESOLVER.resolve(yaml.ScalarNode, node.value, (True, False))  # type: ignore[no-untyped-call]
    return tag.rsplit(":", 1)[-1]


def describe(node: Node) -> str:
    """Say what a node is, for "expected X, got Y" messages."""
    if isinstance(node, Mapping):
        return "a mapping"
    if isinstance(node, Sequence):
        return "a list"
    assert isinstance(node, Scalar)
    if not node.plain:
        return f"the quoted text '{short(node.value)}'"
    kind = _yaml_type(node)
    if kind == "null":
        return "nothing (an empty value)"
    if kind == "bool":
        return f"the boolean {node.value}"
    if kind in ("int", "float"):
        return f"the number {short(node.value)}"
    if kind == "timestamp":
        return f"the date {node.value}"
    return f"'{short(node.value)}'"


class _Doc:
    """Reads one file's nodes, recording a positioned problem for each bad value."""

    def __init__(self, path: Path, problems: list[Problem]) -> None:
        self.path = path
        self.problems = problems
        self.failed = False

    def error(self, node: Node | None, key_path: KeyPath, message: str, code: str = "invalid") -> None:
        self.failed = True
        line, column = (node.line, node.column) if node is not None else (0, 0)
        prefix = _label(key_path)
        self.problems.append(Problem(Position(self.path, line, column, key_path), prefix + message, code))

    def fields(
        self, node: Node | None, key_path: KeyPath, what: str, required: tuple[str, ...], optional: tuple[str, ...]
    ) -> dict[str, Node] | None:
        """Check a mapping's keys: unknown ones and missing required ones are errors."""
        if not isinstance(node, Mapping):
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
        if isinstance(node, Scalar) and (not node.plain or _yaml_type(node) == "str"):
            if one_line and "\n" in node.value.strip():
                self.error(node, key_path, "expected one line of text, got several lines")
                return None
            if not node.value.strip():
                self.error(node, key_path, "expected some text, got an empty string")
                return None
            return node.value
        hint = "; put it in quotes if it is meant as text" if isinstance(node, Scalar) else ""
        self.error(node, key_path, f"expected text, got {describe(node)}{hint}")
        return None

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
        if not isinstance(node, Sequence):
            self.error(node, key_path, f"expected a list, got {describe(node)}")
            return None
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
        assert isinstance(node, Sequence)
        for i, key in enumerate(keys):
            if known is not None and key not in known:
                self.error(
                    node.items[i],
                    key_path + (i,),
                    f"expected a key of references.yaml, got '{key}'",
                    "unknown-reference",
                )
        return None if self.failed else keys

    def coverage(self, node: Node, key_path: KeyPath) -> Coverage | None:
        """A coverage record: kind, bound, found_on, method, max_steps, max_bits, optional unresolved."""
        f = self.fields(
            node, key_path, "a coverage record", ("kind", "bound", "found_on", "method", "max_steps", "max_bits"),
            ("unresolved",),
        )  # fmt: skip
        if f is None or len(f) < 6:
            return None
        before = len(self.problems)
        kind = self.text(f["kind"], key_path + ("kind",))
        if kind is not None and kind not in COVERAGE_KINDS:
            self.error(
                f["kind"], key_path + ("kind",), f"expected one of {', '.join(COVERAGE_KINDS)}, got '{short(kind)}'"
            )
        numbers = {}
        for name in ("bound", "max_steps", "max_bits"):
            value = self.integer(f[name], key_path + (name,))
            if value is not None and value < (0 if name == "bound" else 1):
                self.error(f[name], key_path + (name,), f"expected a positive integer, got {show(value)}")
            numbers[name] = value
        found_on = self.date(f["found_on"], key_path + ("found_on",))
        method = self.text(f["method"], key_path + ("method",))
        unresolved = (
            self.listing(f["unresolved"], key_path + ("unresolved",), self.integer) if "unresolved" in f else []
        )
        if len(self.problems) > before:
            return None
        assert kind is not None and found_on is not None and method is not None and unresolved is not None
        return Coverage(
            kind, numbers["bound"] or 0, found_on, method, numbers["max_steps"] or 1, numbers["max_bits"] or 1,
            tuple(unresolved),
        )  # fmt: skip

    def word(self, node: Node, key_path: KeyPath, modulus: int) -> tuple[int, ...] | None:
        """A word: quoted digits when the modulus is at most 10, or a list of residues."""
        if isinstance(node, Sequence):
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
            kind = _yaml_type(node)
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
        for i, ch in enumerate(value):
            if not ("0" <= ch <= "9" and int(ch) < modulus):
                self.error(
                    node,
                    key_path,
                    f"expected residue digits 0..{show(modulus - 1)}, got '{short(ch)}' at position {i + 1}",
                )
                return None
        return tuple(map(int, value))


def _label(key_path: KeyPath) -> str:
    return f"{format_key_path(key_path)}: " if key_path else ""


# --- the record ------------------------------------------------------------

RECORD_FILE = "record.yaml"
_RECORD_REQUIRED = ("title", "description", "maintainers", "licence", "base_url", "version")
_BASE_URL = re.compile(r"https?://[A-Za-z0-9.-]+(?::[0-9]{1,5})?(?:/[A-Za-z0-9._~%!$&'()*+,;=:@/-]*)?")


def _check_record(raw: RawFile, problems: list[Problem]) -> Record | None:
    doc = _Doc(raw.path, problems)
    if raw.root is None:
        return None
    f = doc.fields(raw.root, (), "the record's description", _RECORD_REQUIRED, ("credit_committers",))
    if f is None:
        return None
    title = doc.text(f["title"], ("title",), one_line=True) if "title" in f else None
    description = doc.text(f["description"], ("description",)) if "description" in f else None
    maintainers = doc.text(f["maintainers"], ("maintainers",), one_line=True) if "maintainers" in f else None
    licence = _record_licence(doc, f["licence"]) if "licence" in f else None
    base_url = _record_base_url(doc, f["base_url"]) if "base_url" in f else None
    version = _record_version(doc, f["version"]) if "version" in f else None
    credit = False
    if "credit_committers" in f:
        node = f["credit_committers"]
        if isinstance(node, Scalar) and node.plain and node.value in ("true", "false"):
            credit = node.value == "true"
        else:
            doc.error(node, ("credit_committers",), f"expected true or false, got {describe(node)}")
    if doc.failed:
        return None
    assert title and description and maintainers and licence and base_url and version
    return Record(title.strip(), " ".join(description.split()), maintainers.strip(), licence, base_url, version, credit)


def _record_licence(doc: _Doc, node: Node) -> str | None:
    text = doc.text(node, ("licence",), one_line=True)
    if text is None:
        return None
    text = text.strip()
    found = check_licence(text)
    if not found.known:
        doc.error(
            node,
            ("licence",),
            f"expected an SPDX licence identifier (https://spdx.org/licenses/), such as CC-BY-4.0 or CC0-1.0, "
            f"got '{short(text)}'",
            "unknown-licence",
        )
        return None
    assert found.spelling is not None
    if found.spelling != text:
        doc.error(
            node, ("licence",), f"expected the SPDX spelling '{found.spelling}', got '{short(text)}'", "licence-case"
        )
        return None
    if found.deprecated:
        doc.error(
            node,
            ("licence",),
            f"expected a current SPDX licence identifier, got the deprecated '{text}' ({found.name}); "
            f"use its replacement from https://spdx.org/licenses/",
            "deprecated-licence",
        )
        return None
    return found.spelling


def _record_base_url(doc: _Doc, node: Node) -> str | None:
    text = doc.text(node, ("base_url",), one_line=True)
    if text is None:
        return None
    text = text.strip()
    if _BASE_URL.fullmatch(text) is None:
        doc.error(
            node,
            ("base_url",),
            f"expected the http or https address the site is published at, such as https://example.org/cycles/, "
            f"with no query or fragment, got '{short(text)}'",
            "bad-base-url",
        )
        return None
    return text if text.endswith("/") else text + "/"


def _record_version(doc: _Doc, node: Node) -> str | None:
    if isinstance(node, Scalar) and node.plain and _yaml_type(node) in ("int", "float"):
        doc.error(
            node,
            ("version",),
            f"expected a version as text, got the number {short(node.value)} (YAML would read 1.10 as 1.1); "
            f'write it in quotes: version: "{short(node.value)}"',
            "unquoted-version",
        )
        return None
    text = doc.text(node, ("version",), one_line=True)
    if text is None:
        return None
    text = text.strip()
    why = version_problem(text)
    if why is not None:
        doc.error(
            node,
            ("version",),
            f"expected a version of letters, digits, dots, hyphens and underscores such as 2026.1 "
            f"(it names the git tag record-<version>), got '{short(text)}'"
            + (f" ({why})" if text.lower() == UNRELEASED else ""),
            "bad-version",
        )
        return None
    return text


# --- references ------------------------------------------------------------


def _check_references(raw: RawFile, problems: list[Problem]) -> dict[str, Reference]:
    doc = _Doc(raw.path, problems)
    out: dict[str, Reference] = {}
    root = raw.root
    if root is None:
        return out
    if not isinstance(root, Mapping):
        doc.error(root, (), f"expected a mapping from reference keys to references, got {describe(root)}")
        return out
    for key, (key_node, node) in root.entries.items():
        if ID_PATTERN.fullmatch(key) is None:
            doc.error(
                key_node,
                (key,),
                f"expected a key of lowercase letters, digits and hyphens, got '{short(key)}'",
                "bad-id",
            )
            continue
        f = doc.fields(
            node, (key,), "a reference", ("authors", "title", "venue", "year"), ("doi", "url", "status", "note")
        )
        if f is None:
            continue
        before = len(problems)
        authors = (
            doc.listing(f["authors"], (key, "authors"), lambda n, p: doc.text(n, p, one_line=True))
            if "authors" in f
            else None
        )
        if authors is not None and not authors:
            doc.error(f["authors"], (key, "authors"), "expected at least one author, got an empty list")
        title = doc.text(f["title"], (key, "title"), one_line=True) if "title" in f else None
        venue = doc.text(f["venue"], (key, "venue"), one_line=True) if "venue" in f else None
        year = doc.integer(f["year"], (key, "year")) if "year" in f else None
        if year is not None and not 1000 <= year <= 9999:
            doc.error(f["year"], (key, "year"), f"expected a four-digit year, got {show(year)}")
        doi = url = status = note = None
        if "doi" in f:
            doi = doc.text(f["doi"], (key, "doi"), one_line=True)
            if doi is not None and _DOI.fullmatch(doi) is None:
                doc.error(f["doi"], (key, "doi"), f"expected a DOI such as 10.2307/2322189, got '{short(doi)}'")
        if "url" in f:
            url = doc.text(f["url"], (key, "url"), one_line=True)
            if url is not None and _URL.fullmatch(url) is None:
                doc.error(f["url"], (key, "url"), f"expected an http or https address, got '{short(url)}'")
        if "status" in f:
            status = doc.text(f["status"], (key, "status"))
            if status is not None and status not in _STATUSES:
                doc.error(
                    f["status"], (key, "status"), f"expected one of {', '.join(_STATUSES)}, got '{short(status)}'"
                )
        if "note" in f:
            note = doc.text(f["note"], (key, "note"))
        if len(problems) == before:
            assert authors is not None and title is not None and venue is not None and year is not None
            out[key] = Reference(key, tuple(authors), title, venue, year, doi, url, status, note)
    return out


# --- maps ------------------------------------------------------------------


def _check_map(raw: RawFile, known: Collection[str] | None, problems: list[Problem]) -> MapEntry | None:
    doc = _Doc(raw.path, problems)
    if raw.root is None:
        return None
    f = doc.fields(
        raw.root, (), "a map entry", ("name", "modulus", "branches", "summary"), ("notes", "references", "coverage")
    )
    if f is None:
        return None
    name = doc.text(f["name"], ("name",), one_line=True) if "name" in f else None
    summary = doc.text(f["summary"], ("summary",), one_line=True) if "summary" in f else None
    notes = doc.text(f["notes"], ("notes",)) if "notes" in f else None
    refs = doc.reference_keys(f["references"], ("references",), known) if "references" in f else []
    modulus = doc.integer(f["modulus"], ("modulus",)) if "modulus" in f else None
    if modulus is not None and modulus < 2:
        doc.error(f["modulus"], ("modulus",), f"expected a modulus of at least 2, got {show(modulus)}")
        modulus = None
    branches = _check_branches(doc, f["branches"], modulus) if "branches" in f and modulus is not None else None
    coverage = doc.listing(f["coverage"], ("coverage",), doc.coverage) if "coverage" in f else []
    if doc.failed or branches is None or coverage is None:
        return None
    assert name is not None and summary is not None and refs is not None and modulus is not None
    return MapEntry(raw.id, name, summary, notes, tuple(refs), AffineMap(modulus, branches), raw.path, tuple(coverage))


def _check_branches(doc: _Doc, node: Node, modulus: int) -> tuple[tuple[int, int], ...] | None:
    if not isinstance(node, Sequence):
        doc.error(node, ("branches",), f"expected a list of branches, got {describe(node)}")
        return None
    by_residue: dict[int, tuple[int, int]] = {}
    where: dict[int, Node] = {}
    index: dict[int, int] = {}
    for i, item in enumerate(node.items):
        path: KeyPath = ("branches", i)
        f = doc.fields(item, path, "a branch", ("residue", "multiplier", "increment"), ())
        if f is None or len(f) < 3:
            continue
        residue = doc.integer(f["residue"], path + ("residue",))
        a = doc.integer(f["multiplier"], path + ("multiplier",))
        b = doc.integer(f["increment"], path + ("increment",))
        if residue is None or a is None or b is None:
            continue
        if not 0 <= residue < modulus:
            doc.error(
                f["residue"], path + ("residue",), f"expected a residue 0..{show(modulus - 1)}, got {show(residue)}"
            )
            continue
        if residue in by_residue:
            doc.error(
                item,
                path,
                f"expected one branch per residue, got a second branch for residue {show(residue)} "
                f"(first at line {where[residue].line})",
            )
            continue
        by_residue[residue] = (a, b)
        where[residue] = item
        index[residue] = i
    if doc.failed:
        return None
    if len(by_residue) < modulus:
        # The modulus may be huge: look only as far as the first ten gaps.
        missing: list[int] = []
        r = 0
        while len(missing) < 10 and r < modulus:
            if r not in by_residue:
                missing.append(r)
            r += 1
        more = modulus - len(by_residue) > len(missing)
        listed = ", ".join(map(str, missing)) + (", ..." if more else "")
        doc.error(
            node, ("branches",), f"expected one branch for each residue 0..{show(modulus - 1)}, got none for {listed}"
        )
        return None
    branches = tuple(by_residue[r] for r in range(modulus))
    for residue, reason in branch_defects(modulus, branches):
        assert residue >= 0, reason  # counts were checked above
        doc.error(
            where[residue],
            ("branches", index[residue]),
            f"residue {show(residue)}: {reason}",
            "ill-defined-map",
        )
    return None if doc.failed else branches


# --- cycles ----------------------------------------------------------------


def _check_cycle(
    raw: RawFile,
    maps: dict[str, MapEntry],
    bad_maps: set[str],
    known: Collection[str] | None,
    limits: Limits,
    problems: list[Problem],
) -> tuple[Cycle, Node, KeyPath] | None:
    doc = _Doc(raw.path, problems)
    if raw.root is None:
        return None
    f = doc.fields(raw.root, (), "a cycle entry", ("map", "provenance"), ("start", "word", "length", "members"))
    if f is None:
        return None
    provenance = _check_provenance(doc, f["provenance"], known) if "provenance" in f else None
    map_id = doc.ident(f["map"], ("map",)) if "map" in f else None
    if map_id is not None and map_id != raw.folder:
        doc.error(
            f["map"], ("map",), f"expected '{raw.folder}' (the folder this file is in), got '{map_id}'", "wrong-folder"
        )
        map_id = None
    entry = None
    if map_id is not None:
        entry = maps.get(map_id)
        if entry is None and map_id not in bad_maps:
            doc.error(
                f["map"],
                ("map",),
                f"expected the id of a map in maps/, got '{map_id}' (no maps/{map_id}.yaml)",
                "unknown-map",
            )
    start = doc.integer(f["start"], ("start",)) if "start" in f else None
    length = doc.integer(f["length"], ("length",)) if "length" in f else None
    if length is not None and length < 1:
        doc.error(f["length"], ("length",), f"expected a positive length, got {show(length)}")
        length = None
    members = doc.listing(f["members"], ("members",), doc.integer) if "members" in f else None
    if "start" not in f and "word" not in f:
        doc.error(raw.root, (), "a cycle entry needs a start or a word, got neither", "missing-field")
    if entry is None:
        # No map to check against; still report what can be said about the word.
        return None
    word = doc.word(f["word"], ("word",), entry.modulus) if "word" in f else None
    if doc.failed or provenance is None:
        return None
    return _derive(doc, raw, entry, f, start, word, length, members, provenance, limits)


def _check_provenance(doc: _Doc, node: Node, known: Collection[str] | None) -> Provenance | None:
    path: KeyPath = ("provenance",)
    f = doc.fields(node, path, "the provenance", ("found_by", "found_on", "method"), ("references", "notes"))
    if f is None:
        return None
    found_by = doc.text(f["found_by"], path + ("found_by",), one_line=True) if "found_by" in f else None
    found_on = doc.date(f["found_on"], path + ("found_on",)) if "found_on" in f else None
    method = doc.text(f["method"], path + ("method",)) if "method" in f else None
    refs = doc.reference_keys(f["references"], path + ("references",), known) if "references" in f else []
    notes = doc.text(f["notes"], path + ("notes",)) if "notes" in f else None
    for key, value in (("found_by", found_by), ("method", method)):
        if value is not None and value.startswith(PLACEHOLDER):
            node = f[key]
            doc.problems.append(Problem(
                Position(doc.path, node.line, node.column, path + (key,)),
                f"{_label(path + (key,))}still the draft's placeholder '{short(value)}'; say "
                + ("who found the cycle" if key == "found_by" else "how it was found (range searched, limits)"),
                "placeholder",
                "warning",
            ))  # fmt: skip
    if found_by is None or found_on is None or method is None or refs is None:
        return None
    return Provenance(found_by, found_on, method, tuple(refs), notes)


def _derive(
    doc: _Doc,
    raw: RawFile,
    entry: MapEntry,
    f: dict[str, Node],
    start: int | None,
    word: tuple[int, ...] | None,
    length: int | None,
    members: list[int] | None,
    provenance: Provenance,
    limits: Limits,
) -> tuple[Cycle, Node, KeyPath] | None:
    """Re-derive the cycle from its start (or its word) and compare every claim."""
    mapping = entry.dynamics
    m = mapping.modulus
    periodic = word is not None and least_period(word) < len(word)
    if periodic and start is None:
        # The word is all there is: a repeated word names no cycle of its own.
        assert word is not None
        _periodic_word(doc, f["word"], word, m)
        return None
    start_node = f["start"] if "start" in f else f["word"]
    if start is None:
        assert word is not None and "start" not in f
        equation = cycle_equation(mapping, word)
        if equation.target == 0:
            doc.error(
                start_node,
                ("word",),
                "the cycle equation does not fix a start for this word (m^k - A = 0); give a start as well",
                "no-integer-cycle",
            )
            return None
        num, den = equation.start()
        if den != 1:
            fraction = f"{show(equation.offset)} / {show(equation.target)}"
            if (num, den) != (equation.offset, equation.target):
                fraction += f" = {show(num)}/{show(den)}"
            doc.error(
                start_node,
                ("word",),
                f"expected a word with an integer cycle, got one whose cycle equation gives "
                f"n = B / (m^k - A) = {fraction}, not an integer",
                "no-integer-cycle",
            )
            return None
        start = num
    outcome = trace(mapping, start, limits.max_steps, limits.max_bits)
    key: KeyPath = ("start",) if "start" in f else ("word",)
    if isinstance(outcome, EntersCycle):
        found = outcome.cycle
        canonical = found.members[canonical_index(found.members)]
        if "start" in f:
            doc.error(
                start_node,
                key,
                f"expected a member of a cycle, got {show(start)}, whose orbit enters the cycle through "
                f"{show(canonical)} (length {len(found.members)}) after {outcome.steps} steps",
                "not-periodic",
            )
        else:
            doc.error(
                start_node,
                key,
                f"the cycle equation gives n = {show(start)}, but its orbit does not follow the word: it enters the "
                f"cycle through {show(canonical)} after {outcome.steps} steps",
                "no-integer-cycle",
            )
        return None
    if isinstance(outcome, Unresolved):
        if outcome.reason == "steps":
            steps = "1 step" if limits.max_steps == 1 else f"{limits.max_steps} steps"
            why = f"did not return or repeat within {steps} (raise --max-steps to look further)"
        else:
            why = (
                f"grew past {outcome.bits} bits after {outcome.steps} steps without returning "
                "(raise --max-bits to look further)"
            )
        doc.error(start_node, key, f"expected a member of a cycle, got {show(start)}, whose orbit {why}", "unresolved")
        return None
    assert isinstance(outcome, CycleFound)
    derived_word = outcome.word
    k = len(derived_word)
    equation = cycle_equation(mapping, derived_word)
    # The equation is derived from the branch constants alone; iteration
    # found a cycle, so disagreement means a bug in Periplus, not bad data.
    if equation.target * start != equation.offset:
        raise AssertionError(f"cycle equation disagrees with iteration for start {show(start)} in {raw.path}")
    if periodic and word != derived_word:
        # A primitive cycle's word is aperiodic except for maps whose composed
        # slope is -1 (T(n) = -n on a class gives the 2-cycle 2, -2 with word 00),
        # so a repeated word is refused only when it is not what the orbit gives.
        assert word is not None
        _periodic_word(doc, f["word"], word, m)
    elif word is not None and word != derived_word:
        hint = " (a rotation of it: the word is read from the start)" if is_rotation(word, derived_word) else ""
        doc.error(
            f["word"],
            ("word",),
            f"expected {short(word_text(derived_word, m))} (the residues along the orbit of {show(start)}), "
            f"got {short(word_text(word, m))}{hint}",
            "wrong-word",
        )
    if length is not None and length != k:
        hint = " (a cycle's length is its least period)" if length % k == 0 else ""
        doc.error(
            f["length"],
            ("length",),
            f"expected {k} (the steps until the orbit of {show(start)} returns), got {show(length)}{hint}",
            "wrong-length",
        )
    if members is not None and tuple(members) != outcome.members:
        node = f["members"]
        assert isinstance(node, Sequence)
        if len(members) != k:
            doc.error(
                node,
                ("members",),
                f"expected {k} members (the cycle of {show(start)}), got {len(members)}",
                "wrong-members",
            )
        else:
            i = next(i for i in range(k) if members[i] != outcome.members[i])
            doc.error(
                node.items[i],
                ("members", i),
                f"expected {show(outcome.members[i])} (step {i} of the orbit of {show(start)}), got {show(members[i])}",
                "wrong-members",
            )
    if doc.failed:
        return None
    index = canonical_index(outcome.members)
    canonical_word = derived_word[index:] + derived_word[:index]
    counts = [0] * m
    for r in derived_word:
        counts[r] += 1
    cycle = Cycle(
        id=raw.id,
        map_id=entry.id,
        path=raw.path,
        start=start,
        members=outcome.members,
        word=derived_word,
        canonical_index=index,
        equation=cycle_equation(mapping, canonical_word) if index else equation,
        residue_counts=tuple(counts),
        standard_length=_standard_length(mapping, k, counts),
        provenance=provenance,
        fingerprint=cycle_fingerprint(m, mapping.branches, outcome.members[index]),
    )
    return cycle, start_node, key


def _periodic_word(doc: _Doc, node: Node, word: tuple[int, ...], modulus: int) -> None:
    period = least_period(word)
    unit = word_text(word[:period], modulus)
    doc.error(
        node,
        ("word",),
        f"expected an aperiodic word (a cycle's word is its least period), got {short(word_text(word, modulus))}, "
        f"which is {short(unit)} repeated {len(word) // period} times; write {short(unit)}",
        "periodic-word",
    )


def _standard_length(mapping: AffineMap, k: int, counts: list[int]) -> int | None:
    """Length counting n -> q n + d and the halving after it as two steps, for n/2 maps.

    Applies to 2-branch maps whose even branch is n/2: the shortcut form
    (q n + d)/2 with q, d odd takes k + x standard steps (x odd steps); the
    standard form q n + d itself takes k.  Elsewhere there is no such convention.
    """
    if mapping.modulus != 2 or mapping.branches[0] != (1, 0):
        return None
    a, b = mapping.branches[1]
    if a % 2 and b % 2:
        return k + counts[1]
    if a % 4 == 2 and b % 4 == 2:
        return k
    return None


# --- the whole catalogue ---------------------------------------------------


def verify_raw(raw: RawCatalogue, limits: Limits = Limits()) -> Report:
    """Verify a catalogue's files; return the verified model and every problem.

    Files not yet parsed are parsed one at a time and dropped once checked,
    so memory holds the model, not every file's node tree.
    """
    problems = list(raw.layout_problems)

    def parsed(file: RawFile) -> tuple[RawFile, bool]:
        """The file with its nodes, and whether the loader found fault with it."""
        root, found = read_file(file)
        problems.extend(found)
        if root is None and not found:
            # No YAML document at all (empty, or only comments): it must not pass unnoticed.
            problems.append(
                Problem(Position(file.path), f"expected {_WHAT[file.kind]}, got an empty file", "empty-file")
            )
        return RawFile(file.path, file.kind, file.id, file.folder, root, found), bool(found)

    # A file the loader found fault with (a duplicate key, an anchor, a tag, a
    # second document) still has its fields checked, but nothing from it
    # reaches the model: its tree may not be what its author meant.
    references: dict[str, Reference] = {}
    # Keys that entries may cite: those of the valid references, or, when
    # references.yaml has problems of its own, every key it lists (None if it
    # could not be read at all), so that its faults are not blamed on every
    # entry that cites it.
    known: Collection[str] | None = references
    for file in raw.of_kind("references"):
        before = len(problems)
        file, faulted = parsed(file)
        references = _check_references(file, problems)
        known = references
        if len(problems) > before:
            known = set(file.root.entries) if isinstance(file.root, Mapping) else None
        if faulted:
            references = {}
    record: Record | None = None
    records = list(raw.of_kind("record"))
    for file in records:
        file, faulted = parsed(file)
        record = _check_record(file, problems)
        if faulted:
            record = None
    if not records:
        problems.append(
            Problem(
                Position(raw.root / RECORD_FILE),
                f"expected {RECORD_FILE}, the record's title, description, maintainers, licence, base_url and "
                f"version, got no such file",
                "missing-record",
            )
        )
    maps: dict[str, MapEntry] = {}
    bad_maps: set[str] = set()
    for file in raw.of_kind("map"):
        file, faulted = parsed(file)
        entry = _check_map(file, known, problems)
        if entry is None or faulted:
            bad_maps.add(file.id)
        else:
            maps[entry.id] = entry
    definitions: dict[AffineMap, MapEntry] = {}
    for entry in maps.values():
        first_map = definitions.setdefault(entry.dynamics, entry)
        if first_map is not entry:
            problems.append(
                Problem(
                    Position(entry.path, *_reread_position(entry.path, ("branches",)), ("branches",)),
                    f"branches: expected a map not yet listed, got the definition of {first_map.path} again "
                    f"(modulus {entry.modulus}, the same branches); a map is listed once, so its cycles are too",
                    "duplicate-map",
                    "warning",
                )
            )
    by_map: dict[str, dict[int, Cycle]] = {}
    by_fingerprint: dict[str, Cycle] = {}
    for file in raw.of_kind("cycle"):
        file, faulted = parsed(file)
        result = _check_cycle(file, maps, bad_maps, known, limits, problems)
        if result is None or faulted:
            continue
        cycle, node, key = result
        seen = by_map.setdefault(cycle.map_id, {})
        first = seen.get(cycle.canonical)
        if first is not None:
            problems.append(
                Problem(
                    Position(cycle.path, node.line, node.column, key),
                    f"{_label(key)}expected a cycle not yet listed, got the cycle of {first.path} again (both contain "
                    f"{show(cycle.canonical)}); a cycle is listed once, whatever member it starts from",
                    "duplicate-cycle",
                )
            )
            continue
        twin = by_fingerprint.get(cycle.fingerprint)
        if twin is not None:
            # Another map with the very same definition already lists this cycle.
            problems.append(
                Problem(
                    Position(cycle.path, node.line, node.column, key),
                    f"{_label(key)}expected a cycle not yet listed, got the cycle of {twin.path} again (both have "
                    f"the fingerprint {cycle.fingerprint}: the maps {twin.map_id} and {cycle.map_id} have the same "
                    f"definition, and both contain {show(cycle.canonical)})",
                    "duplicate-cycle",
                )
            )
            continue
        seen[cycle.canonical] = cycle
        by_fingerprint[cycle.fingerprint] = cycle
    cycles = {
        map_id: tuple(sorted(found.values(), key=lambda c: (abs(c.canonical), c.canonical < 0)))
        for map_id, found in sorted(by_map.items())
    }
    for map_id, entry in list(maps.items()):
        if entry.coverage:
            maps[map_id] = _recheck_coverage(entry, by_map.get(map_id, {}), limits, problems)
    catalogue = Catalogue(
        root=raw.root,
        maps=MappingProxyType(dict(sorted(maps.items()))),
        cycles=MappingProxyType(cycles),
        references=MappingProxyType(dict(sorted(references.items()))),
        record=record,
    )
    # Count every path looked at, including those refused by name or kind,
    # so that "N errors in X of Y files" never has X > Y.
    files = {f.path for f in raw.files} | {p.position.file for p in problems}
    return Report(catalogue, tuple(sorted(problems)), len(files))


def _recheck_coverage(entry: MapEntry, cycles: dict[int, Cycle], limits: Limits, problems: list[Problem]) -> MapEntry:
    """Re-run each coverage claim within budget; report what the catalogue or the claim lacks."""
    checked = []
    for i, claim in enumerate(entry.coverage):
        if claim.bound > limits.recheck_up_to:
            checked.append(claim)
            continue
        result = hunt_range(entry.dynamics, 0, claim.bound, claim.max_steps, claim.max_bits)
        label = _label(("coverage", i))
        findings: list[tuple[str, str, str]] = []  # (message, code, severity)
        for canonical, found in result.cycles.items():
            if abs(canonical) <= claim.bound and canonical not in cycles:
                findings.append((
                    f"{label}expected every cycle with least |member| up to {show(claim.bound)} to be listed, "
                    f"got none for the cycle through {show(canonical)} (length {len(found.members)}), "
                    f"which the search finds; add cycles/{entry.id}/<id>.yaml with start {show(canonical)}",
                    "coverage-missing-cycle", "error",
                ))  # fmt: skip
        listed = set(claim.unresolved)
        for start in result.unresolved:
            if start not in listed:
                findings.append((
                    f"{label}expected the unresolved starts to be listed, got no mention of {show(start)}, "
                    f"whose orbit is not resolved within {claim.max_steps} steps and {claim.max_bits} bits",
                    "coverage-unlisted-start", "error",
                ))  # fmt: skip
        for start in sorted(listed - set(result.unresolved), key=lambda v: (abs(v), v < 0)):
            findings.append((
                f"{label}unresolved lists {show(start)}, but its orbit is resolved within the claim's limits",
                "coverage-resolved-start", "warning",
            ))  # fmt: skip
        if findings:
            # The record's position is read again from the file only when there is something to report.
            where = Position(entry.path, *_reread_position(entry.path, ("coverage", i)), ("coverage", i))
            problems.extend(Problem(where, message, code, severity) for message, code, severity in findings)
        checked.append(replace(claim, rechecked=True))
    return replace(entry, coverage=tuple(checked))


def _reread_position(path: Path, key_path: KeyPath) -> tuple[int, int]:
    """Line and column of the node at ``key_path``, read again from the file (only on rare paths)."""
    try:
        node: Node | None = parse_yaml(path.read_text(encoding="utf-8-sig"), path)[0]
    except (OSError, UnicodeDecodeError):
        return 0, 0
    for part in key_path:
        if isinstance(part, str) and isinstance(node, Mapping) and part in node.entries:
            node = node.entries[part][1]
        elif isinstance(part, int) and isinstance(node, Sequence) and part < len(node.items):
            node = node.items[part]
        else:
            return 0, 0
    return (node.line, node.column) if node is not None else (0, 0)


def verify_catalogue(root: Path, limits: Limits = Limits()) -> Report:
    """Load and verify the catalogue at root (raises CatalogueUnreadable if it is not one)."""
    return verify_raw(scan_catalogue(root), limits)
