"""``periplus review BASE HEAD``: the report a reviewer reads for a pull request to the catalogue.

Pull requests are made for real: each test builds a git repository in tmp_path whose first commit is
the valid fixture catalogue, then branches off and commits changes, and reviews one revision against
another.  Every cycle written here is a real one:

- 3x+1 cycles through 0, 1, -1, -5, -17 with lengths 1, 2, 1, 3, 11: Lagarias 1985 (literature.md,
  status memory), the cycles of the valid fixture;
- the 3x+5 cycle with least member 19 and length 5: Belaga and Mignotte, HAL hal-00129727, Table 1
  (literature.md, table secondary); its members are computed with the engine, and the test checks the
  engine's cycle against those two published numbers.

Formats checked against their published definitions:

- the workflow command ``::error file={name},line={line},col={col}::{message}``: GitHub Docs, "Workflow
  commands for GitHub Actions" (setting an error message); the escapes %25, %0D, %0A in the message and
  also %3A, %2C in property values: from memory (GitHub's toolkit escaping rules);
- Markdown tables (header row, delimiter row with ``---`` and ``---:``, ``|`` between cells, ``\\|``
  for a literal pipe): GitHub Flavored Markdown Spec, section 4.10 "Tables (extension)".
"""

from __future__ import annotations

import argparse
import hashlib
import os
import shutil
import subprocess
from collections.abc import Callable, Mapping
from pathlib import Path

import pytest
from conftest import PROVENANCE, VALID, Run

from builder.arith.dynamics import AffineMap, CycleFound, trace
from builder.catalogue.verify import verify_catalogue
from builder.commands import review as review_command
from builder.commands.main import execute
from builder.diff import Change, compare, coverage_bounds, workflow_command
from builder.search.definition import hunt

# --- real cycles, from the engine, checked against literature.md ------------------------------

THREE_X_PLUS_5 = AffineMap(2, ((1, 0), (3, 5)))  # T(n) = n/2 (n even), (3n+5)/2 (n odd)
THREE_X_PLUS_1 = AffineMap(2, ((1, 0), (3, 1)))


def fingerprint(modulus: int, branches: tuple[tuple[int, int], ...], canonical: int) -> str:
    """The recipe of catalogue/README.md ("Fingerprints"), hashed with hashlib's SHA-256 (FIPS 180-4)."""
    text = f"collatz-type-cycle/1\n{modulus}\n" + "".join(f"{a} {b}\n" for a, b in branches) + f"{canonical}\n"
    return hashlib.sha256(text.encode("ascii")).hexdigest()[:16]


# The fixture's 3x+1 map: n/2 on residue 0, (3n+1)/2 on residue 1 (Lagarias 1985 via literature.md).
FP_3X_PLUS_1 = ((1, 0), (3, 1))

MAP_3X_PLUS_5 = (
    "name: 3x+5 (shortcut form)\n"
    "modulus: 2\n"
    "branches:\n"
    "  - {residue: 0, multiplier: 1, increment: 0}\n"
    "  - {residue: 1, multiplier: 3, increment: 5}\n"
    "summary: T(n) = n/2 for even n and (3n+5)/2 for odd n.\n"
)


def cycle_through_19() -> tuple[int, ...]:
    outcome = trace(THREE_X_PLUS_5, 19, 1000)
    assert isinstance(outcome, CycleFound)
    return outcome.members


def test_the_engine_agrees_with_belaga_mignotte_on_the_cycle_through_19() -> None:
    # Belaga-Mignotte, HAL hal-00129727, Table 1 (via literature.md): least member 19, length 5.
    members = cycle_through_19()
    assert min(members) == 19
    assert len(members) == 5


def cycle_19_text(length: int | None = None) -> str:
    members = cycle_through_19()
    claims = f"length: {length}\n" if length is not None else f"length: {len(members)}\n"
    if length is None:
        claims += f"members: [{', '.join(map(str, members))}]\n"
    return "map: 3x-plus-5\nstart: 19\n" + claims + PROVENANCE


# --- a git repository with a history ---------------------------------------------------------

# Common practice, no source: an identity on the command line, and no global or system configuration,
# so that commits work on a fresh machine and do not depend on the user's settings.
GIT_ENV = {**os.environ, "GIT_CONFIG_GLOBAL": os.devnull, "GIT_CONFIG_NOSYSTEM": "1"}
GIT_IDENTITY = (
    "-c",
    "user.name=Periplus tests",
    "-c",
    "user.email=tests@periplus.invalid",
    "-c",
    "commit.gpgsign=false",
)


class Repo:
    def __init__(self, root: Path, with_catalogue: bool = True) -> None:
        """A repository whose first commit holds the valid fixture catalogue (or only a README)."""
        self.root = root
        root.mkdir()
        self.git("init", "-q", "-b", "main")
        if with_catalogue:
            shutil.copytree(VALID, root / "catalogue")
        (root / "README.md").write_text("A repository holding a catalogue.\n", encoding="utf-8")
        self.git("add", "-A")
        self.git("commit", "-q", "-m", "the valid fixture catalogue" if with_catalogue else "a README")

    def git(self, *args: str) -> str:
        done = subprocess.run(
            ["git", *GIT_IDENTITY, *args], cwd=self.root, env=GIT_ENV, capture_output=True, text=True, check=True
        )
        return done.stdout

    def pull_request(
        self,
        branch: str,
        write: Mapping[str, str] | None = None,
        remove: tuple[str, ...] = (),
        move: tuple[tuple[str, str], ...] = (),
        start: str = "main",
    ) -> str:
        """Commit changes to catalogue/ on a new branch from ``start``; return to main; return the branch."""
        self.git("checkout", "-q", "-b", branch, start)
        for rel, text in (write or {}).items():
            path = self.root / "catalogue" / rel
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_text(text, encoding="utf-8")
        for rel in remove:
            self.git("rm", "-q", f"catalogue/{rel}")
        for old, new in move:
            self.git("mv", f"catalogue/{old}", f"catalogue/{new}")
        self.git("add", "-A")
        self.git("commit", "-q", "-m", f"pull request {branch}")
        self.git("checkout", "-q", "main")
        return branch


@pytest.fixture
def repo(tmp_path: Path) -> Repo:
    return Repo(tmp_path / "repo")


@pytest.fixture
def review(capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> Callable[..., Run]:
    """Run ``review`` through its own command module (as builder.commands.main wires it), with captured output."""

    def run(*argv: str, cwd: Path | None = None) -> Run:
        if cwd is not None:
            monkeypatch.chdir(cwd)
        parser = argparse.ArgumentParser(prog="periplus")
        review_command.register(parser.add_subparsers(dest="command", required=True))
        capsys.readouterr()
        try:
            args = parser.parse_args(["review", *argv])
            code = execute(args)
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else 2
        captured = capsys.readouterr()
        return Run(code, captured.out, captured.err)

    return run


def file_text(rel: str) -> str:
    return (VALID / rel).read_text(encoding="utf-8")


# --- the four pull requests ------------------------------------------------------------------


def test_adding_a_valid_cycle(repo: Repo, review: Callable[..., Run]) -> None:
    branch = repo.pull_request(
        "add-3x-plus-5",
        {"maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "cycles/3x-plus-5/through-19.yaml": cycle_19_text()},
    )
    run = review("--git", "--repo", str(repo.root), "main", branch)
    assert run.code == 0, run.out + run.err
    # Counts: the fixture has 2 maps, 8 cycles and 2 references (tests/fixtures/valid); GFM table syntax.
    assert "| entries | added | changed | renamed | removed | unchanged |" in run.lines
    assert "| maps | 1 | 0 | 0 | 0 | 2 |" in run.lines
    assert "| cycles | 1 | 0 | 0 | 0 | 8 |" in run.lines
    assert "| references | 0 | 0 | 0 | 0 | 2 |" in run.lines
    assert "| `3x-plus-5` | added | — | — | holds |" in run.lines
    canonical = min(cycle_through_19(), key=lambda n: (abs(n), n < 0))
    fp = fingerprint(2, ((1, 0), (3, 5)), canonical)
    assert f"| `3x-plus-5/through-19` | added | — | `{fp}` | holds |" in run.lines
    assert run.lines[-1] == "**Verdict: holds** — every added, changed and renamed entry verifies."
    assert "::" not in run.out  # no workflow commands without --format github


def test_moving_the_start_along_the_cycle_is_the_same_cycle(repo: Repo, review: Callable[..., Run]) -> None:
    # The 3x+1 cycle through -17 (Lagarias 1985 via literature.md), now entered from -25, its next member.
    members = [-17, -25, -37, -55, -82, -41, -61, -91, -136, -68, -34]
    rotated = members[1:] + members[:1]
    text = file_text("cycles/3x-plus-1/through-minus-17.yaml")
    text = text.replace("start: -17", "start: -25").replace(
        f"members: [{', '.join(map(str, members))}]", f"members: [{', '.join(map(str, rotated))}]"
    )
    assert "start: -25" in text and str(rotated[0]) in text
    branch = repo.pull_request("move-start", {"cycles/3x-plus-1/through-minus-17.yaml": text})
    run = review("--git", "--repo", str(repo.root), "main", branch)
    assert run.code == 0, run.out
    assert "| cycles | 0 | 1 | 0 | 0 | 7 |" in run.lines
    assert (
        "| `3x-plus-1/through-minus-17` | changed | `start`: -17 → -25, `members` | "
        f"same cycle (`{fingerprint(2, FP_3X_PLUS_1, -17)}`) | holds |" in run.lines
    )


def test_changing_the_start_to_another_cycle_is_a_different_cycle(
    catalogue: Callable[..., Path], tmp_path: Path
) -> None:
    # Through the API on two directories: through-minus-5 is pointed at -17 (whose own file goes),
    # so the entry now holds the 3x+1 cycle through -17 (Lagarias 1985 via literature.md).
    base = catalogue()
    head = catalogue()
    (head / "cycles/3x-plus-1/through-minus-17.yaml").unlink()
    (head / "cycles/3x-plus-1/through-minus-5.yaml").write_text(
        "map: 3x-plus-1\nstart: -17\nlength: 11\n" + PROVENANCE, encoding="utf-8"
    )
    result = compare(verify_catalogue(base), verify_catalogue(head))
    changed = {c.key: c for c in result.of_kind("cycle")}
    moved = changed["3x-plus-1/through-minus-5"]
    assert moved.change == "changed"
    assert moved.identity == "different cycle"
    assert moved.check is not None and moved.check.holds
    names = [f.name for f in moved.fields]
    assert names == [
        "start",
        "word",
        "length",
        "members",
        "provenance.found_by",
        "provenance.method",
        "provenance.references",
    ]
    assert changed["3x-plus-1/through-minus-17"].change == "removed"
    assert result.ok


def test_breaking_a_claim_fails_with_the_reason_and_line(repo: Repo, review: Callable[..., Run]) -> None:
    # The cycle through 19 has length 5 (Belaga-Mignotte via literature.md); the entry claims 4, on line 3.
    text = cycle_19_text(length=4)
    assert text.splitlines()[2] == "length: 4"
    branch = repo.pull_request(
        "wrong-length", {"maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "cycles/3x-plus-5/through-19.yaml": text}
    )
    run = review("--git", "--repo", str(repo.root), "main", branch)
    assert run.code == 1
    row = next(line for line in run.lines if line.startswith("| `3x-plus-5/through-19` |"))
    assert "| added | — | — | fails: `cycles/3x-plus-5/through-19.yaml:3:9` length: expected 5 " in row
    assert row.endswith("got 4 |")
    assert run.lines[-1] == "**Verdict: does not hold** — 1 entry fails."

    github = review("--git", "--repo", str(repo.root), "--format", "github", "main", branch)
    assert github.code == 1
    # GitHub Docs, "Workflow commands for GitHub Actions": ::error file=...,line=...,col=...::message;
    # the path is from the repository root, the column that of the value 4 in "length: 4".
    assert github.lines[0].startswith("::error file=catalogue/cycles/3x-plus-5/through-19.yaml,line=3,col=9::length:")
    assert "expected 5" in github.lines[0] and github.lines[0].endswith("got 4")
    assert github.lines[1].startswith("# Catalogue review: ")
    assert github.out.endswith(run.out)


COVERAGE = (
    "coverage:\n"
    "  - kind: all-starts\n"
    "    bound: 20\n"
    "    found_on: 2024-05-01\n"
    "    method: every start n with |n| <= 20 iterated until its orbit repeats\n"
    "    max_steps: 1000\n"
    "    max_bits: 64\n"
)


def test_the_coverage_claim_in_the_test_is_true() -> None:
    # Lagarias 1985 (via literature.md): the 3x+1 cycles on Z pass through 0, 1, -1, -5, -17, so the
    # cycles with least |member| <= 20 are those five; the engine's exhaustive search agrees.
    found = hunt(THREE_X_PLUS_1, 20, 1000, 64)
    assert sorted(found.cycles) == [-17, -5, -1, 0, 1]
    assert not found.unresolved


def test_coverage_bounds_reads_the_bound_of_each_record() -> None:
    # Plain data in the shape of a map file's coverage records (the format the brief gives).
    record = {"kind": "all-starts", "bound": 20, "found_on": "2024-05-01", "method": "m", "max_steps": 1000}
    assert coverage_bounds({"name": "x", "coverage": [record, {**record, "bound": 10**30}]}) == [20, 10**30]
    assert coverage_bounds({"name": "x"}) == []
    assert coverage_bounds({"coverage": [{"bound": "20"}, {"bound": True}, {"bound": -1}, "text"]}) == []
    assert coverage_bounds({"coverage": "every start"}) == []


def test_removing_a_covered_cycle_warns(repo: Repo, review: Callable[..., Run]) -> None:
    map_text = file_text("maps/3x-plus-1.yaml")
    covered = repo.pull_request("coverage", {"maps/3x-plus-1.yaml": map_text + COVERAGE})
    # The pull request drops the cycle through -17 and, with it, the claim that said it was listed.
    branch = repo.pull_request(
        "drop-minus-17",
        {"maps/3x-plus-1.yaml": map_text},
        remove=("cycles/3x-plus-1/through-minus-17.yaml",),
        start=covered,
    )
    run = review("--git", "--repo", str(repo.root), covered, branch)
    assert run.code == 0, run.out
    assert "| cycles | 0 | 0 | 0 | 1 | 7 |" in run.lines
    fp = fingerprint(2, FP_3X_PLUS_1, -17)
    assert f"| `3x-plus-1/through-minus-17` | removed | — | `{fp}` | — |" in run.lines
    # (whether the base's map verifies depends on verify's support for coverage records; the head's does)
    map_row = next(line for line in run.lines if line.startswith("| `3x-plus-1` |"))
    assert map_row.startswith("| `3x-plus-1` | changed | `coverage` (removed) | ")
    assert map_row.endswith(" | holds |")
    warnings = run.lines[run.lines.index("## Warnings") + 2 :]
    assert warnings[0].startswith(
        "- cycles/3x-plus-1/through-minus-17.yaml is removed: the base lists it as the cycle through -17"
    )
    assert "maps/3x-plus-1.yaml in the base (bound 20)" in warnings[0]
    assert (
        run.lines[-1]
        == "**Verdict: holds** — every added, changed and renamed entry verifies; read the 1 warning above."
    )

    github = review("--git", "--repo", str(repo.root), "--format", "github", covered, branch)
    assert github.code == 0
    assert github.lines[0].startswith(
        "::warning file=catalogue/maps/3x-plus-1.yaml::cycles/3x-plus-1/through-minus-17.yaml"
    )


def test_a_renamed_cycle_is_reported_as_renamed(repo: Repo, review: Callable[..., Run]) -> None:
    # DEVELOPERS.md names cycle files after the canonical member: the cycle through -5 becomes minus-5.yaml.
    branch = repo.pull_request(
        "rename", move=(("cycles/3x-plus-1/through-minus-5.yaml", "cycles/3x-plus-1/minus-5.yaml"),)
    )
    run = review("--git", "main", branch, cwd=repo.root / "catalogue" / "maps")  # --repo from the current directory
    assert run.code == 0, run.out + run.err
    assert "| cycles | 0 | 0 | 1 | 0 | 7 |" in run.lines
    assert (
        "| `3x-plus-1/minus-5` (was `3x-plus-1/through-minus-5`) | renamed | none | "
        f"same cycle, renamed (`{fingerprint(2, FP_3X_PLUS_1, -5)}`) | holds |" in run.lines
    )
    rows = [line for line in run.lines if line.startswith("| `")]
    assert len(rows) == 1  # neither a removal nor an addition


def test_the_revisions_are_read_without_touching_the_working_tree(repo: Repo, review: Callable[..., Run]) -> None:
    branch = repo.pull_request(
        "wrong", {"maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "cycles/3x-plus-5/through-19.yaml": cycle_19_text(4)}
    )
    (repo.root / "catalogue" / "maps" / "scratch.txt").write_text("work in progress\n", encoding="utf-8")
    before = repo.git("status", "--porcelain")
    run = review("--git", "--repo", str(repo.root), "main", branch)
    assert run.code == 1
    assert repo.git("status", "--porcelain") == before
    assert repo.git("rev-parse", "--abbrev-ref", "HEAD").strip() == "main"
    assert "scratch" not in run.out  # an untracked file of the working tree is in neither revision


# --- directory mode ----------------------------------------------------------------------


def test_directory_mode_removals_that_break_dependencies(
    catalogue: Callable[..., Path], review: Callable[..., Run]
) -> None:
    base = catalogue()
    head = catalogue()
    (head / "maps/3x-minus-1.yaml").unlink()
    refs = head / "references.yaml"
    refs.write_text(refs.read_text(encoding="utf-8").replace("lagarias-1985:", "lagarias-85:"), encoding="utf-8")
    run = review(str(base), str(head))
    assert run.code == 1
    assert "| maps | 0 | 0 | 0 | 1 | 1 |" in run.lines
    assert "| references | 1 | 0 | 0 | 1 | 1 |" in run.lines
    assert "| `lagarias-85` | added | — | holds |" in run.lines
    warnings = [line for line in run.lines if line.startswith("- ")]
    assert warnings[0].startswith(
        "- maps/3x-minus-1.yaml is removed, but 3 cycle files of the head still use the map 3x-minus-1: "
    )
    # The fixture cites lagarias-1985 from the 3x+1 map and from each of its 8 cycles.
    assert warnings[1].startswith(
        "- the reference lagarias-1985 is removed from references.yaml, but 9 entries of the head still cite it: "
    )
    row = next(line for line in run.lines if line.startswith("| `3x-minus-1/through-5` |"))
    assert "| unchanged, now fails |" in row
    assert "`cycles/3x-minus-1/through-5.yaml:2:6` map: expected the id of a map in maps/" in row
    assert (
        run.lines[-1]
        == "**Verdict: does not hold** — 9 entries fail, 9 of them untouched by the change (they held in the base)."
    )


def test_directory_mode_identical_catalogues(catalogue: Callable[..., Path], review: Callable[..., Run]) -> None:
    base = catalogue()
    head = catalogue()
    path = head / "cycles/3x-plus-1/through-1.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("# Lagarias", "# Source: Lagarias"), encoding="utf-8")
    run = review(str(base), str(head))
    assert run.code == 0
    assert "| cycles | 0 | 1 | 0 | 0 | 7 |" in run.lines
    fp = fingerprint(2, FP_3X_PLUS_1, 1)
    assert f"| `3x-plus-1/through-1` | changed | comments or layout only | same cycle (`{fp}`) | holds |" in run.lines
    same = review(str(base), str(base))
    assert same.code == 0
    assert same.lines[-1] == "**Verdict: holds** — no entry changed."


def test_exact_markdown_of_a_small_case(
    catalogue: Callable[..., Path], review: Callable[..., Run], tmp_path: Path
) -> None:
    base = catalogue()
    head = catalogue()
    base.rename(tmp_path / "base")
    head.rename(tmp_path / "head")
    path = tmp_path / "head/cycles/3x-plus-1/through-1.yaml"  # 1 -> 2 -> 1 (Lagarias 1985 via literature.md)
    path.write_text(
        path.read_text(encoding="utf-8").replace("iteration by hand", "iterated from 1 by hand"), encoding="utf-8"
    )
    run = review("base", "head", cwd=tmp_path)
    assert run.code == 0
    # GFM Spec 4.10 (tables); the counts are the fixture's 2 maps, 8 cycles, 2 references.
    assert run.out == (
        "# Catalogue review: `base` → `head`\n"
        "\n"
        "| entries | added | changed | renamed | removed | unchanged |\n"
        "| --- | ---: | ---: | ---: | ---: | ---: |\n"
        "| record details | 0 | 0 | 0 | 0 | 1 |\n"
        "| maps | 0 | 0 | 0 | 0 | 2 |\n"
        "| cycles | 0 | 1 | 0 | 0 | 7 |\n"
        "| references | 0 | 0 | 0 | 0 | 2 |\n"
        "\n"
        "## Cycles\n"
        "\n"
        "| entry | change | fields changed | same cycle? (fingerprint) | verification |\n"
        "| --- | --- | --- | --- | --- |\n"
        "| `3x-plus-1/through-1` | changed | `provenance.method`: iteration by hand → iterated from 1 by hand | "
        f"same cycle (`{fingerprint(2, FP_3X_PLUS_1, 1)}`) | holds |\n"
        "\n"
        "**Verdict: holds** — every added, changed and renamed entry verifies.\n"
    )


def test_a_pipe_in_a_value_is_escaped_in_the_table(catalogue: Callable[..., Path], review: Callable[..., Run]) -> None:
    # GFM Spec 4.10: a literal | inside a cell is written \\|, or it would end the cell.
    base = catalogue()
    head = catalogue()
    path = head / "maps/3x-plus-1.yaml"
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("name: 3x+1 (shortcut form)", "name: 3x+1 | shortcut"), encoding="utf-8")
    run = review(str(base), str(head))
    assert run.code == 0
    row = "| `3x-plus-1` | changed | `name`: 3x+1 (shortcut form) → 3x+1 \\| shortcut | same map | holds |"
    assert row in run.lines


def test_changing_a_map_breaks_its_untouched_cycles(catalogue: Callable[..., Path], review: Callable[..., Run]) -> None:
    # The 3x-1 map turned into 3x+1: under 3x+1, 1 is not a fixed point but lies on 1 -> 2 -> 1
    # (Lagarias 1985 via literature.md), so the entry claiming the fixed point 1 of 3x-1 no longer holds.
    base = catalogue()
    head = catalogue()
    path = head / "maps/3x-minus-1.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("increment: -1", "increment: 1"), encoding="utf-8")
    run = review(str(base), str(head))
    assert run.code == 1
    assert "| `3x-minus-1` | changed | `branches` | different map | holds |" in run.lines
    row = next(line for line in run.lines if line.startswith("| `3x-minus-1/through-1` |"))
    assert row.startswith(
        "| `3x-minus-1/through-1` | unchanged, now fails | — | — | fails: `cycles/3x-minus-1/through-1.yaml:"
    )


def test_a_new_file_outside_any_entry_fails_the_review(repo: Repo, review: Callable[..., Run]) -> None:
    # catalogue/README.md: ids are [a-z0-9][a-z0-9-]*, any other file name is an error.  The content is the
    # real 3x+1 cycle through -5 (Lagarias 1985 via literature.md); only the name is wrong.
    text = file_text("cycles/3x-plus-1/through-minus-5.yaml")
    branch = repo.pull_request("bad-name", {"cycles/3x-plus-1/Minus-5.yaml": text})
    run = review("--git", "--repo", str(repo.root), "--format", "github", "main", branch)
    assert run.code == 1
    assert run.lines[0].startswith("::error file=catalogue/cycles/3x-plus-1/Minus-5.yaml::expected an id of lowercase")
    assert "## Other problems in the head" in run.lines
    assert run.lines[-1] == "**Verdict: does not hold** — 1 other problem in the head."


# --- usage errors ------------------------------------------------------------------------


def test_usage_errors_exit_2(repo: Repo, tmp_path: Path, review: Callable[..., Run]) -> None:
    missing = review(str(tmp_path / "nowhere"), str(VALID))
    assert missing.code == 2 and "periplus: error:" in missing.err and not missing.out
    bad_revision = review("--git", "--repo", str(repo.root), "main", "no-such-branch")
    assert bad_revision.code == 2 and "no-such-branch" in bad_revision.err
    no_catalogue = review("--git", "--repo", str(repo.root), "--path", "elsewhere", "main", "main")
    assert no_catalogue.code == 2 and "elsewhere" in no_catalogue.err
    outside = review("--git", "--repo", str(repo.root), "--path", "../x", "main", "main")
    assert outside.code == 2
    path_without_git = review("--path", "catalogue", str(VALID), str(VALID))
    assert path_without_git.code == 2
    not_a_repo = review("--git", "--repo", str(tmp_path), "main", "main")
    assert not_a_repo.code == 2


def test_the_change_that_starts_the_catalogue(tmp_path: Path, review: Callable[..., Run]) -> None:
    # A BASE from before the catalogue existed reads as an empty catalogue, so the first pull request
    # can be reviewed; a HEAD without it stays a usage error (common practice, no source).
    start = Repo(tmp_path / "new-repo", with_catalogue=False)
    root = start.root
    start.git("tag", "before")
    shutil.copytree(VALID, root / "catalogue")
    start.git("add", "-A")
    start.git("commit", "-q", "-m", "the valid fixture catalogue")
    run = review("--git", "--repo", str(root), "before", "main")
    assert run.code == 0, run.out + run.err
    # Counts: the fixture has 1 record, 2 maps, 8 cycles and 2 references (tests/fixtures/valid).
    assert "| record details | 1 | 0 | 0 | 0 | 0 |" in run.lines
    assert "| maps | 2 | 0 | 0 | 0 | 0 |" in run.lines
    assert "| cycles | 8 | 0 | 0 | 0 | 0 |" in run.lines
    assert "| references | 2 | 0 | 0 | 0 | 0 |" in run.lines
    assert "before (no catalogue yet)" in run.out
    backwards = review("--git", "--repo", str(root), "main", "before")
    assert backwards.code == 2
    assert backwards.err == "periplus: error: revision 'before' has no files under 'catalogue'\n"


# --- the workflow command format -----------------------------------------------------------


def test_workflow_command_escapes() -> None:
    # GitHub Docs, "Workflow commands for GitHub Actions": ::error file={name},line={line},col={col}::{message}.
    # Escapes (from memory): % -> %25, CR -> %0D, LF -> %0A everywhere; also : -> %3A and , -> %2C in properties.
    assert workflow_command("error", "50% done\r\nnext: a, b", "dir,x/a:b.yaml", 3, 9) == (
        "::error file=dir%2Cx/a%3Ab.yaml,line=3,col=9::50%25 done%0D%0Anext: a, b"
    )
    assert (
        workflow_command("error", "whole file", "catalogue/maps/x.yaml")
        == "::error file=catalogue/maps/x.yaml::whole file"
    )
    assert workflow_command("warning", "no file") == "::warning::no file"


# --- the comparison as a function ------------------------------------------------------------


def test_compare_is_a_function_of_the_two_reports(catalogue: Callable[..., Path]) -> None:
    base = catalogue()
    head = catalogue(files={"maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "cycles/3x-plus-5/through-19.yaml": cycle_19_text()})
    result = compare(verify_catalogue(base), verify_catalogue(head))
    assert [(c.kind, c.key, c.change) for c in result.changes] == [
        ("map", "3x-plus-5", "added"),
        ("cycle", "3x-plus-5/through-19", "added"),
    ]
    assert dict(result.unchanged) == {"record": 1, "map": 2, "cycle": 8, "reference": 2}
    assert all(isinstance(c, Change) and c.check is not None and c.check.holds for c in result.changes)
    backwards = compare(verify_catalogue(head), verify_catalogue(base))
    assert [(c.key, c.change, c.check) for c in backwards.changes] == [
        ("3x-plus-5", "removed", None),
        ("3x-plus-5/through-19", "removed", None),
    ]


def test_review_through_the_command_line(catalogue: Callable[..., Path], cli: Callable[..., Run]) -> None:
    # ``periplus review`` is the review command module, wired in by builder.commands.main.
    base = catalogue()
    head = catalogue(files={"maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "cycles/3x-plus-5/through-19.yaml": cycle_19_text(4)})
    run = cli("review", "--format", "github", str(base), str(head))
    assert run.code == 1
    assert run.lines[0].startswith(f"::error file={head.as_posix()}/cycles/3x-plus-5/through-19.yaml,line=3,col=9::")


# --- claims the head could check only in part (issue 12, item 5) -----------------------------------
# The fact: the 3x+1 cycles on Z pass through 0, 1, -1, -5 and -17 (Lagarias 1985 via literature.md).


def test_removing_a_cycle_and_adding_a_claim_just_beyond_the_recheck_limit_fails(
    repo: Repo, review: Callable[..., Run]
) -> None:
    # The finding: review said "holds" for this very change (bound 100,001 against a budget of 100,000).
    map_text = file_text("maps/3x-plus-1.yaml")
    branch = repo.pull_request(
        "hide-minus-17",
        {"maps/3x-plus-1.yaml": map_text + COVERAGE.replace("bound: 20", "bound: 100001")},
        remove=("cycles/3x-plus-1/through-minus-17.yaml",),
    )
    run = review("--git", "--repo", str(repo.root), "main", branch)
    assert run.code == 1, run.out
    map_row = next(line for line in run.lines if line.startswith("| `3x-plus-1` |"))
    assert (
        "fails: `maps/3x-plus-1.yaml:13:5` coverage\\[0\\]: expected every cycle with least \\|member\\| up to "
        in map_row
    )
    assert "100001 to be listed, got none for the cycle through -17 (length 11), which the search finds" in map_row


def test_an_attested_claim_and_a_cycle_removed_inside_it_are_warned_about(
    repo: Repo, review: Callable[..., Run]
) -> None:
    map_text = file_text("maps/3x-plus-1.yaml")
    claim = COVERAGE.replace("bound: 20", "bound: 1000")
    branch = repo.pull_request(
        "attested",
        {"maps/3x-plus-1.yaml": map_text + claim},
        remove=("cycles/3x-plus-1/through-minus-17.yaml",),
    )
    # Searched again only up to 10, the claim cannot see that -17 went missing: the review must say so.
    run = review("--git", "--repo", str(repo.root), "--recheck-up-to", "10", "main", branch)
    assert run.code == 0, run.out
    warnings = run.lines[run.lines.index("## Warnings") + 2 :]
    assert warnings[:2] == [
        "- maps/3x-plus-1.yaml coverage\\[0\\] claims every cycle with least \\|member\\| up to 1000 is listed, "
        "but it was searched again only up to 10 here: the rest is attested, not checked",
        "- cycles/3x-plus-1/through-minus-17.yaml takes the cycle through -17 out of the record, inside the attested "
        "part of a coverage claim of maps/3x-plus-1.yaml (bound 1000, searched again only up to 10): nothing here "
        "checks that the claim still holds",
    ], warnings
