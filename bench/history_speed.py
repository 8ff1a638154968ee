"""Benchmark: what releases and entry history add to `periplus build`.

    python bench/history_speed.py [--releases N] [--repeat R]

Copies the shipped catalogue into a fresh git repository in a temporary folder and
times, best of R runs each:

- the floor: a build of the same catalogue outside any repository (verify, views,
  pages and exports, with no history and no changelog);
- a build of the repository with one commit and no release tag (one `git log` pass
  for the entry dates);
- a build with N tagged releases, each editing a few cycle files and renaming one,
  so each changelog step has something to list (removing a cycle would break the
  shipped maps' completeness claims, which the build rightly refuses).

Each release is read from its tagged commit and verified again (with coverage
rechecks off), so the cost is expected to grow with N: the figures are per release.
Figures, not pass/fail: timings on a shared machine vary, so no test depends on them.
The repository is made here from the shipped catalogue; its releases are demo
releases, not releases of a real record.
"""

from __future__ import annotations

import argparse
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from builder.site.build import build_site  # noqa: E402


def best_of(repeat: int, fn: Callable[[], object]) -> float:
    best = float("inf")
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def git(repo: Path, *args: str, when: str | None = None) -> None:
    env = {k: v for k, v in os.environ.items() if not k.startswith("GIT_")}
    env.update(GIT_CONFIG_NOSYSTEM="1", GIT_CONFIG_GLOBAL=os.devnull, LC_ALL="C")
    env.update(GIT_AUTHOR_NAME="Bench", GIT_AUTHOR_EMAIL="bench@example.org")
    env.update(GIT_COMMITTER_NAME="Bench", GIT_COMMITTER_EMAIL="bench@example.org")
    if when is not None:
        env.update(GIT_AUTHOR_DATE=when, GIT_COMMITTER_DATE=when)
    subprocess.run(["git", *args], cwd=repo, env=env, check=True, capture_output=True)


def set_version(catalogue: Path, version: str) -> None:
    path = catalogue / "record.yaml"
    text = path.read_text(encoding="utf-8")
    path.write_text(re.sub(r"(?m)^version: .*$", f'version: "{version}"', text), encoding="utf-8")


def make_repository(folder: Path, releases: int) -> Path:
    repo = folder / "repo"
    catalogue = repo / "catalogue"
    shutil.copytree(ROOT / "catalogue", catalogue)
    git(repo, "init", "-q", "-b", "main")
    cycles = sorted((catalogue / "cycles").rglob("*.yaml"))
    for i in range(releases):
        if i:
            # A few edits and one rename per release.
            for path in cycles[i * 6 : i * 6 + 5]:
                path.write_text(path.read_text(encoding="utf-8") + f"# demo edit for release 1.{i}\n", "utf-8")
            moved = cycles[i * 6 + 5]
            moved.rename(moved.with_name(f"renamed-{i}-{moved.name}"))
        set_version(catalogue, f"1.{i}")
        git(repo, "add", "-A")
        git(repo, "commit", "-q", "-m", f"demo release 1.{i}", when=f"2026-01-{i + 1:02d}T12:00:00+00:00")
        git(repo, "tag", f"record-1.{i}")
    return catalogue


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--releases", type=int, default=10)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="periplus-bench-") as tmp:
        folder = Path(tmp)
        plain = folder / "plain"
        shutil.copytree(ROOT / "catalogue", plain)
        floor = best_of(args.repeat, lambda: build_site(plain, folder / "site-plain"))
        one = make_repository(folder / "one", 1)
        untagged = one.parent
        git(untagged, "tag", "-d", "record-1.0")
        no_tags = best_of(args.repeat, lambda: build_site(one, folder / "site-one"))
        many = make_repository(folder / "many", args.releases)
        result = build_site(many, folder / "site-many")
        assert result.report.ok, [str(p) for p in result.report.problems][:3]
        assert result.changelog is not None
        assert len(result.changelog.releases) == args.releases, result.changelog
        tagged = best_of(args.repeat, lambda: build_site(many, folder / "site-many"))
    per_release = (tagged - no_tags) / args.releases
    print(f"build outside git (floor):             {floor:6.2f} s")
    print(f"build in git, history, no release tag: {no_tags:6.2f} s  (ratio {no_tags / floor:.2f})")
    print(f"build in git with {args.releases:3d} releases:         {tagged:6.2f} s  (ratio {tagged / floor:.2f})")
    print(f"cost per release:                      {per_release:6.2f} s  ({per_release / floor:.2f} of the floor)")


if __name__ == "__main__":
    main()
