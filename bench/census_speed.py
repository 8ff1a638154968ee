"""Benchmark: words per second of the census's compiled word scan, beside the hunt kernel's starts per second.

    python bench/census_speed.py [--up-to K] [--family-up-to K] [--jobs N] [--repeat R]

First, on one core: the scan of every aperiodic necklace of length 1..K (default 26) for the family 3x+d
with |d| < 1,000 (builder.search.census.scan_words, compiled), in words per second; beside it, the hunt
kernel's starts per second on 3x+1 with |n| <= 10^7 (builder.search.engine.hunt_range, as
bench/hunt_speed.py measures it), and the same scan in Python integers (the exact path, on lengths 1..16),
so the two compiled loops and the floor are read side by side.

Then the goal of issue 16: the family census of 3x+d for |d| < 1,000 up to length 30 on every core
(`periplus census --qx 3 --d -999..999 --up-to 30`, the words and the cycles each map gets), within
10 minutes on this two-core machine.  Figures, not pass/fail: timings on a shared machine vary, so no
test depends on them.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.arith.dynamics import AffineMap  # noqa: E402
from builder.search import census  # noqa: E402
from builder.search.census import class_divisors, close, scan_words, words_in_length  # noqa: E402
from builder.search.engine import hunt_range  # noqa: E402

GOAL_SECONDS = 600
Q = 3
ADMISSIBLE = [e for e in range(1, 1000, 2) if e % Q]


def wanted(k: int, x: int) -> tuple[int, ...]:
    return class_divisors(Q, k, x, ADMISSIBLE)


def best(repeat: int, fn: object) -> float:
    assert callable(fn)
    times = []
    for _ in range(repeat):
        started = time.perf_counter()
        fn()
        times.append(time.perf_counter() - started)
    return min(times)


def one_core(args: argparse.Namespace) -> None:
    lengths = range(1, args.up_to + 1)
    words = sum(words_in_length(k) for k in lengths)
    scan_words(Q, range(1, 8), wanted)  # load numba and the cached kernel first
    scan = best(args.repeat, lambda: scan_words(Q, lengths, wanted, 1))
    hunt_range(AffineMap(2, ((1, 0), (3, 1))), 0, 1000, 1000, 64, compiled=True)
    bound = 10**7
    starts = 2 * bound + 1
    kernel = best(args.repeat, lambda: hunt_range(AffineMap(2, ((1, 0), (3, 1))), 0, bound, 100_000, 4096))
    exact_lengths = range(1, 17)
    exact_words = sum(words_in_length(k) for k in exact_lengths)
    fits = census.fits_kernel
    census.fits_kernel = lambda q, n: False  # type: ignore[assignment]
    try:
        exact = best(1, lambda: scan_words(Q, exact_lengths, wanted, 1))
    finally:
        census.fits_kernel = fits
    print("one core:")
    print(f"  census scan, 3x+d with |d| < 1,000, lengths 1..{args.up_to}: {words:,} words in {scan:.2f} s, "
          f"{words / scan / 1e6:.1f} million words/s")  # fmt: skip
    print(f"  hunt kernel, 3x+1 with |n| <= {bound:,}: {starts:,} starts in {kernel:.2f} s, "
          f"{starts / kernel / 1e6:.1f} million starts/s")  # fmt: skip
    slower = (words / scan) / (exact_words / exact)
    print(
        f"  census scan in Python integers (the exact path), lengths 1..16: {exact_words / exact / 1e6:.3f} million "
        f"words/s ({slower:.0f} x slower than compiled)"
    )


def family(args: argparse.Namespace) -> None:
    lengths = range(1, args.family_up_to + 1)
    jobs = args.jobs or os.cpu_count() or 1
    started = time.perf_counter()
    scan = scan_words(Q, lengths, wanted, jobs)
    scanned = time.perf_counter() - started
    maps = [d for d in range(-999, 1000, 2) if d % Q]
    cycles = sum(1 for hit in scan.hits for d in maps if close(Q, d, hit) is not None)
    total = time.perf_counter() - started
    verdict = "meets" if total <= GOAL_SECONDS else "MISSES"
    print(f"family census of 3x+d, |d| < 1,000 ({len(maps)} maps), lengths 1..{args.family_up_to}, {jobs} processes:")
    print(f"  {scan.words:,} words in {scanned:.1f} s ({scan.words / scanned / 1e6:.1f} million words/s), "
          f"{cycles:,} cycles closed by exact iteration; {total:.1f} s in all "
          f"(goal {GOAL_SECONDS} s: {verdict} it)")  # fmt: skip


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--up-to", type=int, default=26)
    parser.add_argument("--family-up-to", type=int, default=30)
    parser.add_argument("--jobs", type=int, default=None)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    one_core(args)
    family(args)
    print(f"(machine: {os.cpu_count()} CPUs; load average {os.getloadavg()[0]:.1f})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
