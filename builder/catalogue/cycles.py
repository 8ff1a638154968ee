"""Cycle entries (``cycles/<map-id>/<id>.yaml``): their fields and provenance, before the cycle is derived."""

from __future__ import annotations

import sys
from collections.abc import Collection, Mapping

from builder.arith.integers import show
from builder.catalogue.derive import Claims, derive_cycle
from builder.catalogue.fields import CYCLE, PROVENANCE
from builder.catalogue.files import RawFile
from builder.catalogue.limits import Limits
from builder.catalogue.model import PLACEHOLDER, Cycle, MapEntry, Provenance
from builder.catalogue.nodes import Node
from builder.catalogue.reader import EntryReader, open_entry, short
from builder.errors import KeyPath, Problem

__all__ = ["check_cycle"]


def check_cycle(
    raw: RawFile,
    maps: Mapping[str, MapEntry],
    bad_maps: Collection[str],
    known: Collection[str] | None,
    limits: Limits,
    problems: list[Problem],
) -> tuple[Cycle, Node, KeyPath] | None:
    """Check a cycle file's fields, then derive its cycle; return the cycle and where its start is written."""
    opened = open_entry(raw.path, raw.root, problems, CYCLE)
    if opened is None:
        return None
    doc, f = opened
    provenance = _check_provenance(doc, f["provenance"], known) if "provenance" in f else None
    v = doc.values(f, CYCLE)
    entry = _map_of(doc, raw, f, v.get("map"), maps, bad_maps)
    start, length, members = v.get("start"), v.get("length"), v.get("members")
    if length is not None and length < 1:
        doc.error(f["length"], ("length",), f"expected a positive length, got {show(length)}")
        length = None
    if "start" not in f and "word" not in f:
        doc.error(raw.root, (), "a cycle entry needs a start or a word, got neither", "missing-field")
    if entry is None:
        # No map to check against; still report what can be said about the word.
        return None
    word = doc.word(f["word"], ("word",), entry.modulus) if "word" in f else None
    if doc.failed or provenance is None:
        return None
    claims = Claims(start, word, length, members, f)
    return derive_cycle(doc, raw, entry, claims, provenance, limits)


def _map_of(
    doc: EntryReader,
    raw: RawFile,
    f: dict[str, Node],
    map_id: str | None,
    maps: Mapping[str, MapEntry],
    bad_maps: Collection[str],
) -> MapEntry | None:
    """The verified map the entry names, or None (with a problem unless the map itself failed)."""
    if map_id is not None and map_id != raw.folder:
        doc.error(
            f["map"], ("map",), f"expected '{raw.folder}' (the folder this file is in), got '{map_id}'", "wrong-folder"
        )
        map_id = None
    if map_id is None:
        return None
    entry = maps.get(map_id)
    if entry is None and map_id not in bad_maps:
        doc.error(
            f["map"], ("map",), f"expected the id of a map in maps/, got '{map_id}' (no maps/{map_id}.yaml)",
            "unknown-map",
        )  # fmt: skip
    return entry


def _check_provenance(doc: EntryReader, node: Node, known: Collection[str] | None) -> Provenance | None:
    path: KeyPath = ("provenance",)
    f = doc.fields(node, path, PROVENANCE)
    if f is None:
        return None
    v = doc.values(f, PROVENANCE, path, known)
    found_by, found_on, method, refs, notes = (
        v.get("found_by"),
        v.get("found_on"),
        v.get("method"),
        v.get("references", []),
        v.get("notes"),
    )
    for key, value in (("found_by", found_by), ("method", method)):
        if value is not None and value.startswith(PLACEHOLDER):
            say = "who found the cycle" if key == "found_by" else "how it was found (range searched, limits)"
            message = f"still the draft's placeholder '{short(value)}'; say {say}"
            doc.warn(f[key], path + (key,), message, "placeholder")
    if found_by is None or found_on is None or method is None or refs is None:
        return None
    # Interned: most entries of a record repeat who found them and how, and one copy serves them all.
    return Provenance(sys.intern(found_by), found_on, sys.intern(method), tuple(refs), notes)
