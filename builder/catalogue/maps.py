"""Map entries (``maps/<id>.yaml``): the definition, checked to be well defined, and its coverage and census claims."""

from __future__ import annotations

from collections.abc import Collection
from typing import Any

from builder.arith.dynamics import AffineMap, branch_defects
from builder.arith.integers import show
from builder.catalogue.fields import (
    BASIN,
    BASIN_LIMIT,
    BRANCH,
    CENSUS,
    CENSUS_MAX_LENGTH,
    COVERAGE,
    COVERAGE_KINDS,
    MAP,
    MAX_LIMIT,
    MAX_MODULUS,
)
from builder.catalogue.files import RawFile
from builder.catalogue.model import Basin, Basins, Census, Coverage, MapEntry
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
    census = doc.listing(f["census"], ("census",), lambda n, p: _census(doc, n, p)) if "census" in f else []
    if doc.failed or branches is None or coverage is None or census is None or modulus is None:
        return None
    dynamics = AffineMap(modulus, branches)
    if census and not all(a > 0 for a, _ in branches):
        message = (
            "expected census claims only for a map whose multipliers are all positive (such as n/2, (qn+d)/2 with "
            f"q > 0), got modulus {show(modulus)} with branches {', '.join(map(str, branches))}"
        )
        doc.error(f["census"], ("census",), message, "census-map-shape")
        return None
    name, summary, notes, refs = v.get("name"), v.get("summary"), v.get("notes"), v.get("references", [])
    assert name is not None and summary is not None and refs is not None and modulus is not None
    return MapEntry(raw.id, name, summary, notes, tuple(refs), dynamics, raw.path, tuple(coverage), tuple(census))


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
    basins = _basins(doc, f, v, key_path) if "basins" in f or "unknown" in f else None
    if len(doc.problems) > before:
        return None
    return Coverage(kind, v["bound"], found_on, method, v["max_steps"], v["max_bits"], tuple(unresolved), basins=basins)


def _census(doc: EntryReader, node: Node, key_path: KeyPath) -> Census | None:
    """A census record: up_to (1 to CENSUS_MAX_LENGTH), found_on, method."""
    before = len(doc.problems)
    f = doc.fields(node, key_path, CENSUS)
    if f is None or len(doc.problems) > before:
        return None
    v = doc.values(f, CENSUS, key_path)
    up_to = v["up_to"]
    if up_to is not None and not 1 <= up_to <= CENSUS_MAX_LENGTH:
        message = f"expected a length from 1 to {CENSUS_MAX_LENGTH:,}, got {show(up_to)}"
        doc.error(f["up_to"], key_path + ("up_to",), message)
    if len(doc.problems) > before:
        return None
    found_on, method = v["found_on"], v["method"]
    assert up_to is not None and found_on is not None and method is not None
    return Census(up_to, found_on, method)


def _basins(doc: EntryReader, f: dict[str, Node], v: dict[str, Any], key_path: KeyPath) -> Basins | None:
    """A claim's basins and unknown count, with the rules that need no search: each cycle and each first
    start once, first starts within the bound (a cycle's own member among its starts), and the counts
    adding up to every start up to the bound."""
    bound: int = v["bound"]
    before = len(doc.problems)
    if "basins" not in f:
        doc.error(f["unknown"], key_path + ("unknown",), "expected unknown only beside basins, got it without basins")
        return None
    path = key_path + ("basins",)
    if bound > BASIN_LIMIT:
        message = f"expected basins only for a bound up to {BASIN_LIMIT:,}, got them for the bound {show(bound)}"
        doc.error(f["basins"], path, message, "basins-bound-too-large")
        return None
    listed = doc.listing(f["basins"], path, lambda n, p: _basin(doc, n, p, bound))
    unknown = v.get("unknown", 0)
    if listed is None or unknown is None:
        return None
    cycles: dict[int, int] = {}
    firsts: dict[int, int] = {}
    for i, basin in enumerate(listed):
        item = f["basins"].items[i] if isinstance(f["basins"], SequenceNode) else None
        if basin.cycle in cycles:
            got = f"a second basin of the cycle through {show(basin.cycle)} (the first is item {cycles[basin.cycle]})"
            doc.error(item, path + (i,), f"expected each cycle once, got {got}")
        elif basin.first in firsts:
            got = f"{show(basin.first)} as the first start of item {firsts[basin.first]} too"
            doc.error(item, path + (i, "first"), f"expected each start in one basin, got {got}")
        cycles.setdefault(basin.cycle, i)
        firsts.setdefault(basin.first, i)
    # A listed unresolved start ends in no known cycle, so unknown counts it; then every start is counted once.
    within = sum(1 for s in set(v.get("unresolved") or ()) if abs(s) <= bound)
    total = sum(b.starts for b in listed) + unknown
    if len(doc.problems) > before:
        return None
    if unknown < within:
        kind = "a count of at least 0" if within == 0 else f"at least {within:,} (the unresolved starts listed)"
        doc.error(f.get("unknown", f["basins"]), key_path + ("unknown",), f"expected {kind}, got {show(unknown)}")
    elif total != 2 * bound + 1:
        message = f"expected the basins' starts and unknown to add up to 2 bound + 1 = {2 * bound + 1:,}, got {total:,}"
        doc.error(f["basins"], path, message, "basins-count")
    return None if len(doc.problems) > before else Basins(tuple(listed), unknown)


def _basin(doc: EntryReader, node: Node, path: KeyPath, bound: int) -> Basin | None:
    before = len(doc.problems)
    f = doc.fields(node, path, BASIN)
    if f is None or len(doc.problems) > before:
        return None
    v = doc.values(f, BASIN, path)
    cycle, starts, first = v["cycle"], v["starts"], v["first"]
    if cycle is None or starts is None or first is None:
        return None
    if starts < 1:
        doc.error(f["starts"], path + ("starts",), f"expected a positive count of starts, got {show(starts)}")
    elif abs(first) > bound:
        message = f"expected a start with |n| <= {show(bound)} (the bound), got {show(first)}"
        doc.error(f["first"], path + ("first",), message)
    elif abs(cycle) <= bound and start_index(first) > start_index(cycle):
        message = (
            f"expected a start no later than {show(cycle)} in the order 0, 1, -1, 2, -2, ... (the cycle's own "
            f"member ends in it), got {show(first)}"
        )
        doc.error(f["first"], path + ("first",), message)
    return None if len(doc.problems) > before else Basin(cycle, starts, first)


def start_index(s: int) -> int:
    """The place of a start in the order 0, 1, -1, 2, -2, ... (builder.search.basins.start_index)."""
    return 2 * s - 1 if s > 0 else -2 * s
