"""Benchmark: starts decided per second by the vectorised hunt engine, on one core.

    python bench/hunt_speed.py [--bound N] [--exact-bound M] [--repeat R]

For the shortcut maps 3x+1, 3x+97 and 3x+1001 it hunts every start with
|n| <= N (default 10^6) in one process with builder.search.engine.hunt_range,
and, as the floor, every start with |n| <= M (default 20,000) with the plain
exact iteration of builder.search.definition.hunt.  It checks (asserts) that both give
the same result on |n| <= M.  Goal: at least 1,000,000 starts per second
per core for 3x+1.  Best of R runs; figures, not pass/fail: timings on a
shared machine vary, so no test depends on them.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.arith.dynamics import AffineMap  # noqa: E402
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS, HuntResult, hunt  # noqa: E402
from builder.search.engine import hunt_range  # noqa: E402

GOAL = 1_000_000


def timed(repeat: int, fn: object) -> tuple[float, HuntResult]:
    assert callable(fn)
    best = float("inf")
    result = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
    assert isinstance(result, HuntResult)
    return best, result


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--bound", type=int, default=10**6)
    parser.add_argument("--exact-bound", type=int, default=20_000)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    n, m = args.bound, args.exact_bound
    starts, exact_starts = 2 * n + 1, 2 * m + 1
    print(f"starts per second on one core (vectorised: |n| <= {n:,}; exact floor: |n| <= {m:,})")
    print(f"{'map':<10} {'vectorised':>14} {'exact':>12} {'ratio':>7}  cycles  unresolved")
    for d in (1, 97, 1001):
        mapping = AffineMap(2, ((1, 0), (3, d)))
        fast_time, fast = timed(args.repeat, lambda mp=mapping: hunt_range(mp, 0, n, HUNT_MAX_STEPS, HUNT_MAX_BITS))
        exact_time, exact = timed(1, lambda mp=mapping: hunt(mp, m, HUNT_MAX_STEPS, HUNT_MAX_BITS))
        common = hunt_range(mapping, 0, m, HUNT_MAX_STEPS, HUNT_MAX_BITS)
        assert common == exact, f"3x+{d}: the engines disagree on |n| <= {m}"
        assert set(exact.cycles) <= set(fast.cycles), f"3x+{d}: a cycle found below {m} is missing"
        fast_rate, exact_rate = starts / fast_time, exact_starts / exact_time
        print(
            f"{'3x+' + str(d):<10} {fast_rate:>14,.0f} {exact_rate:>12,.0f} {fast_rate / exact_rate:>6.0f}x"
            f"  {len(fast.cycles):>6}  {len(fast.unresolved):>10}"
        )
        if d == 1:
            verdict = "meets" if fast_rate >= GOAL else "MISSES"
            print(f"{'':<10} goal {GOAL:,} starts/s for 3x+1: {verdict} it")
    print(f"results agree with the exact iteration on |n| <= {m:,} for every map")
    return 0


if __name__ == "__main__":
    sys.exit(main())
