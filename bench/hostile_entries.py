"""Benchmark: small hostile entries that once made `periplus verify` run for minutes (issue 12, item 2).

    python bench/hostile_entries.py

Each case is a catalogue of one map and at most one cycle entry, written to a temporary folder;
`python -m builder verify` runs on it with the default limits, in a subprocess, and the time, the
exit status, the size of the largest file and the last line of output are printed.  The floor is
the same command on a catalogue of the one 3x+1 map and its cycle through 1 (start-up, parsing and
one short orbit), measured in the same run.  The goal: every entry of at most 1 MB decided within
10 s on one core.  Figures, not pass/fail: timings on a shared machine vary, so no test depends on
them (the tests check the budget's rule instead).  The entries are made for the benchmark; they
are not part of any record.
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

import gmpy2

GOAL_SECONDS = 10.0
PROVENANCE = "provenance:\n  found_by: benchmark\n  found_on: 2026-12-03\n  method: made for the benchmark\n"
RECORD = (
    "title: Benchmark record\ndescription: Entries made to time verification.\n"
    "maintainers: Periplus benchmark\nlicence: CC0-1.0\nbase_url: https://bench.example.org/record/\n"
    'version: "1.0"\n'
)


def _map(a: object, b: object, extra: str = "") -> str:
    return (
        "name: bench map\nmodulus: 2\nbranches:\n  - {residue: 0, multiplier: 1, increment: 0}\n"
        f"  - {{residue: 1, multiplier: {a}, increment: {b}}}\nsummary: A map made for the benchmark.\n{extra}"
    )


def _claim(bound: int, steps: int, bits: int, unresolved: str) -> str:
    return (
        f"coverage:\n  - kind: all-starts\n    bound: {bound}\n    found_on: 2026-12-03\n    method: claimed\n"
        f"    max_steps: {steps}\n    max_bits: {bits}\n    unresolved: [{unresolved}]\n"
    )


def _cases() -> dict[str, dict[str, str]]:
    wide = str(gmpy2.mpz(3) ** 41_900)  # 19,991 digits, odd
    wider = str(gmpy2.mpz(3) ** 209_500)  # 99,952 digits
    return {
        "floor: 3x+1 and the cycle through 1": {
            "maps/m.yaml": _map(3, 1),
            "cycles/m/c.yaml": f"map: m\nstart: 1\n{PROVENANCE}",
        },
        "multiplier of 20,000 digits, start 1": {
            "maps/m.yaml": _map(wide, wide),
            "cycles/m/c.yaml": f"map: m\nstart: 1\n{PROVENANCE}",
        },
        "multiplier of 100,000 digits, start 1": {
            "maps/m.yaml": _map(wider, wider),
            "cycles/m/c.yaml": f"map: m\nstart: 1\n{PROVENANCE}",
        },
        "5x+3, start of 20,000 digits": {
            "maps/m.yaml": _map(5, 3),
            "cycles/m/c.yaml": f"map: m\nstart: {gmpy2.mpz(7) ** 23_666}\n{PROVENANCE}",
        },
        "5x+3, start of 1,000,000 digits (1 MB)": {
            "maps/m.yaml": _map(5, 3),
            "cycles/m/c.yaml": f"map: m\nstart: {gmpy2.mpz(7) ** 1_183_300}\n{PROVENANCE}",
        },
        "3x+1, word of 1,000,000 residues (1 MB)": {
            "maps/m.yaml": _map(3, 1),
            "cycles/m/c.yaml": f'map: m\nword: "{"10" * 500_000}"\n{PROVENANCE}',
        },
        "5x+1 claim asking for 10^9 steps and 300,000 bits": {
            "maps/m.yaml": _map(5, 1, _claim(20, 10**9, 300_000, "7, -7, 9, -9, 11, -11")),
        },
        "5x+1 claim to 100,000 with 4,096 bits": {
            "maps/m.yaml": _map(5, 1, _claim(100_000, 100_000, 4096, "")),
        },
    }


def main() -> None:
    print(f"{'case':<52} {'seconds':>8} {'x floor':>8} {'exit':>5} {'largest file':>13}  last line")
    floor = None
    with tempfile.TemporaryDirectory() as tmp:
        for i, (name, files) in enumerate(_cases().items()):
            root = Path(tmp) / f"case-{i}"
            for rel, text in {"record.yaml": RECORD, **files}.items():
                path = root / rel
                path.parent.mkdir(parents=True, exist_ok=True)
                path.write_text(text, encoding="utf-8")
            largest = max(len(text) for text in files.values())
            begin = time.perf_counter()
            done = subprocess.run(
                [sys.executable, "-m", "builder", "verify", str(root)], capture_output=True, text=True, check=False
            )
            seconds = time.perf_counter() - begin
            floor = seconds if floor is None else floor
            last = (done.stdout.strip().splitlines() or done.stderr.strip().splitlines() or [""])[-1]
            flag = "" if seconds <= GOAL_SECONDS else "  (over the goal)"
            print(
                f"{name:<52} {seconds:8.2f} {seconds / floor:8.1f} {done.returncode:5} {largest:13,}  {last[:90]}{flag}"
            )
    print(f"goal: every case within {GOAL_SECONDS:.0f} s")


if __name__ == "__main__":
    main()
