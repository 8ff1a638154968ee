"""Regenerate the starter catalogue's cycle files by exhaustive search.

    python scripts/make_starter.py [CATALOGUE]

For every map listed in STARTER below, every start n with |n| <= its bound
is iterated exactly (builder.hunt); each cycle found gets a file
cycles/<map-id>/<cycle-id>.yaml named after its canonical member (least
|member|, the positive one on a tie).  Map files, references.yaml and
hand-written provenance notes are not touched; cycle files whose cycle is
not found again are left for a person to look at.  Run `periplus verify`
afterwards: the script's output is checked like any contribution.
"""

from __future__ import annotations

import sys
from pathlib import Path

import yaml

from builder.dynamics import AffineMap
from builder.hunt import hunt
from builder.integers import to_decimal
from builder.model import word_text

FOUND_ON = "2026-12-01"
MEMBERS_IN_FILE = 64  # list members in the file for cycles up to this length

# Published sources for particular cycles: (map id, canonical member) -> reference keys.
SOURCES: dict[tuple[str, int], tuple[str, ...]] = {
    **{("3x-plus-1", c): ("lagarias-1985",) for c in (0, 1, -1, -5, -17)},
    **{("3x-plus-1-standard", c): ("lagarias-1985",) for c in (0, 1, -1, -5, -17)},
    **{("3x-minus-1", c): ("lagarias-1985",) for c in (1, 5, 17)},
    **{("5x-plus-1", c): ("lagarias-bibliography",) for c in (1, 13, 17)},
    ("181x-plus-1", 27): ("crandall-1978",),
    **{("mod-3-permutation", c): ("klamkin-1963", "lagarias-2010") for c in (1, 2, 4, 44)},
}


def cycle_id(canonical: int) -> str:
    text = to_decimal(abs(canonical))
    return f"minus-{text}" if canonical < 0 else text


def read_map(path: Path) -> AffineMap:
    data = yaml.safe_load(path.read_text())
    branches = sorted(data["branches"], key=lambda b: b["residue"])
    return AffineMap(data["modulus"], tuple((b["multiplier"], b["increment"]) for b in branches))


def starter_maps(catalogue: Path) -> dict[str, tuple[int, int, int]]:
    """Map id -> (bound, max_steps, max_bits) for the search."""
    plan = {
        "3x-plus-1": (10**6, 10**5, 4096),
        "3x-minus-1": (10**6, 10**5, 4096),
        "3x-plus-1-standard": (10**6, 10**5, 4096),
    }
    for d in range(-99, 100, 2):
        if d % 3 and abs(d) > 1:
            name = f"3x-plus-{d}" if d > 0 else f"3x-minus-{-d}"
            plan[name] = (10**6, 10**5, 4096)
    plan["5x-plus-1"] = (10**4, 10**4, 512)
    plan["181x-plus-1"] = (10**4, 10**4, 512)
    plan["mod-3-permutation"] = (10**4, 10**4, 512)
    return plan


def method_text(map_id: str, bound: int, steps: int, bits: int, unresolved: int) -> str:
    text = (
        f"exhaustive search by scripts/make_starter.py: every start n with |n| <= {bound:,} iterated exactly, "
        f"each for up to {steps:,} steps or until a member exceeded {bits} bits; "
        "this file's start is the cycle's least |member|"
    )
    if unresolved:
        text += f"; {unresolved:,} starts in the range were not resolved within those limits (see the map's notes)"
    return text


def write_3x_plus_d_map(path: Path, d: int) -> None:
    """Write the map file of 3x+d (|d| > 1), in the shortcut form."""
    sign = "+" if d > 0 else "-"
    path.write_text(
        f"name: 3x{sign}{abs(d)}\n"
        "modulus: 2\n"
        "branches:\n"
        "  - {residue: 0, multiplier: 1, increment: 0}\n"
        f"  - {{residue: 1, multiplier: 3, increment: {d}}}\n"
        f"summary: The shortcut 3x{sign}{abs(d)} map on all integers, n/2 for even n and (3n{sign}{abs(d)})/2 for odd n.\n"
        "notes: |\n"
        f"  Every cycle whose least |member| is at most 1,000,000 is listed. Besides the cycles\n"
        f"  whose members are coprime to {abs(d)}, the map has the fixed point {-d} and, for every\n"
        f"  divisor g of {abs(d)}, g times each cycle of 3x{sign}({abs(d)}/g): counts published for 3x+d usually\n"
        "  list only the positive cycles whose members are coprime to d.\n"
        "references: [belaga-mignotte-1998]\n"
    )


def write_cycle(
    path: Path, map_id: str, members: tuple[int, ...], word: tuple[int, ...], modulus: int, method: str
) -> None:
    lines = [f"map: {map_id}", f"start: {to_decimal(members[0])}"]
    if modulus <= 10:
        lines.append(f'word: "{word_text(word, modulus)}"')
    else:
        lines.append(f"word: [{', '.join(map(str, word))}]")
    lines.append(f"length: {len(members)}")
    if len(members) <= MEMBERS_IN_FILE:
        lines.append(f"members: [{', '.join(to_decimal(v) for v in members)}]")
    lines += [
        "provenance:",
        "  found_by: Periplus starter search",
        f"  found_on: {FOUND_ON}",
        "  method: >-",
        f"    {method}",
    ]
    refs = SOURCES.get((map_id, members[0]))
    if refs:
        lines.append(f"  references: [{', '.join(refs)}]")
    path.write_text("\n".join(lines) + "\n")


def main(argv: list[str]) -> int:
    catalogue = Path(argv[1] if len(argv) > 1 else "catalogue")
    for map_id, (bound, steps, bits) in starter_maps(catalogue).items():
        map_path = catalogue / "maps" / f"{map_id}.yaml"
        if not map_path.exists() and map_id.startswith("3x-") and map_id[-1].isdigit() and "standard" not in map_id:
            d = int(map_id.rsplit("-", 1)[1]) * (1 if "-plus-" in map_id else -1)
            write_3x_plus_d_map(map_path, d)
        if not map_path.exists():
            print(f"skip {map_id}: no {map_path}", file=sys.stderr)
            continue
        mapping = read_map(map_path)
        result = hunt(mapping, bound, steps, bits)
        folder = catalogue / "cycles" / map_id
        folder.mkdir(parents=True, exist_ok=True)
        method = method_text(map_id, bound, steps, bits, len(result.unresolved))
        for canonical, cycle in result.cycles.items():
            text = method
            if abs(canonical) > bound:
                text += "; reached from a start in that range, though its least |member| lies beyond the bound"
            write_cycle(
                folder / f"{cycle_id(canonical)}.yaml", map_id, cycle.members, cycle.word, mapping.modulus, text
            )
        print(
            f"{map_id}: {len(result.cycles)} cycles, {len(result.unresolved)} unresolved "
            f"(first: {result.unresolved[:8]})"
        )
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
