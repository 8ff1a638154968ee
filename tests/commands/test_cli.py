"""End-to-end: ``periplus verify`` on the fixture catalogues, in-process and as ``python -m builder``."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from conftest import (
    BROKEN,
    BROKEN_CASES,
    REPO,
    VALID,
    VALID_SUMMARY,
    big_cycle_files,
    copy_valid,
    decimal,
    expected_output,
    overlay_files,
)

PROBLEM_LINE = re.compile(r"(?P<file>[^:]+)(?::(?P<line>[0-9]+):(?P<column>[0-9]+))?: error: (?P<message>.+)")
SUMMARY_LINE = re.compile(r"(?P<errors>[0-9]+) errors? in (?P<bad>[0-9]+) of (?P<files>[0-9]+) files?; .* verified")

# Every kind of false claim and malformed input the brief asks for must keep its fixture.
REQUIRED_CASES = {
    "wrong-word",
    "wrong-length",
    "wrong-member",
    "periodic-word",
    "not-on-a-cycle",
    "no-integer-cycle",
    "duplicate-cycle",
    "unknown-map",
    "map-folder-mismatch",
    "unknown-reference",
    "ill-defined-map",
    "wrong-branch-count",
    "unknown-field",
    "missing-field",
    "yaml-syntax",
    "tab-indent",
    "duplicate-key",
    "deep-nesting",
    "alias",
    "explicit-tag",
    "multi-document",
    "empty-file",
    "not-a-mapping",
    "non-utf8",
    "boolean-for-integer",
    "quoted-number",
    "float",
    "leading-zero",
    "unquoted-word",
    "string-for-list",
    "null-values",
    "non-yaml-file",
    "bad-file-name",
    "path-in-map-field",
    "subfolder-in-maps",
    "several",
}


def problem_lines(out: str) -> list[str]:
    return out.splitlines()[:-1]


def test_every_required_case_has_a_fixture():
    assert set(BROKEN_CASES) >= REQUIRED_CASES
    for case in BROKEN_CASES:
        assert (BROKEN / case / "expected.txt").is_file(), case
        assert overlay_files(case), case


def test_valid_fixture_passes(cli, catalogue):
    root = catalogue()
    run = cli("verify", str(root))
    assert (run.code, run.out, run.err) == (0, VALID_SUMMARY + "\n", "")


def test_default_catalogue_is_the_folder_named_catalogue(cli, tmp_path, catalogue):
    root = catalogue()
    root.rename(tmp_path / "catalogue")
    run = cli("verify", cwd=tmp_path)
    assert (run.code, run.out) == (0, VALID_SUMMARY + "\n")


def test_python_m_builder_passes_on_the_valid_fixture():
    proc = subprocess.run(
        [sys.executable, "-m", "builder", "verify", str(VALID)],
        capture_output=True,
        text=True,
        cwd=REPO,
        env={**os.environ, "PYTHONWARNINGS": "error"},
        timeout=120,
        check=False,
    )
    assert (proc.returncode, proc.stdout, proc.stderr) == (0, VALID_SUMMARY + "\n", "")


def test_python_m_builder_fails_on_a_false_claim(tmp_path, catalogue):
    root = catalogue("wrong-length")
    proc = subprocess.run(
        [sys.executable, "-m", "builder", "verify", "."],
        capture_output=True,
        text=True,
        cwd=root,
        timeout=120,
        check=False,
    )
    assert proc.returncode == 1
    assert proc.stdout == expected_output("wrong-length")
    assert "Traceback" not in proc.stdout + proc.stderr


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_broken_case_gives_exactly_the_expected_lines(cli, catalogue, case):
    root = catalogue(case)
    run = cli("verify", ".", cwd=root)
    assert "Traceback" not in run.out + run.err
    assert run.err == ""
    assert run.code == 1
    assert run.out == expected_output(case)


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_output_is_sorted_and_the_summary_counts_the_lines(cli, catalogue, case):
    run = cli("verify", ".", cwd=catalogue(case))
    problems = [PROBLEM_LINE.fullmatch(line) for line in problem_lines(run.out)]
    assert problems and all(problems), run.out
    keys = [(Path(p["file"]), int(p["line"] or 0), int(p["column"] or 0)) for p in problems]
    assert keys == sorted(keys)
    summary = SUMMARY_LINE.fullmatch(run.lines[-1])
    assert summary, run.lines[-1]
    assert int(summary["errors"]) == len(problems)
    assert int(summary["bad"]) == len({p["file"] for p in problems})
    assert int(summary["bad"]) <= int(summary["files"])


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_every_problem_names_a_file_the_case_wrote_or_one_that_depends_on_it(cli, catalogue, case):
    run = cli("verify", ".", cwd=catalogue(case))
    named = {PROBLEM_LINE.fullmatch(line)["file"] for line in problem_lines(run.out)}
    written = set(overlay_files(case))
    # A broken references.yaml makes every citing entry fail; otherwise only written files are named
    # (or the folder that holds them).
    if "references.yaml" in written:
        assert "references.yaml" in named
    else:
        assert all(any(w == f or w.startswith(f + "/") for w in written) for f in named), named


def test_several_broken_files_are_all_reported_in_one_run(cli, catalogue):
    run = cli("verify", ".", cwd=catalogue("several"))
    named = {PROBLEM_LINE.fullmatch(line)["file"] for line in problem_lines(run.out)}
    assert named == set(overlay_files("several"))
    assert run.lines[-1] == "6 errors in 5 of 15 files; 2 maps, 6 cycles and 2 references verified"


# Exact lines for a representative set of false claims (the fixtures' expected.txt hold the rest).
EXACT = [
    (
        "periodic-word",
        # 1010 is 10 twice; the cycle 1 -> 2 -> 1 of 3x+1 has word 10 (Lagarias 1985 via literature.md).
        "cycles/3x-plus-1/through-1.yaml:3:7: error: word: expected an aperiodic word (a cycle's word is its "
        "least period), got 1010, which is 10 repeated 2 times; write 10",
    ),
    (
        "not-on-a-cycle",
        # By hand: 7 reaches 2 after 10 steps, then 2 -> 1 -> 2 (Lagarias 1985 via literature.md for the cycle).
        "cycles/3x-plus-1/from-7.yaml:2:8: error: start: expected a member of a cycle, got 7, whose orbit enters "
        "the cycle through 1 (length 2) after 10 steps",
    ),
    (
        "no-integer-cycle",
        # Along 11100: n -> (27n+19)/32, so 5n = 19 (fact of the trade; Lagarias 1990 Thm 2.1 via literature.md).
        "cycles/3x-plus-1/word-11100.yaml:2:7: error: word: expected a word with an integer cycle, got one whose "
        "cycle equation gives n = B / (m^k - A) = 19 / 5, not an integer",
    ),
    (
        "wrong-length",
        # Lagarias 1985 via literature.md: shortcut length 11 (18 is the standard-map length).
        "cycles/3x-plus-1/through-minus-17.yaml:3:9: error: length: expected 11 (the steps until the orbit of -17 "
        "returns), got 18",
    ),
    (
        "wrong-member",
        # -5 -> -7 -> -10 under (3n+1)/2, n/2 (arithmetic by hand).
        "cycles/3x-plus-1/through-minus-5.yaml:3:19: error: members[2]: expected -10 (step 2 of the orbit of -5), "
        "got -11",
    ),
    (
        "wrong-word",
        # The word of -5 is 110 (-5, -7 odd; -10 even; arithmetic by hand).
        "cycles/3x-plus-1/through-minus-5.yaml:3:7: error: word: expected 110 (the residues along the orbit of -5), "
        "got 011 (a rotation of it: the word is read from the start)",
    ),
    (
        "duplicate-cycle",
        # 2 -> 1 -> 2 (arithmetic by hand): the cycle of through-1.yaml.
        "cycles/3x-plus-1/through-2.yaml:2:8: error: start: expected a cycle not yet listed, got the cycle of "
        "cycles/3x-plus-1/through-1.yaml again (both contain 1); a cycle is listed once, whatever member it starts "
        "from",
    ),
    (
        "ill-defined-map",
        # 3*1 + 2 = 5 is odd (arithmetic by hand).
        "maps/3x-plus-2.yaml:5:5: error: branches[1]: residue 1: expected multiplier * 1 + increment to be divisible "
        "by 2, got 3 * 1 + 2 = 5, so T would not send integers to integers",
    ),
    (
        "wrong-branch-count",
        # Malformed input: modulus 3 with branches for residues 0 and 1 only.
        "maps/mod-3.yaml:4:3: error: branches: expected one branch for each residue 0..2, got none for 2",
    ),
    (
        "unknown-field",
        # Malformed input: a misspelt field.
        "cycles/3x-plus-1/through-minus-1.yaml:3:1: error: lenght: unknown field 'lenght' in a cycle entry; "
        "expected one of: map, provenance, start, word, length, members; did you mean 'length'?",
    ),
    (
        "missing-field",
        # Malformed input: no provenance.
        "cycles/3x-plus-1/through-minus-1.yaml:1:1: error: a cycle entry is missing the required field 'provenance'",
    ),
    (
        "unknown-map",
        # Malformed input: no such map file.
        "cycles/5x-plus-1/through-1.yaml:1:6: error: map: expected the id of a map in maps/, got '5x-plus-1' "
        "(no maps/5x-plus-1.yaml)",
    ),
    (
        "map-folder-mismatch",
        # Malformed input: a 3x-1 entry in the 3x+1 folder.
        "cycles/3x-plus-1/through-5.yaml:1:6: error: map: expected '3x-plus-1' (the folder this file is in), "
        "got '3x-minus-1'",
    ),
    (
        "unknown-reference",
        # Malformed input: a misspelt reference key.
        "cycles/3x-plus-1/through-minus-1.yaml:7:16: error: provenance.references[0]: expected a key of "
        "references.yaml, got 'lagarias-1958'",
    ),
    (
        "unquoted-word",
        # YAML 1.1 int type (yaml.org/type/int.html): unquoted 01 is octal.
        "cycles/3x-plus-1/through-1.yaml:3:7: error: word: expected a quoted string of residue digits, got the "
        'unquoted 01, which YAML reads as an octal number; write it in quotes: word: "01"',
    ),
]


@pytest.mark.parametrize(("case", "line"), EXACT, ids=[case for case, _ in EXACT])
def test_exact_message(cli, catalogue, case, line):
    run = cli("verify", ".", cwd=catalogue(case))
    assert run.code == 1
    assert line in run.lines


def test_symbolic_links_are_refused_with_a_positioned_error(cli, catalogue):
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "link.yaml").symlink_to("through-1.yaml")
    (root / "cycles" / "linked").symlink_to("3x-plus-1", target_is_directory=True)
    (root / "references.yaml").rename(root / "refs.txt")
    (root / "references.yaml").symlink_to("refs.txt")
    run = cli("verify", ".", cwd=root)
    assert run.code == 1
    assert "Traceback" not in run.out + run.err
    # Malformed input (layout), no mathematical claim. The valid entries cite lagarias-1985, now unreadable.
    assert "cycles/3x-plus-1/link.yaml: error: expected a regular file, got a symbolic link" in run.lines
    assert "cycles/linked: error: expected a folder named after a map id, got a file or link" in run.lines
    assert "references.yaml: error: expected a regular file, got a symbolic link" in run.lines


def test_a_huge_cycle_verifies_and_a_false_claim_on_it_is_abbreviated(cli, catalogue, big):
    good = catalogue(files=big_cycle_files(big))
    run = cli("verify", ".", cwd=good)
    assert (run.code, run.out) == (0, "verified 3 maps, 9 cycles and 2 references in 14 files: every claim holds\n")

    # The cycle has length 11 (the word 11110111000 of big_cycle in conftest), so 12 is false.
    bad = catalogue(files=big_cycle_files(big, claims="length: 12\n"))
    run = cli("verify", ".", cwd=bad)
    assert run.code == 1
    assert "Traceback" not in run.out + run.err
    (line,) = problem_lines(run.out)
    text = decimal(big.start)
    assert len(text) > 20_000
    assert line == (
        "cycles/3x-plus-big/huge.yaml:3:9: error: length: expected 11 (the steps until the orbit of "
        f"{text[:20]}...{text[-10:]} ({len(text)} digits) returns), got 12"
    )


def test_max_steps_bounds_each_trace(cli, catalogue):
    run = cli("verify", ".", "--max-steps", "5", cwd=catalogue())
    assert run.code == 1
    # Lagarias 1985 via literature.md: the cycles through -17 (3x+1) and 17 (3x-1) have length 11 > 5.
    assert run.lines[:-1] == [
        "cycles/3x-minus-1/through-17.yaml:4:7: error: word: expected a member of a cycle, got 17, whose orbit did "
        "not return or repeat within 5 steps (raise --max-steps to look further)",
        "cycles/3x-plus-1/through-minus-17.yaml:4:8: error: start: expected a member of a cycle, got -17, whose "
        "orbit did not return or repeat within 5 steps (raise --max-steps to look further)",
    ]


# --- exit status 2 ---------------------------------------------------------------


@pytest.mark.parametrize(
    ("make", "message"),
    [
        (lambda tmp: tmp / "missing", "missing: expected a catalogue directory, got nothing"),
        (lambda tmp: _file(tmp / "a-file"), "a-file: expected a catalogue directory, got a file"),
        (lambda tmp: _folder(tmp / "no-maps"), "no-maps: expected a catalogue directory with a maps/ folder, got none"),
        (
            lambda tmp: _file(_folder(tmp / "maps-file") / "maps"),
            "maps-file: expected a catalogue directory with a maps/ folder, got none",
        ),
    ],
    ids=["missing-directory", "file", "no-maps", "maps-is-a-file"],
)
def test_unreadable_catalogue_exits_2(cli, tmp_path, make, message):
    target = make(tmp_path)
    if target.name == "maps":
        target = target.parent
    run = cli("verify", target.name, cwd=tmp_path)
    assert (run.code, run.out) == (2, "")
    assert run.err == f"periplus: error: {message}\n"
    assert "Traceback" not in run.err


def _file(path: Path) -> Path:
    path.write_text("not a catalogue\n", encoding="utf-8")
    return path


def _folder(path: Path) -> Path:
    path.mkdir()
    return path


@pytest.mark.parametrize(
    ("argv", "fragment"),
    [
        (["verify", "--bogus"], "unrecognized arguments: --bogus"),
        (["verify", "--max-steps", "0"], "argument --max-steps: expected a positive integer, got 0"),
        (["verify", "--max-steps", "many"], "argument --max-steps: expected a positive integer, got 'many'"),
        (["verify", "--max-bits", "-3"], "argument --max-bits: expected a positive integer, got -3"),
        ([], "the following arguments are required: COMMAND"),
        (["publish"], "invalid choice: 'publish'"),
    ],
)
def test_bad_options_exit_2_without_a_traceback(cli, tmp_path, argv, fragment):
    run = cli(*argv, cwd=tmp_path)
    assert run.code == 2
    assert run.out == ""
    assert fragment in run.err
    assert run.err.startswith("usage: periplus")
    assert "Traceback" not in run.err


# --- usage mistakes: one line, exit 2, before any work (issue 12, item 8) ----------------------


def test_a_site_folder_that_cannot_be_written_is_a_usage_error(cli, tmp_path: Path) -> None:
    # /proc refuses new folders (proc(5)); a path below a regular file cannot be a folder (POSIX
    # ENOTDIR). Common practice, no source: a usage mistake is one line and exit status 2.
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder\n", encoding="utf-8")
    for out, why in (
        ("/proc/periplus-site", "cannot write the site here"),
        (str(blocker / "site"), f"cannot write the site here: {blocker} is not a folder"),
    ):
        run = cli("build", str(VALID), "--out", out)
        assert run.code == 2, run
        assert run.err.startswith(f"periplus: error: {out}: {why}"), run.err
        assert run.err.count("\n") == 1 and "Traceback" not in run.err


def test_a_base_url_with_a_space_is_a_usage_error(cli, tmp_path: Path) -> None:
    # RFC 3986, section 2: a space is not allowed in a URI.
    run = cli("build", str(VALID), "--out", str(tmp_path / "site"), "--base-url", "https://exa mple.org/")
    assert run.code == 2 and run.out == ""
    assert run.err == (
        "periplus: error: --base-url: expected the http or https address the site is published at, such as "
        "https://example.org/cycles/, with no query or fragment, got 'https://exa mple.org/'\n"
    )
    assert not (tmp_path / "site").exists()


def test_a_hunt_that_could_not_save_its_result_does_not_start(cli, tmp_path: Path) -> None:
    target = tmp_path / "missing-folder" / "part.json"
    run = cli("hunt", "3x-plus-1", "--bound", "100", "--catalogue", str(VALID), "--save", str(target))
    assert run.code == 2 and run.out == ""
    assert run.err == (
        f"periplus: error: --save: expected a file in an existing folder, got {target} "
        f"({target.parent} does not exist)\n"
    )


# --- diagnostics cannot be forged (issue 12, item 9) ---------------------------------------------


def test_a_line_feed_in_a_file_name_or_a_key_cannot_start_a_diagnostic_line(cli, tmp_path: Path) -> None:
    # POSIX allows any byte but "/" and NUL in a file name, and YAML allows "\n" in a quoted key (YAML 1.1,
    # 5.7 escapes); a printed diagnostic is one line however either is written (common practice, no source).
    root = copy_valid(tmp_path / "cat")
    forged = "x\nforged.yaml:1:1: error: all is well"
    (root / "cycles" / "3x-plus-1" / f"{forged}.yaml").write_text("map: 3x-plus-1\n", encoding="utf-8")
    cycle = root / "cycles" / "3x-plus-1" / "through-1.yaml"
    cycle.write_text(
        cycle.read_text(encoding="utf-8") + '"surplus\\n::error file=x.yaml::all is well": 1\n', encoding="utf-8"
    )
    run = cli("verify", str(root))
    assert run.code == 1
    lines = run.out.splitlines()
    assert all(line.startswith(str(root)) for line in lines[:-1]), lines
    assert not any(line.startswith(("forged", "::error")) for line in lines)
    assert any("x\\nforged.yaml" in line for line in lines), lines
    assert any("surplus\\n::error" in line for line in lines), lines


def test_bidirectional_controls_are_escaped_in_diagnostics(cli, tmp_path: Path) -> None:
    # A right-to-left override or isolate reorders how a terminal shows the rest of the line (Unicode
    # UAX #9, section 2; Boucher and Anderson, "Trojan Source", 2021, from memory): printed escaped.
    # Found by the fuzz campaign (tests/fuzz).
    root = copy_valid(tmp_path / "cat")
    cycle = root / "cycles" / "3x-plus-1" / "through-1.yaml"
    cycle.write_text(
        cycle.read_text(encoding="utf-8").replace("map: 3x-plus-1", 'map: "3x-plus\u2066-1\u202e"'), encoding="utf-8"
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert not set(run.out) & {"\u2066", "\u202e"}
    assert "got '3x-plus\\u2066-1\\u202e'" in run.out


def test_the_command_line_loads_no_later_stage_before_a_command_needs_it() -> None:
    # What builder.commands.main's docstring promises: building the parser (and so every `periplus verify`)
    # loads neither the site, diff and history stages nor their libraries (common practice, no source:
    # import a heavy dependency only where it is used).
    probe = (
        "import sys\n"
        "from builder.commands.main import parser\n"
        "parser()\n"
        "later = ('builder.site', 'builder.diff', 'builder.history', 'jinja2', 'markdown', 'numba')\n"
        "loaded = sorted(m for m in sys.modules if m.split('.')[0] in later or m.rsplit('.', 1)[0] in later)\n"
        "assert not loaded, loaded\n"
    )
    subprocess.run([sys.executable, "-c", probe], check=True, cwd=REPO)
