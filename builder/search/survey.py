"""A survey: what hunts of disjoint magnitude ranges of one map found, under one bound and limits.

A survey is built by ``cover`` (the range cut into chunks shared by worker
processes, merged by union so that the result does not depend on how many
there are) or read back from saved files (``load_survey``, ``merge_surveys``).
Saved surveys are JSON in the format named by ``FORMAT``, with the program
and version that wrote them and every parameter of the search (bound and
limits); every cycle in a file is checked by exact iteration when it is
read, and files that differ in any parameter or in the program version are
not merged.  Nothing here prints:
progress goes to a callback, and problems with saved files are
``SavedSurveyError`` (the file cannot be read as a survey) or
``SurveyMismatch`` (the files do not join), both ValueErrors.
"""

from __future__ import annotations

import json
import multiprocessing
import signal
import sys
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from builder import __version__
from builder.arith.dynamics import AffineMap, CycleFound
from builder.arith.integers import parse_decimal, show, to_decimal
from builder.search.definition import HuntResult, canonical_member, cycle_at, merge_results, order_key

__all__ = [
    "FORMAT",
    "Chunks",
    "CoverEnd",
    "SavedSurveyError",
    "Survey",
    "SurveyMismatch",
    "chunks",
    "cover",
    "load_survey",
    "merge_surveys",
    "save_survey",
    "starts_in",
]

FORMAT = "periplus-hunt/2"
#: The program named in saved files, with its version.
PROGRAM = "periplus"
#: Why a start may be left unresolved (builder.search.definition).
REASONS = ("steps", "magnitude", "work")
# Chunks: at most this many magnitudes each, and about this many per process.
_CHUNK_MAX = 1 << 16
_CHUNKS_PER_JOB = 16

_Task = tuple[AffineMap, int, int, int, int, int, bool]


class SavedSurveyError(ValueError):
    """A file cannot be read as a saved survey; the message names the file."""


class SurveyMismatch(ValueError):
    """Saved surveys that cannot be joined: another map, bound or limits, or overlapping ranges."""


def starts_in(lo: int, hi: int) -> int:
    """How many starts have magnitude in lo..hi (both signs; 0 once)."""
    return 2 * (hi - lo + 1) - (lo == 0)


@dataclass(slots=True)
class Survey:
    """Disjoint magnitude ranges covered for one map under one bound and limits, and what they gave."""

    map_id: str
    mapping: AffineMap
    bound: int
    max_steps: int
    max_bits: int
    max_work: int
    ranges: list[tuple[int, int]] = field(default_factory=list)
    cycles: dict[int, CycleFound] = field(default_factory=dict)
    reasons: dict[int, str] = field(default_factory=dict)  # unresolved start -> one of REASONS
    version: str = __version__  # of the program that searched

    def absorb(self, pieces: Iterable[HuntResult]) -> None:
        """Add the results of ranges disjoint from those already covered (ValueError on overlap)."""
        pieces = list(pieces)
        joined = merge_results([HuntResult(hi, {}, [], lo) for lo, hi in self.ranges] + pieces)
        for piece in pieces:
            for c, cycle in piece.cycles.items():
                self.cycles.setdefault(c, cycle)
            for s in piece.unresolved:
                self.reasons[s] = piece.reasons.get(s, "steps")
        self.ranges = [(p.low, p.bound) for p in joined]
        self.cycles = dict(sorted(self.cycles.items(), key=lambda kv: order_key(kv[0])))
        self.reasons = {s: self.reasons[s] for s in sorted(self.reasons, key=order_key)}

    def pieces(self) -> list[HuntResult]:
        """The covered ranges as results, each with its unresolved starts (the cycles go with the first)."""
        out = []
        for i, (lo, hi) in enumerate(self.ranges):
            starts = [s for s in self.reasons if lo <= abs(s) <= hi]
            out.append(
                HuntResult(hi, dict(self.cycles) if i == 0 else {}, starts, lo, {s: self.reasons[s] for s in starts})
            )
        return out

    def gaps(self) -> list[tuple[int, int]]:
        """Magnitude ranges of 0..bound not covered."""
        out = []
        at = 0
        for lo, hi in self.ranges:
            if lo > at:
                out.append((at, lo - 1))
            at = hi + 1
        if at <= self.bound:
            out.append((at, self.bound))
        return out

    def starts(self) -> int:
        """How many starts the covered ranges hold."""
        return sum(starts_in(lo, hi) for lo, hi in self.ranges)


# --- running ---------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class CoverEnd:
    """How ``cover`` ended (not to be confused with a coverage claim of the catalogue, which a survey may back).

    ``interrupted``: Ctrl-C stopped it, and the survey holds only the contiguous prefix of chunks done.
    ``met_past_prefix``: cycles met in chunks finished past that prefix (not part of the survey), in start order.
    """

    interrupted: bool
    met_past_prefix: dict[int, CycleFound]


def _quiet(done: int) -> None:
    pass


def _ignore_sigint() -> None:
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _work(task: _Task) -> HuntResult:
    # Imported with numpy when a hunt runs: the program's other commands (a build) do without.
    from builder.search.engine import hunt_range

    mapping, lo, hi, max_steps, max_bits, max_work, compiled = task
    return hunt_range(mapping, lo, hi, max_steps, max_bits, max_work, compiled=compiled)


def _engine_for(survey: Survey, low: int, high: int, pooled: bool) -> bool:
    """Whether the chunks of low..high run in the compiled kernel (the engine's rule, for the whole range: its
    chunks are smaller); when they do and run in a pool, the kernel is loaded here first, for the workers to
    inherit instead of each loading it."""
    from builder.search.engine import COMPILED_FROM, hunt_range

    compiled = high - low + 1 >= COMPILED_FROM or "numba" in sys.modules  # already paid for: always faster
    if compiled and pooled:
        hunt_range(survey.mapping, 0, 64, survey.max_steps, survey.max_bits, survey.max_work, compiled=True)
    return compiled


def _indexed(item: tuple[int, _Task]) -> tuple[int, HuntResult]:
    return item[0], _work(item[1])


class Chunks:
    """The magnitude ranges low..high is cut into for ``jobs`` processes, made as they are asked for.

    A hunt to 10^14 has billions of chunks: none is made before it is needed, so memory does not
    depend on the bound.
    """

    def __init__(self, low: int, high: int, jobs: int) -> None:
        count = high - low + 1
        self.low, self.high = low, high
        self.size = max(1, min(_CHUNK_MAX, -(-count // (jobs * _CHUNKS_PER_JOB))))
        self._count = max(0, -(-count // self.size))

    def __len__(self) -> int:
        return self._count

    def __getitem__(self, i: int) -> tuple[int, int]:
        if i < 0:
            i += self._count
        if not 0 <= i < self._count:
            raise IndexError(i)
        lo = self.low + i * self.size
        return lo, min(self.high, lo + self.size - 1)

    def __iter__(self) -> Iterator[tuple[int, int]]:
        return (self[i] for i in range(self._count))


def chunks(low: int, high: int, jobs: int) -> Chunks:
    """The magnitude ranges low..high is cut into for ``jobs`` processes (made lazily)."""
    return Chunks(low, high, jobs)


def _contiguous(done: dict[int, HuntResult], next_index: int) -> list[HuntResult]:
    """Take from ``done`` the results that continue the prefix at ``next_index``, in order."""
    out = []
    while next_index in done:
        out.append(done.pop(next_index))
        next_index += 1
    return out


def cover(survey: Survey, low: int, high: int, jobs: int, progress: Callable[[int], None] | None = None) -> CoverEnd:
    """Hunt the magnitudes low..high into ``survey`` with ``jobs`` processes; on Ctrl-C keep the chunks done.

    The range is cut into ``chunks``, whose results merge by union, so the survey does not depend on
    ``jobs``.  On Ctrl-C only the contiguous prefix of finished chunks is kept (see CoverEnd).
    ``progress`` is called with the number of starts decided so far: 0 first, then after each chunk.
    """
    if progress is None:
        progress = _quiet
    parts = chunks(low, high, jobs)
    compiled = _engine_for(survey, low, high, pooled=jobs > 1 and len(parts) > 1) if len(parts) else False
    tasks = ((survey.mapping, lo, hi, survey.max_steps, survey.max_bits, survey.max_work, compiled) for lo, hi in parts)
    # Results of the chunks done so far: the contiguous prefix from the first chunk, and those
    # finished out of order (few: the pool hands chunks out in order).
    prefix: list[HuntResult] = []
    done: dict[int, HuntResult] = {}
    finished = 0
    interrupted = False
    try:
        progress(0)
        if jobs == 1 or len(parts) == 1:
            for i, task in enumerate(tasks):
                done[i] = _work(task)
                prefix += _contiguous(done, len(prefix))
                finished += starts_in(*parts[i])
                progress(finished)
        else:
            # fork where the platform has it: children start at once and need not re-import the
            # entry script (spawn would re-run one that lacks an ``if __name__ == "__main__"`` guard).
            method = "fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn"
            context = multiprocessing.get_context(method)
            with context.Pool(min(jobs, len(parts)), initializer=_ignore_sigint) as pool:
                try:
                    for i, result in pool.imap_unordered(_indexed, enumerate(tasks)):
                        done[i] = result
                        prefix += _contiguous(done, len(prefix))
                        finished += starts_in(*parts[i])
                        progress(finished)
                except BaseException:
                    pool.terminate()
                    raise
    except KeyboardInterrupt:
        interrupted = True
    survey.absorb(prefix)
    extra: dict[int, CycleFound] = {}
    for result in done.values():
        for c, cycle in result.cycles.items():
            if c not in survey.cycles:
                extra.setdefault(c, cycle)
    return CoverEnd(interrupted, dict(sorted(extra.items(), key=lambda kv: order_key(kv[0]))))


# --- saving and merging ----------------------------------------------------------------------


def save_survey(survey: Survey, path: Path) -> None:
    """Write ``survey`` to ``path`` as JSON (FORMAT)."""
    data = {
        "format": FORMAT,
        "program": {"name": PROGRAM, "version": survey.version},
        "map": {
            "id": survey.map_id,
            "modulus": to_decimal(survey.mapping.modulus),
            "branches": [
                {"residue": i, "multiplier": to_decimal(a), "increment": to_decimal(b)}
                for i, (a, b) in enumerate(survey.mapping.branches)
            ],
        },
        "bound": to_decimal(survey.bound),
        "limits": {"max_steps": survey.max_steps, "max_bits": survey.max_bits, "max_work": survey.max_work},
        "covered": [{"from": to_decimal(lo), "to": to_decimal(hi)} for lo, hi in survey.ranges],
        "cycles": [
            {
                "canonical": to_decimal(c),
                "length": len(cycle.members),
                "members": [to_decimal(v) for v in cycle.members],
            }
            for c, cycle in survey.cycles.items()
        ],
        "unresolved": [{"start": to_decimal(s), "reason": r} for s, r in survey.reasons.items()],
    }
    path.write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")


def load_survey(path: Path) -> Survey:
    """Read a saved survey, checking every cycle in it by exact iteration (SavedSurveyError if it is none)."""

    def bad(why: str) -> SavedSurveyError:
        return SavedSurveyError(f"{path}: not a saved hunt result: {why}")

    try:
        data = json.loads(path.read_text(encoding="utf-8"), parse_constant=_no_constant)
    except OSError as exc:
        raise SavedSurveyError(f"{path}: cannot read: {exc.strerror}") from None
    except (ValueError, UnicodeDecodeError) as exc:
        raise bad(f"invalid JSON ({exc})") from None
    except RecursionError:
        raise bad("invalid JSON (nested too deeply)") from None
    try:
        if data["format"] != FORMAT:
            raise bad(f"expected format '{FORMAT}', got {data['format']!r}")
        survey = _survey_of(data)
        if survey.bound < 0 or min(survey.max_steps, survey.max_bits, survey.max_work) < 1:
            raise bad("expected a bound of at least 0 and limits of at least 1")
        pieces = [HuntResult(parse_decimal(r["to"]), {}, [], parse_decimal(r["from"])) for r in data["covered"]]
        for piece in pieces:
            if not 0 <= piece.low <= piece.bound <= survey.bound:
                raise bad(
                    f"covered range {show(piece.low)}..{show(piece.bound)}: expected 0 <= from <= to <= the bound"
                )
        for item in data["cycles"]:
            members = tuple(parse_decimal(v) for v in item["members"])
            canonical = parse_decimal(item["canonical"])
            if not members or members[0] != canonical or canonical_member(members) != canonical:
                raise bad(f"cycle {show(canonical)}: members must start at the least |member|")
            if len(set(members)) != len(members):
                raise bad(f"cycle {show(canonical)}: members repeat; a cycle is saved once round, at its least period")
            cycle = cycle_at(survey.mapping, canonical, len(members))
            if cycle.members != members or int(item["length"]) != len(members):
                raise bad(f"cycle {show(canonical)}: the members are not an orbit of the map")
            pieces[0].cycles[canonical] = cycle
        for item in data["unresolved"]:
            s = parse_decimal(item["start"])
            reason = str(item["reason"])
            home = [p for p in pieces if p.low <= abs(s) <= p.bound]
            if not home or reason not in REASONS:
                raise bad(f"unresolved start {show(s)}: outside the covered ranges, or an unknown reason")
            home[0].unresolved.append(s)
            home[0].reasons[s] = reason
        survey.absorb(pieces)
    except SavedSurveyError:
        raise
    except (KeyError, TypeError, ValueError, IndexError, AssertionError, OverflowError) as exc:
        raise bad(f"{type(exc).__name__}: {exc}") from None
    return survey


def _no_constant(name: str) -> Any:
    """JSON's extensions NaN and Infinity are no numbers a saved survey may hold."""
    raise ValueError(f"expected a number, got {name}")


def _survey_of(data: Any) -> Survey:
    """The map, bound and limits of a saved survey, with nothing covered yet (KeyError, TypeError...)."""
    program = data["program"]
    if not isinstance(program, dict) or program.get("name") != PROGRAM or not isinstance(program.get("version"), str):
        raise ValueError(f"expected the program that wrote it, as {{name: {PROGRAM}, version: ...}}, got {program!r}")
    spec = data["map"]
    branches = {
        int(b["residue"]): (parse_decimal(b["multiplier"]), parse_decimal(b["increment"])) for b in spec["branches"]
    }
    modulus = parse_decimal(spec["modulus"])
    return Survey(
        str(spec["id"]),
        AffineMap(modulus, tuple(branches[r] for r in range(modulus))),
        parse_decimal(data["bound"]),
        _whole(data["limits"]["max_steps"]),
        _whole(data["limits"]["max_bits"]),
        _whole(data["limits"]["max_work"]),
        version=program["version"],
    )


def _whole(value: Any) -> int:
    """A whole number written as a JSON integer (not a float, a string or a boolean)."""
    if not isinstance(value, int) or isinstance(value, bool):
        raise TypeError(f"expected an integer, got {value!r}")
    return value


def merge_surveys(paths: list[Path]) -> Survey:
    """Read saved surveys of disjoint ranges and join them into one (SavedSurveyError, SurveyMismatch)."""
    surveys = [load_survey(p) for p in paths]
    first = surveys[0]
    for path, other in zip(paths[1:], surveys[1:], strict=True):
        for what, mine, theirs in (
            ("program version", first.version, other.version),
            ("map", first.map_id, other.map_id),
            ("map definition", first.mapping, other.mapping),
            ("bound", first.bound, other.bound),
            ("max_steps", first.max_steps, other.max_steps),
            ("max_bits", first.max_bits, other.max_bits),
            ("max_work", first.max_work, other.max_work),
        ):
            if mine != theirs:
                raise SurveyMismatch(f"{path} has a different {what} from {paths[0]} ({theirs} against {mine})")
        try:
            first.absorb(other.pieces())
        except ValueError as exc:
            raise SurveyMismatch(f"{path}: {exc}") from None
    return first
