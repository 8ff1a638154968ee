"""Verification results kept between runs, so that a catalogue with one changed file is verified in seconds.

Two kinds of result are kept, in one SQLite database in the cache folder:

- each map or cycle file's outcome (its problems, its entries as written, its verified model
  object), under the file's path and a key made of its bytes' SHA-256 and everything else its
  checks read (the definition of the map a cycle names, whether references.yaml could be read);
  the reference keys it asked about are kept with it and must give the same answers again.  With
  it is kept the file's stamp (builder.catalogue.files.Stamp: size, times, inode) when its bytes
  were hashed: a file whose stamp is still that one is not read again to know its SHA-256;
- each coverage search, under the map's definition, the range, the limits and the work budget.

Everything between files (duplicates, references, relations, the comparison of searches with the
listed cycles) is worked out again on every run from these, so a cached result cannot let a false
claim through: a changed file has another hash, so it is checked again.

Every result is kept under the engine's version (:func:`engine_version`: the package version,
:data:`CACHE_FORMAT` and a digest of the verification code), the root as given and the limits of
each orbit; a database of another version is emptied.  Rows are signed with a key of the user's
own (``$XDG_CACHE_HOME/periplus/cache-key``), so that a cache folder from elsewhere (one committed
to a repository by a contributor, say) is never trusted: its rows fail the signature and are
checked again.  A cache that cannot be read, written or trusted is worked around, never fatal:
verification without it gives the same report.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import platform
import sqlite3
import time
import zlib
from collections.abc import Hashable, Iterator, Mapping
from functools import cache
from pathlib import Path
from types import TracebackType
from typing import Any

import yaml

from builder.arith.dynamics import AffineMap
from builder.catalogue.serial import dumps, loads
from builder.catalogue.signing import key_file, signing_key

__all__ = [
    "CACHE_FORMAT",
    "DATABASE",
    "FOLDER_NAME",
    "VerifyCache",
    "default_cache_folder",
    "definition_digest",
    "engine_version",
    "key_file",
]

#: Bump when what verification decides or keeps changes (a message, a check, a model object's fields).
CACHE_FORMAT = 3
#: The default cache folder's name, beside the catalogue folder.
FOLDER_NAME = ".periplus-cache"
DATABASE = "verify.sqlite3"
#: Rows not used for this many days are removed.
_KEEP_DAYS = 30
#: How long a run waits for another one writing the database before it gives up writing.
_BUSY_SECONDS = 20.0
#: Outcomes are written in batches of about this many bytes (memory stays bounded on a cold run).
_BATCH_BYTES = 8 << 20
#: A folder of more files than this keeps its outcomes in parts of about this many.
FILES_PER_PART = 256
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


def definition_digest(mapping: AffineMap) -> str:
    """A digest of a map's definition (its modulus and branch constants, of any size)."""
    h = hashlib.sha256()
    for n in (mapping.modulus, *(c for branch in mapping.branches for c in branch)):
        data = n.to_bytes(n.bit_length() // 8 + 1, "little", signed=True)
        h.update(len(data).to_bytes(8, "little") + data)
    return h.hexdigest()


def default_cache_folder(catalogue: Path) -> Path:
    """The cache folder a command uses unless told otherwise: ``.periplus-cache`` beside the catalogue folder."""
    return catalogue.absolute().parent / FOLDER_NAME


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


def _today() -> int:
    return int(time.time() // 86400)


class VerifyCache:
    """Verification results kept between runs in a folder, or only for this process (``folder`` None).

    Open with :meth:`open`, which never fails: ``notes`` says what could not be used.  Coverage
    searches are also remembered in memory, so that two verifications in one process (a review's
    two sides) never search the same thing twice, even without a folder.  Use as a context
    manager, or call :meth:`close`, to write what was learnt.
    """

    def __init__(
        self,
        db: sqlite3.Connection | None,
        key: bytes | None,
        writable: bool,
        notes: tuple[str, ...],
        path: Path | None,
    ) -> None:
        self._db = db
        self._path = path
        self._key = key or b""
        self._writable = writable
        self.notes = notes
        self._memory: dict[bytes, Any] = {}
        # Rows to write, in order: a row of a folder's part, or (scope, folder) for every row of a folder gone.
        self._pending_files: list[tuple[bytes, str, int, int, bytes, bytes | None, bytes] | tuple[bytes, str]] = []
        self._pending_searches: dict[bytes, tuple[bytes, bytes]] = {}
        self._pending_bytes = 0
        self._touched: set[bytes] = set()
        # The folder at hand: its outcomes as kept, and as this run has them (rel: (key, outcome)).
        self._folder: tuple[bytes, str] | None = None
        self._paths: Mapping[str, Path] = {}
        # (key, outcome, stamp), the stamp None where there is none.
        self._kept: dict[str, tuple[Hashable, Any, Hashable]] = {}
        self._seen: dict[str, tuple[Hashable, Any, Hashable]] = {}
        self._changed: set[str] = set()  # the files kept anew by this run
        # How the folder's rows are cut into parts as kept (0: no row), and the files each part holds.
        self._parts = 0
        self._kept_parts: dict[int, set[str]] = {}
        # What the folder's files keep aside: as kept (bytes by part, read only when needed) and as this run has it.
        self._kept_aside: dict[int, bytes] = {}
        self._seen_aside: dict[str, Any] = {}

    @classmethod
    def memory(cls) -> VerifyCache:
        """A cache that keeps nothing between runs (coverage searches are still shared within the process)."""
        return cls(None, None, False, (), None)

    @classmethod
    def open(cls, folder: Path | None) -> VerifyCache:
        """The cache in ``folder`` (made if missing), or a memory-only cache with a note when it cannot be used."""
        if folder is None:
            return cls.memory()
        key = signing_key()
        if key is None:
            note = f"the signing key {key_file()} can be neither read nor made, so {folder} is not used"
            return cls(None, None, False, (note,), None)
        with contextlib.suppress(OSError):  # a read-only place: an existing cache may still be read
            folder.mkdir(parents=True, exist_ok=True)
            _mark(folder)
        db, writable = _connect(folder / DATABASE)
        if db is None:
            return cls(
                None, None, False, (f"the cache {folder} can be neither read nor written; it is not used",), None
            )
        notes = () if writable else (f"the cache {folder} is read-only: it is read, and nothing new is kept",)
        return cls(db, key, writable, notes, folder / DATABASE)

    @property
    def persistent(self) -> bool:
        """Whether outcomes are kept between runs (a folder in use), so that looking them up can pay."""
        return self._db is not None

    def __enter__(self) -> VerifyCache:
        return self

    def __exit__(self, kind: type[BaseException] | None, exc: BaseException | None, tb: TracebackType | None) -> None:
        self.close()

    # -- what verification asks

    def file(
        self, scope: bytes, rel: str, key: Hashable, paths: Mapping[str, Path], stamp: Hashable = None
    ) -> Any | None:
        """The outcome kept for the file ``rel`` of ``scope`` under ``key``, or None.

        ``paths`` gives the path of every file of the catalogue by ``rel``; files are asked for folder
        by folder, and each folder's outcomes are read in one piece.  ``stamp`` (unless None) is what
        tells the file's bytes apart now, kept with the outcome for :meth:`key_of`.
        """
        if self._db is None:
            return None
        self._enter(scope, rel.rpartition("/")[0], paths)
        kept = self._kept.get(rel)
        if kept is None or kept[0] != key:
            return None
        if stamp is not None and stamp != kept[2]:
            kept = (kept[0], kept[1], stamp)
            self._changed.add(rel)  # kept again with the stamp it has now
        self._seen[rel] = kept
        return kept[1]

    def key_of(self, scope: bytes, rel: str, stamp: Hashable, paths: Mapping[str, Path]) -> Hashable | None:
        """The key the file ``rel`` of ``scope`` was kept under, if it was kept with ``stamp`` (not None):
        the file's bytes are those its key was made from, unread."""
        if self._db is None or stamp is None:
            return None
        self._enter(scope, rel.rpartition("/")[0], paths)
        kept = self._kept.get(rel)
        return kept[0] if kept is not None and kept[2] == stamp else None

    def keep_file(
        self,
        scope: bytes,
        rel: str,
        key: Hashable,
        value: Any,
        paths: Mapping[str, Path],
        aside: Any = None,
        stamp: Hashable = None,
    ) -> None:
        """Keep the outcome of the file ``rel`` of ``scope`` under ``key`` (replacing the one before), with
        ``stamp`` (see :meth:`file`), and ``aside`` (unless None) apart from it: what is seldom read (see
        :meth:`aside`)."""
        if self._db is None or not self._writable:
            return
        self._enter(scope, rel.rpartition("/")[0], paths)
        self._seen[rel] = (key, value, stamp)
        self._seen_aside.pop(rel, None)
        if aside is not None:
            self._seen_aside[rel] = aside
        self._changed.add(rel)

    def aside(self) -> tuple[bytes, ...]:
        """What the files of the folder at hand keep aside, as kept: pieces of ``rel``: value, in the bytes
        of :func:`builder.catalogue.serial.dumps`, read with ``loads`` only if they are needed.  Only the
        files whose outcome :meth:`file` gives, unchanged, have theirs there."""
        return tuple(self._kept_aside.values())

    def search(self, key: bytes) -> Any | None:
        """The coverage search kept under ``key``, or None."""
        if key in self._memory:
            return self._memory[key]
        if self._db is None:
            return None
        row = self._query("SELECT value, mac, used FROM searches WHERE key = ?", (key,))
        if row is None or row[1] != self._mac(b"s", key, row[0]):
            return None
        value = loads(row[0], {})
        if value is not None:
            self._memory[key] = value
            if row[2] < _today() - 7:
                self._pending_searches[key] = (row[0], row[1])  # written again: its day of use is refreshed
        return value

    def keep_search(self, key: bytes, value: Any) -> None:
        self._memory[key] = value
        if self._db is None or not self._writable:
            return
        data = dumps(value, {})
        self._pending_searches[key] = (data, self._mac(b"s", key, data))
        self._grew(len(data))

    def close(self) -> None:
        """Write what this run learnt, drop what no run has used for a month, and close the database."""
        if self._db is None:
            return
        try:
            self._leave()
            self._flush(prune=True)
        finally:
            self._db.close()
            self._db = None

    # -- inside

    def _mac(self, *parts: bytes) -> bytes:
        h = hashlib.blake2b(key=self._key, digest_size=32)
        for part in parts:
            h.update(len(part).to_bytes(8, "little"))
            h.update(part)
        return h.digest()

    def _query(self, sql: str, args: tuple[Any, ...]) -> tuple[Any, ...] | None:
        rows = self._select(sql, args)
        return rows[0] if rows else None

    def _select(self, sql: str, args: tuple[Any, ...]) -> list[tuple[Any, ...]]:
        if self._db is None:
            return []
        try:
            return self._db.execute(sql, args).fetchall()
        except sqlite3.Error as exc:
            self._drop(exc)
            return []

    def _enter(self, scope: bytes, folder: str, paths: Mapping[str, Path]) -> None:
        """Make ``folder`` of ``scope`` the folder at hand, reading what is kept of it (every part)."""
        if self._folder == (scope, folder):
            return
        self._leave()
        self._use_scope(scope)
        self._folder, self._paths, self._seen, self._changed = (scope, folder), paths, {}, set()
        self._kept, self._parts, self._kept_parts, self._kept_aside, self._seen_aside = {}, 0, {}, {}, {}
        rows = self._select(
            "SELECT part, parts, value, aside, mac FROM files WHERE scope = ? AND folder = ?", (scope, folder)
        )
        if len({parts for _, parts, _, _, _ in rows}) != 1:
            return  # none, or rows of two ways of cutting: none is used, and the folder is written anew
        for part, parts, value, aside, mac in rows:
            if mac != self._mac(b"f", scope, folder.encode(), _number(part), _number(parts), value, aside or b""):
                continue  # not this user's: the part's files are checked again
            kept = loads(value, paths)
            if not isinstance(kept, dict):
                continue
            self._kept.update(kept)
            self._parts = parts
            self._kept_parts[part] = set(kept)
            if aside is not None:
                self._kept_aside[part] = aside

    def _leave(self) -> None:
        """Done with the folder at hand: keep anew each part of its outcomes in which a file changed, came or went."""
        if self._folder is None:
            return
        scope, folder = self._folder
        if self._writable:
            parts = _parts_for(len(self._seen))
            now: dict[int, dict[str, tuple[Hashable, Any, Hashable]]] = {}
            for rel, seen in self._seen.items():
                now.setdefault(_part_of(rel, parts), {})[rel] = seen
            if parts != self._parts:  # cut another way (or never kept): every part is written anew
                if self._parts:
                    self._pending_files.append((scope, folder))
                changed = set(now)
            else:
                changed = {_part_of(rel, parts) for rel in self._changed}
                changed |= {
                    n
                    for n in now.keys() | self._kept_parts.keys()
                    if now.get(n, {}).keys() != self._kept_parts.get(n, set())
                }
                if any(n not in now for n in changed):  # a part left with no file: the folder is written anew
                    self._pending_files.append((scope, folder))
                    changed = set(now)
            for n in sorted(changed):
                self._keep_part(scope, folder, n, parts, now[n], recut=parts != self._parts)
        self._folder, self._paths, self._kept, self._seen, self._changed = None, {}, {}, {}, set()
        self._parts, self._kept_parts, self._kept_aside, self._seen_aside = 0, {}, {}, {}

    def _keep_part(
        self,
        scope: bytes,
        folder: str,
        part: int,
        parts: int,
        seen: dict[str, tuple[Hashable, Any, Hashable]],
        recut: bool,
    ) -> None:
        """Keep ``seen``, the outcomes of the files of one part of the folder at hand, as that part's row."""
        rels = {self._paths[rel]: rel for rel in seen}
        data = dumps(seen, rels)
        aside = self._asides(part, seen, recut)
        kept_aside = dumps(aside, rels) if aside else None
        mac = self._mac(b"f", scope, folder.encode(), _number(part), _number(parts), data, kept_aside or b"")
        self._pending_files.append((scope, folder, part, parts, data, kept_aside, mac))
        self._grew(len(data) + len(kept_aside or b""))

    def _asides(self, part: int, seen: dict[str, tuple[Hashable, Any, Hashable]], recut: bool) -> dict[str, Any]:
        """What each file of ``seen`` (a part of the folder at hand) keeps aside, as this run leaves it: kept
        anew, or as kept before for the files whose outcome was kept before and is unchanged (in the same
        part, unless the folder is ``recut`` into another number of parts)."""
        earlier: dict[str, Any] = {}
        if any(rel not in self._seen_aside for rel in seen):
            pieces = self._kept_aside.values() if recut else [self._kept_aside.get(part, b"")]
            for data in pieces:
                if data:
                    earlier.update(loads(data, self._paths) or {})
        aside = {}
        for rel, value in seen.items():
            if rel in self._seen_aside:
                aside[rel] = self._seen_aside[rel]
            elif rel in earlier and self._kept.get(rel) is value:
                aside[rel] = earlier[rel]
        return aside

    def _use_scope(self, scope: bytes) -> None:
        if scope in self._touched:
            return
        self._touched.add(scope)
        row = self._query("SELECT used FROM scopes WHERE scope = ?", (scope,))
        if self._writable and (row is None or row[0] != _today()):
            self._write(lambda db: db.execute("INSERT OR REPLACE INTO scopes VALUES (?, ?)", (scope, _today())))

    def _grew(self, size: int) -> None:
        self._pending_bytes += size
        if self._pending_bytes >= _BATCH_BYTES:
            self._flush(prune=False)

    def _flush(self, prune: bool) -> None:
        files, searches = self._pending_files, self._pending_searches
        self._pending_files, self._pending_searches, self._pending_bytes = [], {}, 0
        if not self._writable or not (files or searches or prune):
            return
        today = _today()

        def write(db: sqlite3.Connection) -> None:
            for row in files:  # in order: a folder's rows dropped before its parts are written anew
                if len(row) == 2:
                    db.execute("DELETE FROM files WHERE scope = ? AND folder = ?", row)
                else:
                    db.execute("INSERT OR REPLACE INTO files VALUES (?, ?, ?, ?, ?, ?, ?)", row)
            db.executemany(
                "INSERT OR REPLACE INTO searches VALUES (?, ?, ?, ?)",
                [(key, data, mac, today) for key, (data, mac) in searches.items()],
            )
            if prune:
                old = today - _KEEP_DAYS
                db.execute("DELETE FROM files WHERE scope IN (SELECT scope FROM scopes WHERE used < ?)", (old,))
                db.execute("DELETE FROM scopes WHERE used < ?", (old,))
                db.execute("DELETE FROM searches WHERE used < ?", (old,))

        self._write(write)

    def _write(self, action: Any) -> None:
        """Run ``action`` in one write transaction; give up writing (not reading) when that fails."""
        db = self._db
        assert db is not None
        try:
            db.execute("BEGIN IMMEDIATE")
            try:
                action(db)
                db.execute("COMMIT")
            except BaseException:
                db.execute("ROLLBACK")
                raise
        except sqlite3.Error:
            self._writable = False  # locked for too long, full, or gone read-only: this run keeps nothing more

    def _drop(self, exc: sqlite3.Error) -> None:
        """Stop using a database that fails while being read; remove it if it is damaged (not merely busy)."""
        if self._db is not None:
            self._db.close()
        self._db = None
        if self._writable and self._path is not None and not isinstance(exc, sqlite3.OperationalError):
            _remove(self._path)  # the next run makes it anew


def _parts_for(files: int) -> int:
    """How many parts the outcomes of a folder of ``files`` files are kept in: a power of two."""
    return 1 if files <= FILES_PER_PART else 1 << math.ceil(math.log2(files / FILES_PER_PART))


def _part_of(rel: str, parts: int) -> int:
    return zlib.crc32(rel.encode()) % parts


def _number(n: int) -> bytes:
    return n.to_bytes(8, "little")


def _mark(folder: Path) -> None:
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


def _connect(path: Path) -> tuple[sqlite3.Connection | None, bool]:
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
                _remove(path)
    return _connect_read_only(path), False


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


def _connect_read_only(path: Path) -> sqlite3.Connection | None:
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


def _remove(path: Path) -> None:
    for leftover in _with_journals(path):
        with contextlib.suppress(OSError):
            leftover.unlink()


def _with_journals(path: Path) -> Iterator[Path]:
    yield path
    for suffix in ("-journal", "-wal", "-shm"):
        yield path.with_name(path.name + suffix)
