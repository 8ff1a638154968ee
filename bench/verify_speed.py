"""Benchmark: how fast `periplus verify` is, against the floor of merely parsing the YAML, with and without its cache.

    python bench/verify_speed.py [--cycles N] [--scale S] [--repeat R]

For each catalogue (the shipped one; a generated one of at least N real cycles of 3x+d maps,
written like contributions; and the big demo catalogue of bench/big_catalogue.py at scale S, 1.0:
about 50,000 cycles in 3,000 maps), prints the time to verify it with no cache, beside the floor:
the time to read and parse the same files with PyYAML's C loader alone (yaml.CSafeLoader), which
verification cannot beat since it must read every file.  Goal: verify within 1.5 x that floor on
one core.  The shipped and generated catalogues are verified without re-running coverage claims
(their searches are another benchmark's, bench/hunt_speed.py); the big one with the default options,
its claims included.

Then the verification cache (README, "The verification cache"), on a copy of each of the last two
catalogues: a cold run that fills the cache, a warm run with nothing changed, and a warm run after
one cycle's provenance note changed (the note is changed before each run, so every run checks that
file again and keeps its folder anew), and after one map's summary changed; beside them the floor of
reading and hashing (SHA-256) every file, which a run with the cache still does.  Goal: a warm run
after one note changed costs little more than that floor.

Last, one cycle of length 100,002 (the map x+100003, whose orbit of 1 runs through every residue
class mod the prime 100003 because 2 is a primitive root there; goal: under 1 s), and what the
shipped coverage claims add by default.  Best of R runs each, all in one process; figures, not
pass/fail: timings on a shared machine vary, so only the ratios mean much, and no test depends on them.
"""

from __future__ import annotations

import argparse
import hashlib
import shutil
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "scripts"))
sys.path.insert(0, str(ROOT / "bench"))

from big_catalogue import cached_catalogue  # noqa: E402
from make_starter import write_3x_plus_d_map  # noqa: E402

from builder.arith.dynamics import AffineMap  # noqa: E402
from builder.catalogue.cache import VerifyCache  # noqa: E402
from builder.catalogue.entries import cycle_file_id, entry_text  # noqa: E402
from builder.catalogue.verify import Limits, verify_catalogue  # noqa: E402
from builder.search.definition import hunt  # noqa: E402

GENERATED = ROOT / "bench" / "out" / "generated"
GOAL = 1.5
#: The ratio measures the entries; coverage claims re-run searches, timed apart below.
ENTRIES_ONLY = Limits(recheck_up_to=0)


def best_of(repeat: int, fn: Callable[[], object]) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def yaml_files(root: Path) -> list[Path]:
    return [f for f in sorted(root.rglob("*.yaml")) if "schema" not in f.parts]


def parse_floor(root: Path) -> Callable[[], None]:
    files = yaml_files(root)

    def run() -> None:
        for f in files:
            yaml.load(f.read_text(encoding="utf-8"), Loader=yaml.CSafeLoader)

    return run


def hash_floor(root: Path) -> Callable[[], None]:
    """Reading every file and hashing its bytes: what a run with a warm cache cannot avoid."""
    files = yaml_files(root)

    def run() -> None:
        for f in files:
            hashlib.sha256(f.read_bytes()).digest()

    return run


def generate(target: int) -> Path:
    """Write (once) a catalogue of at least ``target`` cycles of 3x+d maps, |d| > 100."""
    marker = GENERATED / f".complete-v3-{target}"
    if marker.exists():
        return GENERATED
    if GENERATED.exists():
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


def row(label: str, root: Path, limits: Limits, repeat: int) -> None:
    report = verify_catalogue(root, limits)
    assert report.ok, [str(p) for p in report.problems[:5]]
    files = report.files
    t_verify = best_of(repeat, lambda: verify_catalogue(root, limits))
    t_floor = best_of(repeat, parse_floor(root))
    print(
        f"{label:<34} {files:>7} files  verify {t_verify:7.3f} s ({files / t_verify:7.0f}/s)  "
        f"floor {t_floor:7.3f} s ({files / t_floor:7.0f}/s)  ratio {t_verify / t_floor:5.2f}  (goal <= {GOAL:.2f})"
    )


def notable(path: Path) -> bool:
    """Whether the cycle entry at ``path`` has no note yet and ends with its provenance, written as a block."""
    lines = path.read_text(encoding="utf-8").splitlines()
    keys = [line for line in lines if line[:1] not in ("", " ", "#", "-")]
    return "notes:" not in "\n".join(lines) and keys[-1] == "provenance:"


def edit(path: Path, change: int) -> None:
    """Change the entry at ``path``: a cycle's provenance note, or a map's summary."""
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    if "cycles" in path.parts:
        lines = [line for line in lines if not line.startswith("  notes: benchmark")]
        lines.append(f"  notes: benchmark note {change}\n")
    else:
        lines = [f"summary: benchmark summary {change}\n" if line.startswith("summary:") else line for line in lines]
    path.write_text("".join(lines), encoding="utf-8")


def cache_rows(label: str, root: Path, limits: Limits, repeat: int) -> None:
    """Cold, warm and one-note-changed runs with a cache, on a copy of the catalogue at ``root``."""
    with tempfile.TemporaryDirectory(prefix="periplus-verify-speed-") as tmp:
        copy = Path(shutil.copytree(root, Path(tmp) / "catalogue"))
        folder = Path(tmp) / "cache"
        cold = verify_catalogue(copy, limits)

        def cached() -> None:
            with VerifyCache.open(folder) as cache:
                report = verify_catalogue(copy, limits, cache)
            assert report.problems == cold.problems and report.catalogue == cold.catalogue

        t_fill = best_of(1, cached)
        t_warm = best_of(repeat, cached)
        # A cycle of the biggest map, and a map: their folders are kept anew whole.
        biggest = max((copy / "cycles").iterdir(), key=lambda d: sum(1 for _ in d.iterdir()))
        cycle = next(p for p in sorted(biggest.iterdir()) if notable(p))
        map_file = sorted((copy / "maps").iterdir())[0]
        changes = iter(range(1_000_000))

        def after_edit(path: Path) -> Callable[[], None]:
            def run() -> None:
                edit(path, next(changes))
                t0 = time.perf_counter()
                with VerifyCache.open(folder) as cache:
                    report = verify_catalogue(copy, limits, cache)
                times.append(time.perf_counter() - t0)
                assert report.ok, [str(p) for p in report.problems[:5]]

            return run

        times: list[float] = []
        for _ in range(repeat):
            after_edit(cycle)()
        t_cycle = min(times)
        times.clear()
        for _ in range(repeat):
            after_edit(map_file)()
        t_map = min(times)
        t_hash = best_of(repeat, hash_floor(copy))
        t_parse = best_of(repeat, parse_floor(copy))
    files = cold.files
    print(f"{label}: verification cache, {files:,} files; floors: read and hash {t_hash:.3f} s, parse {t_parse:.3f} s")
    for what, t in (
        ("cold, filling the cache", t_fill),
        ("warm, nothing changed", t_warm),
        (f"warm, one cycle's note changed ({biggest.name})", t_cycle),
        ("warm, one map's summary changed", t_map),
    ):
        print(f"  {what:<50} {t:7.3f} s  {t / t_hash:5.2f} x read and hash  {t / t_parse:5.2f} x parse floor")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cycles", type=int, default=10_000)
    parser.add_argument("--scale", type=float, default=1.0, help="of the big demo catalogue (1.0: about 50,000 cycles)")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    print(
        f"PyYAML {yaml.__version__}, C loader {'yes' if yaml.__with_libyaml__ else 'no'}; "
        f"Python {sys.version.split()[0]}; one process, one core"
    )
    generated = generate(args.cycles)
    big = cached_catalogue(args.scale)
    row("shipped catalogue (entries)", ROOT / "catalogue", ENTRIES_ONLY, args.repeat)
    row(f"generated, {args.cycles:,}+ cycles (entries)", generated, ENTRIES_ONLY, args.repeat)
    row(f"big demo, scale {args.scale:g} (default options)", big, Limits(), args.repeat)
    cache_rows(f"generated, {args.cycles:,}+ cycles", generated, ENTRIES_ONLY, args.repeat)
    cache_rows(f"big demo, scale {args.scale:g}", big, Limits(), args.repeat)
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
