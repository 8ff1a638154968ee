"""Map entries (``maps/<id>.yaml``): the definition, checked to be well defined, and its coverage claims."""

from __future__ import annotations

from collections.abc import Collection

from builder.arith.dynamics import AffineMap, branch_defects
from builder.arith.integers import show
from builder.catalogue.fields import BRANCH, COVERAGE, COVERAGE_KINDS, MAP, MAX_LIMIT, MAX_MODULUS
from builder.catalogue.files import RawFile
from builder.catalogue.model import Coverage, MapEntry
from builder.catalogue.nodes import Node, SequenceNode
from builder.catalogue.reader import EntryReader, describe, open_entry, short
from builder.errors import KeyPath, Problem

__all__ = ["check_map"]


def check_map(raw: RawFile, known: Collection[str] | None, problems: list[Problem]) -> MapEntry | None:
    """The verified map, or None after recording what is wrong with it."""
    opened = open_entry(raw.path, raw.root, problems, MAP)
    if opened is None:
        return None
    doc, f = opened
    v = doc.values(f, MAP, known=known)
    modulus = v.get("modulus")
    if modulus is not None and modulus < 2:
        doc.error(f["modulus"], ("modulus",), f"expected a modulus of at least 2, got {show(modulus)}")
        modulus = None
    elif modulus is not None and modulus > MAX_MODULUS:
        message = (
            f"expected a modulus of at most {MAX_MODULUS:,} (the map's page shows every branch), got {show(modulus)}"
        )
        doc.error(f["modulus"], ("modulus",), message, "modulus-too-large")
        modulus = None
    branches = _check_branches(doc, f["branches"], modulus) if "branches" in f and modulus is not None else None
    coverage = doc.listing(f["coverage"], ("coverage",), lambda n, p: _coverage(doc, n, p)) if "coverage" in f else []
    if doc.failed or branches is None or coverage is None:
        return None
    name, summary, notes, refs = v.get("name"), v.get("summary"), v.get("notes"), v.get("references", [])
    assert name is not None and summary is not None and refs is not None and modulus is not None
    return MapEntry(raw.id, name, summary, notes, tuple(refs), AffineMap(modulus, branches), raw.path, tuple(coverage))


def _check_branches(doc: EntryReader, node: Node, modulus: int) -> tuple[tuple[int, int], ...] | None:
    if not isinstance(node, SequenceNode):
        doc.error(node, ("branches",), f"expected a list of branches, got {describe(node)}")
        return None
    by_residue: dict[int, tuple[int, int]] = {}
    where: dict[int, Node] = {}
    index: dict[int, int] = {}
    for i, item in enumerate(node.items):
        path: KeyPath = ("branches", i)
        f = doc.fields(item, path, BRANCH)
        if f is None or len(f) < 3:
            continue
        v = doc.values(f, BRANCH, path)
        residue, a, b = v["residue"], v["multiplier"], v["increment"]
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


def _coverage(doc: EntryReader, node: Node, key_path: KeyPath) -> Coverage | None:
    """A coverage record: kind, bound, found_on, method, max_steps, max_bits, optional unresolved."""
    before = len(doc.problems)
    f = doc.fields(node, key_path, COVERAGE)
    if f is None or len(doc.problems) > before:
        return None
    v = doc.values(f, COVERAGE, key_path)
    kind = v["kind"]
    if kind is not None and kind not in COVERAGE_KINDS:
        message = f"expected one of {', '.join(COVERAGE_KINDS)}, got '{short(kind)}'"
        doc.error(f["kind"], key_path + ("kind",), message)
    for name in ("bound", "max_steps", "max_bits"):
        value = v[name]
        if value is not None and value < (0 if name == "bound" else 1):
            doc.error(f[name], key_path + (name,), f"expected a positive integer, got {show(value)}")
        elif value is not None and name != "bound" and value > MAX_LIMIT:
            doc.error(f[name], key_path + (name,), f"expected at most {MAX_LIMIT:,}, got {show(value)}")
    if len(doc.problems) > before:
        return None
    found_on, method, unresolved = v["found_on"], v["method"], v.get("unresolved", [])
    assert kind is not None and found_on is not None and method is not None and unresolved is not None
    return Coverage(kind, v["bound"], found_on, method, v["max_steps"], v["max_bits"], tuple(unresolved))
