"""Mutations of text, names and shape: pathological Markdown, control characters, structural damage.

Each function changes the catalogue of ``cat`` and returns one line for each change.  The rules broken are
those of catalogue/README.md: ids are ``[a-z0-9][a-z0-9-]*``; one-line fields hold one line of at most 1,000
characters; files are UTF-8 plain YAML with keys written once; unknown fields are errors; each field has
its type; folders inside maps/ and symbolic links anywhere are errors.
"""

from __future__ import annotations

import datetime
import os
import random
from typing import Any

from catalogue_files import Catalogue, Pairs, Raw, leaves, set_at, show
from texts import (
    BAD_BYTES,
    FORGED,
    NAME_CHARACTERS,
    RAW_FORBIDDEN,
    SURROGATES,
    VALUE_CHARACTERS,
    line_beyond,
    line_within,
    notes_beyond,
    notes_within,
)

__all__ = ["control_in_name", "control_in_value", "markdown_beyond_limits", "markdown_within_limits", "structural"]

# One-line fields of the fixture (catalogue/README.md: name, summary, title, maintainers, venue, found_by).
LINE_FIELDS = (
    ("maps/3x-plus-1.yaml", ("name",)),
    ("maps/3x-minus-1.yaml", ("summary",)),
    ("record.yaml", ("title",)),
    ("record.yaml", ("maintainers",)),
    ("references.yaml", ("lagarias-1985", "title")),
    ("references.yaml", ("lagarias-1990", "venue")),
    ("cycles/3x-plus-1/through-1.yaml", ("provenance", "found_by")),
)


def _block_literal(text: str) -> Raw:
    """``text`` as a YAML literal block scalar under a top-level key (content indented by two)."""
    return Raw("|2\n" + "\n".join("  " + line if line else "" for line in text.split("\n")))


def _place_text(cat: Catalogue, rng: random.Random, notes: tuple[str, str], line: tuple[str, str]) -> list[str]:
    where = rng.randrange(4)
    if where < 2:  # a map's notes, as a block scalar or a quoted string
        rel = rng.choice(("maps/3x-plus-1.yaml", "maps/3x-minus-1.yaml"))
        doc = cat.load(rel)
        doc["notes"] = _block_literal(notes[1]) if where == 0 else notes[1]
        cat.save(rel, doc)
        return [f"{rel}: notes = {notes[0]}" + (" (block scalar)" if where == 0 else "")]
    if where == 2:
        rel = rng.choice(cat.cycle_files())
        doc = cat.load(rel)
        doc["provenance"]["notes"] = notes[1]
        cat.save(rel, doc)
        return [f"{rel}: provenance.notes = {notes[0]}"]
    rel, path = rng.choice(LINE_FIELDS)
    doc = cat.load(rel)
    set_at(doc, path, line[1])
    cat.save(rel, doc)
    return [f"{rel}: {'.'.join(path)} = {line[0]}"]


def markdown_within_limits(cat: Catalogue, rng: random.Random) -> list[str]:
    return _place_text(cat, rng, notes_within(rng), line_within(rng))


def markdown_beyond_limits(cat: Catalogue, rng: random.Random) -> list[str]:
    return _place_text(cat, rng, notes_beyond(rng), line_beyond(rng))


def _insert(text: str, rng: random.Random, piece: str, inside: bool = False) -> str:
    at = rng.randint(1, len(text) - 1) if inside else rng.randint(0, len(text))
    return text[:at] + piece + text[at:]


def _rename(cat: Catalogue, rng: random.Random) -> list[str]:
    folders = sorted({f.rsplit("/", 1)[0] for f in cat.cycle_files()})
    target = rng.choice(cat.files() + folders)
    path = cat.root / target
    stem, dot, suffix = path.name.partition(".")
    piece = rng.choice(NAME_CHARACTERS + BAD_BYTES)
    raw = piece if isinstance(piece, bytes) else piece.encode("utf-8")
    at = rng.randint(0, len(stem))
    name = os.fsencode(stem[:at]) + raw + os.fsencode(stem[at:] + dot + suffix)
    os.rename(os.fsencode(path), os.fsencode(path.parent) + b"/" + name)
    return [f"{target}: renamed to {name!r}"]


def _mappings(value: Any, path: tuple[Any, ...] = ()) -> list[tuple[tuple[Any, ...], dict[str, Any]]]:
    """Every mapping of a document with its path."""
    found = [(path, value)] if isinstance(value, dict) else []
    items = value.items() if isinstance(value, dict) else enumerate(value) if isinstance(value, list) else ()
    for key, item in items:
        found += _mappings(item, (*path, key))
    return found


def _replace(doc: Any, path: tuple[Any, ...], new: Any) -> Any:
    """``doc`` with the node at ``path`` replaced by ``new`` (the new document when ``path`` is empty)."""
    if not path:
        return new
    set_at(doc, path, new)
    return doc


def _rename_key(cat: Catalogue, rng: random.Random) -> list[str]:
    rel = rng.choice(cat.files())
    doc = cat.load(rel)
    path, mapping = rng.choice(_mappings(doc))
    key = rng.choice(list(mapping))
    new_key = _insert(key, rng, rng.choice(NAME_CHARACTERS + VALUE_CHARACTERS + SURROGATES))
    renamed = {new_key if k == key else k: v for k, v in mapping.items()}
    cat.save(rel, _replace(doc, path, renamed))
    return [f"{rel}: key {'.'.join(map(str, (*path, key)))} renamed to {show(new_key)}"]


def control_in_name(cat: Catalogue, rng: random.Random) -> list[str]:
    pick = rng.randrange(6)
    if pick == 0:
        return _rename(cat, rng)
    if pick == 1:
        return _rename_key(cat, rng)
    if pick == 2:  # the map id of a cycle entry
        rel = rng.choice(cat.cycle_files())
        doc = cat.load(rel)
        doc["map"] = _insert(doc["map"], rng, rng.choice(NAME_CHARACTERS + VALUE_CHARACTERS + SURROGATES))
        cat.save(rel, doc)
        return [f"{rel}: map = {show(doc['map'])}"]
    rel = rng.choice(cat.files())
    data = cat.read(rel)
    at = rng.randint(0, len(data))
    if pick == 3:
        piece = rng.choice(BAD_BYTES)
        cat.write(rel, data[:at] + piece + data[at:])
        return [f"{rel}: the bytes {piece!r} (not UTF-8) written at offset {at}"]
    if pick == 4:
        char = rng.choice(RAW_FORBIDDEN)
        cat.write(rel, data[:at] + char.encode("utf-8") + data[at:])
        return [f"{rel}: the character {char!r} written raw at offset {at}"]
    rel, path = rng.choice(LINE_FIELDS)
    doc = cat.load(rel)
    old: Any = doc
    for step in path:
        old = old[step]
    set_at(doc, path, _insert(old, rng, "\n" + FORGED, inside=True))
    cat.save(rel, doc)
    return [f"{rel}: a newline and a forged line put inside the one-line field {'.'.join(path)}"]


def control_in_value(cat: Catalogue, rng: random.Random) -> list[str]:
    texts = [(rel, path) for rel in cat.files() for path, v in leaves(cat.load(rel)) if isinstance(v, str) and v]
    rel, path = rng.choice(texts)
    doc = cat.load(rel)
    value: Any = doc
    for step in path:
        value = value[step]
    pieces = [rng.choice(VALUE_CHARACTERS) for _ in range(rng.choice((1, 1, 3, 100)))]
    if rng.random() < 0.1:
        pieces.append(rng.choice(SURROGATES))
    for piece in pieces:
        value = _insert(value, rng, piece)
    set_at(doc, path, value)
    cat.save(rel, doc)
    return [f"{rel}: {'.'.join(map(str, path))} = {show(value)}"]


# --- structure ------------------------------------------------------------------------------------------


def _required(rel: str, doc: Any) -> list[tuple[Any, ...]]:
    """Paths of the fields the format requires in a fixture file (the README's "required" columns)."""
    if rel == "record.yaml":
        return [(k,) for k in ("title", "description", "maintainers", "licence", "base_url", "version")]
    if rel == "references.yaml":
        return [(key, f) for key in doc for f in ("authors", "title", "venue", "year")]
    if rel.startswith("maps/"):
        fields = ("residue", "multiplier", "increment")
        branches = [("branches", i, f) for i in range(len(doc["branches"])) for f in fields]
        return [(k,) for k in ("name", "modulus", "branches", "summary")] + branches
    return [("map",), ("provenance",)] + [("provenance", f) for f in ("found_by", "found_on", "method")]


def _other_type(value: Any, rng: random.Random) -> Any:
    if isinstance(value, dict):
        return rng.choice((list(value.values()), "a mapping written as text"))
    if isinstance(value, list):
        return rng.choice((" ".join(show(v) for v in value), {"items": value}))
    if isinstance(value, int | datetime.date) and not isinstance(value, bool):
        return rng.choice(([value], {"value": value}) + ((show(value),) if isinstance(value, int) else ()))
    return rng.choice(([value], {value: value}))


def _delete_or_duplicate(cat: Catalogue, rng: random.Random, duplicate: bool) -> list[str]:
    rel = rng.choice(cat.files())
    doc = cat.load(rel)
    if duplicate:
        path, mapping = rng.choice(_mappings(doc))
        key = rng.choice(list(mapping))
        pairs = Pairs()
        for k, v in mapping.items():
            pairs += [(k, v), (k, v)] if k == key else [(k, v)]
        cat.save(rel, _replace(doc, path, pairs))
        return [f"{rel}: key {'.'.join(map(str, (*path, key)))} written twice"]
    path = rng.choice(_required(rel, doc))
    parent: Any = doc
    for step in path[:-1]:
        parent = parent[step]
    del parent[path[-1]]
    cat.save(rel, doc)
    return [f"{rel}: required field {'.'.join(map(str, path))} deleted"]


def _retype(cat: Catalogue, rng: random.Random) -> list[str]:
    rel = rng.choice(cat.files())
    doc = cat.load(rel)
    paths = [p for p, _ in _mappings(doc)] + [p for p, _ in leaves(doc)]
    path = rng.choice(paths)
    value: Any = doc
    for step in path:
        value = value[step]
    new = _other_type(value, rng)
    cat.save(rel, _replace(doc, path, new))
    return [f"{rel}: {'.'.join(map(str, path)) or 'the whole document'} = {show(new)} (was {show(value)})"]


# A required field's line in each kind of fixture file: a cut before it leaves the field out.
_CUT_BEFORE = {"cycles/": b"\nprovenance:", "maps/": b"\nsummary:", "record": b"\nversion:", "references": b"\n  year:"}


def _truncate(cat: Catalogue, rng: random.Random) -> list[str]:
    rel = rng.choice(cat.files())
    data = cat.read(rel)
    marker = next(m for prefix, m in _CUT_BEFORE.items() if rel.startswith(prefix))
    cut = rng.randrange(0, data.index(marker) + 1)
    cat.write(rel, data[:cut])
    return [f"{rel}: truncated to its first {cut} of {len(data)} bytes"]


def _swap(cat: Catalogue, rng: random.Random) -> list[str]:
    folders = ["maps", "cycles"] + sorted({f.rsplit("/", 1)[0] for f in cat.cycle_files()})
    target = rng.choice(cat.files() + folders)
    path = cat.root / target
    if path.is_dir():
        for inner in sorted(path.rglob("*"), reverse=True):
            inner.unlink() if inner.is_file() else inner.rmdir()
        path.rmdir()
        path.write_text("a file where a folder belongs\n", encoding="utf-8")
        return [f"{target}: folder replaced by a file"]
    data = path.read_bytes()
    path.unlink()
    path.mkdir()
    (path / path.name).write_bytes(data)
    return [f"{target}: file replaced by a folder holding a copy of it"]


def _special(cat: Catalogue, rng: random.Random) -> list[str]:
    rel = rng.choice(cat.files())
    path = cat.root / rel
    if rng.random() < 0.5:
        outside = cat.root.parent / f"{cat.root.name}-outside-{path.name}"
        outside.write_bytes(path.read_bytes())
        path.unlink()
        path.symlink_to(outside)
        return [f"{rel}: replaced by a symbolic link to a copy outside the catalogue"]
    path.unlink()
    os.mkfifo(path)
    return [f"{rel}: replaced by a named pipe (nothing ever writes to it)"]


def structural(cat: Catalogue, rng: random.Random) -> list[str]:
    pick = rng.randrange(6)
    if pick < 2:
        return _delete_or_duplicate(cat, rng, duplicate=pick == 1)
    return (_retype, _truncate, _swap, _special)[pick - 2](cat, rng)
