"""Edge cases of verification: degenerate maps, huge constants, broken bibliographies."""

from __future__ import annotations

import json
import os
import sys

from conftest import PROVENANCE, VALID, big_cycle_files, decimal

from builder.catalogue.fields import NOTES_MAX_CHARACTERS
from builder.catalogue.reader import open_brackets

MAP_HEADER = "name: m\nsummary: s\n"


def map_file(modulus: int | str, branches: list[tuple[object, object, object]]) -> str:
    rows = "".join(f"  - {{residue: {r}, multiplier: {a}, increment: {b}}}\n" for r, a, b in branches)
    return f"{MAP_HEADER}modulus: {modulus}\nbranches:\n{rows}"


def test_periodic_word_of_a_real_cycle_is_accepted_when_the_slope_is_minus_one(cli, catalogue):
    # T(n) = -n on even n (branch (-2, 0) over 2) sends 2 to -2 and back: a genuine 2-cycle
    # whose word 00 is periodic. Composing the branch twice has slope (-2/2)^2 = 1, so the
    # cycle equation is degenerate (m^k - A = 0, B = 0); common practice, no source.
    root = catalogue(
        empty=True,
        files={
            "maps/flip.yaml": map_file(2, [(0, -2, 0), (1, 3, 1)]),
            "cycles/flip/2.yaml": f'map: flip\nstart: 2\nword: "00"\nmembers: [2, -2]\n{PROVENANCE}',
        },
    )
    run = cli("verify", str(root))
    assert run.code == 0, run.out
    assert run.lines[-1] == "verified 1 map, 1 cycle and 0 references in 3 files: every claim holds"


def test_periodic_word_without_a_start_is_refused_even_when_degenerate(cli, catalogue):
    # Same map: the word 00 alone fixes no start (m^k - A = 4 - 4 = 0); common practice, no source.
    root = catalogue(
        empty=True,
        files={
            "maps/flip.yaml": map_file(2, [(0, -2, 0), (1, 3, 1)]),
            "cycles/flip/w.yaml": f'map: flip\nword: "00"\n{PROVENANCE}',
        },
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{root}/cycles/flip/w.yaml:2:7: error: word: expected an aperiodic word (a cycle's word is its least "
        "period), got 00, which is 0 repeated 2 times; write 0"
    )


def test_huge_modulus_is_reported_without_enumerating_its_residues(cli, catalogue):
    # A modulus of 5,001 digits with two branches: the message abbreviates it (the check must not walk
    # all 10^5000 residues); it is refused as a modulus beyond the record's bound (issue 12, item 12).
    modulus = "1" + "0" * 5000
    root = catalogue(empty=True, files={"maps/big.yaml": map_file(modulus, [(0, 1, 0), (1, 3, 1)])})
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{root}/maps/big.yaml:3:10: error: modulus: expected a modulus of at most 10,000 (the map's page shows "
        "every branch), got 10000000000000000000...0000000000 (5001 digits)"
    )
    # At the bound, two branches given: the message lists the first missing residues, not all of them.
    root = catalogue(empty=True, files={"maps/big.yaml": map_file(10_000, [(0, 1, 0), (1, 3, 1)])})
    run = cli("verify", str(root))
    assert run.lines[0] == (
        f"{root}/maps/big.yaml:5:3: error: branches: expected one branch for each residue "
        "0..9999, got none for 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, ..."
    )
    assert sys.get_int_max_str_digits() in (0, 4300)  # untouched by Periplus (CPython's default is 4300)


def test_huge_ill_defined_increment_is_abbreviated(cli, catalogue):
    # 3 * 1 + b must be even; b = 10^5000 (even) breaks that. Common practice, no source.
    b = "1" + "0" * 5000
    root = catalogue(empty=True, files={"maps/bad.yaml": map_file(2, [(0, 1, 0), (1, 3, b)])})
    run = cli("verify", str(root))
    assert run.code == 1
    assert "Traceback" not in run.out + run.err
    assert run.lines[0].startswith(f"{root}/maps/bad.yaml:6:5: error: branches[1]: residue 1: expected multiplier")
    assert "(5001 digits)" in run.lines[0]


def test_entries_citing_a_faulty_reference_are_not_blamed_for_it(cli, catalogue):
    # The reference exists but has a bad year; only references.yaml is reported.
    root = catalogue(
        files={
            "references.yaml": (
                "lagarias-1985:\n  authors: [J. C. Lagarias]\n  title: t\n  venue: v\n  year: '1985'\n"
                "lagarias-1990:\n  authors: [J. C. Lagarias]\n  title: t\n  venue: v\n  year: 1990\n"
            )
        }
    )
    run = cli("verify", str(root))
    assert run.code == 1
    problems = run.lines[:-1]
    assert problems == [
        f"{root}/references.yaml:5:9: error: lagarias-1985.year: expected an integer, got the quoted text "
        "'1985'; write it without quotes"
    ]


# --- layout and word surprises (issue 12, item 13) -------------------------------------------------


def test_a_word_is_quoted_digits_up_to_modulus_10_and_a_list_above(cli, catalogue):
    # catalogue/README.md, "General rules": digits in quotes for m <= 10, a list of residues above.
    # T(n) = (n - i)/11 on n = i (mod 11) fixes 0 (common practice, no source).
    eleven = map_file(11, [(i, 1, -i) for i in range(11)])
    root = catalogue(
        empty=True,
        files={
            "maps/flip.yaml": map_file(2, [(0, -2, 0), (1, 3, 1)]),
            "cycles/flip/2.yaml": f"map: flip\nstart: 2\nword: [0, 0]\n{PROVENANCE}",
            "maps/eleven.yaml": eleven,
            "cycles/eleven/0.yaml": f"map: eleven\nstart: 0\nword: [0, 11]\n{PROVENANCE}",
        },
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[:2] == [
        f"{root}/cycles/eleven/0.yaml:3:11: error: word[1]: expected a residue 0..10, got 11",
        f"{root}/cycles/flip/2.yaml:3:7: error: word: expected a quoted string of residue digits (the modulus 2 "
        'is at most 10), got a list; write it as word: "00"',
    ]


def test_files_and_folders_where_the_layout_wants_the_other(cli, catalogue):
    # POSIX mkfifo(3) makes a named pipe, which is neither a regular file nor a folder.
    root = catalogue(empty=True, files={"maps/.keep": ""})
    os.mkfifo(root / "maps" / "pipe.yaml")
    (root / "cycles").write_text("not a folder\n", encoding="utf-8")
    (root / "record.yaml").unlink()
    (root / "record.yaml").mkdir()
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[:3] == [
        f"{root}/cycles: error: expected a folder, got a file",
        f"{root}/maps/pipe.yaml: error: expected only map files (<id>.yaml) here, got a special file (a device, "
        "pipe or socket)",
        f"{root}/record.yaml: error: expected a regular file, got a folder",
    ]


# --- notes stay quick to render (issue 12, item 3) -------------------------------------------------


def test_a_note_of_unclosed_brackets_is_refused_where_it_is_written(cli, catalogue):
    # Python-Markdown looks for a link's end from every "[" (its inline link pattern), so 16,000 unclosed
    # "[" took half a minute to render; the note is refused with its position instead (issue 12).
    root = catalogue(files={"cycles/3x-plus-1/through-1.yaml": _with_notes("[" * 16_000)})
    run = cli("verify", str(root))
    assert run.code == 1
    (line,) = [x for x in run.lines if "notes" in x]
    assert line.startswith(f"{root}/cycles/3x-plus-1/through-1.yaml:")
    assert line.endswith(
        "error: provenance.notes: expected at most 20 '[', '(' or '<' that nothing closes, got 16,000; "
        "write \\[, \\( or \\< for a bracket meant as text"
    )


def test_a_note_longer_than_the_limit_is_refused(cli, catalogue):
    long_note = "x" * (NOTES_MAX_CHARACTERS + 1)
    root = catalogue(files={"cycles/3x-plus-1/through-1.yaml": _with_notes(long_note)})
    run = cli("verify", str(root))
    assert run.code == 1
    assert any(
        x.endswith(f"error: provenance.notes: expected notes of at most 50,000 characters, got {len(long_note):,}")
        for x in run.lines
    ), run.lines


def test_open_brackets_counts_what_nothing_closes():
    # Counted by hand (common practice, no source): links and escapes close or hide their brackets.
    assert open_brackets("[a](https://example.org) and (b) and <https://example.org>") == 0
    assert open_brackets("[" * 5) == 5
    assert open_brackets("\\[not a link\\(") == 0
    assert open_brackets("[[a]") == 1
    assert open_brackets("a < b, c <d") == 1  # only a '<' before a non-space character opens a tag


def _with_notes(text: str) -> str:
    cycle = (VALID / "cycles" / "3x-plus-1" / "through-1.yaml").read_text(encoding="utf-8")
    return cycle.rstrip("\n") + "\n  notes: " + json.dumps(text) + "\n"


# --- no small file makes a huge site (issue 12, item 12) ----------------------------------------------


def test_a_name_of_two_megabytes_is_refused(cli, catalogue):
    name = "n" * 2_000_000
    root = catalogue(
        files={"maps/3x-plus-1.yaml": map_file(2, [(0, 1, 0), (1, 3, 1)]).replace("name: m", f"name: {name}")}
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert any(
        x.endswith("error: name: expected one line of at most 1,000 characters, got 2,000,000") for x in run.lines
    )


def test_a_map_of_200000_branches_is_refused_before_its_branches_are_read(cli, catalogue):
    modulus = 200_000
    rows = "".join(f"  - {{residue: {r}, multiplier: 1, increment: {-r}}}\n" for r in range(modulus))
    root = catalogue(empty=True, files={"maps/wide.yaml": f"{MAP_HEADER}modulus: {modulus}\nbranches:\n{rows}"})
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{root}/maps/wide.yaml:3:10: error: modulus: expected a modulus of at most 10,000 (the map's page shows "
        "every branch), got 200000"
    )


# --- small files, bounded work (issue 12, item 2) ---------------------------------------------------


def test_a_huge_multiplier_stops_at_the_magnitude_bound(cli, catalogue):
    # The finding: a 20 KB map whose multiplier has 20,000 digits took 54 s and 335 MB.  3^41,900 has
    # 19,991 digits (common practice, no source); odd, so (a n + a)/2 is an integer map.
    a = decimal(3**41_900)
    root = catalogue(
        empty=True,
        files={
            "maps/wide.yaml": map_file(2, [(0, 1, 0), (1, a, a)]),
            "cycles/wide/one.yaml": f"map: wide\nstart: 1\n{PROVENANCE}",
        },
    )
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0].startswith(
        f"{root}/cycles/wide/one.yaml:2:8: error: start: expected a member of a cycle, got 1, "
    )
    assert "whose orbit grew past" in run.lines[0] and "(raise --max-bits to look further)" in run.lines[0]


def test_a_huge_start_is_stopped_by_the_work_budget(cli, catalogue):
    # The finding: a 20,000-digit start in 5x+3 took 63 s.  Its members grow by about log2(5/4) bits a
    # step (common practice, no source), so only the work budget stops it soon.
    root = catalogue(
        empty=True,
        files={
            "maps/five.yaml": map_file(2, [(0, 1, 0), (1, 5, 3)]),
            "cycles/five/big.yaml": f"map: five\nstart: {decimal(7**23_666)}\n{PROVENANCE}",
        },
    )
    run = cli("verify", str(root), "--max-work", "300000000")
    assert run.code == 1
    assert "whose orbit did not return within the work budget of 300,000,000 bit-operations: " in run.lines[0]
    assert run.lines[0].endswith("bits (raise --max-work to look further)")


# --- found by the fuzz campaign (tests/fuzz) --------------------------------------------------------


def test_a_reference_missing_a_required_field_beside_an_unknown_one_is_reported(cli, catalogue):
    # A renamed key leaves "title" missing: two errors, no traceback.
    references = (VALID / "references.yaml").read_text(encoding="utf-8")
    root = catalogue(files={"references.yaml": references.replace("  title:", "  titel:", 1)})
    run = cli("verify", str(root))
    assert run.code == 1
    assert any("unknown field 'titel'" in line and "did you mean 'title'?" in line for line in run.lines)
    assert any("is missing the required field 'title'" in line for line in run.lines)


def test_a_coverage_claim_missing_a_field_beside_its_unresolved_list_is_reported(cli, catalogue):
    path = VALID / "maps" / "3x-plus-1.yaml"
    claim = (
        "coverage:\n  - kind: all-starts\n    found_on: 2024-05-01\n    method: m\n"
        "    max_steps: 10\n    max_bits: 10\n    unresolved: []\n"
    )
    root = catalogue(files={"maps/3x-plus-1.yaml": path.read_text(encoding="utf-8") + claim})
    run = cli("verify", str(root))
    assert run.code == 1
    assert any("coverage[0]: a coverage record is missing the required field 'bound'" in line for line in run.lines), (
        run.lines
    )


def test_a_claims_limits_are_json_safe_integers(cli, catalogue):
    # The exports write max_steps and max_bits as JSON numbers; above 2^53 - 1 a JSON reader may round
    # them (RFC 8259, section 6).  10^4300 also broke the page, which writes them in decimal.
    path = VALID / "maps" / "3x-plus-1.yaml"
    claim = (
        "coverage:\n  - kind: all-starts\n    bound: 10\n    found_on: 2024-05-01\n    method: m\n"
        f"    max_steps: {decimal(10**4300)}\n    max_bits: 9007199254740992\n"
    )
    root = catalogue(files={"maps/3x-plus-1.yaml": path.read_text(encoding="utf-8") + claim})
    run = cli("verify", str(root))
    assert run.code == 1
    assert any(
        line.endswith(
            "coverage[0].max_steps: expected at most 9,007,199,254,740,991, got 10000000000000000000...0000000000 (4301 digits)"
        )
        for line in run.lines
    ), run.lines
    assert any(
        line.endswith("coverage[0].max_bits: expected at most 9,007,199,254,740,991, got 9007199254740992")
        for line in run.lines
    ), run.lines


def test_a_map_whose_cycles_share_a_huge_factor_with_d_builds(cli, catalogue, tmp_path, big):
    # The cycle of conftest.big_cycle: its members share the factor c (over 20,000 digits) with d; the
    # page and the exports write that factor in full (CPython refuses str() of ints over 4,300 digits).
    root = catalogue(files=big_cycle_files(big))
    run = cli("build", str(root), "--out", str(tmp_path / "site"))
    assert run.code == 0, run.out + run.err
    data = json.loads((tmp_path / "site" / "data" / "catalogue.json").read_text(encoding="utf-8"))
    (cycle,) = [c for c in data["cycles"] if c["map"] == "3x-plus-big"]
    assert len(cycle["shared_factor_with_increment"]) > 20_000  # decimal digits of c
