"""Mutations with numbers: numbers out of range in every numeric field, coverage claims, huge multipliers.

Each function changes the catalogue of ``cat`` and returns one line for each change.  The fixture's facts
used below are those of tests/fixtures/valid (its cycles through 0, 1, -1, -5 and -17 of 3x+1 and through
1, 5 and 17 of 3x-1, from Lagarias 1985 as its YAML comments say).
"""

from __future__ import annotations

import datetime
import random
from typing import Any

from catalogue_files import Catalogue, Raw, leaves, set_at, show

__all__ = [
    "claim_number",
    "false_claim_beyond_recheck",
    "huge_limits_claim",
    "huge_multiplier_broken",
    "huge_multiplier_map",
    "out_of_range_number",
]

# Out of every field's range, or unequal to what a field must hold: huge of either sign (past CPython's
# 4,300-digit str() limit too), past 64 bits, zero and small negatives.
NUMBERS: tuple[tuple[str, int], ...] = (
    ("10^500", 10**500),
    ("-10^500", -(10**500)),
    ("10^4300", 10**4300),
    ("10^20000", 10**20000),
    ("-10^20000", -(10**20000)),
    ("3^40000", 3**40000),
    ("2^64+1", 2**64 + 1),
    ("-2^63", -(2**63)),
    ("0", 0),
    ("-1", -1),
    ("-2", -2),
)
# Text YAML 1.1 would take for a timestamp (its regex allows them) that names no date, and a five-digit year.
BAD_DATES = ("2024-02-30", "2024-13-01", "0000-00-00", "99999-01-01")
# Bounds above the campaign's --recheck-up-to of 1,000 (test_campaign.LIMIT_ARGS), up to far beyond.
BEYOND_RECHECK = (("1,001", 1_001), ("10^6", 10**6), ("10^12", 10**12), ("2^64", 2**64), ("10^500", 10**500))
ON = datetime.date(2024, 5, 1)
PROVENANCE = {"found_by": "Periplus fuzz campaign", "found_on": ON, "method": "made by tests/fuzz/mutate.py"}
# Every start |n| <= 100 of the shortcut 3x+1 map reaches one of the fixture's five cycles within 1,000 steps
# and 1,000 bits (counted by iteration; common practice, no source): this claim holds.
BASE_CLAIM = {
    "kind": "all-starts",
    "bound": 100,
    "found_on": ON,
    "method": "exhaustive search, made by tests/fuzz/mutate.py",
    "max_steps": 1_000,
    "max_bits": 1_000,
}


def _claim(bound: int, max_steps: int, max_bits: int, unresolved: list[int] | None = None) -> dict[str, Any]:
    claim: dict[str, Any] = {**BASE_CLAIM, "bound": bound, "max_steps": max_steps, "max_bits": max_bits}
    if unresolved is not None:
        claim["unresolved"] = unresolved
    return claim


def _add_claim(cat: Catalogue, map_id: str, claim: dict[str, Any]) -> str:
    rel = f"maps/{map_id}.yaml"
    doc = cat.load(rel)
    doc["coverage"] = [claim]
    cat.save(rel, doc)
    return f"{rel}: coverage claim " + ", ".join(f"{k} {show(v)}" for k, v in claim.items() if k not in ("method",))


def _numeric_fields(cat: Catalogue) -> list[tuple[str, tuple[Any, ...]]]:
    found = [
        (rel, path)
        for rel in cat.files()
        for path, value in leaves(cat.load(rel))
        if isinstance(value, int | datetime.date) and not isinstance(value, bool)
    ]
    # Text fields that look numeric, and a start given to an entry that has only a word.
    found += [("record.yaml", ("version",)), ("references.yaml", ("lagarias-1985", "doi"))]
    return found + [("cycles/3x-minus-1/through-17.yaml", ("start",))]


def out_of_range_number(cat: Catalogue, rng: random.Random) -> list[str]:
    rel, path = rng.choice(_numeric_fields(cat))
    doc = cat.load(rel)
    old: Any = doc
    for step in path:
        old = old.get(step) if isinstance(old, dict) else old[step]
    new: Any
    if isinstance(old, datetime.date) and rng.random() < 0.4:
        label = new = Raw(rng.choice(BAD_DATES))
    else:
        label, new = rng.choice([(k, v) for k, v in NUMBERS if v != old])
    set_at(doc, path, new)
    cat.save(rel, doc)
    return [f"{rel}: {'.'.join(map(str, path))} = {label} (was {show(old)})"]


def claim_number(cat: Catalogue, rng: random.Random) -> list[str]:
    claim = dict(BASE_CLAIM)
    field = rng.choice(("bound", "max_steps", "max_bits", "unresolved"))
    label, value = rng.choice(NUMBERS)
    claim[field] = [value] if field == "unresolved" else value
    return [_add_claim(cat, "3x-plus-1", claim), f"the claim's {field} set to {label}"]


def false_claim_beyond_recheck(cat: Catalogue, rng: random.Random) -> list[str]:
    label, bound = rng.choice(BEYOND_RECHECK)
    claim = _claim(bound, rng.choice((1_000, 10**6)), rng.choice((1_000, 300_000)))
    if rng.random() < 0.5:
        # T(0) = 0 and T(-1) = -2, T(-2) = -1 under n/2, (3n-1)/2 (computed by hand; common practice, no source).
        return [_add_claim(cat, "3x-minus-1", claim), f"bound {label}: 3x-1 has cycles through 0 and -1, not listed"]
    gone = rng.choice(cat.cycle_files("3x-plus-1"))
    (cat.root / gone).unlink()
    return [f"{gone}: removed", _add_claim(cat, "3x-plus-1", claim), f"bound {label}: the removed cycle is missing"]


def _five_x_plus_one(cat: Catalogue, rng: random.Random) -> list[str]:
    """5x+1 with its cycles through 0, 1 and -1, a claim up to 10 and its three unresolved starts.

    Counted by iteration (common practice, no source): under n/2, (5n+1)/2 every start |n| <= 10 but -9, 7 and
    9 reaches the cycles through 0, 1 (1, 3, 8, 4, 2) or -1 (-1, -2), or the cycle through 13 (from 5 and 10);
    the orbits of -9, 7 and 9 grow past any small size limit.  The cycles through 13 and 17 lie above the bound.
    """
    branches = [{"residue": 0, "multiplier": 1, "increment": 0}, {"residue": 1, "multiplier": 5, "increment": 1}]
    summary = "T(n) = n/2 for even n and (5n+1)/2 for odd n."
    cat.save("maps/5x-plus-1.yaml", {"name": "5x+1", "modulus": 2, "branches": branches, "summary": summary})
    starts = [0, 1, -1] + rng.choice(([], [13], [13, 17]))
    for start in starts:
        name = f"through-minus-{-start}" if start < 0 else f"through-{start}"
        cat.save(f"cycles/5x-plus-1/{name}.yaml", {"map": "5x-plus-1", "start": start, "provenance": PROVENANCE})
    claim = _claim(10, 10**9, rng.choice((300_000, 100_000, 30_000)), [-9, 7, 9])
    return [f"maps/5x-plus-1.yaml: new map with cycles through {starts}", _add_claim(cat, "5x-plus-1", claim)]


def huge_limits_claim(cat: Catalogue, rng: random.Random) -> list[str]:
    pick = rng.randrange(3)
    steps, bits = rng.choice((10**9, 10**6)), rng.choice((300_000, 100_000))
    if pick == 0:
        label, bound = rng.choice((("10^9", 10**9), ("10^12", 10**12), ("2^40", 2**40), ("10^18", 10**18)))
        return [_add_claim(cat, "3x-plus-1", _claim(bound, steps, bits)), f"bound {label}, beyond any recheck"]
    if pick == 1:
        return [_add_claim(cat, "3x-plus-1", _claim(rng.choice((100, 500, 1_000)), steps, bits))]
    return _five_x_plus_one(cat, rng)


# --- huge multipliers and increments -------------------------------------------------------------------


def _odd(rng: random.Random, digits: int) -> int:
    return rng.randrange(10 ** (digits - 1), 10**digits) | 1


def _offset(word: str, q: int) -> int:
    """B(w) = sum_j v_j q^(v_{j+1}+...+v_{k-1}) 2^j along a 0/1 word w.

    J. C. Lagarias, Acta Arith. 56 (1990), Thm 2.1 (as quoted in tests/conftest.py) for q = 3: a cycle of
    n/2, (3n+d)/2 with parity word w of length k and x ones starts at d B(w) / (2^k - 3^x); the same
    composition of the affine steps holds with q in place of 3.
    """
    return sum(int(v) * q ** word[j + 1 :].count("1") * 2**j for j, v in enumerate(word))


def _aperiodic_word(rng: random.Random) -> str:
    while True:
        k = rng.randint(3, 12)
        word = "".join(rng.choice("01") for _ in range(k))
        if "1" in word and all(word != word[:p] * (k // p) for p in range(1, k) if k % p == 0):
            return word


def _cycle_map(q: int, word: str, c: int) -> tuple[int, int, list[int]]:
    """The increment d = c (2^k - q^x) and the cycle c B(w) of n/2, (qn+d)/2, checked by iteration."""
    k, x = len(word), word.count("1")
    d = c * (2**k - q**x)
    members, n = [], c * _offset(word, q)
    for bit in word:
        assert n % 2 == int(bit), "the constructed orbit leaves its word"
        members.append(n)
        n = n // 2 if n % 2 == 0 else (q * n + d) // 2
    assert n == members[0], "the constructed cycle does not close"
    return d, members[0], members


def _map_doc(name: str, a: int, b: int) -> dict[str, Any]:
    branches = [{"residue": 0, "multiplier": 1, "increment": 0}, {"residue": 1, "multiplier": a, "increment": b}]
    return {"name": name, "modulus": 2, "branches": branches, "summary": "A map with huge constants."}


def _huge_cycle(rng: random.Random, digits: int) -> tuple[int, int, str, int, list[int]]:
    """A map n/2, (qn+d)/2 with a huge q or a huge d, and one of its cycles: (q, d, word, start, members)."""
    if rng.random() < 0.5:  # a huge multiplier q: the cycle c, 2c of word "10" (d = c (4 - q))
        q, word, c = _odd(rng, digits), "10", rng.choice((1, 3 ** rng.randint(1, 2_000)))
    else:  # a small multiplier with a huge scale c = 3^N (about ``digits`` digits)
        q, word, c = rng.choice((3, 5, 7)), _aperiodic_word(rng), 3 ** int(digits / 0.4771 + 1)
    d, start, members = _cycle_map(q, word, c)
    return q, d, word, start, members


def huge_multiplier_broken(cat: Catalogue, rng: random.Random) -> list[str]:
    digits = rng.choice((200, 1_000, 5_000, 20_000))
    pick = rng.randrange(3)
    if pick == 0:  # the listed cycles of 3x+1 through 1, -1, -5 and -17 use the odd branch
        a = _odd(rng, digits)
        b = rng.choice((1, -1, _odd(rng, rng.choice((3, digits)))))
        b += 2 if a + b == 4 else 0  # T(1) = (a + b) / 2 must not be 2
        doc = cat.load("maps/3x-plus-1.yaml")
        doc["branches"][1] = {"residue": 1, "multiplier": a, "increment": b}
        cat.save("maps/3x-plus-1.yaml", doc)
        return [f"maps/3x-plus-1.yaml: odd branch ({show(a)} n + {show(b)}) / 2; its cycles no longer close"]
    if pick == 1:  # the word 10 says T(1) = 2, but T(1) = (a + b) / 2 with a + b not 4
        a, b = _odd(rng, digits), _odd(rng, rng.choice((3, digits))) * rng.choice((1, -1))
        b += 4 if (a + b) in (2, 4) else 0
        cat.save("maps/huge.yaml", _map_doc("huge", a, b))
        cat.save("cycles/huge/through-1.yaml", {"map": "huge", "start": 1, "word": "10", "provenance": PROVENANCE})
        return [f"maps/huge.yaml: odd branch ({show(a)} n + {show(b)}) / 2", "cycles/huge/through-1.yaml: start 1"]
    q, d, word, start, _ = _huge_cycle(rng, digits)
    cat.save("maps/huge.yaml", _map_doc("huge", q, d))
    wrong = {"map": "huge", "start": start + 2, "word": word, "provenance": PROVENANCE}
    cat.save("cycles/huge/off-by-two.yaml", wrong)
    return [
        f"maps/huge.yaml: odd branch ({show(q)} n + {show(d)}) / 2",
        f"cycles/huge/off-by-two.yaml: word {word} from {show(start + 2)}, 2 above its cycle's start",
    ]


def huge_multiplier_map(cat: Catalogue, rng: random.Random) -> list[str]:
    digits = rng.choice((200, 1_000, 5_000, 20_000))
    if rng.random() < 0.25:
        a, b = _odd(rng, digits), _odd(rng, rng.choice((3, digits)))
        cat.save("maps/huge.yaml", _map_doc("huge", a, b))
        return [f"maps/huge.yaml: new map, odd branch ({show(a)} n + {show(b)}) / 2, no cycle"]
    q, d, word, start, members = _huge_cycle(rng, digits)
    cat.save("maps/huge.yaml", _map_doc("huge", q, d))
    entry: dict[str, Any] = {"map": "huge"}
    given = rng.choice((("start",), ("word",), ("start", "word", "length"), ("start", "members")))
    values = {"start": start, "word": word, "length": len(word), "members": members}
    entry.update({key: values[key] for key in given})
    entry["provenance"] = PROVENANCE
    cat.save("cycles/huge/big.yaml", entry)
    return [
        f"maps/huge.yaml: new map, odd branch ({show(q)} n + {show(d)}) / 2",
        f"cycles/huge/big.yaml: its cycle of word {word} through {show(start)}, given by {', '.join(given)}",
    ]
