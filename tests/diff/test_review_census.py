"""The review names the census claims a change adds, removes or changes, and says whether the head proved them.

The facts: the cycles of the shortcut 3x+1 map on Z pass through 0, 1, -1, -5 and -17, the last of 11 steps
(J. C. Lagarias, Amer. Math. Monthly 92 (1985) 3-23, as ../shared/literature.md quotes it).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from builder.catalogue.verify import Limits, verify_catalogue
from builder.diff import compare, render_markdown
from builder.search.census import words_in_length


def _claim(root: Path, up_to: int, method: str = "periplus census in the test") -> None:
    path = root / "maps" / "3x-plus-1.yaml"
    item = f"census:\n  - {{up_to: {up_to}, found_on: 2026-12-04, method: {method}}}\n"
    path.write_text(path.read_text(encoding="utf-8") + item, encoding="utf-8")


def test_an_added_claim_is_named_with_what_proved_it(catalogue: Callable[..., Path]) -> None:
    base, head = catalogue(), catalogue()
    _claim(head, 12)
    result = compare(verify_catalogue(base), verify_catalogue(head))
    words = sum(words_in_length(k) for k in range(1, 13))
    assert result.census == (
        f"maps/3x-plus-1.yaml census[0] added: every cycle of at most 12 steps is listed; proved here: 0 classes "
        f"excluded (no coverage claim searched again), {words:,} words tried",
    )
    text = render_markdown(result, "base", "head")
    assert "## Census claims\n\n- maps/3x-plus-1.yaml census\\[0\\] added: every cycle of at most 12 steps" in text


def test_a_claim_beyond_the_budget_is_named_as_attested_and_a_removed_one_is_named(
    catalogue: Callable[..., Path],
) -> None:
    base, head = catalogue(), catalogue()
    _claim(base, 5)
    _claim(head, 14)
    budget = sum(words_in_length(k) for k in range(1, 11))
    result = compare(
        verify_catalogue(base, Limits(census_words=budget)), verify_catalogue(head, Limits(census_words=budget))
    )
    added, removed = result.census
    assert added.startswith(
        "maps/3x-plus-1.yaml census[0] added: every cycle of at most 14 steps is listed; proved "
        "here only up to 10 steps ("
    )
    assert added.endswith(", stopped by the class (11, 1)): the rest is attested")
    assert removed == "maps/3x-plus-1.yaml: the census claim up to 5 steps is removed"
