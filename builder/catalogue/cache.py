"""Verification results kept between runs, so that a catalogue with one changed file is verified in seconds.

Two kinds of result are kept, in one SQLite database in the cache folder:

- each map or cycle file's outcome (its problems, its entries as written, its verified model
  object), under the file's path and a key made of its bytes' SHA-256 and everything else its
  checks read (the definition of the map a cycle names, whether references.yaml could be read);
  the reference keys it asked about are kept with it and must give the same answers again.  With
  it is kept the file's stamp (builder.catalogue.files.Stamp: size, times, inode) when its bytes
  were hashed: a file whose stamp is still that one is not read again to know its SHA-256;
- each coverage search, under the map's definition, the range, the limits and the work budget;
- the relations among the cycles (builder.catalogue.relations: same word, mirrors, scaled copies),
  under a digest of every map's definition and every cycle's least member, which fix them.

Everything else between files (duplicates, references, the comparison of searches with the listed
cycles) is worked out again on every run from these, so a cached result cannot let a false claim
through: a changed file has another hash, so it is checked again.

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
import sqlite3
import time
from collections.abc import Callable, Hashable, Mapping, Sequence
from pathlib import Path
from types import TracebackType
from typing import Any

from builder.catalogue.serial import PathsUnder, dumps, loads
from builder.catalogue.signing import key_file, signing_key
from builder.catalogue.store import (
    CACHE_FORMAT,
    KeptFolder,
    connect,
    definition_digest,
    engine_version,
    kept_folder,
    mark_folder,
    number,
    part_of,
    parts_for,
    remove_database,
    scope_of,
    sign,
    signed_rows,
)

__all__ = [
    "CACHE_FORMAT",
    "DATABASE",
    "FOLDER_NAME",
    "PathsUnder",
    "VerifyCache",
    "default_cache_folder",
    "definition_digest",
    "engine_version",
    "key_file",
    "scope_of",
]

#: The default cache folder's name, beside the catalogue folder.
FOLDER_NAME = ".periplus-cache"
DATABASE = "verify.sqlite3"
#: Every row of the files of a scope (add "AND folder = ?" for one folder's).
_SCOPE_ROWS = "SELECT folder, part, parts, value, aside, mac FROM files WHERE scope = ?"
#: Rows not used for this many days are removed.
_KEEP_DAYS = 30
#: Outcomes are written in batches of about this many bytes (memory stays bounded on a cold run).
_BATCH_BYTES = 8 << 20


def default_cache_folder(catalogue: Path) -> Path:
    """The cache folder a command uses unless told otherwise: ``.periplus-cache`` beside the catalogue folder."""
    return catalogue.absolute().parent / FOLDER_NAME


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
        # How the folder's rows are cut into parts as kept (0: no row used), whether it has rows at all, and
        # the files each part holds.
        self._parts = 0
        self._had_rows = False
        self._kept_parts: dict[int, set[str]] = {}
        # What the folder's files keep aside: as kept (bytes by part, read only when needed) and as this run has it.
        self._kept_aside: dict[int, bytes] = {}
        self._seen_aside: dict[str, Any] = {}
        # The rows of each scope's folders not yet at hand, read together, and those loaded ahead (see prefetch).
        self._ahead: dict[bytes, dict[str, list[tuple[int, int, bytes, bytes | None, bool]]]] = {}
        self._loaded: dict[bytes, tuple[PathsUnder, dict[str, KeptFolder]]] = {}

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
            mark_folder(folder)
        db, writable = connect(folder / DATABASE)
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

    def stamped(
        self,
        scope: bytes,
        folder: str,
        files: Sequence[tuple[str, Hashable]],
        paths: Mapping[str, Path],
        accept: Callable[[int, Hashable, Any], bool],
    ) -> list[int]:
        """The places in ``files`` (rel, stamp), files of ``folder`` of ``scope``, of those whose outcome is kept with
        that stamp (not None) and ``accept(place, key, outcome)``: as :meth:`key_of` then :meth:`file` for each
        file, in one call.  Each outcome accepted is seen by this run (kept)."""
        if self._db is None:
            return []
        self._enter(scope, folder, paths)
        kept_now, seen = self._kept.get, self._seen
        out = []
        for place, (rel, stamp) in enumerate(files):
            kept = kept_now(rel)
            if kept is not None and stamp is not None and kept[2] == stamp and accept(place, kept[0], kept[1]):
                seen[rel] = kept
                out.append(place)
        return out

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

    def worked_out(self, key: bytes) -> Any | None:
        """What was worked out from the whole catalogue (its relations) under ``key``, a digest of all it was
        worked out from; None if nothing is kept under it.  Kept beside the coverage searches."""
        return self.search(key)

    def keep_worked_out(self, key: bytes, value: Any) -> None:
        self.keep_search(key, value)

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
            self._ahead, self._loaded = {}, {}

    # -- inside

    def _mac(self, *parts: bytes) -> bytes:
        return sign(self._key, *parts)

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
        self._seen_aside = {}
        kept = self._kept_of(scope, folder, paths)
        self._kept, self._parts, self._kept_parts, self._kept_aside, self._had_rows = kept

    def prefetch(self, scope: bytes, paths: PathsUnder | None = None, until: Callable[[], bool] | None = None) -> None:
        """Read what is kept of every folder of ``scope`` now, and check its signatures, to be given out folder
        by folder: a run asks for every folder, and one query for all takes half the time of one per folder
        (a build has it done while a helper process lists the catalogue's files).  With ``paths`` (those the
        run will give, of the same root), also load each folder's outcomes in turn until ``until()`` says
        to stop (the helper is done)."""
        if self._db is None:
            return
        if scope not in self._ahead:
            self._ahead[scope] = signed_rows(self._key, scope, self._select(_SCOPE_ROWS, (scope,)))
        if paths is None:
            return
        loaded = self._loaded.setdefault(scope, (paths, {}))[1]
        for folder, rows in self._ahead[scope].items():
            if until is not None and until():
                return
            if folder not in loaded:
                loaded[folder] = kept_folder(rows, paths)

    def _kept_of(self, scope: bytes, folder: str, paths: Mapping[str, Path]) -> KeptFolder:
        """What is kept of ``folder`` of ``scope``: on the first ask, prefetched with every other folder's (and
        loaded ahead, if it was, with paths of the same root as ``paths``); asked again, read again (this run
        may have written it since)."""
        self.prefetch(scope)
        rows = self._ahead[scope].pop(folder, None)
        ahead, loaded = self._loaded.get(scope, (None, {}))
        done = loaded.pop(folder, None)
        if rows is None:
            again = signed_rows(self._key, scope, self._select(_SCOPE_ROWS + " AND folder = ?", (scope, folder)))
            return kept_folder(again.get(folder, []), paths)
        if done is not None and ahead is not None and isinstance(paths, PathsUnder) and paths.root == ahead.root:
            return done
        return kept_folder(rows, paths)

    def _leave(self) -> None:
        """Done with the folder at hand: keep anew each part of its outcomes in which a file changed, came or went."""
        if self._folder is None:
            return
        scope, folder = self._folder
        if self._writable and not self._unchanged():
            parts = parts_for(len(self._seen))
            now: dict[int, dict[str, tuple[Hashable, Any, Hashable]]] = {}
            for rel, seen in self._seen.items():
                now.setdefault(part_of(rel, parts), {})[rel] = seen
            if parts != self._parts:  # cut another way (or none used): every part is written anew
                if self._had_rows:  # and no row of another cut (or unsigned) is left behind
                    self._pending_files.append((scope, folder))
                changed = set(now)
            else:
                changed = {part_of(rel, parts) for rel in self._changed}
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
        self._parts, self._had_rows, self._kept_parts, self._kept_aside, self._seen_aside = 0, False, {}, {}, {}

    def _unchanged(self) -> bool:
        """Whether the folder at hand is kept as it is: no file kept anew, come or gone, and cut as before."""
        return (
            not self._changed and self._seen.keys() == self._kept.keys() and parts_for(len(self._seen)) == self._parts
        )

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
        mac = self._mac(b"f", scope, folder.encode(), number(part), number(parts), data, kept_aside or b"")
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
            remove_database(self._path)  # the next run makes it anew
