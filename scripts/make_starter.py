"""Regenerate the starter catalogue's cycle files and coverage claims by exhaustive search.

    python scripts/make_starter.py [CATALOGUE]

For every map in the plan below, every start n with |n| <= its bound is
followed exactly (builder.search.engine, the same engine as `periplus hunt`);
each cycle found gets a file cycles/<map-id>/<canonical>.yaml, and the map
file's `coverage:` block (its last field) is rewritten with the claims the
search supports, unresolved starts included.  Map files other than 3x+d
(|d| > 1) are written by hand and only their coverage block is replaced;
references.yaml is never touched.  Run `periplus verify` afterwards: the
output is checked like any contribution.
"""

from __future__ import annotations

import sys
from pathlib import Path

import yaml

from builder.arith.dynamics import AffineMap
from builder.catalogue.entries import cycle_file_id, entry_text
from builder.search.definition import HuntResult
from builder.search.engine import hunt_range

FOUND_ON = "2026-12-01"
FOUND_BY = "Periplus starter search"

# Published sources for particular cycles: (map id, canonical member) -> reference keys.
SOURCES: dict[tuple[str, int], tuple[str, ...]] = {
    **{("3x-plus-1", c): ("lagarias-1985",) for c in (0, 1, -1, -5, -17)},
    **{("3x-plus-1-standard", c): ("lagarias-1985",) for c in (0, 1, -1, -5, -17)},
    **{("3x-minus-1", c): ("lagarias-1985",) for c in (1, 5, 17)},
    **{("5x-plus-1", c): ("lagarias-bibliography",) for c in (1, 13, 17)},
    ("181x-plus-1", 27): ("crandall-1978",),
    **{("mod-3-permutation", c): ("klamkin-1963", "lagarias-2010") for c in (1, 2, 4, 44)},
}


def map_id_of(d: int) -> str:
    return f"3x-plus-{d}" if d > 0 else f"3x-minus-{-d}"


def plan() -> dict[str, tuple[int, int, int, tuple[int, ...]]]:
    """Map id -> (search bound, max_steps, max_bits, bounds of the coverage claims to record)."""
    wide = (10**6, 10**5, 4096, (10**5, 10**6))
    out = {"3x-plus-1": wide, "3x-minus-1": wide, "3x-plus-1-standard": wide}
    for d in range(-99, 100, 2):
        if d % 3 and abs(d) > 1:
            out[map_id_of(d)] = wide
    narrow = (1000, 10**4, 512, (1000,))
    out.update({"5x-plus-1": narrow, "181x-plus-1": narrow, "mod-3-permutation": narrow})
    return out


def write_3x_plus_d_map(path: Path, d: int) -> None:
    """Write the map file of 3x+d (|d| > 1), in the shortcut form, without coverage."""
    sign = "+" if d > 0 else "-"
    path.write_text(
        f"name: 3x{sign}{abs(d)}\n"
        "modulus: 2\n"
        "branches:\n"
        "  - {residue: 0, multiplier: 1, increment: 0}\n"
        f"  - {{residue: 1, multiplier: 3, increment: {d}}}\n"
        f"summary: The shortcut 3x{sign}{abs(d)} map on all integers, n/2 for even n and (3n{sign}{abs(d)})/2 for odd n.\n"
        "notes: |\n"
        "  Every cycle whose least |member| is at most 1,000,000 is listed (see the coverage claims).\n"
        f"  Besides the cycles whose members are coprime to {abs(d)}, the map has the fixed point {-d} and,\n"
        f"  for every divisor g of {abs(d)}, g times each cycle of 3x{sign}({abs(d)}/g): counts published for\n"
        "  3x+d usually list only the positive cycles whose members are coprime to d.\n"
        "references: [belaga-mignotte-1998]\n"
    )


def read_map(path: Path) -> AffineMap:
    data = yaml.safe_load(path.read_text(encoding="utf-8"))
    branches = sorted(data["branches"], key=lambda b: b["residue"])
    return AffineMap(data["modulus"], tuple((b["multiplier"], b["increment"]) for b in branches))


def method_text(bound: int, steps: int, bits: int) -> str:
    return (
        f"exhaustive search: every start n with |n| <= {bound:,} followed exactly "
        f"until it returned, fell below |n| or repeated, for up to {steps:,} steps and members of up to "
        f"{bits} bits; this file's start is the cycle's least |member|"
    )


def coverage_block(claims: list[tuple[int, HuntResult]], steps: int, bits: int) -> str:
    lines = ["coverage:"]
    for bound, result in claims:
        unresolved = ", ".join(str(n) for n in result.unresolved)
        lines += [
            "  - kind: all-starts",
            f"    bound: {bound}",
            f"    found_on: {FOUND_ON}",
            f"    method: exhaustive search of every start n with |n| <= {bound:,}",
            f"    max_steps: {steps}",
            f"    max_bits: {bits}",
            f"    unresolved: [{unresolved}]",
        ]
    return "\n".join(lines) + "\n"


def replace_coverage(path: Path, block: str) -> None:
    """Replace the map file's coverage block (kept as its last field) with ``block``."""
    text = path.read_text(encoding="utf-8")
    head, sep, _ = text.partition("\ncoverage:\n")
    path.write_text((head.rstrip("\n") + "\n" if sep else text) + block, encoding="utf-8")


def main(argv: list[str]) -> int:
    catalogue = Path(argv[1] if len(argv) > 1 else "catalogue")
    for map_id, (bound, steps, bits, claim_bounds) in plan().items():
        map_path = catalogue / "maps" / f"{map_id}.yaml"
        generated = map_id.startswith("3x-") and map_id[-1].isdigit() and map_id not in ("3x-plus-1", "3x-minus-1")
        if generated and "standard" not in map_id:
            d = int(map_id.rsplit("-", 1)[1]) * (1 if "-plus-" in map_id else -1)
            write_3x_plus_d_map(map_path, d)
        if not map_path.exists():
            print(f"skip {map_id}: no {map_path}", file=sys.stderr)
            continue
        mapping = read_map(map_path)
        result = hunt_range(mapping, 0, bound, steps, bits)
        folder = catalogue / "cycles" / map_id
        folder.mkdir(parents=True, exist_ok=True)
        for old in folder.glob("*.yaml"):
            old.unlink()
        method = method_text(bound, steps, bits)
        for canonical, cycle in result.cycles.items():
            text = method
            if abs(canonical) > bound:
                text += ", which lies beyond the bound: the cycle was met on the way from a start in the range"
            refs = SOURCES.get((map_id, canonical), ())
            entry = entry_text(map_id, cycle, mapping.modulus, FOUND_BY, FOUND_ON, text, refs)
            (folder / f"{cycle_file_id(canonical)}.yaml").write_text(entry, encoding="utf-8")
        claims = [(b, result if b == bound else hunt_range(mapping, 0, b, steps, bits)) for b in claim_bounds]
        replace_coverage(map_path, coverage_block(claims, steps, bits))
        print(f"{map_id}: {len(result.cycles)} cycles, {len(result.unresolved)} unresolved starts")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
