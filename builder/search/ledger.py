"""The ledger of a long hunt: every completed unit of work, kept in one SQLite file as it completes.

A hunt that stops (Ctrl-C, a lost machine, a killed run) starts again with the same ``--ledger``
and runs only the units the ledger lacks; nothing is lost, and nothing counts twice, because a
unit is recorded once under its map and range, and recording it again with the same checksum
changes nothing.  The file is SQLite in write-ahead-log mode with one transaction per completed
unit, so a run killed at any moment leaves every unit recorded before it whole.

Tables (every integer of the mathematics as decimal text, since members and bounds pass 64 bits):

``meta``      the ledger's format (``LEDGER_FORMAT``).
``hunts``     one row per map (its definition, ``builder.search.units.map_text``): the map's id,
              the bound, the limits, the unit size and the program version.  Several maps may
              share one file (a family hunt); each has its own parameters.
``units``     one row per completed unit: map, low, high, checksum, the result as JSON
              (``builder.search.units.result_to_json``), when it finished (UTC) and the worker
              that ran it.
``rechecks``  each rerun of a unit: the worker, the checksum it gave and whether it agreed.

Opening a ledger for other parameters than it holds for that map is ``LedgerMismatch``; a unit
recorded twice with different checksums is ``LedgerConflict``; a file that is no ledger is
``LedgerError``.  All are ValueErrors whose message says what was expected and what was found.
Nothing here prints.
"""

from __future__ import annotations

import datetime as _dt
import sqlite3
from dataclasses import dataclass
from pathlib import Path
from types import TracebackType

from builder import __version__
from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import parse_decimal, to_decimal
from builder.search.definition import HuntResult
from builder.search.units import Unit, UnitResult, UnitResultError, map_text, result_from_json, result_to_json

__all__ = [
    "LEDGER_FORMAT",
    "HuntParameters",
    "Ledger",
    "LedgerConflict",
    "LedgerError",
    "LedgerMismatch",
    "Recheck",
]

LEDGER_FORMAT = "periplus-ledger/1"

_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (name TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS hunts (
    map TEXT PRIMARY KEY, map_id TEXT NOT NULL, bound TEXT NOT NULL, max_steps TEXT NOT NULL,
    max_bits TEXT NOT NULL, max_work TEXT NOT NULL, unit_size TEXT NOT NULL, version TEXT NOT NULL,
    started TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS units (
    map TEXT NOT NULL REFERENCES hunts (map), low TEXT NOT NULL, high TEXT NOT NULL, checksum TEXT NOT NULL,
    result TEXT NOT NULL, finished TEXT NOT NULL, worker TEXT NOT NULL, PRIMARY KEY (map, low, high));
CREATE TABLE IF NOT EXISTS rechecks (
    map TEXT NOT NULL REFERENCES hunts (map), low TEXT NOT NULL, high TEXT NOT NULL, worker TEXT NOT NULL,
    checksum TEXT NOT NULL, agreed INTEGER NOT NULL, finished TEXT NOT NULL);
"""


class LedgerError(ValueError):
    """A file that cannot be used as a ledger; the message names it."""


class LedgerMismatch(LedgerError):
    """The ledger holds another hunt of this map: another bound, limits, unit size or program version."""


class LedgerConflict(LedgerError):
    """A unit recorded with one checksum is offered again with another (``held``: the recorded one)."""

    def __init__(self, message: str, held: str) -> None:
        super().__init__(message)
        self.held = held


@dataclass(frozen=True, slots=True)
class HuntParameters:
    """What a ledger holds of one map's hunt; a resumed hunt must ask for the same."""

    map_id: str
    mapping: AffineMap
    bound: int
    max_steps: int
    max_bits: int
    max_work: int
    unit_size: int
    version: str = __version__

    def unit(self, low: int, high: int) -> Unit:
        """The unit of the magnitudes low..high under these parameters."""
        return Unit(self.mapping, low, high, self.max_steps, self.max_bits, self.max_work)

    def fields(self) -> dict[str, str]:
        """The parameters compared on opening, as text (the map is the key and is not among them)."""
        return {
            "bound": to_decimal(self.bound),
            "max_steps": to_decimal(self.max_steps),
            "max_bits": to_decimal(self.max_bits),
            "max_work": to_decimal(self.max_work),
            "unit size": to_decimal(self.unit_size),
            "program version": self.version,
        }


@dataclass(frozen=True, slots=True)
class Recheck:
    """One rerun of a recorded unit."""

    low: int
    high: int
    worker: str
    checksum: str
    agreed: bool


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).isoformat(timespec="milliseconds")


class Ledger:
    """An open ledger file (created when missing); use as a context manager, or ``close`` it."""

    def __init__(self, path: Path) -> None:
        self.path = path
        try:
            self._db = sqlite3.connect(path, timeout=60.0)
        except sqlite3.Error as exc:
            raise LedgerError(f"{path}: expected a ledger file that can be opened, got: {exc}") from None
        try:
            self._db.execute("PRAGMA journal_mode=WAL")
            with self._db:
                self._db.executescript(_SCHEMA)
                self._db.execute("INSERT OR IGNORE INTO meta VALUES ('format', ?)", (LEDGER_FORMAT,))
            (found,) = self._db.execute("SELECT value FROM meta WHERE name = 'format'").fetchone()
        except sqlite3.Error as exc:
            self._db.close()
            raise LedgerError(f"{path}: expected a Periplus ledger (SQLite), got: {exc}") from None
        if found != LEDGER_FORMAT:
            self._db.close()
            raise LedgerError(f"{path}: expected a ledger of format {LEDGER_FORMAT}, got {found!r}")

    def close(self) -> None:
        self._db.close()

    def __enter__(self) -> Ledger:
        return self

    def __exit__(
        self, kind: type[BaseException] | None, value: BaseException | None, trace: TracebackType | None
    ) -> None:
        self.close()

    # --- parameters ----------------------------------------------------------------------------

    def unit_size(self, mapping: AffineMap) -> int | None:
        """The unit size the ledger holds for this map, or None when it holds no hunt of it."""
        row = self._db.execute("SELECT unit_size FROM hunts WHERE map = ?", (map_text(mapping),)).fetchone()
        return None if row is None else parse_decimal(row[0])

    def begin(self, params: HuntParameters) -> bool:
        """Record the parameters of a new hunt of this map, or check them against those held.

        Returns True when the hunt is new.  Other parameters than those held are LedgerMismatch.
        """
        key = map_text(params.mapping)
        mine = params.fields()
        row = self._db.execute(
            "SELECT map_id, bound, max_steps, max_bits, max_work, unit_size, version FROM hunts WHERE map = ?", (key,)
        ).fetchone()
        if row is None:
            with self._db:
                self._db.execute(
                    "INSERT INTO hunts VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                    (key, params.map_id, *mine.values(), _now()),
                )
            return True
        held = dict(zip(mine, row[1:], strict=True))
        differ = [name for name in mine if held[name] != mine[name]]
        if differ:
            expected = ", ".join(f"{name} {held[name]}" for name in differ)
            got = ", ".join(f"{name} {mine[name]}" for name in differ)
            raise LedgerMismatch(
                f"{self.path}: expected the hunt this ledger holds for {row[0]} ({key}): {expected}; got {got}"
            )
        return False

    # --- units ---------------------------------------------------------------------------------

    def recorded(self, mapping: AffineMap) -> dict[tuple[int, int], tuple[str, str]]:
        """The units recorded for this map: (low, high) -> (checksum, worker)."""
        rows = self._db.execute("SELECT low, high, checksum, worker FROM units WHERE map = ?", (map_text(mapping),))
        return {(parse_decimal(lo), parse_decimal(hi)): (checksum, worker) for lo, hi, checksum, worker in rows}

    def result(self, unit: Unit, known: dict[int, CycleFound] | None = None) -> HuntResult:
        """The recorded result of ``unit``, checked against its checksum and the map (LedgerError otherwise).

        ``known``: cycles checked by exact iteration before (see units.result_from_json).
        """
        row = self._db.execute(
            "SELECT checksum, result FROM units WHERE map = ? AND low = ? AND high = ?", self._where(unit)
        ).fetchone()
        if row is None:
            raise LedgerError(f"{self.path}: expected a recorded unit {unit.low}..{unit.high}, got none")
        try:
            return result_from_json(unit, row[1], row[0], known)
        except UnitResultError as exc:
            raise LedgerError(f"{self.path}: unit {unit.low}..{unit.high}: {exc}") from None

    def record(self, done: UnitResult) -> bool:
        """Record a completed unit in one transaction; True when it was new.

        The same unit with the same checksum again changes nothing; with another, LedgerConflict.
        """
        where = self._where(done.unit)
        with self._db:
            cursor = self._db.execute(
                "INSERT OR IGNORE INTO units VALUES (?, ?, ?, ?, ?, ?, ?)",
                (*where, done.checksum, result_to_json(done.result), _now(), done.worker),
            )
            if cursor.rowcount == 1:
                return True
        (held,) = self._db.execute(
            "SELECT checksum FROM units WHERE map = ? AND low = ? AND high = ?", where
        ).fetchone()
        if held != done.checksum:
            raise LedgerConflict(
                f"{self.path}: unit {done.unit.low}..{done.unit.high}: expected checksum {held} as recorded, "
                f"got {done.checksum} (from {done.worker or 'this run'})",
                held,
            )
        return False

    def record_recheck(self, unit: Unit, worker: str, checksum: str, agreed: bool) -> None:
        """Record one rerun of a unit, in one transaction."""
        with self._db:
            self._db.execute(
                "INSERT INTO rechecks VALUES (?, ?, ?, ?, ?, ?, ?)",
                (*self._where(unit), worker, checksum, agreed, _now()),
            )

    def rechecks(self, mapping: AffineMap) -> list[Recheck]:
        """Every rerun recorded for this map, in the order they were recorded."""
        rows = self._db.execute(
            "SELECT low, high, worker, checksum, agreed FROM rechecks WHERE map = ? ORDER BY rowid",
            (map_text(mapping),),
        )
        return [Recheck(parse_decimal(lo), parse_decimal(hi), w, c, bool(a)) for lo, hi, w, c, a in rows]

    @staticmethod
    def _where(unit: Unit) -> tuple[str, str, str]:
        return map_text(unit.mapping), to_decimal(unit.low), to_decimal(unit.high)
