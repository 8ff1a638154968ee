"""periplus draft: a number or a word becomes an entry that verifies unchanged."""

from __future__ import annotations

import datetime as dt

from builder.catalogue.draft import draft_cycle
from builder.catalogue.verify import Limits, verify_catalogue


def test_a_drafted_entry_verifies_unchanged(cli, catalogue):
    # 3x+5 cycle with least member 187, length 27 (Belaga-Mignotte via literature.md, table secondary).
    root = catalogue(
        files={
            "maps/3x-plus-5.yaml": (
                "name: 3x+5\nmodulus: 2\nbranches:\n  - {residue: 0, multiplier: 1, increment: 0}\n"
                "  - {residue: 1, multiplier: 3, increment: 5}\nsummary: s\n"
            )
        }
    )
    run = cli("draft", "3x-plus-5", "--start", "283", "--catalogue", str(root), "--write")  # 283 = T(187)
    assert run.code == 0, run.err
    assert run.lines[:2] == ["map: 3x-plus-5", "start: 187"]
    assert "length: 27" in run.lines
    written = root / "cycles" / "3x-plus-5" / "187.yaml"
    assert written.read_text(encoding="utf-8") == run.out
    report = verify_catalogue(root)
    assert report.ok, [str(p) for p in report.problems]
    (cycle,) = report.catalogue.cycles["3x-plus-5"]
    assert cycle.canonical == 187 and cycle.length == 27


def test_a_word_gives_its_start(catalogue):
    # 3x+1: the word 11110111000 is the cycle through -17 (Lagarias 1985 via literature.md).
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    report = verify_catalogue(root)
    draft = draft_cycle(report.catalogue, root, "3x-plus-1", None, "11110111000", Limits(), dt.date(2026, 12, 1))
    assert draft.ok and draft.text is not None
    assert draft.text.splitlines()[1] == "start: -17"
    assert draft.path == root / "cycles" / "3x-plus-1" / "minus-17.yaml"
    assert "  found_on: 2026-12-01" in draft.text.splitlines()


def test_a_duplicate_is_refused_and_named(cli, catalogue):
    # The cycle 1, 2 of 3x+1 is in the fixture (Lagarias 1985 via literature.md); 2 is its other member.
    root = catalogue()
    run = cli("draft", "3x-plus-1", "--start", "2", "--catalogue", str(root))
    assert run.code == 1
    assert "already catalogued" in run.err and "through-1.yaml" in run.err
    assert run.out == ""


def test_a_start_off_the_cycle_says_where_it_goes(cli, catalogue):
    # 3x+1 from 7 reaches the cycle through 1 after 10 shortcut steps (common practice, no source:
    # 7, 11, 17, 26, 13, 20, 10, 5, 8, 4, 2).
    run = cli("draft", "3x-plus-1", "--start", "7", "--catalogue", str(catalogue()))
    assert run.code == 1
    assert run.err.strip() == (
        "periplus: 7 is not on a cycle: its orbit enters the cycle through 1 (length 2) after 10 steps; "
        "draft that one with --start 1"
    )


def test_a_word_without_an_integer_cycle(cli, catalogue):
    # 3x+1 word 11100: (27n + 19)/32, target 5, 19/5 is not an integer (fact of the trade).
    run = cli("draft", "3x-plus-1", "--word", "11100", "--catalogue", str(catalogue()))
    assert run.code == 1
    assert "no integer cycle follows this word" in run.err


def test_bad_input_is_a_usage_error(cli, catalogue):
    root = catalogue()
    assert cli("draft", "3x-plus-1", "--start", "12a", "--catalogue", str(root)).code == 2
    assert cli("draft", "3x-plus-1", "--word", "102", "--catalogue", str(root)).code == 2
    assert cli("draft", "no-such-map", "--start", "1", "--catalogue", str(root)).code == 2


def test_unfilled_placeholders_are_warned_about_but_do_not_fail(cli, catalogue):
    # The cycle through -17 of 3x+1 (Lagarias 1985 via literature.md), drafted from its member -25.
    root = catalogue()
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    assert cli("draft", "3x-plus-1", "--start", "-25", "--catalogue", str(root), "--write").code == 0
    run = cli("verify", str(root))
    assert run.code == 0
    path = root / "cycles" / "3x-plus-1" / "minus-17.yaml"
    assert run.lines == [
        f"{path}:7:13: warning: provenance.found_by: still the draft's placeholder 'FILL IN: who found it'; "
        "say who found the cycle",
        f"{path}:9:11: warning: provenance.method: still the draft's placeholder 'FILL IN: how it was found'; "
        "say how it was found (range searched, limits)",
        "verified 2 maps, 8 cycles and 2 references in 12 files: every claim holds (2 warnings)",
    ]
