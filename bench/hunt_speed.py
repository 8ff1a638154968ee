"""Benchmark: starts decided per second by the hunt's compiled kernel on one core, beside a plain C loop.

    python bench/hunt_speed.py [--bound N] [--exact-bound M] [--repeat R] [--no-verify]

For the shortcut maps 3x+1, 3x+97 and 3x+1001 it hunts every start with |n| <= N (default 10^7)
in one process with builder.search.engine.hunt_range, with its sieve and without it, and times
bench/hunt_reference.c, the same semantics as a plain C loop (no sieve), compiled here with the
system's C compiler (`cc -O2`) when there is one (otherwise it says why the C column is empty).
Both report the total stopping time of the range (HuntResult.steps), which must agree: the check
that they did the same work.  The floor of the old days, the exact iteration of
builder.search.definition.hunt, runs on |n| <= M (default 20,000) and must give the same result.
Goal (issue 15): the kernel at least half the C loop's starts per second.

Then the exact follower of orbits past 64 bits (builder.search.wide): 5x+1 and the mod-3 map of
the shipped catalogue at bound 1,000, members of at most 512 bits, against the exact reference.
Last, unless --no-verify: the CPU time of `periplus verify --no-cache --jobs 1` on the shipped
catalogue (goal: at most 1.5 s), and the fixed cost of numba in a fresh process (its import and
the first call of a cached kernel), which every such run pays.  Best of R runs; figures, not
pass/fail: timings on a shared machine vary, so no test depends on them.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.arith.dynamics import AffineMap  # noqa: E402
from builder.search.definition import HUNT_MAX_BITS, HUNT_MAX_STEPS, HuntResult, hunt  # noqa: E402
from builder.search.engine import DEFAULT_LANE_STEPS, hunt_range  # noqa: E402

GOAL_RATIO = 0.5
GOAL_VERIFY_CPU = 1.5


def timed(repeat: int, fn: Callable[[], HuntResult]) -> tuple[float, HuntResult]:
    best = float("inf")
    result = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn()
        best = min(best, time.perf_counter() - t0)
    assert result is not None
    return best, result


def compile_reference(folder: Path) -> tuple[Path | None, str]:
    """The C reference compiled into ``folder``, or None and why not."""
    compiler = shutil.which("cc") or shutil.which("gcc") or shutil.which("clang")
    if compiler is None:
        return None, "no C compiler (cc, gcc or clang) on PATH"
    program = folder / "hunt_reference"
    done = subprocess.run(
        [compiler, "-O2", "-o", str(program), str(ROOT / "bench" / "hunt_reference.c")],
        capture_output=True,
        text=True,
    )
    if done.returncode:
        return None, f"{compiler} failed: {done.stderr.strip()[:200]}"
    return program, ""


def run_reference(program: Path, d: int, bound: int, steps: int, repeat: int) -> tuple[float, dict[str, int]]:
    best = float("inf")
    fields: dict[str, int] = {}
    for _ in range(repeat):
        out = subprocess.run([str(program), "3", str(d), str(bound), str(steps)], capture_output=True, text=True)
        words = out.stdout.split()
        pairs = dict(zip(words[0::2], words[1::2], strict=True))
        best = min(best, float(pairs.pop("seconds")))
        fields = {k: int(v) for k, v in pairs.items()}
    return best, fields


def child_cpu(command: list[str]) -> float:
    """User plus system CPU seconds of a child process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    subprocess.run(command, capture_output=True, check=False, cwd=ROOT)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)


def kernels(args: argparse.Namespace, program: Path | None, why: str) -> None:
    n, m = args.bound, args.exact_bound
    starts = 2 * n + 1
    print(f"starts per second on one core, |n| <= {n:,} (exact floor: |n| <= {m:,})")
    print(f"{'map':<9} {'kernel+sieve':>13} {'kernel':>11} {'C loop':>11} {'ratio':>6} {'exact':>9}  steps agree")
    for d in (1, 97, 1001):
        mapping = AffineMap(2, ((1, 0), (3, d)))
        hunt_range(mapping, 0, 10, HUNT_MAX_STEPS, HUNT_MAX_BITS)  # compile (or load) the kernel first
        sieved_time, sieved = timed(args.repeat, lambda mp=mapping: hunt_range(mp, 0, n, HUNT_MAX_STEPS, HUNT_MAX_BITS))
        plain_time, plain = timed(
            args.repeat, lambda mp=mapping: hunt_range(mp, 0, n, HUNT_MAX_STEPS, HUNT_MAX_BITS, sieve=False)
        )
        exact_time, exact = timed(1, lambda mp=mapping: hunt(mp, m, HUNT_MAX_STEPS, HUNT_MAX_BITS))
        assert hunt_range(mapping, 0, m, HUNT_MAX_STEPS, HUNT_MAX_BITS) == exact, f"3x+{d}: engines disagree"
        assert sieved == plain and sieved.steps == plain.steps, f"3x+{d}: the sieve changed the result"
        rate, plain_rate, exact_rate = starts / sieved_time, starts / plain_time, (2 * m + 1) / exact_time
        c_text, ratio_text, agree = "-", "-", "-"
        if program is not None:
            c_time, fields = run_reference(program, d, n, DEFAULT_LANE_STEPS, args.repeat)
            c_rate = starts / c_time
            c_text, ratio_text = f"{c_rate:,.0f}", f"{rate / c_rate:.2f}"
            # The C loop follows an orbit that enters a cycle without its start to its step limit; the
            # kernel hands it to the exact path: the stopping times agree when no start did that.
            agree = "yes" if fields["stopping"] == sieved.steps else f"no ({fields['stopping']:,})"
        print(
            f"{'3x+' + str(d):<9} {rate:>13,.0f} {plain_rate:>11,.0f} {c_text:>11} {ratio_text:>6} "
            f"{exact_rate:>9,.0f}  {agree}"
        )
    if program is None:
        print(f"C loop skipped: {why}")
    else:
        print(f"goal: kernel (with its sieve) at least {GOAL_RATIO} x the C loop; see the ratio column")


def wide(args: argparse.Namespace) -> None:
    print()
    print("orbits past 64 bits, bound 1,000, at most 10,000 steps and 512 bits (as the shipped claims):")
    for name, mapping in (
        ("5x+1", AffineMap(2, ((1, 0), (5, 1)))),
        ("mod-3", AffineMap(3, ((2, 0), (4, -1), (4, 1)))),
    ):
        hunt_range(mapping, 0, 10, 10_000, 512)
        fast_time, fast = timed(args.repeat, lambda mp=mapping: hunt_range(mp, 0, 1000, 10_000, 512))
        exact_time, exact = timed(1, lambda mp=mapping: hunt(mp, 1000, 10_000, 512))
        assert fast == exact, name
        print(
            f"  {name:<6} engine {fast_time:.3f} s, exact reference {exact_time:.3f} s "
            f"({exact_time / fast_time:.0f} x), {len(fast.unresolved)} unresolved"
        )


def verify(args: argparse.Namespace) -> None:
    print()
    command = [sys.executable, "-m", "builder", "verify", "--no-cache", "--jobs", "1", "catalogue"]
    cpu = min(child_cpu(command) for _ in range(args.repeat))
    probe = "import builder.search.engine as e, builder.arith.dynamics as d; e.hunt_range(d.AffineMap(2, ((1, 0), (3, 1))), 0, 9, 99, 99, compiled=True)"
    fixed = min(child_cpu([sys.executable, "-c", probe]) for _ in range(args.repeat))
    bare = min(child_cpu([sys.executable, "-c", "import builder.search.definition"]) for _ in range(args.repeat))
    verdict = "meets" if cpu <= GOAL_VERIFY_CPU else "MISSES"
    print(f"shipped verify, no cache, one process: {cpu:.2f} s CPU (goal {GOAL_VERIFY_CPU} s: {verdict} it)")
    print(f"  of which numba's fixed cost in a fresh process: about {fixed - bare:.2f} s (import and first call)")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--bound", type=int, default=10**7)
    parser.add_argument("--exact-bound", type=int, default=20_000)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--no-verify", action="store_true")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        program, why = compile_reference(Path(folder))
        kernels(args, program, why)
    wide(args)
    if not args.no_verify:
        verify(args)
    print(f"(machine: {os.cpu_count()} CPUs; load average {os.getloadavg()[0]:.1f})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
