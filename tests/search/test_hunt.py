"""The cycle hunt: the vectorised engine against a plain reference, published cycles, and `periplus hunt`.

Fixed values name their source beside them ("common practice, no source" for facts anyone can
re-derive by hand, "from memory" for values recalled without a source at hand).  The reference
implementation below is written directly from the definition in builder.search.definition, with a dictionary of
seen values in place of Brent's method, so that it shares no code with either engine.
"""

from __future__ import annotations

import argparse
import datetime
import io
import itertools
import json
import re
import shutil
from pathlib import Path

import pytest

import builder
from builder.arith.dynamics import AffineMap, CycleFound
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.catalogue.verify import verify_catalogue
from builder.commands import hunt as huntcli
from builder.commands.main import execute
from builder.search import definition, survey
from builder.search import engine as _fastiter
from builder.search.definition import HuntResult, hunt, merge_results

ROOT = Path(__file__).resolve().parents[2]
CATALOGUE = ROOT / "catalogue"


def qx_plus_d(q: int, d: int) -> AffineMap:
    """The shortcut map T(n) = n/2 or (qn + d)/2."""
    return AffineMap(2, ((1, 0), (q, d)))


MAPS = {
    "3x+1": qx_plus_d(3, 1),
    "3x-1": qx_plus_d(3, -1),
    "3x+5": qx_plus_d(3, 5),
    "3x-11": qx_plus_d(3, -11),
    "5x+1": qx_plus_d(5, 1),
    "181x+1": qx_plus_d(181, 1),
    # Klamkin's permutation, as in builder/tests of test_literature (Klamkin 1963, read via bibliography).
    "mod-3": AffineMap(3, ((2, 0), (4, -1), (4, 1))),
    # Negative multipliers (common practice, no source: -3n+1 is even for odd n, -5n-1 likewise).
    "-3x+1": qx_plus_d(-3, 1),
    "mod-4-neg": AffineMap(4, ((-1, 0), (-5, 1), (3, 2), (-7, 1))),
}


# --- a plain reference, from the definition ----------------------------------------------------


def _reference_fate(mapping: AffineMap, s: int, max_steps: int, max_bits: int) -> tuple[str, object]:
    seen = {s}
    v = s
    for _ in range(max_steps):
        v = mapping(v)
        if v == s:
            return "cycle", _cycle_from(mapping, s)
        if abs(v) < abs(s) or (s < 0 and v == -s):
            return "resolved", None
        if v.bit_length() > max_bits:
            return "unresolved", "magnitude"
        if v in seen:
            return "cycle", _cycle_from(mapping, v)
        seen.add(v)
    return "unresolved", "steps"


def _cycle_from(mapping: AffineMap, v: int) -> tuple[int, ...]:
    members = [v]
    while (w := mapping(members[-1])) != v:
        members.append(w)
    least = min(members, key=lambda x: (abs(x), x < 0))
    i = members.index(least)
    return tuple(members[i:] + members[:i])


def _reference_hunt(
    mapping: AffineMap, low: int, high: int, max_steps: int, max_bits: int
) -> tuple[dict[int, tuple[int, ...]], dict[int, str]]:
    cycles: dict[int, tuple[int, ...]] = {}
    unresolved: dict[int, str] = {}
    for magnitude in range(low, high + 1):
        for s in (magnitude, -magnitude) if magnitude else (0,):
            kind, value = _reference_fate(mapping, s, max_steps, max_bits)
            if kind == "cycle":
                assert isinstance(value, tuple)
                cycles[value[0]] = value
            elif kind == "unresolved":
                assert isinstance(value, str)
                unresolved[s] = value
    return cycles, unresolved


def _as_reference(result: HuntResult) -> tuple[dict[int, tuple[int, ...]], dict[int, str]]:
    assert all(cycle.members[0] == c for c, cycle in result.cycles.items())
    assert sorted(result.reasons) == sorted(result.unresolved)
    return {c: cy.members for c, cy in result.cycles.items()}, dict(result.reasons)


LIMITS = [(1, 64), (7, 64), (40, 20), (300, 60), (2000, 100), (5000, 300)]
ENGINE_SETTINGS = [
    {},  # the defaults
    {"batch": 16, "lane_steps": 9, "compiled": True},  # tiny batches, early hand-off
    {"batch": 16, "lane_steps": 9, "compiled": False},
    {"batch": 128, "lane_steps": 100_000, "compiled": True},  # starts stay in the kernel as long as allowed
    {"batch": 128, "lane_steps": 100_000, "compiled": False},
    {"sieve": False, "compiled": True},  # every start followed (builder.search.kernel: the sieve changes no fate)
]


@pytest.mark.parametrize("name", sorted(MAPS))
@pytest.mark.parametrize("max_steps, max_bits", LIMITS)
def test_engines_agree_with_the_reference_start_by_start(name: str, max_steps: int, max_bits: int) -> None:
    # The definition in builder.search.definition, applied literally (see _reference_fate).
    mapping = MAPS[name]
    high = 120
    expected = _reference_hunt(mapping, 0, high, max_steps, max_bits)
    result = hunt(mapping, high, max_steps, max_bits)
    assert _as_reference(result) == expected
    for cycle in result.cycles.values():
        assert cycle.word == tuple(v % mapping.modulus for v in cycle.members)
    for settings in ENGINE_SETTINGS:
        got = _fastiter.hunt_range(mapping, 0, high, max_steps, max_bits, **settings)  # type: ignore[arg-type]
        assert _as_reference(got) == expected, settings
        reference = hunt(mapping, high, max_steps, max_bits)
        assert got == reference
        assert got.steps == reference.steps, settings  # the total stopping time is the definition's


@pytest.mark.parametrize("name", ["3x+5", "3x-11", "mod-3", "-3x+1"])
def test_cycle_detection_is_exact_at_every_step_limit(name: str) -> None:
    # Around the step limit, an orbit that enters a cycle is found exactly when its first repeat
    # comes within max_steps steps (the reference looks for repeats among all values seen).
    mapping = MAPS[name]
    for max_steps in range(0, 60):
        expected = _reference_hunt(mapping, 0, 40, max_steps, 64)
        assert _as_reference(hunt(mapping, 40, max_steps, 64)) == expected, max_steps
        got = _fastiter.hunt_range(mapping, 0, 40, max_steps, 64, batch=8, lane_steps=5)
        assert _as_reference(got) == expected, max_steps


@pytest.mark.parametrize("name", ["3x+1", "3x-11", "-3x+1", "mod-4-neg"])
def test_engines_agree_near_the_int64_limit(name: str) -> None:
    # Starts around 2^60 and around the overflow bound: lanes leave the vectorised path within a
    # few steps and are finished exactly; the answers must not change.
    mapping = MAPS[name]
    bound = _fastiter.int64_bound(mapping)
    for centre in (1 << 60, bound):
        low, high = centre - 12, centre + 12
        expected = _reference_hunt(mapping, low, high, 200, 200)
        got = _fastiter.hunt_range(mapping, low, high, 200, 200, batch=8)
        assert _as_reference(got) == expected
        assert got == hunt(mapping, high, 200, 200, low=low)


def test_maps_with_constants_too_large_for_int64_are_hunted_exactly() -> None:
    # Common practice, no source: 3n + d is even for odd n when d is odd, so each d gives a map.
    for d in ((1 << 62) + 1, (1 << 61) + 1, (1 << 1500) - 3):
        mapping = qx_plus_d(3, d)
        expected = _reference_hunt(mapping, 0, 30, 3000, 1600)
        assert _as_reference(_fastiter.hunt_range(mapping, 0, 30, 3000, 1600)) == expected


def test_the_vectorised_path_decides_ordinary_starts(monkeypatch: pytest.MonkeyPatch) -> None:
    # 3x+1 starts up to 5,000 all fall below themselves within a few hundred steps (3x+1 is verified
    # far beyond this range: Oliveira e Silva 1999 via literature.md; the negative side ends in the
    # cycles through -1, -5, -17, Lagarias 1985, memory): none needs the exact path.
    calls: list[int] = []
    real = definition.settle

    def counting(mapping: AffineMap, start: int, max_steps: int, max_bits: int) -> object:
        calls.append(start)
        return real(mapping, start, max_steps, max_bits)

    monkeypatch.setattr(definition, "settle", counting)
    result = _fastiter.hunt_range(MAPS["3x+1"], 0, 5000, 100_000, 4096)
    assert calls == []
    assert list(result.cycles) == [0, 1, -1, -5, -17]
    assert result.unresolved == []


def test_a_start_reaching_an_unresolved_start_is_not_listed() -> None:
    # Common practice, no source: under 5x+1, 1 -> 3 -> 8 -> 4 -> 2 -> 1, so with 3 steps 1 is
    # unresolved while 2 -> 1 falls below 2 at once and is not listed.
    result = _fastiter.hunt_range(MAPS["5x+1"], 0, 2, 3, 64)
    assert 1 in result.unresolved
    assert 2 not in result.unresolved


def test_chunked_results_merge_exactly() -> None:
    mapping = MAPS["3x+5"]
    whole = _fastiter.hunt_range(mapping, 0, 400, 1000, 64)
    for cuts in ((0, 401), (0, 1, 401), (0, 7, 150, 151, 399, 401), tuple(range(0, 402, 37)) + (401,)):
        parts = [_fastiter.hunt_range(mapping, a, b - 1, 1000, 64) for a, b in zip(cuts, cuts[1:], strict=False)]
        assert merge_results(reversed(parts)) == [whole]
    with pytest.raises(ValueError):
        merge_results([whole, _fastiter.hunt_range(mapping, 400, 410, 1000, 64)])
    gapped = merge_results(
        [_fastiter.hunt_range(mapping, 0, 9, 1000, 64), _fastiter.hunt_range(mapping, 20, 30, 1000, 64)]
    )
    assert [(p.low, p.bound) for p in gapped] == [(0, 9), (20, 30)]


# --- published cycles ------------------------------------------------------------------------


def test_3x_plus_1_engine_to_10_000() -> None:
    # Lagarias 1985 via literature.md (status memory): the cycles of 3x+1 on Z through
    # 0, 1, -1, -5, -17, of shortcut lengths 1, 2, 1, 3, 11; no others this small.
    result = _fastiter.hunt_range(MAPS["3x+1"], 0, 10**4, 100_000, 4096)
    assert list(result.cycles) == [0, 1, -1, -5, -17]
    assert [len(c.members) for c in result.cycles.values()] == [1, 2, 1, 3, 11]
    assert result.unresolved == []


# --- the command -------------------------------------------------------------------------------


def _parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(prog="periplus")
    sub = parser.add_subparsers(dest="command", required=True)
    huntcli.register(sub)
    return parser


def run(capsys: pytest.CaptureFixture[str], *argv: str | Path) -> tuple[int, str, str]:
    args = _parser().parse_args(["hunt", *map(str, argv)])
    code = execute(args)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _table_rows(out: str, title: str) -> list[list[str]]:
    lines = out.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith(title))
    rows = []
    for line in lines[start + 2 :]:
        if not line.startswith("  "):
            break
        rows.append(line.split())
    return rows


def test_command_3x_plus_1_to_10_000(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    # Lagarias 1985 via literature.md (status memory): exactly the cycles through 0, 1, -1, -5, -17.
    code, out, err = run(capsys, "3x-plus-1", "--bound", "10000", "--jobs", "1", "--save", tmp_path / "r.json")
    assert code == 0 and err == ""
    rows = _table_rows(out, "cycles with least |member| at most 10,000: 5")
    assert [r[0] for r in rows] == ["0", "1", "-1", "-5", "-17"]
    assert [r[1] for r in rows] == ["1", "2", "1", "3", "11"]  # shortcut lengths, same source
    assert [r[2] for r in rows] == ["0", "1", "1", "2", "7"]  # odd steps, same source
    assert all(r[5] == "catalogued" for r in rows)
    assert "unresolved starts: none" in out
    assert out.splitlines()[-2].startswith("covered every start with |n| in 0..10,000 (20,001 starts)")
    saved = json.loads((tmp_path / "r.json").read_text())
    assert [c["canonical"] for c in saved["cycles"]] == ["0", "1", "-1", "-5", "-17"]
    assert saved["cycles"][4]["members"][:3] == ["-17", "-25", "-37"]  # (3(-17)+1)/2 = -25, common practice
    assert saved["covered"] == [{"from": "0", "to": "10000"}]


def test_command_3x_plus_5_to_400(capsys: pytest.CaptureFixture[str]) -> None:
    # Lagarias 1990 Table 3.1 (from memory): positive least members 1, 5, 19, 23, 187, 347;
    # Belaga-Mignotte 2006 Table 1 via literature.md (secondary): the primitive ones 1, 19, 23,
    # 187, 347 of lengths 3, 5, 5, 27, 27.  literature.md: also -5 and 5 times each 3x+1 cycle.
    code, out, _ = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    assert code == 0
    rows = {int(r[0]): r for r in _table_rows(out, "cycles with least |member| at most 400")}
    assert sorted(c for c, r in rows.items() if int(r[3]) > 0) == [1, 5, 19, 23, 187, 347]
    assert [rows[c][1] for c in (1, 19, 23, 187, 347)] == ["3", "5", "5", "27", "27"]
    assert sorted(rows) == sorted([0, 1, 5, -5, 19, 23, -25, -85, 187, 347])
    assert "cycles beyond the bound: none" in out


def test_cycles_beyond_the_bound_are_reported_apart(capsys: pytest.CaptureFixture[str]) -> None:
    # With bound 10, 3x+5 starts reach cycles whose least members (19, 23, 187, 347 in the test
    # above, from Lagarias 1990 / Belaga-Mignotte) lie beyond it; 7 -> 13 -> 22 -> 11 -> 19 by hand.
    code, out, _ = run(capsys, "3x-plus-5", "--bound", "10", "--jobs", "1")
    assert code == 0
    within = [int(r[0]) for r in _table_rows(out, "cycles with least |member| at most 10")]
    beyond = [int(r[0]) for r in _table_rows(out, "cycles beyond the bound")]
    assert within == [0, 1, 5, -5]
    assert 19 in beyond
    assert set(beyond) <= {19, 23, -25, -85, 187, 347}


def test_jobs_do_not_change_the_output(capsys: pytest.CaptureFixture[str]) -> None:
    one = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    two = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "2")
    assert one == two and one[0] == 0
    one = run(capsys, "mod-3-permutation", "--bound", "300", "--jobs", "1", "--max-steps", "500", "--max-bits", "100")
    three = run(capsys, "mod-3-permutation", "--bound", "300", "--jobs", "3", "--max-steps", "500", "--max-bits", "100")
    assert one == three and one[0] == 0
    assert "unresolved starts: " in one[1] and "unresolved starts: none" not in one[1]


def test_split_and_merged_runs_equal_one_run(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    limits = ("--max-steps", "2000", "--max-bits", "120")
    whole = run(capsys, "5x-plus-1", "--bound", "400", "--jobs", "1", *limits)
    files = []
    for low, high in ((0, 150), (151, 260), (261, 400)):
        path = tmp_path / f"{low}.json"
        code, _, _ = run(
            capsys,
            "5x-plus-1",
            "--bound",
            "400",
            "--from",
            str(low),
            "--to",
            str(high),
            "--jobs",
            "1",
            "--save",
            path,
            *limits,
        )
        assert code == 0
        files.append(path)
    merged = run(capsys, "--merge", files[2], files[0], files[1])
    assert merged == whole
    assert "unresolved starts: " in whole[1] and "--save FILE keeps the full list" in whole[1]
    # A gap is named; an overlap is refused.
    code, out, _ = run(capsys, "--merge", files[0], files[2])
    assert code == 0 and out.splitlines()[-1].endswith("; not covered: 151..260")
    code, _, err = run(capsys, "--merge", files[0], files[0])
    assert code == 2 and "overlap" in err
    other = tmp_path / "other.json"
    run(capsys, "5x-plus-1", "--bound", "400", "--from", "151", "--to", "260", "--save", other, "--max-steps", "99")
    code, _, err = run(capsys, "--merge", files[0], other)
    assert code == 2 and "max_steps" in err


def test_an_interrupted_run_can_be_resumed(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    whole = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    first = tmp_path / "first.json"
    with pytest.MonkeyPatch.context() as mp:
        _interrupt_on_call(mp, 3)
        code, _, _ = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1", "--save", first)
    assert code == 130
    covered = json.loads(first.read_text())["covered"]
    assert len(covered) == 1 and covered[0]["from"] == "0"
    rest = tmp_path / "rest.json"
    after = str(int(covered[0]["to"]) + 1)
    assert run(capsys, "3x-plus-5", "--bound", "400", "--from", after, "--jobs", "1", "--save", rest)[0] == 0
    assert run(capsys, "--merge", first, rest) == whole


def _interrupt_on_call(mp: pytest.MonkeyPatch, n: int) -> None:
    real = survey._work
    calls = []

    def work(task: tuple[AffineMap, int, int, int, int]) -> HuntResult:
        calls.append(task)
        if len(calls) == n:
            raise KeyboardInterrupt
        return real(task)

    mp.setattr(survey, "_work", work)


def test_ctrl_c_reports_what_was_covered_and_exits_130(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # The third chunk of the run raises KeyboardInterrupt, as Ctrl-C would: the first two are
    # covered, the cycles they met are reported, and the rest of the range is named as not covered.
    chunks = survey.chunks(0, 400, 1)
    assert len(chunks) >= 4 and chunks[0][0] == 0
    done = chunks[1][1]
    _interrupt_on_call(monkeypatch, 3)
    code, out, err = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    assert code == 130
    assert "Traceback" not in out + err
    assert f"interrupted: only magnitudes 0..{done} were fully covered" in out
    assert f"covered every start with |n| in 0..{done} ({2 * done + 1} starts) of bound 400" in out
    summary = [line for line in out.splitlines() if line.startswith("covered every start")]
    assert len(summary) == 1 and summary[0].endswith(f"; not covered: {done + 1}..400")
    rows = [int(r[0]) for r in _table_rows(out, "cycles with least |member| at most 400")]
    # Those of the 3x+5 cycles of the test above (Lagarias 1990, from memory) with least |member|
    # <= done, plus any met from starts up to done (those must be 3x+5 cycles of that list too).
    listed = [0, 1, 5, -5, 19, 23, -25, -85, 187, 347]
    assert [c for c in listed if abs(c) <= done] == [c for c in rows if abs(c) <= done]
    assert set(rows) <= set(listed)
    assert rows == list(_fastiter.hunt_range(MAPS["3x+5"], 0, done, 100_000, 4096).cycles)
    assert err.strip() == "periplus: interrupted"


def test_a_hunt_to_10_to_the_14_makes_its_chunks_as_it_goes(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # A bound of 10^14 cut into chunks of at most 2^16 magnitudes makes over 10^9 chunks (arithmetic):
    # none may be made before it is needed, or memory runs out before the first start is decided.
    parts = survey.chunks(0, 10**14, 2)
    assert len(parts) == -(-(10**14 + 1) // parts.size) > 10**9
    assert (parts[0], parts[1]) == ((0, parts.size - 1), (parts.size, 2 * parts.size - 1))
    assert parts[-1] == ((len(parts) - 1) * parts.size, 10**14)
    assert list(itertools.islice(parts, 2)) == [parts[0], parts[1]]
    # The run itself: Ctrl-C at the third chunk, as in the test below; the first two are covered.
    _interrupt_on_call(monkeypatch, 3)
    code, out, err = run(capsys, "3x-plus-5", "--bound", str(10**14), "--jobs", "1")
    assert code == 130 and "Traceback" not in out + err
    assert f"interrupted: only magnitudes 0..{2 * parts.size - 1:,} were fully covered" in out


def test_ctrl_c_before_the_first_start_says_nothing_was_covered(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Ctrl-C while the catalogue is still being read: no start was covered, and the shared
    # handler says so in the hunt's own words (common practice, no source: 130 = 128 + SIGINT).
    def interrupted(*args: object, **kwargs: object) -> None:
        raise KeyboardInterrupt

    monkeypatch.setattr(huntcli, "verify_catalogue", interrupted)
    code, out, err = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    assert (code, out) == (130, "")
    assert err == "periplus: interrupted before any start was covered\n"


def test_no_progress_output_when_stderr_is_not_a_terminal(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(capsys, "3x-plus-1", "--bound", "3000", "--jobs", "1")
    assert code == 0 and err == ""


def test_progress_goes_to_a_terminal(monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]) -> None:
    class Terminal(io.StringIO):
        def isatty(self) -> bool:
            return True

    screen = Terminal()
    monkeypatch.setattr("sys.stderr", screen)
    args = _parser().parse_args(["hunt", "3x-plus-1", "--bound", "3000", "--jobs", "1"])
    assert args.run(args) == 0
    shown = screen.getvalue()
    assert "\r0/6,001 starts" in shown and "6,001/6,001 starts" in shown and " left" in shown
    assert "6,001/6,001" not in capsys.readouterr().out


def test_catalogued_and_new_cycles_and_drafts(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    copy = tmp_path / "catalogue"
    shutil.copytree(CATALOGUE, copy)
    removed = copy / "cycles" / "3x-plus-5" / "187.yaml"
    removed.unlink()
    # The claims' basins name the cycle through 187: without its entry they would not verify.
    claims = copy / "maps" / "3x-plus-5.yaml"
    claims.write_text(re.sub(r"    basins:\n(      - .*\n)*    unknown: \d+\n", "", claims.read_text()))
    code, out, _ = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1", "--catalogue", copy, "--drafts", copy)
    assert code == 0
    rows = {int(r[0]): r[5:] for r in _table_rows(out, "cycles with least |member| at most 400")}
    assert rows[187] == ["new"]
    assert rows[347] == ["catalogued", "(347)"]
    assert f"wrote draft {removed}" in out
    text = removed.read_text()
    members = _fastiter.hunt_range(MAPS["3x+5"], 187, 187, 1000, 64).cycles[187].members
    assert text.splitlines()[:4] == ["map: 3x-plus-5", "start: 187", text.splitlines()[2], "length: 27"]
    assert text.splitlines()[2].startswith('word: "1')  # 187 is odd: its first step is an odd one
    assert f"members: [{', '.join(map(str, members))}]" in text
    assert '  found_by: "FILL IN: who found it"' in text
    assert f"  found_on: {datetime.date.today().isoformat()}" in text
    assert "|n| in 0..400" in text and "at most 100,000 steps" in text
    removed.write_text(text.replace("FILL IN: who found it", "A. Contributor"))
    report = verify_catalogue(copy)
    assert report.ok, [str(p) for p in report.problems]
    assert 187 in [c.canonical for c in report.catalogue.cycles["3x-plus-5"]]
    # The shipped catalogue has every cycle of this hunt.
    code, out, _ = run(capsys, "3x-plus-5", "--bound", "400", "--jobs", "1")
    assert ", 0 new, " in out


def test_draft_text_of_a_wide_modulus_map_lists_the_word() -> None:
    # Common practice, no source: 0 is a fixed point of any map whose branch 0 has increment 0.
    mapping = AffineMap(11, tuple((1, -i) for i in range(11)))
    cycle = CycleFound((0,), (0,))
    assert mapping(0) == 0
    text = entry_text("m", cycle, 11, "someone", datetime.date(2020, 1, 2).isoformat(), "test")
    assert "word: [0]\n" in text and "found_on: 2020-01-02" in text
    assert cycle_file_id(-17) == "minus-17" and cycle_file_id(0) == "0"


@pytest.mark.parametrize(
    "argv, fragment",
    [
        (["no-such-map", "--bound", "10"], "no map 'no-such-map'"),
        (["3x-plus-1", "--bound", "10", "--from", "5", "--to", "3"], "--from <= --to"),
        (["3x-plus-1", "--bound", "10", "--to", "11"], "--to <= --bound"),
        (["3x-plus-1"], "--bound"),
    ],
)
def test_usage_errors_exit_2(capsys: pytest.CaptureFixture[str], argv: list[str], fragment: str) -> None:
    code, _, err = run(capsys, *argv)
    assert code == 2 and fragment in err and "Traceback" not in err


def test_a_catalogue_that_does_not_verify_exits_1(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    copy = tmp_path / "catalogue"
    shutil.copytree(CATALOGUE, copy)
    path = copy / "cycles" / "3x-plus-1" / "1.yaml"
    # Common practice, no source: 3 is not on the 3x+1 cycle (1, 2): T(3) = 5, T(5) = 8, ...
    path.write_text(path.read_text().replace("start: 1", "start: 3"))
    code, out, _ = run(capsys, "3x-plus-1", "--bound", "10", "--catalogue", copy)
    assert code == 1
    assert "1.yaml" in out and "does not verify" in out


def test_the_periplus_command_line_runs_the_hunt(capsys: pytest.CaptureFixture[str]) -> None:
    from builder.commands import main

    direct = run(capsys, "3x-plus-1", "--bound", "100", "--jobs", "1")
    assert main(["hunt", "3x-plus-1", "--bound", "100", "--jobs", "1"]) == 0
    assert capsys.readouterr().out == direct[1]
    assert main(["hunt", "no-such-map", "--bound", "1"]) == 2


# --- saved files are checked in full before they are trusted (issue 12, item 6) ---------------------


def _mutated(data: dict, case: str) -> str:
    """The saved JSON of a real hunt, with one thing wrong (each a finding of issue 12)."""
    if case == "range beyond the bound":
        data["covered"][0]["to"] = str(10**6)
    elif case == "negative from":
        data["covered"][0]["from"] = "-5"
    elif case == "a cycle twice round":
        # 1 -> 2 -> 1 is the 3x+1 cycle of length 2 (Lagarias 1985 via literature.md); written twice round.
        data["cycles"] = [{"canonical": "1", "length": 4, "members": ["1", "2", "1", "2"]}]
    elif case == "negative max_steps":
        data["limits"]["max_steps"] = -5
    elif case == "a float for max_bits":
        data["limits"]["max_bits"] = 64.5
    elif case == "Infinity":
        return json.dumps(data).replace('"max_steps": 100000', '"max_steps": Infinity')
    elif case == "deep nesting":
        return json.dumps(data)[:-1] + ', "extra": ' + "[" * 100_000 + "]" * 100_000 + "}"
    return json.dumps(data)


@pytest.mark.parametrize(
    "case",
    [
        "range beyond the bound",
        "negative from",
        "a cycle twice round",
        "negative max_steps",
        "a float for max_bits",
        "Infinity",
        "deep nesting",
    ],
)
def test_merge_refuses_a_saved_file_that_does_not_hold(
    case: str, capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    saved = tmp_path / "part.json"
    assert run(capsys, "3x-plus-1", "--bound", "100", "--jobs", "1", "--save", saved)[0] == 0
    data = json.loads(saved.read_text(encoding="utf-8"))
    assert data["limits"]["max_steps"] == 100000  # the hunt's default limit, which the mutations rely on
    saved.write_text(_mutated(data, case), encoding="utf-8")
    code, out, err = run(capsys, "--merge", saved)
    assert code == 2 and out == "", (case, out, err)
    assert err.startswith(f"periplus: error: {saved}: not a saved hunt result: ") and err.count("\n") == 1, err


# --- the work budget is part of the definition (issue 12, item 2) -----------------------------------


def _reference_fate_with_work(mapping: AffineMap, s: int, max_steps: int, max_bits: int, max_work: int) -> object:
    """Events (a), (b), (m), (w) of the definition over steps 1..max_steps, written out plainly.

    A step whose new member has b bits costs (max(b, 4096) + c) * w, c the bit length of the largest
    constant and w = 1 + max(0, bit_length(c - 1) - 6).  Returns the fate, or None when the start is
    decided by (c) or needs the steps past max_steps, which this reference does not follow.
    """
    c = max(max(abs(a).bit_length(), abs(b).bit_length()) for a, b in mapping.branches)
    weight = 1 + max(0, (c - 1).bit_length() - 6)
    seen, v, work = {s}, s, 0
    for _ in range(max_steps):
        v = mapping(v)
        work += (max(v.bit_length(), 4096) + c) * weight
        if v == s:
            return ("cycle", _cycle_from(mapping, s))
        if abs(v) < abs(s) or (s < 0 and v == -s):
            return ("resolved", None)
        if v.bit_length() > max_bits:
            return ("unresolved", "magnitude")
        if work > max_work:
            return ("unresolved", "work")
        if v in seen:
            return None
        seen.add(v)
    return None


@pytest.mark.parametrize("name", ["3x+1", "5x+1", "181x+1", "mod-3", "mod-4-neg"])
@pytest.mark.parametrize("max_work", [1, 4097 * 3, 4200 * 40, 10**6, 10**8])
def test_engines_agree_on_the_work_event(name: str, max_work: int) -> None:
    mapping = MAPS[name]
    high, max_steps, max_bits = 60, 400, 120
    exact = hunt(mapping, high, max_steps, max_bits, max_work=max_work)
    for s in definition.starts_of(0, high):
        expected = _reference_fate_with_work(mapping, s, max_steps, max_bits, max_work)
        if expected is None:
            continue
        kind, value = expected
        if kind == "cycle":
            assert isinstance(value, tuple) and exact.cycles[value[0]].members == value, s
        elif kind == "unresolved":
            assert exact.reasons.get(s) == value, (s, exact.reasons.get(s), value)
        else:
            assert s not in exact.reasons, s
    for settings in ENGINE_SETTINGS:
        got = _fastiter.hunt_range(mapping, 0, high, max_steps, max_bits, max_work, **settings)  # type: ignore[arg-type]
        assert got == exact, settings


def test_a_budget_for_the_range_stops_in_start_order_and_keeps_what_was_decided() -> None:
    # 5x+1 to 200 with max_bits 2000: its looking-divergent starts (7, 9, ...) each cost much work.
    mapping = MAPS["5x+1"]
    whole = _fastiter.hunt_range(mapping, 0, 200, 100_000, 2000)
    part = _fastiter.hunt_range(mapping, 0, 200, 100_000, 2000, budget=whole.work // 3)
    assert part.stopped_at is not None and 0 < part.stopped_at <= 200
    below = [s for s in whole.unresolved if abs(s) < part.stopped_at]
    assert part.unresolved == below
    assert part.work <= whole.work


# --- saved files name their program and every parameter (issue 12, item 6) -------------------------


def test_saved_files_carry_the_program_version_and_every_limit(capsys: pytest.CaptureFixture[str], tmp_path: Path):
    saved = tmp_path / "part.json"
    assert run(capsys, "3x-plus-1", "--bound", "50", "--jobs", "1", "--max-work", "123456789", "--save", saved)[0] == 0
    data = json.loads(saved.read_text(encoding="utf-8"))
    assert data["format"] == "periplus-hunt/2"
    assert data["program"] == {"name": "periplus", "version": builder.__version__}
    assert data["limits"] == {"max_steps": 100_000, "max_bits": 4096, "max_work": 123456789}


@pytest.mark.parametrize(
    "change, fragment",
    [
        (lambda d: d["program"].update(version="0.0.1"), "a different program version"),
        (lambda d: d["limits"].update(max_work=5), "a different max_work"),
    ],
)
def test_merge_refuses_files_written_otherwise(change, fragment: str, capsys, tmp_path: Path) -> None:
    first, second = tmp_path / "a.json", tmp_path / "b.json"
    assert run(capsys, "3x-plus-1", "--bound", "50", "--to", "20", "--jobs", "1", "--save", first)[0] == 0
    assert run(capsys, "3x-plus-1", "--bound", "50", "--from", "21", "--jobs", "1", "--save", second)[0] == 0
    data = json.loads(second.read_text(encoding="utf-8"))
    change(data)
    second.write_text(json.dumps(data), encoding="utf-8")
    code, out, err = run(capsys, "--merge", first, second)
    assert code == 2 and out == ""
    assert err.startswith(f"periplus: error: --merge: {second} has {fragment} from {first}") and err.count("\n") == 1, (
        err
    )


def test_merge_refuses_a_file_without_its_program(capsys, tmp_path: Path) -> None:
    saved = tmp_path / "a.json"
    assert run(capsys, "3x-plus-1", "--bound", "20", "--jobs", "1", "--save", saved)[0] == 0
    data = json.loads(saved.read_text(encoding="utf-8"))
    del data["program"]
    saved.write_text(json.dumps(data), encoding="utf-8")
    code, _, err = run(capsys, "--merge", saved)
    assert code == 2 and err.startswith(f"periplus: error: {saved}: not a saved hunt result: KeyError"), err


def test_the_report_says_where_every_start_ends(capsys: pytest.CaptureFixture[str]) -> None:
    # 3x+5 to 2,000: the positive multiples of 5, 400 of them, end in the cycle {5, 10}, 5 times the cycle
    # {1, 2} of 3x+1 (common practice, no source); its cycles through 187 and 347 (E. Belaga, M. Mignotte,
    # HAL hal-00129727 (2006), Table 1) are reached from starts below them; the counts add up to every start.
    code, out, _ = run(capsys, "3x-plus-5", "--bound", "2000", "--jobs", "1")
    assert code == 0
    rows = {int(r[0]): r[1:] for r in _table_rows(out, "where the 4,001 starts end")}
    assert rows[5] == ["400", "10.00%", "5"]
    assert int(rows[187][2]) < 187 and int(rows[347][2]) < 347
    assert sum(int(r[0].replace(",", "")) for r in rows.values()) == 4001
    assert set(rows) == {0, 1, 19, 5, -5, 23, -25, -85, 187, 347}
