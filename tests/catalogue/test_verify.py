"""verify_catalogue: the verified model against published cycles, and the problems it reports."""

from __future__ import annotations

import dataclasses
import sys

import pytest
import sympy
from conftest import (
    BROKEN_CASES,
    PROVENANCE,
    VALID,
    big_cycle_files,
    broken_copy,
    cycle_offset,
    decimal,
    overlay_files,
)

from builder.catalogue.verify import Limits, verify_catalogue
from builder.errors import CatalogueUnreadable, Problem

# J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, via /work/shared/literature.md (status: memory):
# cycles of the shortcut 3x+1 map on Z through 0, 1, -1, -5, -17 with shortcut lengths 1, 2, 1, 3, 11,
# odd steps 0, 1, 1, 2, 7 and standard-map lengths 1, 3, 2, 5, 18.
LAGARIAS_3X_PLUS_1 = {0: (1, 0, 1), 1: (2, 1, 3), -1: (1, 1, 2), -5: (3, 2, 5), -17: (11, 7, 18)}
# Same source: the cycles of 3x-1 on the positives have least members 1, 5, 17, the negatives of the 3x+1 ones.
LAGARIAS_3X_MINUS_1 = (1, 5, 17)


def shortcut(d):
    """T(n) = n/2 for even n, (3n+d)/2 for odd n (the shortcut form in literature.md)."""
    return lambda n: n // 2 if n % 2 == 0 else (3 * n + d) // 2


@pytest.fixture(scope="module")
def valid_report():
    return verify_catalogue(VALID)


def test_valid_fixture_has_no_problems(valid_report):
    assert valid_report.problems == ()
    assert valid_report.ok
    assert valid_report.files == 12
    cat = valid_report.catalogue
    assert sorted(cat.maps) == ["3x-minus-1", "3x-plus-1"]
    assert sorted(cat.references) == ["lagarias-1985", "lagarias-1990"]


def test_3x_plus_1_cycles_match_lagarias_1985(valid_report):
    cycles = valid_report.catalogue.cycles["3x-plus-1"]
    # Ordered by canonical member: least absolute value, the positive one first on a tie (common practice, no source).
    assert [c.canonical for c in cycles] == [0, 1, -1, -5, -17]
    for c in cycles:
        length, odd, standard = LAGARIAS_3X_PLUS_1[c.canonical]
        assert (c.length, c.residue_counts[1], c.standard_length) == (length, odd, standard)
        assert c.canonical == min(c.members, key=abs)


def test_3x_minus_1_cycles_are_the_negatives_of_the_3x_plus_1_ones(valid_report):
    cat = valid_report.catalogue
    minus = cat.cycles["3x-minus-1"]
    assert [c.minimum for c in minus] == list(LAGARIAS_3X_MINUS_1)
    plus = {c.canonical: c for c in cat.cycles["3x-plus-1"]}
    for c in minus:
        assert sorted(c.members) == sorted(-m for m in plus[-c.canonical].members)


@pytest.mark.parametrize("map_id, d", [("3x-plus-1", 1), ("3x-minus-1", -1)])
def test_members_follow_the_map_and_the_word_gives_their_residues(valid_report, map_id, d):
    step = shortcut(d)
    for c in valid_report.catalogue.cycles[map_id]:
        k = c.length
        for i in range(k):
            assert step(c.members[i]) == c.members[(i + 1) % k]
            assert c.word[i] == c.members[i] % 2
        assert c.canonical_members == c.members[c.canonical_index :] + c.members[: c.canonical_index]


@pytest.mark.parametrize("map_id, d", [("3x-plus-1", 1), ("3x-minus-1", -1)])
def test_cycle_equation_matches_lagarias_1990(valid_report, map_id, d):
    # Lagarias 1990 Thm 2.1 via literature.md (3x+1); with increment d every term of B scales by d.
    # Exact rational arithmetic by sympy, independently of the engine.
    for c in valid_report.catalogue.cycles[map_id]:
        word = "".join(map(str, c.canonical_word))
        k, x = len(word), word.count("1")
        eq = c.equation
        assert (eq.multiplier, eq.denominator) == (3**x, 2**k)
        assert eq.offset == d * cycle_offset(word)
        assert eq.target == 2**k - 3**x
        assert sympy.Rational(eq.offset, eq.target) == c.canonical


def test_word_only_entry_derives_start_minus_17(catalogue):
    # Lagarias 1985 via literature.md: the 3x+1 cycle through -17 has 11 steps, 7 of them odd; its word read
    # from -17 is 11110111000 (-17, -25, -37, -55 odd, -82 even, -41, -61, -91 odd, -136, -68, -34 even: by hand).
    root = catalogue(
        files={"cycles/3x-plus-1/through-minus-17.yaml": 'map: 3x-plus-1\nword: "11110111000"\n' + PROVENANCE}
    )
    report = verify_catalogue(root)
    assert report.problems == ()
    (c,) = [c for c in report.catalogue.cycles["3x-plus-1"] if c.id == "through-minus-17"]
    assert c.start == -17 == c.canonical
    assert c.canonical_index == 0
    eq = c.equation
    assert eq.multiplier == 3**7
    assert eq.target == 2**11 - 3**7 == -139
    # B by the Lagarias 1990 formula (literature.md), and -17 = B / (2^11 - 3^7) by sympy.
    assert eq.offset == cycle_offset("11110111000") == 2363
    assert sympy.Rational(eq.offset, eq.target) == -17


def test_word_without_an_integer_cycle(catalogue):
    # Along 11100 the shortcut 3x+1 map gives (27n + 19)/32 (fact of the trade; Lagarias 1990 Thm 2.1 via
    # literature.md), so n = 19/5, not an integer (sympy).
    assert cycle_offset("11100") == 19
    assert sympy.Rational(19, 2**5 - 3**3) == sympy.Rational(19, 5)
    root = catalogue(files={"cycles/3x-plus-1/word-11100.yaml": 'map: 3x-plus-1\nword: "11100"\n' + PROVENANCE})
    (p,) = verify_catalogue(root).problems
    assert p.code == "no-integer-cycle"
    assert (p.position.line, p.position.column, p.position.key_path) == (2, 7, ("word",))
    assert "19 / 5" in p.message


# One kind of problem per broken case, at the node at fault: (case, code, file, line, key path).
# The fact that makes each claim false is named in tests/fixtures/broken/<case>/expected.txt; the rest are
# malformed input with no mathematical claim.
CODES = [
    ("wrong-word", "wrong-word", "cycles/3x-plus-1/through-minus-5.yaml", 3, ("word",)),
    ("wrong-length", "wrong-length", "cycles/3x-plus-1/through-minus-17.yaml", 3, ("length",)),
    ("wrong-member", "wrong-members", "cycles/3x-plus-1/through-minus-5.yaml", 3, ("members", 2)),
    ("periodic-word", "periodic-word", "cycles/3x-plus-1/through-1.yaml", 3, ("word",)),
    ("not-on-a-cycle", "not-periodic", "cycles/3x-plus-1/from-7.yaml", 2, ("start",)),
    ("no-integer-cycle", "no-integer-cycle", "cycles/3x-plus-1/word-11100.yaml", 2, ("word",)),
    ("duplicate-cycle", "duplicate-cycle", "cycles/3x-plus-1/through-2.yaml", 2, ("start",)),
    ("duplicate-cycle-by-word", "duplicate-cycle", "cycles/3x-minus-1/word-101.yaml", 2, ("word",)),
    ("unknown-map", "unknown-map", "cycles/5x-plus-1/through-1.yaml", 1, ("map",)),
    ("map-folder-mismatch", "wrong-folder", "cycles/3x-plus-1/through-5.yaml", 1, ("map",)),
    ("unknown-reference", "unknown-reference", "maps/3x-minus-1.yaml", 7, ("references", 1)),
    ("ill-defined-map", "ill-defined-map", "maps/3x-plus-2.yaml", 5, ("branches", 1)),
    ("unknown-field", "unknown-field", "cycles/3x-plus-1/through-minus-1.yaml", 3, ("lenght",)),
    ("missing-field", "missing-field", "cycles/3x-plus-1/through-minus-1.yaml", 1, ()),
    ("duplicate-key", "duplicate-key", "cycles/3x-plus-1/through-minus-5.yaml", 3, ()),
    ("unquoted-word", "unquoted-word", "cycles/3x-plus-1/through-minus-5.yaml", 3, ("word",)),
    ("non-utf8", "encoding", "cycles/3x-plus-1/through-minus-5.yaml", 4, ()),
    ("control-character", "encoding", "cycles/3x-plus-1/through-minus-5.yaml", 6, ()),
    ("empty-file", "empty-file", "maps/blank.yaml", 0, ()),
    ("bad-file-name", "bad-id", "cycles/3x-plus-1/Upper.yaml", 0, ()),
    ("path-in-map-field", "bad-id", "cycles/3x-plus-1/through-minus-5.yaml", 1, ("map",)),
    ("subfolder-in-maps", "layout", "maps/extra", 0, ()),
]


@pytest.mark.parametrize(("case", "code", "file", "line", "key_path"), CODES, ids=[c[0] for c in CODES])
def test_problem_code_and_position(tmp_path, case, code, file, line, key_path):
    root = broken_copy(case, tmp_path / "cat")
    report = verify_catalogue(root)
    assert not report.ok
    found = [p for p in report.problems if p.code == code and p.position.file == root / file]
    assert found, [str(p) for p in report.problems]
    assert (found[0].position.line, found[0].position.key_path) == (line, key_path)


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_malformed_input_gives_problems_never_an_exception(tmp_path, case):
    root = broken_copy(case, tmp_path / "cat")
    report = verify_catalogue(root)
    assert report.problems
    for p in report.problems:
        assert isinstance(p, Problem)
        assert p.position.file.is_relative_to(root)
        assert "\n" not in p.message
        assert p.position.line >= 0 and p.position.column >= 0
        # A problem with the content of a file is positioned at a line; only whole-file problems
        # (layout, names, encoding of a whole file, an empty file) may have none.
        if p.position.line == 0:
            assert p.code in {"layout", "bad-id", "empty-file", "unreadable"}, str(p)


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_a_broken_entry_never_reaches_the_model(tmp_path, case):
    root = broken_copy(case, tmp_path / "cat")
    report = verify_catalogue(root)
    bad = {p.position.file for p in report.problems}
    cat = report.catalogue
    for entry in cat.maps.values():
        assert entry.path not in bad
    for cycles in cat.cycles.values():
        for c in cycles:
            assert c.path not in bad
            assert c.map_id in cat.maps


def test_every_entry_is_checked_after_others_fail(tmp_path):
    root = broken_copy("several", tmp_path / "cat")
    report = verify_catalogue(root)
    assert {str(p.position.file.relative_to(root)) for p in report.problems} == set(overlay_files("several"))
    # The untouched entries still verify: 3x+1 through 0, 1, -1, -5 and 3x-1 through 1, 17.
    cat = report.catalogue
    assert [c.canonical for c in cat.cycles["3x-plus-1"]] == [0, 1, -1, -5]
    assert [c.canonical for c in cat.cycles["3x-minus-1"]] == [1, 17]


def test_problems_are_sorted_by_file_then_line(tmp_path):
    root = broken_copy("several", tmp_path / "cat")
    problems = verify_catalogue(root).problems
    keys = [(p.position.file, p.position.line, p.position.column) for p in problems]
    assert keys == sorted(keys)


def test_duplicate_keeps_the_first_file_only(tmp_path):
    root = broken_copy("duplicate-cycle", tmp_path / "cat")
    report = verify_catalogue(root)
    ids = [c.id for c in report.catalogue.cycles["3x-plus-1"] if c.canonical == 1]
    assert ids == ["through-1"]


def test_huge_start_verifies_without_touching_the_int_limit(catalogue, big):
    limit = sys.get_int_max_str_digits()
    root = catalogue(files=big_cycle_files(big))
    report = verify_catalogue(root)
    assert report.problems == ()
    (c,) = report.catalogue.cycles["3x-plus-big"]
    assert len(decimal(c.start)) > 20_000
    assert c.start == big.start
    assert c.members == big.members
    assert c.length == 11
    assert sys.get_int_max_str_digits() == limit


@pytest.mark.parametrize(
    "claims",
    [
        "length: 12\n",
        'word: "11110111001"\n',
        "members: [1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]\n",
    ],
    ids=["length", "word", "members"],
)
def test_false_claim_on_a_huge_cycle_is_reported_abbreviated(catalogue, big, claims):
    limit = sys.get_int_max_str_digits()
    root = catalogue(files=big_cycle_files(big, claims=claims))
    report = verify_catalogue(root)
    (p,) = report.problems
    text = str(p)
    assert len(text) < 400
    assert f"({len(decimal(big.start))} digits)" in text
    assert sys.get_int_max_str_digits() == limit


def test_huge_start_off_the_cycle_is_reported_not_raised(catalogue, big):
    # big.start + 2 is odd like big.start; whatever its orbit does, verify must report it, not raise.
    files = big_cycle_files(big)
    files["cycles/3x-plus-big/huge.yaml"] = files["cycles/3x-plus-big/huge.yaml"].replace(
        decimal(big.start), decimal(big.start + 2)
    )
    report = verify_catalogue(catalogue(files=files), Limits(max_steps=2000))
    (p,) = report.problems
    assert p.code in {"not-periodic", "unresolved"}
    assert "digits)" in p.message and len(p.message) < 400


def test_limits_max_steps(valid_report):
    report = verify_catalogue(VALID, Limits(max_steps=10))
    # The only cycles longer than 10 steps are those through -17 and 17 (length 11, Lagarias 1985 via literature.md).
    assert sorted(str(p.position.file.relative_to(VALID)) for p in report.problems) == [
        "cycles/3x-minus-1/through-17.yaml",
        "cycles/3x-plus-1/through-minus-17.yaml",
    ]
    assert {p.code for p in report.problems} == {"unresolved"}
    assert verify_catalogue(VALID, Limits(max_steps=11)).ok


def test_model_is_frozen(valid_report):
    c = valid_report.catalogue.cycles["3x-plus-1"][0]
    with pytest.raises(dataclasses.FrozenInstanceError):
        c.start = 5  # type: ignore[misc]
    with pytest.raises(TypeError):
        valid_report.catalogue.maps["x"] = None  # type: ignore[index]


@pytest.mark.parametrize("what", ["missing", "file", "no-maps"])
def test_unreadable_catalogue_raises_catalogue_unreadable(tmp_path, what):
    target = tmp_path / "target"
    if what == "file":
        target.write_text("x\n", encoding="utf-8")
    elif what == "no-maps":
        target.mkdir()
    with pytest.raises(CatalogueUnreadable) as info:
        verify_catalogue(target)
    assert info.value.exit_code == 2


@pytest.mark.parametrize(
    ("line", "message"),
    [
        # YAML 1.1 int type (yaml.org/type/int.html, open standard): 007 is octal.
        (
            "length: 007",
            "length: expected an integer, got the number 007; leading zeros are not allowed (YAML 1.1 reads 007 as octal)",
        ),
        # YAML 1.1 bool type (yaml.org/type/bool.html): yes is a boolean.
        ("length: yes", "length: expected an integer, got the boolean yes"),
        # YAML 1.1 float type (yaml.org/type/float.html): 2.0 is a float.
        ("length: 2.0", "length: expected an integer, got the number 2.0"),
        # Malformed input: a quoted number.
        ("length: '2'", "length: expected an integer, got the quoted text '2'; write it without quotes"),
        # YAML 1.1 null type (yaml.org/type/null.html): ~ is null.
        ("length: ~", "length: expected an integer, got nothing (an empty value)"),
        # Malformed input: a list where an integer is meant.
        ("length: [2]", "length: expected an integer, got a list"),
    ],
)
def test_wrong_types_for_an_integer(catalogue, line, message):
    root = catalogue(files={"cycles/3x-plus-1/through-1.yaml": f"map: 3x-plus-1\nstart: 1\n{line}\n" + PROVENANCE})
    (p,) = verify_catalogue(root).problems
    assert (p.position.line, p.position.column, p.message) == (3, 9, message)


def test_an_entry_from_a_file_the_loader_faulted_never_reaches_the_model(catalogue):
    # An anchor is refused, but the value is still there: the entry must fail, not be published.
    root = catalogue(files={"cycles/3x-plus-1/through-1.yaml": "map: 3x-plus-1\nstart: &s 1\n" + PROVENANCE})
    report = verify_catalogue(root)
    (p,) = report.problems
    assert p.message == "anchor &s is not allowed in catalogue files"
    assert [c.canonical for c in report.catalogue.cycles["3x-plus-1"]] == [0, -1, -5, -17]


def test_an_entry_started_off_its_canonical_member_has_the_canonical_cycle_equation(catalogue):
    # Lagarias 1985 via literature.md: -17 -> -25 -> ... is the 3x+1 cycle of length 11 (the word from -17,
    # 11110111000, by hand above).  Started at -25, the equation is still read from -17: B by the
    # Lagarias 1990 formula, and -17 = B / (2^11 - 3^7) by sympy.
    root = catalogue(files={"cycles/3x-plus-1/through-minus-17.yaml": "map: 3x-plus-1\nstart: -25\n" + PROVENANCE})
    report = verify_catalogue(root)
    assert report.problems == ()
    (c,) = [c for c in report.catalogue.cycles["3x-plus-1"] if c.id == "through-minus-17"]
    assert c.start == -25 and c.canonical == -17 and c.canonical_index == 10
    eq = c.equation
    assert (eq.multiplier, eq.offset, eq.denominator) == (3**7, cycle_offset("11110111000"), 2**11)
    assert sympy.Rational(eq.offset, eq.target) == -17
