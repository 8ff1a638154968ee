"""Benchmark: a full `periplus build` of the big demo catalogue against the floor of reading and writing its files.

    python bench/build_speed.py [--scale S] [--repeat R] [--scratch DIR]

Builds the catalogue of bench/big_catalogue.py at scale S (1.0: about 50,000 cycles in 3,000 maps,
generated once into bench/out) with `python -m builder build CATALOGUE --out SITE`, run as a
subprocess into a fresh folder, and prints:

- the wall time of the build, the floor and their ratio (goal: build <= 2 x floor).  The floor is
  the time to parse every catalogue file with PyYAML's C loader (yaml.CSafeLoader), which any build
  must read, plus the time to write the bytes of the built site into a fresh folder (every file of
  the site is read into memory first; making the folders is timed with the writes);
- the wall time of `python -m builder verify CATALOGUE` against the parse floor alone
  (goal: verify <= 1.5 x parse floor);
- the peak memory of the build: the proportional set sizes of the whole process tree (the build and
  the worker processes it forks) read from /proc/PID/smaps_rollup and added up every ~100 ms, so that
  the pages the workers share with the build count once (new processes are looked for every ~300 ms,
  and a peak shorter than a sample can be missed); beside it, the resident sets added up (which count
  a shared page once per process) and ru_maxrss of the largest single process (goal: at most 400 MB);
- the size of the site (bytes and files) and its largest HTML page;
- the wall time of `python -m builder build` after one cycle's note changes (goal: at most 5 s), in
  a copy of the catalogue built once before with a cache of its own: a cycle of a map of a few
  cycles, and a cycle of the biggest map (whose cycle pages are made in parts).  Each run edits the
  note again, then waits for the site replaced by the run before to be removed, so that no run
  shares the machine with that removal.

The commands run as an installed program does, with the bytecode Python keeps for each module (in a
folder of the scratch space, PYTHONPYCACHEPREFIX, written by an untimed first run): an environment
that turns that off (PYTHONDONTWRITEBYTECODE) would compile every module again at every run.

The full build and verify run with --no-cache, so each run verifies every file (bench/verify_speed.py times the
verification cache).  The commands are timed as a user runs them (interpreter start and imports included); the floors are
measured in this process, in the same run.  Best of R runs each.  Figures, not pass/fail: the machine
may be shared, so only the ratios mean much, and no test depends on them.

Each timed run starts after ``sync`` and a second's pause, so that no writeback of an earlier run
slows it.  On a virtual machine's disk, making the same 10,000 folders and files took from 2.9 s to
13 s from one minute to the next, so the write floor (and the build's writes with it) moves by as
much; ``--scratch /dev/shm`` writes both into memory and leaves the ratio to the code.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

import yaml

ROOT = Path(__file__).resolve().parent.parent

BUILD_GOAL = 2.0
VERIFY_GOAL = 1.5
MEMORY_GOAL_MB = 400
REBUILD_GOAL = 5.0
SAMPLE_EVERY = 0.1  # reading smaps_rollup costs CPU: more often would slow the build it measures
DISCOVER_EVERY = 3  # samples between scans of /proc for new processes
PAGE = os.sysconf("SC_PAGE_SIZE")
MB = 1 << 20


@dataclass(frozen=True)
class Run:
    seconds: float
    peak_tree_bytes: int  # the largest sum of the tree's resident sets seen
    maxrss_bytes: int  # ru_maxrss of the largest process of the tree
    peak_pss_bytes: int = 0  # the largest sum of the tree's proportional set sizes seen


def catalogue_of(scale: float) -> Path:
    """bench/big_catalogue.py's cached catalogue, made in another process so that this one stays small.

    The kernel counts in a command's ru_maxrss the memory of the process that started it (it records
    the old address space's peak at exec), so this process loads nothing big before its last command.
    """
    code = f"from big_catalogue import cached_catalogue; print(cached_catalogue({scale!r}))"
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT / "bench", capture_output=True, text=True, check=True)
    return Path(done.stdout.strip())


def settle_seconds() -> float:
    """How long a file must be left unchanged before a build trusts its stamp (asked of another process)."""
    code = "from builder.catalogue.files import SETTLE_NS; print(SETTLE_NS / 1e9)"
    return float(subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout)


def parents() -> dict[int, int]:
    """pid -> parent pid of every process on the machine."""
    out = {}
    for name in os.listdir("/proc"):
        if name.isdigit():
            try:
                with open(f"/proc/{name}/stat", "rb") as f:
                    stat = f.read()
            except OSError:
                continue
            # The command name (field 2) is in parentheses and may hold spaces: fields after it split cleanly.
            out[int(name)] = int(stat[stat.rindex(b")") + 2 :].split()[1])
    return out


def resident(pid: int) -> int:
    try:
        with open(f"/proc/{pid}/statm", "rb") as f:
            return int(f.read().split()[1]) * PAGE
    except OSError:
        return 0


def proportional(pid: int) -> int:
    """The proportional set size of ``pid`` (Linux, /proc/PID/smaps_rollup): its private pages plus its
    share of each page it shares, so that pages forked workers inherit are counted once in a sum."""
    try:
        with open(f"/proc/{pid}/smaps_rollup", "rb") as f:
            for line in f:
                if line.startswith(b"Pss:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 0


class TreeSampler(threading.Thread):
    """Adds up the resident sets of ``root`` and its descendants every SAMPLE_EVERY seconds; keeps the peak."""

    def __init__(self, root: int) -> None:
        super().__init__(daemon=True)
        self.root = root
        self.tree = {root}
        self.peak = 0
        self.peak_pss = 0
        self.done = threading.Event()

    def run(self) -> None:
        tick = 0
        while not self.done.is_set():
            if tick % DISCOVER_EVERY == 0:
                ppid = parents()
                for pid in sorted(ppid):
                    chain, p = [], pid
                    while p in ppid and p not in self.tree and p > 1:
                        chain.append(p)
                        p = ppid[p]
                    if p in self.tree:
                        self.tree.update(chain)
            self.peak = max(self.peak, sum(resident(pid) for pid in self.tree))
            self.peak_pss = max(self.peak_pss, sum(proportional(pid) for pid in self.tree))
            tick += 1
            self.done.wait(SAMPLE_EVERY)


def settle() -> None:
    """Start a timed run with no writes of an earlier one still going to disk (their writeback would
    slow the run down, and by how much depends on the disk)."""
    os.sync()
    time.sleep(1)


#: The environment of the commands timed: set by :func:`keep_bytecode`.
CHILD_ENV: dict[str, str] | None = None


def keep_bytecode(scratch: Path) -> None:
    """Have the commands keep each module's bytecode in ``scratch``, as an installed program has it, and
    write it once now (untimed)."""
    global CHILD_ENV
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPYCACHEPREFIX"] = str(scratch / "bytecode")
    CHILD_ENV = env
    subprocess.run([sys.executable, "-m", "builder", "--version"], cwd=ROOT, env=env, check=True, capture_output=True)


def run_command(args: list[str]) -> Run:
    """Run ``python -m builder ARGS`` from the repository's top folder, timed and sampled."""
    settle()
    t0 = time.perf_counter()
    child = subprocess.Popen([sys.executable, "-m", "builder", *args], cwd=ROOT, stdout=subprocess.PIPE, env=CHILD_ENV)
    sampler = TreeSampler(child.pid)
    sampler.start()
    assert child.stdout is not None
    output = child.stdout.read()
    _, status, usage = os.wait4(child.pid, 0)
    seconds = time.perf_counter() - t0
    child.returncode = os.waitstatus_to_exitcode(status)
    sampler.done.set()
    sampler.join()
    if child.returncode:
        raise SystemExit(f"python -m builder {' '.join(args)} exited {child.returncode}:\n{output.decode()[-2000:]}")
    return Run(seconds, sampler.peak, usage.ru_maxrss * 1024, sampler.peak_pss)  # Linux gives ru_maxrss in KiB


def best(runs: list[Run]) -> Run:
    return Run(
        min(r.seconds for r in runs),
        max(r.peak_tree_bytes for r in runs),
        max(r.maxrss_bytes for r in runs),
        max(r.peak_pss_bytes for r in runs),
    )


def best_of(repeat: int, fn: Callable[[], object]) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def parse_all(catalogue: Path) -> Callable[[], None]:
    files = sorted(p for p in catalogue.rglob("*.yaml") if "schema" not in p.relative_to(catalogue).parts)

    def run() -> None:
        for path in files:
            yaml.load(path.read_text(encoding="utf-8"), Loader=yaml.CSafeLoader)

    return run


def read_site(site: Path) -> list[tuple[str, bytes]]:
    return [(str(p.relative_to(site)), p.read_bytes()) for p in sorted(site.rglob("*")) if p.is_file()]


def write_floor(files: list[tuple[str, bytes]], scratch: Path, repeat: int) -> float:
    """The least time to write ``files`` into a fresh folder, making its folders (each copy removed untimed)."""
    times = []
    for i in range(repeat):
        target = scratch / f"copy-{i}"
        settle()
        t0 = time.perf_counter()
        made: set[Path] = set()
        for rel, data in files:
            path = target / rel
            if path.parent not in made:
                path.parent.mkdir(parents=True, exist_ok=True)
                made.add(path.parent)
            path.write_bytes(data)
        times.append(time.perf_counter() - t0)
        shutil.rmtree(target)
    return min(times)


def edit_note(path: Path, run: int) -> None:
    """Give the cycle entry at ``path`` (a file of bench/big_catalogue.py, whose provenance is last and
    whose note, if any, is one line) a note of its own for this run."""
    lines = [
        line for line in path.read_text(encoding="utf-8").splitlines(keepends=True) if not line.startswith("  notes:")
    ]
    lines.append(f"  notes: edited by the benchmark, run {run}\n")
    path.write_text("".join(lines), encoding="utf-8")


def wait_for_removal(site: Path) -> None:
    """Wait until the sites a build replaced beside ``site`` are removed (a build removes them in the background)."""
    while any(p.name.startswith(f".{site.name}.old-") for p in site.parent.iterdir()):
        time.sleep(0.1)


def rebuilds(catalogue: Path, scratch: Path, repeat: int) -> dict[str, Run]:
    """The best one-note rebuild of a cycle of a small map and of a cycle of the biggest map."""
    copy = scratch / "catalogue-copy"
    shutil.copytree(catalogue, copy)
    # The copies were just written: a file changed within SETTLE_NS is read at every build (its stamp
    # could miss a write in the same clock tick: builder.catalogue.files), as after a real checkout.
    time.sleep(settle_seconds())
    site, cache = scratch / "site-rebuilt", scratch / "cache"
    run_command(["build", str(copy), "--out", str(site), "--cache", str(cache)])
    folders = sorted(
        (p for p in (copy / "cycles").iterdir() if p.is_dir()), key=lambda p: (len(list(p.iterdir())), p.name)
    )
    small = next(f for f in folders if len(list(f.iterdir())) >= 3)
    picks = {
        f"a map of {len(list(small.iterdir()))} cycles": small,
        f"the biggest map ({len(list(folders[-1].iterdir())):,} cycles)": folders[-1],
    }
    best_runs = {}
    for label, folder in picks.items():
        entry = sorted(folder.glob("*.yaml"))[0]
        runs = []
        for i in range(repeat):
            edit_note(entry, i)
            wait_for_removal(site)
            runs.append(run_command(["build", str(copy), "--out", str(site), "--cache", str(cache)]))
        best_runs[f"{label}, {entry.relative_to(copy)}"] = best(runs)
    wait_for_removal(site)
    return best_runs


def report(scale: float, catalogue: Path, build: Run, verify: Run, floors: tuple[float, float], site: Path) -> None:
    parse, write = floors
    floor = parse + write
    sizes = [(p.stat().st_size, str(p.relative_to(site))) for p in sorted(site.rglob("*")) if p.is_file()]
    size, page = max(s for s in sizes if s[1].endswith(".html"))
    yaml_files = sum(1 for _ in catalogue.rglob("*.yaml"))
    print(f"catalogue: {catalogue} (scale {scale:g}, {yaml_files:,} files)")
    print(
        f"PyYAML {yaml.__version__}, C loader {'yes' if yaml.__with_libyaml__ else 'no'}; Python {sys.version.split()[0]}"
    )
    print(f"floor: parse {parse:.2f} s + write {write:.2f} s = {floor:.2f} s")
    print(f"build:  {build.seconds:7.2f} s   ratio {build.seconds / floor:5.2f}   (goal <= {BUILD_GOAL:.1f} x floor)")
    print(
        f"verify: {verify.seconds:7.2f} s   ratio {verify.seconds / parse:5.2f}   (goal <= {VERIFY_GOAL:.1f} x parse floor)"
    )
    print(
        f"build peak memory: process tree {build.peak_pss_bytes / MB:.0f} MB proportional (shared pages counted "
        f"once; resident sets added up: {build.peak_tree_bytes / MB:.0f} MB), largest process (ru_maxrss) "
        f"{build.maxrss_bytes / MB:.0f} MB   (goal <= {MEMORY_GOAL_MB} MB)"
    )
    print(f"verify peak memory: process tree {verify.peak_tree_bytes / MB:.0f} MB")
    total = sum(s for s, _ in sizes)
    print(f"site: {total / MB:.1f} MB in {len(sizes):,} files; largest HTML page {page} ({size / 1024:.0f} KB)")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "--scale", type=float, default=1.0, help="size of the demo catalogue (1.0: about 50,000 cycles)"
    )
    parser.add_argument("--repeat", type=int, default=1, help="runs of each timing; the best is kept")
    parser.add_argument(
        "--scratch",
        type=Path,
        default=None,
        metavar="DIR",
        help="where the sites and the floor's copies are written (default: the system's temporary folder); "
        "a folder in memory such as /dev/shm takes the disk's ups and downs out of both sides of the ratio",
    )
    args = parser.parse_args()
    catalogue = catalogue_of(args.scale)
    with tempfile.TemporaryDirectory(prefix="periplus-build-speed-", dir=args.scratch) as tmp:
        scratch = Path(tmp)
        keep_bytecode(scratch)
        builds = []
        for i in range(args.repeat):
            site = scratch / f"site-{i}"
            builds.append(run_command(["build", str(catalogue), "--out", str(site), "--no-cache"]))
            if i:
                shutil.rmtree(site)
        verify = best([run_command(["verify", str(catalogue), "--no-cache"]) for _ in range(args.repeat)])
        parse = best_of(args.repeat, parse_all(catalogue))
        files = read_site(scratch / "site-0")
        write = write_floor(files, scratch, args.repeat)
        del files
        report(args.scale, catalogue, best(builds), verify, (parse, write), scratch / "site-0")
        for label, run in rebuilds(catalogue, scratch, args.repeat).items():
            print(f"rebuild after one note ({label}): {run.seconds:.2f} s   (goal <= {REBUILD_GOAL:.0f} s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
