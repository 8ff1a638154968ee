"""The kinds of mutation of the fuzz campaign, each with whether a mutant of it may stay a valid catalogue."""

from __future__ import annotations

import random
from collections.abc import Callable
from dataclasses import dataclass

from catalogue_files import Catalogue
from kinds_numbers import (
    claim_number,
    false_claim_beyond_recheck,
    huge_limits_claim,
    huge_multiplier_broken,
    huge_multiplier_map,
    out_of_range_number,
)
from kinds_text import control_in_name, control_in_value, markdown_beyond_limits, markdown_within_limits, structural

__all__ = ["KINDS_BY_NAME", "Kind"]


@dataclass(frozen=True)
class Kind:
    name: str
    may_stay_valid: bool  # False: every mutant of the kind breaks a rule, so verify must not exit 0
    what: str
    apply: Callable[[Catalogue, random.Random], list[str]]


KINDS_BY_NAME = {
    kind.name: kind
    for kind in (
        Kind(
            "out-of-range-number",
            False,
            "a number out of range (huge, past 64 bits, zero, negative) or a bad date in a numeric field of a map, "
            "cycle, record or reference",
            out_of_range_number,
        ),
        Kind("claim-number", True, "a coverage claim with a huge, zero or negative number in one field", claim_number),
        Kind(
            "false-claim-beyond-recheck",
            False,
            "a coverage claim with a bound above --recheck-up-to over a map with a cycle it does not list",
            false_claim_beyond_recheck,
        ),
        Kind("huge-limits-claim", True, "a coverage claim with huge limits (max_steps 10^9, ...)", huge_limits_claim),
        Kind(
            "huge-multiplier-broken",
            False,
            "branches with multipliers and increments of hundreds to 20,000 digits, and a cycle entry they break",
            huge_multiplier_broken,
        ),
        Kind(
            "huge-multiplier-map",
            True,
            "a new map with multipliers or increments of hundreds to 20,000 digits, with or without a true cycle",
            huge_multiplier_map,
        ),
        Kind(
            "markdown-within-limits", True, "pathological Markdown within the documented limits", markdown_within_limits
        ),
        Kind("markdown-beyond-limits", False, "pathological text beyond a documented limit", markdown_beyond_limits),
        Kind(
            "control-in-name",
            False,
            "control characters, newlines, bidi marks or bytes that are not UTF-8 in a file name, key, map id or "
            "one-line field, or raw in a file",
            control_in_name,
        ),
        Kind("control-in-value", True, "control characters and bidi marks, escaped, in a text value", control_in_value),
        Kind(
            "structural",
            False,
            "a required key deleted, a key duplicated, a type changed, a file truncated, a file swapped for a folder, "
            "a symbolic link or a named pipe",
            structural,
        ),
    )
}
