"""Benchmark: how fast `periplus verify` is, against the floor of merely parsing the YAML.

    python bench/verify_speed.py [--cycles N] [--repeat R]

Prints, for the shipped catalogue and for a generated catalogue of at least
N real cycles (3x+d maps hunted by the engine, written like contributions),
the entries verified per second and the floor beside it: the time to read
and parse the same files with PyYAML's C loader alone (yaml.CSafeLoader),
which verification cannot beat since it must read every file.  Goal: verify
within 2x of that floor on one core.  Then times one cycle of length
100,002 (the map x+100003, whose orbit of 1 runs through every residue
class mod the prime 100003 because 2 is a primitive root there).  Goal:
under 1 s.  Best of R runs each; figures, not pass/fail: timings on a shared
machine vary, so no test depends on them.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "scripts"))

from make_starter import write_3x_plus_d_map  # noqa: E402

from builder.arith.dynamics import AffineMap  # noqa: E402
from builder.catalogue.entries import cycle_file_id, entry_text  # noqa: E402
from builder.catalogue.verify import Limits, verify_catalogue  # noqa: E402
from builder.search.definition import hunt  # noqa: E402

GENERATED = ROOT / "bench" / "out" / "generated"


def best_of(repeat: int, fn: Callable[[], object]) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def parse_floor(root: Path) -> Callable[[], None]:
    files = sorted(root.rglob("*.yaml"))
    files = [f for f in files if "schema" not in f.parts]

    def run() -> None:
        for f in files:
            yaml.load(f.read_text(encoding="utf-8"), Loader=yaml.CSafeLoader)

    return run


def generate(target: int) -> Path:
    """Write (once) a catalogue of at least ``target`` cycles of 3x+d maps, |d| > 100."""
    marker = GENERATED / f".complete-v3-{target}"
    if marker.exists():
        return GENERATED
    if GENERATED.exists():
        import shutil

        shutil.rmtree(GENERATED)
    (GENERATED / "maps").mkdir(parents=True)
    total = 0
    d = 101
    while total < target:
        if d % 3:
            map_id = f"3x-plus-{d}"
            write_3x_plus_d_map(GENERATED / "maps" / f"{map_id}.yaml", d)
            folder = GENERATED / "cycles" / map_id
            folder.mkdir(parents=True)
            result = hunt(AffineMap(2, ((1, 0), (3, d))), 2000)
            for canonical, cycle in result.cycles.items():
                text = entry_text(
                    map_id, cycle, 2, "benchmark", "2026-12-01",
                    "generated for the benchmark by bench/verify_speed.py (hunt to 2,000)",
                )  # fmt: skip
                (folder / f"{cycle_file_id(canonical)}.yaml").write_text(text, encoding="utf-8")
            total += len(result.cycles)
        d += 2
    # The map notes cite a reference, and every catalogue has a record.yaml: the shipped ones will do.
    for name in ("references.yaml", "record.yaml"):
        (GENERATED / name).write_text((ROOT / "catalogue" / name).read_text())
    marker.touch()
    return GENERATED


def long_cycle(folder: Path) -> Path:
    p = 100003
    (folder / "maps").mkdir(parents=True)
    (folder / "maps" / "x-plus-p.yaml").write_text(
        f"name: x+{p}\nmodulus: 2\nbranches:\n  - {{residue: 0, multiplier: 1, increment: 0}}\n"
        f"  - {{residue: 1, multiplier: 1, increment: {p}}}\nsummary: n/2 or (n+{p})/2 (benchmark)\n"
    )
    (folder / "cycles" / "x-plus-p").mkdir(parents=True)
    (folder / "cycles" / "x-plus-p" / "1.yaml").write_text(
        f"map: x-plus-p\nstart: 1\nlength: {p - 1}\n"
        "provenance: {found_by: benchmark, found_on: 2026-12-01, method: 2 is a primitive root mod 100003}\n"
    )
    (folder / "record.yaml").write_text((ROOT / "catalogue" / "record.yaml").read_text())
    return folder


# The ratio measures the entries; coverage claims re-run searches, timed apart below.
ENTRIES_ONLY = Limits(recheck_up_to=0)


def row(label: str, root: Path, repeat: int) -> None:
    report = verify_catalogue(root, ENTRIES_ONLY)
    assert report.ok, [str(p) for p in report.problems[:5]]
    entries = report.files
    t_verify = best_of(repeat, lambda: verify_catalogue(root, ENTRIES_ONLY))
    t_floor = best_of(repeat, parse_floor(root))
    print(
        f"{label:<22} {entries:>7} files  verify {t_verify:7.3f} s ({entries / t_verify:9.0f}/s)  "
        f"floor {t_floor:7.3f} s ({entries / t_floor:9.0f}/s)  ratio {t_verify / t_floor:5.2f}  (goal <= 2.00)"
    )


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cycles", type=int, default=10_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    print(
        f"PyYAML {yaml.__version__}, C loader {'yes' if yaml.__with_libyaml__ else 'no'}; "
        f"Python {sys.version.split()[0]}; one process, one core"
    )
    row("shipped catalogue", ROOT / "catalogue", args.repeat)
    row(f"generated ({args.cycles}+)", generate(args.cycles), args.repeat)
    shipped = ROOT / "catalogue"
    t_claims = best_of(1, lambda: verify_catalogue(shipped)) - best_of(
        1, lambda: verify_catalogue(shipped, ENTRIES_ONLY)
    )
    print(f"shipped coverage claims re-run by default (bounds up to 100,000): {t_claims:.2f} s extra")
    with tempfile.TemporaryDirectory() as tmp:
        root = long_cycle(Path(tmp))
        report = verify_catalogue(root)
        assert report.ok, [str(p) for p in report.problems]
        (cycle,) = report.catalogue.cycles["x-plus-p"]
        t = best_of(args.repeat, lambda: verify_catalogue(root))
        print(f"one cycle of length {cycle.length:,}: verify {t:.3f} s  (goal < 1 s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
