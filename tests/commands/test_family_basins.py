"""The family hunt writes each claim's basins (up to BASIN_LIMIT), and every build counts them again.

Facts: under 3x+5 the positive multiples of 5 up to N, N/5 of them, all end in the cycle {5, 10}, 5 times the
cycle {1, 2} of 3x+1 (common practice, no source: T(5m) = 5 T'(m), and every positive start of 3x+1 reaches 1,
T. Oliveira e Silva, Math. Comp. 68 (1999) 371-384); 5 divides T(n) only when it divides n (common practice,
no source), so no other start ends there.  Under 3x+1 the positive starts end in {1, 2} (same source).
"""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from test_family import run, verified

from builder.catalogue import family as familylib
from builder.catalogue.fields import BASIN_LIMIT
from builder.catalogue.model import Basin
from builder.search.survey import Survey


def test_the_family_hunt_writes_basins_that_verify(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    root = tmp_path / "c"
    code, out, _ = run(capsys, "--qx", "3", "--d", "1..5", "--bound", "1000", "--into", root)
    assert code == 0, out
    catalogue = verified(root, recheck=True)  # searched again whole: the basins are counted again and agree
    (five,) = catalogue.maps["3x-plus-5"].coverage
    (one,) = catalogue.maps["3x-plus-1"].coverage
    assert five.rechecked and five.basins is not None and one.basins is not None
    assert Basin(5, 1000 // 5, 5) in five.basins.basins
    assert Basin(1, 1000, 1) in one.basins.basins
    for claim in (five, one):
        assert sum(b.starts for b in claim.basins.basins) + claim.basins.unknown == 2001
    # As written: a block list of {cycle, starts, first} after the unresolved starts, then unknown.
    text = (root / "maps" / "3x-plus-5.yaml").read_text(encoding="utf-8")
    assert "    unresolved: []\n    basins:\n      - {cycle: 0, starts: 1, first: 0}\n" in text
    assert text.endswith("    unknown: 0\n")
    written = yaml.safe_load(text)["coverage"][0]["basins"]
    assert written == [{"cycle": b.cycle, "starts": b.starts, "first": b.first} for b in five.basins.basins]


def test_a_claim_beyond_the_limit_has_no_basins() -> None:
    member = familylib.FamilyMap(3, 1)
    survey = Survey(member.id, member.mapping, BASIN_LIMIT + 1, 10, 64, 10**9, ranges=[(0, BASIN_LIMIT + 1)])
    assert familylib.hunt_basins(survey) is None
