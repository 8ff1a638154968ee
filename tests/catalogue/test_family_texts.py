"""The texts a family hunt writes: map ids and names, new map files, and claims added to a map file as written.

Values are checked against the shipped catalogue's files (catalogue/maps/3x-plus-5.yaml) or are facts
anyone can re-derive by hand ("common practice, no source").
"""

from __future__ import annotations

import datetime
from pathlib import Path

import pytest
import yaml
from conftest import REPO

from builder.arith.dynamics import AffineMap
from builder.catalogue.claims import ClaimError, append_claim
from builder.catalogue.family import FamilyMap, claim_text, family_maps, map_text, skipped_increments
from builder.search.survey import Survey

SHIPPED_MAP = REPO / "catalogue" / "maps" / "3x-plus-5.yaml"
PATH = Path("maps/3x-plus-5.yaml")


def _claim(indent: str) -> str:
    survey = Survey("3x-plus-5", FamilyMap(3, 5).mapping, 50, 1000, 64, 10**9, ranges=[(0, 50)])
    survey.reasons = {-7: "steps", 9: "magnitude"}
    return claim_text(survey, datetime.date(2026, 1, 2), "a test: method", indent)


def test_ids_and_names_follow_the_shipped_catalogue() -> None:
    # The shipped catalogue's map files (catalogue/maps/3x-plus-5.yaml, 3x-minus-1.yaml, 5x-plus-1.yaml).
    assert [(m.id, m.name) for m in (FamilyMap(3, 5), FamilyMap(3, -1), FamilyMap(5, 1))] == [
        ("3x-plus-5", "3x+5"),
        ("3x-minus-1", "3x-1"),
        ("5x-plus-1", "5x+1"),
    ]
    assert FamilyMap(3, -7).mapping == AffineMap(2, ((1, 0), (3, -7)))
    # Common practice, no source: the odd d in -10..10 that 3 does not divide, and those it does.
    assert [m.d for m in family_maps(3, -10, 10)] == [-7, -5, -1, 1, 5, 7]
    assert skipped_increments(3, -10, 10) == [-9, -3, 3, 9]


def test_a_new_map_file_reads_as_the_shipped_one_apart_from_its_notes_and_claims() -> None:
    shipped = yaml.safe_load(SHIPPED_MAP.read_text(encoding="utf-8"))
    made = yaml.safe_load(map_text(FamilyMap(3, 5), ("belaga-mignotte-1998",)))
    for key in ("name", "modulus", "branches", "summary", "references"):
        assert made[key] == shipped[key], key
    assert "the fixed point -5" in made["notes"] and "g times each cycle of 3x+(5/g)" in made["notes"]
    assert "coverage" not in made


def test_a_claim_is_added_after_the_last_claim_keeping_comments_and_later_fields() -> None:
    text = (
        "# a comment at the top\n"
        "name: 3x+5\n"
        "coverage:\n"
        "- kind: all-starts   # the dash at the key's own indent\n"
        "  bound: 10\n"
        "  found_on: 2020-01-01\n"
        "  method: by hand\n"
        "  max_steps: 10\n"
        "  max_bits: 10\n"
        "\n"
        "# the references come next\n"
        "references: [x]\n"
    )
    updated = append_claim(text, PATH, _claim)
    head, tail = text.split("\n\n# the references")
    assert updated == head + "\n" + _claim("") + "\n# the references" + tail
    data = yaml.safe_load(updated)
    assert [c["bound"] for c in data["coverage"]] == [10, 50] and data["references"] == ["x"]
    assert data["coverage"][1]["unresolved"] == [-7, 9] and data["coverage"][1]["method"] == "a test: method"


def test_a_claim_is_added_to_the_shipped_map_file_at_its_indent() -> None:
    # after the last coverage claim, before the census claims that follow the coverage list in the shipped file
    text = SHIPPED_MAP.read_text(encoding="utf-8")
    head, census, tail = text.partition("\ncensus:\n")
    assert census, "the shipped 3x+5 has census claims after its coverage claims"
    updated = append_claim(text, PATH, _claim)
    assert updated == head + "\n" + _claim("  ") + census.lstrip("\n") + tail


def test_a_census_claim_is_added_to_its_own_list() -> None:
    text = "name: 3x+5\ncoverage:\n  - {kind: all-starts}\ncensus:\n  - {up_to: 5}\n"
    updated = append_claim(text, PATH, lambda indent: f"{indent}- {{up_to: 9}}\n", "census")
    assert updated == text + "  - {up_to: 9}\n"


def test_a_file_without_claims_gets_a_coverage_field_at_its_end() -> None:
    text = "name: 3x+5\nnotes: |\n  a note\n# last comment"
    assert append_claim(text, PATH, _claim) == text + "\ncoverage:\n" + _claim("  ")


def test_a_flow_list_of_claims_is_refused_with_a_message() -> None:
    with pytest.raises(ClaimError, match=r"^maps/3x-plus-5.yaml:2:1: coverage: expected a block list .* got a flow"):
        append_claim("name: 3x+5\ncoverage: []\n", PATH, _claim)


def test_a_claim_needs_a_complete_hunt() -> None:
    survey = Survey("3x-plus-5", FamilyMap(3, 5).mapping, 50, 1000, 64, 10**9, ranges=[(0, 20)])
    with pytest.raises(ValueError, match=r"expected a hunt that covered every start with \|n\| in 0..50, got 0..20"):
        claim_text(survey, datetime.date(2026, 1, 2), "m")
