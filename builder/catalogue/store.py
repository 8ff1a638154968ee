"""The cache's database file (builder.catalogue.cache): made, opened read-write or read-only, of which engine
version, and marked as a cache; what its rows are kept under, how they are cut into parts, and signed.

A database of another engine version (:func:`engine_version`: the package version, :data:`CACHE_FORMAT`
and a digest of the verification code) has its tables made anew; a damaged one is removed and made
anew; one that cannot be written is read.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import platform
import sqlite3
import zlib
from collections.abc import Iterator, Mapping
from functools import cache
from pathlib import Path
from typing import Any, NamedTuple

import yaml

from builder.arith.dynamics import AffineMap
from builder.catalogue.limits import Limits
from builder.catalogue.serial import loads

__all__ = [
    "CACHE_FORMAT",
    "FILES_PER_PART",
    "KeptFolder",
    "connect",
    "connect_read_only",
    "definition_digest",
    "engine_version",
    "kept_folder",
    "mark_folder",
    "number",
    "part_of",
    "parts_for",
    "remove_database",
    "scope_of",
    "sign",
    "signed_rows",
]

#: Bump when what verification decides or keeps changes (a message, a check, a model object's fields).
CACHE_FORMAT = 4
#: How long a run waits for another one writing the database before it gives up writing.
_BUSY_SECONDS = 20.0
#: The modules whose code decides a verification's outcome (relative to the package).
_ENGINE_CODE = ("*.py", "arith/*.py", "search/*.py", "catalogue/*.py")

#: The tables beside ``meta``; a database of another engine version has them made anew.  A row of ``files``
#: holds the outcomes of the files of one folder (loading them at once is twice as fast as one by one), or of
#: a big folder, of one part of its files (``part`` of ``parts``, by a hash of the file's path: one file
#: changed in a folder of 6,000 writes one part again), and apart from them what the files keep aside
#: (``aside``): read only when asked for.
_TABLES = {
    "scopes": "scope BLOB PRIMARY KEY, used INTEGER NOT NULL",
    "files": "scope BLOB NOT NULL, folder TEXT NOT NULL, part INTEGER NOT NULL, parts INTEGER NOT NULL, "
    "value BLOB NOT NULL, aside BLOB, mac BLOB NOT NULL, PRIMARY KEY (scope, folder, part)",
    "searches": "key BLOB PRIMARY KEY, value BLOB NOT NULL, mac BLOB NOT NULL, used INTEGER NOT NULL",
}


@cache
def engine_version() -> str:
    """The package version, the cache format and a digest of the code that verifies (any edit changes it)."""
    from builder import __version__

    package = Path(__file__).resolve().parent.parent
    h = hashlib.sha256()
    try:
        for pattern in _ENGINE_CODE:
            for path in sorted(package.glob(pattern)):
                h.update(path.relative_to(package).as_posix().encode() + b"\0" + path.read_bytes())
        code = h.hexdigest()[:16]
    except OSError:  # an installation without readable sources: the version and format alone
        code = "no-source"
    # The parser's messages for malformed YAML, and Python's own reading of text, are part of an outcome too.
    libyaml = yaml.__with_libyaml__ and _libyaml_version()
    return f"{__version__}/{CACHE_FORMAT}/{code}/python {platform.python_version()}/pyyaml {yaml.__version__} {libyaml}"


def _libyaml_version() -> str:
    from yaml import _yaml

    return str(_yaml.get_version_string())


def mark_folder(folder: Path) -> None:
    """Mark the folder as a cache: git ignores it, and backup tools that follow the Cache Directory Tagging
    Specification skip it."""
    for name, text in _MARKS.items():
        path = folder / name
        if not path.exists():
            path.write_text(text, encoding="utf-8")


_MARKS = {
    ".gitignore": "# Periplus keeps verification results here; deleting this folder is always safe.\n*\n",
    "CACHEDIR.TAG": "Signature: 8a477f597d28d172789f06886806bc55\n"
    "# This file marks the folder as a cache of Periplus (https://bford.info/cachedir/).\n",
}


def connect(path: Path) -> tuple[sqlite3.Connection | None, bool]:
    """The database at ``path`` and whether it may be written; a corrupt or foreign one is made anew."""
    for attempt in range(2):
        db: sqlite3.Connection | None = None
        try:
            db = sqlite3.connect(path, timeout=_BUSY_SECONDS, isolation_level=None)
            db.execute("PRAGMA synchronous = OFF")  # a cache: a crash costs at most its rebuilding
            db.execute("CREATE TABLE IF NOT EXISTS meta (name TEXT PRIMARY KEY, value TEXT NOT NULL)")
            _settle_version(db)
            return db, True
        except sqlite3.Error as exc:
            if db is not None:
                db.close()
            if _read_only(exc) or not path.exists():
                break
            if attempt == 0:  # not a database, or damaged: made anew
                remove_database(path)
    return connect_read_only(path), False


def _settle_version(db: sqlite3.Connection) -> None:
    """Make the tables anew in a database written by another engine version (or none), and mark it with this one."""
    row = db.execute("SELECT value FROM meta WHERE name = 'engine'").fetchone()
    if row is not None and row[0] == engine_version():
        return
    db.execute("BEGIN IMMEDIATE")
    try:
        for table, columns in _TABLES.items():
            db.execute(f"DROP TABLE IF EXISTS {table}")
            db.execute(f"CREATE TABLE {table} ({columns})")
        db.execute("INSERT OR REPLACE INTO meta VALUES ('engine', ?)", (engine_version(),))
        db.execute("COMMIT")
    except BaseException:
        db.execute("ROLLBACK")
        raise


def connect_read_only(path: Path) -> sqlite3.Connection | None:
    """The database opened for reading only, when it exists and is of this engine version."""
    if not path.is_file():
        return None
    db: sqlite3.Connection | None = None
    try:
        db = sqlite3.connect(f"{path.absolute().as_uri()}?mode=ro", uri=True, timeout=_BUSY_SECONDS)
        row = db.execute("SELECT value FROM meta WHERE name = 'engine'").fetchone()
        if row is not None and row[0] == engine_version():
            return db
    except sqlite3.Error:
        pass
    if db is not None:
        db.close()
    return None


def _read_only(exc: sqlite3.Error) -> bool:
    text = str(exc).lower()
    return "readonly" in text or "read-only" in text or "unable to open" in text


def remove_database(path: Path) -> None:
    for leftover in _with_journals(path):
        with contextlib.suppress(OSError):
            leftover.unlink()


def _with_journals(path: Path) -> Iterator[Path]:
    yield path
    for suffix in ("-journal", "-wal", "-shm"):
        yield path.with_name(path.name + suffix)


#: A folder of more files than this keeps its outcomes in parts of about this many.
FILES_PER_PART = 256


def parts_for(files: int) -> int:
    """How many parts the outcomes of a folder of ``files`` files are kept in: a power of two."""
    return 1 if files <= FILES_PER_PART else 1 << math.ceil(math.log2(files / FILES_PER_PART))


def part_of(rel: str, parts: int) -> int:
    return zlib.crc32(rel.encode()) % parts


def number(n: int) -> bytes:
    return n.to_bytes(8, "little")


def sign(key: bytes, *parts: bytes) -> bytes:
    """The signature of ``parts`` (each length-prefixed) with the user's ``key``: a keyed BLAKE2b."""
    h = hashlib.blake2b(key=key, digest_size=32)
    for part in parts:
        h.update(len(part).to_bytes(8, "little"))
        h.update(part)
    return h.digest()


def signed_rows(
    key: bytes, scope: bytes, rows: list[tuple[Any, ...]]
) -> dict[str, list[tuple[int, int, bytes, bytes | None, bool]]]:
    """Rows (folder, part, parts, value, aside, mac) of the files of ``scope``, by folder, each as (part, parts,
    value, aside, whether its signature is that of ``key``)."""
    by_folder: dict[str, list[tuple[int, int, bytes, bytes | None, bool]]] = {}
    for folder, part, parts, value, aside, mac in rows:
        signed = mac == sign(key, b"f", scope, folder.encode(), number(part), number(parts), value, aside or b"")
        by_folder.setdefault(folder, []).append((part, parts, value, aside, signed))
    return by_folder


class KeptFolder(NamedTuple):
    """What is kept of one folder, loaded from its rows: (key, outcome, stamp) by file, how many parts its
    outcomes are cut into (0: no row used), the files of each part, what each part keeps aside (as bytes,
    loaded when asked for) and whether it had rows at all."""

    kept: dict[str, tuple[Any, Any, Any]]
    parts: int
    files_of: dict[int, set[str]]
    aside: dict[int, bytes]
    had_rows: bool


def kept_folder(rows: list[tuple[int, int, bytes, bytes | None, bool]], paths: Mapping[str, Path]) -> KeptFolder:
    """The folder's rows as :func:`signed_rows` gives them, loaded (serial.loads, with ``paths``): rows of two
    ways of cutting are not used (the folder is written anew), nor rows not signed with this user's key."""
    kept: dict[str, tuple[Any, Any, Any]] = {}
    used, files_of, aside = 0, {}, {}
    if len({parts for _, parts, _, _, _ in rows}) == 1:
        for part, parts, value, kept_aside, signed in rows:
            if not signed:
                continue  # not this user's: the part's files are checked again
            outcomes = loads(value, paths)
            if not isinstance(outcomes, dict):
                continue
            kept.update(outcomes)
            used = parts
            files_of[part] = set(outcomes)
            if kept_aside is not None:
                aside[part] = kept_aside
    return KeptFolder(kept, used, files_of, aside, bool(rows))


def definition_digest(mapping: AffineMap) -> str:
    """A digest of a map's definition (its modulus and branch constants, of any size)."""
    h = hashlib.sha256()
    for n in (mapping.modulus, *(c for branch in mapping.branches for c in branch)):
        data = n.to_bytes(n.bit_length() // 8 + 1, "little", signed=True)
        h.update(len(data).to_bytes(8, "little") + data)
    return h.hexdigest()


def scope_of(root: Path, limits: Limits) -> bytes:
    """What a catalogue's outcomes are kept under: its root as given (problems and paths name files through
    it) and the orbit limits."""
    where = f"{root}\0{limits.max_steps}\0{limits.max_bits}\0{limits.max_work}"
    return hashlib.sha256(where.encode("utf-8", "surrogateescape")).digest()
