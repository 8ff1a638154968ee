"""Incremental builds (issue 13): a build into an existing site takes the files of every unit of pages
whose inputs did not change from it (hard links), and the result is byte for byte a clean build's.

Each case changes one thing in a copy of the valid fixture (3x+1 and 3x-1 on Z, mirrors of each other:
Lagarias 1985 via ../shared/literature.md), rebuilds into the site of the unchanged copy, and compares
with a clean build of the changed copy.  Reused files keep their inode (a hard link), which tells what
was taken rather than written.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import VALID
from gitrepo import Repo

from builder.site import render
from builder.site.build import build_site
from builder.site.manifest import read_previous
from builder.site.render import MANIFEST


def tree(root: Path) -> dict[str, str]:
    return {
        p.relative_to(root).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in sorted(root.rglob("*"))
        if p.is_file()
    }


def inodes(root: Path) -> dict[str, int]:
    return {p.relative_to(root).as_posix(): p.stat().st_ino for p in root.rglob("*") if p.is_file()}


def edit(path: Path, old: str, new: str) -> None:
    text = path.read_text(encoding="utf-8")
    assert old in text, (path, old)
    path.write_text(text.replace(old, new, 1), encoding="utf-8")


def _cycle_method(cat: Path) -> None:
    edit(cat / "cycles/3x-plus-1/through-1.yaml", "method: ", "method: (edited) ")


def _mirror_name(cat: Path) -> None:
    # 3x+1's pages name their mirror map and link the mirrored cycles by that name.
    edit(cat / "maps/3x-minus-1.yaml", "name: 3x-1 (shortcut form)", "name: 3x-1 (renamed)")


def _remove_cycle(cat: Path) -> None:
    (cat / "cycles/3x-minus-1/through-17.yaml").unlink()


def _reference_title(cat: Path) -> None:
    text = (cat / "references.yaml").read_text(encoding="utf-8")
    title = next(line for line in text.splitlines() if line.strip().startswith("title:"))
    edit(cat / "references.yaml", title, title.replace("title: ", "title: Edited, ", 1))


def _record_title(cat: Path) -> None:
    text = (cat / "record.yaml").read_text(encoding="utf-8")
    title = next(line for line in text.splitlines() if line.startswith("title:"))
    edit(cat / "record.yaml", title, "title: An edited title")


def _nothing(cat: Path) -> None:
    pass


def _scaled_copy_added(cat: Path) -> None:
    # A new map, 3x+5, with its fixed point -5 = (3*(-5)+5)/2: 5 times the fixed point -1 of 3x+1 (a
    # scaled copy: Lagarias 1990 via ../shared/literature.md), and with the same word.  The unchanged
    # cycle of 3x+1 now links to it: its page is made again although its own file did not change.
    (cat / "maps/3x-plus-5.yaml").write_text(
        "name: 3x+5\nmodulus: 2\nbranches:\n"
        "  - {residue: 0, multiplier: 1, increment: 0}\n  - {residue: 1, multiplier: 3, increment: 5}\n"
        "summary: T(n) = n/2 for even n and (3n+5)/2 for odd n.\n",
        encoding="utf-8",
    )
    (cat / "cycles/3x-plus-5").mkdir()
    (cat / "cycles/3x-plus-5/through-minus-5.yaml").write_text(
        "map: 3x-plus-5\nstart: -5\nlength: 1\nprovenance:\n  found_by: Periplus test fixture\n"
        "  found_on: 2024-05-01\n  method: iteration by hand\n",
        encoding="utf-8",
    )


def _cycle_start(cat: Path) -> None:
    # The same cycle written from another member (-17 -> -25 under 3x+1: (3*(-17)+1)/2 = -25): its pages
    # show the start, and the pages of the mirror map that link it show the least member, unchanged.
    path = cat / "cycles/3x-plus-1/through-minus-17.yaml"
    edit(path, "start: -17", "start: -25")
    edit(
        path,
        "[-17, -25, -37, -55, -82, -41, -61, -91, -136, -68, -34]",
        "[-25, -37, -55, -82, -41, -61, -91, -136, -68, -34, -17]",
    )


CASES: dict[str, tuple[Callable[[Path], None], list[str], list[str]]] = {
    # change, pages that must be written again, pages that must be taken from the old site
    "a cycle's method": (_cycle_method, ["maps/3x-plus-1/through-1/index.html"], ["maps/3x-minus-1/index.html"]),
    "the mirror map's name": (
        _mirror_name,
        ["maps/3x-minus-1/index.html", "maps/3x-plus-1/index.html", "maps/3x-plus-1/through-minus-1/index.html"],
        [],
    ),
    "a cycle removed": (_remove_cycle, ["maps/3x-minus-1/index.html", "lengths/11/index.html"], []),
    "a reference's title": (_reference_title, ["maps/3x-minus-1/through-17/index.html"], []),
    "the record's title": (_record_title, ["maps/3x-minus-1/index.html", "maps/3x-plus-1/through-1/index.html"], []),
    "nothing": (_nothing, [], ["maps/3x-plus-1/index.html", "maps/3x-minus-1/through-5/index.html"]),
    "a map with a scaled copy added": (
        _scaled_copy_added,
        ["maps/3x-plus-1/through-minus-1/index.html", "maps/3x-plus-5/through-minus-5/index.html"],
        [],
    ),
    "a cycle's start": (
        _cycle_start,
        ["maps/3x-plus-1/through-minus-17/index.html"],
        ["maps/3x-minus-1/through-17/index.html", "maps/3x-minus-1/index.html"],
    ),
}


@pytest.mark.parametrize("case", list(CASES))
def test_an_incremental_build_is_the_clean_build(tmp_path: Path, case: str) -> None:
    change, written, taken = CASES[case]
    cat = tmp_path / "catalogue"
    shutil.copytree(VALID, cat)
    site = tmp_path / "site"
    assert build_site(cat, site, jobs=1).report.ok
    before = inodes(site)
    change(cat)
    assert build_site(cat, site, jobs=2).report.ok
    clean = tmp_path / "clean"
    assert build_site(cat, clean, jobs=1, reuse=False).report.ok
    assert tree(site) == tree(clean)
    after = inodes(site)
    for page in written:
        assert page in after and after[page] != before.get(page), f"{page} was not written again"
    for page in taken:
        assert after[page] == before[page], f"{page} was written again"
    if case == "nothing":  # then only what every build makes is written again: no unit's pages
        rewritten = sorted(p for p in after if before.get(p) != after[p] and p.startswith("maps/") and p.count("/") > 1)
        assert rewritten == [], rewritten


@pytest.mark.parametrize(
    ("change", "every_page"), [(None, True), (_nothing, False), (_cycle_method, False), (_record_title, True)]
)
def test_a_build_that_makes_every_page_again_readies_its_workers_first(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, change: Callable[[Path], None] | None, every_page: bool
) -> None:
    # With no site to take pages from, or one whose every page read other common inputs (the record's
    # title is on every page), every template is compiled and numpy imported before the workers are forked.
    cat = tmp_path / "catalogue"
    shutil.copytree(VALID, cat)
    site = tmp_path / "site"
    if change is not None:
        assert build_site(cat, site, jobs=1).report.ok
        change(cat)
    readied: list[object] = []
    real = render._ready_for_every_page
    monkeypatch.setattr(render, "_ready_for_every_page", lambda env: readied.append(env) or real(env))
    assert build_site(cat, site, jobs=2).report.ok
    assert len(readied) == (1 if every_page else 0)
    assert json.loads((site / MANIFEST).read_text(encoding="utf-8"))["common"] == read_previous(site).common


def test_a_commit_that_changes_no_file_still_changes_the_pages_of_its_history(tmp_path: Path) -> None:
    """A cycle's page shows when its file was added and last changed: committing an edit made before
    changes that page (and no byte of the catalogue), and the incremental build writes it again."""
    repo = Repo(tmp_path / "repo")
    cat = repo.path / "catalogue"
    shutil.copytree(VALID, cat)
    repo.commit("The catalogue", when="2024-05-01T12:00:00Z")
    _cycle_method(cat)  # edited, not yet committed
    site = tmp_path / "site"
    assert build_site(cat, site, jobs=1).report.ok
    before = inodes(site)
    repo.commit("A cycle's method", when="2024-06-01T12:00:00Z")
    assert build_site(cat, site, jobs=2).report.ok
    clean = tmp_path / "clean"
    assert build_site(cat, clean, jobs=1, reuse=False).report.ok
    assert tree(site) == tree(clean)
    after = inodes(site)
    page = "maps/3x-plus-1/through-1/index.html"
    assert after[page] != before[page], f"{page} was not written again"
    assert "2024-06-01" in (site / page).read_text(encoding="utf-8")


def test_a_build_without_reuse_writes_every_file(tmp_path: Path) -> None:
    site = tmp_path / "site"
    build_site(VALID, site)
    before = inodes(site)
    build_site(VALID, site, reuse=False)
    after = inodes(site)
    assert not [p for p in after if before.get(p) == after[p]]


@pytest.mark.parametrize(
    "damage",
    ["missing", "garbled", "other-format", "file-gone", "outside", "symlink", "export-edited", "export-cut", "spans"],
)
def test_a_damaged_manifest_or_site_means_a_full_build(tmp_path: Path, damage: str) -> None:
    # Common practice, no source: a cache that cannot be read is ignored, never trusted.
    site, clean = tmp_path / "site", tmp_path / "clean"
    build_site(VALID, site)
    manifest = site / MANIFEST
    if damage == "missing":
        manifest.unlink()
    elif damage == "garbled":
        manifest.write_text("{not json", encoding="utf-8")
    elif damage == "other-format":
        data = json.loads(manifest.read_text(encoding="utf-8"))
        manifest.write_text(json.dumps({**data, "format": "periplus-build/0"}), encoding="utf-8")
    elif damage == "outside":
        data = json.loads(manifest.read_text(encoding="utf-8"))
        first = next(iter(data["tasks"].values()))
        first["files"].append("../outside.txt")
        manifest.write_text(json.dumps(data), encoding="utf-8")
        (tmp_path / "outside.txt").write_text("not the site's", encoding="utf-8")
    elif damage == "symlink":
        page = site / "maps/3x-plus-1/through-1/index.html"
        page.unlink()
        (tmp_path / "secret.txt").write_text("not for the site", encoding="utf-8")
        page.symlink_to(tmp_path / "secret.txt")
    elif damage == "export-edited":  # the same size, one byte changed: the pieces it holds are not used
        whole = site / "data/catalogue.json"
        data = bytearray(whole.read_bytes())
        data[data.index(b'"17"')] = ord("'")
        whole.unlink()  # a new file: the built site's is a hard link to the old one
        whole.write_bytes(bytes(data))
    elif damage == "export-cut":
        table = site / "data/cycles.csv"
        data = table.read_bytes()
        table.unlink()
        table.write_bytes(data[: len(data) // 2])
    elif damage == "spans":
        data = json.loads(manifest.read_text(encoding="utf-8"))
        data["record"]["spans"]["3x-plus-1"] = [1, 2, 3]
        manifest.write_text(json.dumps(data), encoding="utf-8")
    else:
        os.unlink(site / "maps/3x-plus-1/through-1/index.html")
    build_site(VALID, site)
    build_site(VALID, clean, reuse=False)
    assert tree(site) == tree(clean)
    assert not any(p.is_symlink() for p in site.rglob("*"))


def test_the_whole_record_exports_are_pieced_from_the_previous_site(tmp_path: Path) -> None:
    # An incremental build takes each unchanged map's lines of data/catalogue.json and data/cycles.csv
    # from the previous site's files (where the manifest says they lie) and makes the changed map's anew.
    cat = tmp_path / "catalogue"
    shutil.copytree(VALID, cat)
    site = tmp_path / "site"
    assert build_site(cat, site, jobs=1).report.ok
    layout = json.loads((site / MANIFEST).read_text(encoding="utf-8"))["record"]
    whole = (site / "data/catalogue.json").read_bytes()
    start, end, line_start, line_end, _, _ = layout["spans"]["3x-plus-1"]
    assert json.loads(whole[line_start:line_end])["id"] == "3x-plus-1"
    assert {json.loads(line)["map"] for line in whole[start:end].split(b",\n{")[:1]} == {"3x-plus-1"}
    _cycle_method(cat)
    assert build_site(cat, site, jobs=2).report.ok
    clean = tmp_path / "clean"
    assert build_site(cat, clean, jobs=1, reuse=False).report.ok
    for name in ("data/catalogue.json", "data/cycles.csv", MANIFEST):
        assert (site / name).read_bytes() == (clean / name).read_bytes(), name
    assert b"(edited) " in (site / "data/catalogue.json").read_bytes()


@pytest.mark.parametrize("jobs", [1, 2])
def test_a_clean_builds_whole_record_exports_are_those_made_from_the_records(tmp_path: Path, jobs: int) -> None:
    # Each map's pieces are made with its data file by the process that writes it, set aside in a spool and
    # copied into the exports: the same bytes as making every piece from the records at once, here, and
    # the spools are gone from the site.
    import io

    from builder.site.build import _verified
    from builder.site.exports import write_record_exports

    site = tmp_path / "site"
    assert build_site(VALID, site, jobs=jobs, reuse=False).report.ok
    views = _verified(VALID, None, None, 1, None, None, None).views  # what the build made its pages from
    assert views is not None
    catalogue, table = io.BytesIO(), io.BytesIO()
    spans = write_record_exports(views, catalogue, table, lambda map_id: None)
    assert (site / "data/catalogue.json").read_bytes() == catalogue.getvalue()
    assert (site / "data/cycles.csv").read_bytes() == table.getvalue()
    layout = json.loads((site / MANIFEST).read_text(encoding="utf-8"))["record"]["spans"]
    assert layout == {map_id: list(at) for map_id, at in spans.items()}
    assert not [p for p in site.rglob(".pieces-*")]
    for map_id, (start, end, *_) in spans.items():  # a map's cycles, as its own data file has them
        mine = json.loads((site / f"data/maps/{map_id}.json").read_bytes())["cycles"]
        assert json.loads(b"[" + catalogue.getvalue()[start:end] + b"]") == mine


def test_the_digest_reads_plain_data_of_any_size() -> None:
    from datetime import date

    from builder.site.digest import stable_digest

    huge = 3**20_000  # 9,543 digits: repr() refuses integers of more than 4,300 (Python's default limit)
    assert stable_digest((huge, "x")) == stable_digest((huge, "x"))
    assert stable_digest(huge) != stable_digest(huge + 1)
    # Equal data, equal digests; a different structure, another digest.
    assert stable_digest({"a": [1, 2], "b": date(2026, 1, 1)}) == stable_digest({"a": [1, 2], "b": date(2026, 1, 1)})
    assert stable_digest(("ab", "c")) != stable_digest(("a", "bc"))
    assert stable_digest((1, (2, 3))) != stable_digest(((1, 2), 3))
    assert stable_digest(None) != stable_digest(False) != stable_digest(0)
    assert stable_digest(1) != stable_digest(True) and stable_digest(1) != stable_digest(1.0)
    assert stable_digest((huge, date(2026, 1, 1), Path("a/b"))) != stable_digest((huge, date(2026, 1, 2), Path("a/b")))
    # One object twice or two equal objects: the same data, so the same digest (pickle's memo is off).
    one = ("x" * 40, huge)
    assert stable_digest([one, one]) == stable_digest([one, ("x" * 40, 3**20_000)])
    with pytest.raises(TypeError, match="expected plain data"):
        stable_digest((1, lambda: 1))


_TASK_DIGESTS = """
import sys
from pathlib import Path
from builder.catalogue.verify import verify_catalogue
from builder.site.render import _common_inputs, _digest, _tasks
from builder.site.views import build_views

views = build_views(verify_catalogue(Path(sys.argv[1])).catalogue)
common = _common_inputs(views)
for task in _tasks(views):
    if task.inputs is not None:
        print(task.name, _digest(common, task.inputs(views)))
"""


def test_every_task_digest_is_the_same_under_another_hash_seed() -> None:
    # A set among a task's inputs would be read in an order that changes with the hash seed (common
    # practice, no source: Python randomises the hashes of text per process), and no page would ever
    # be reused.  Two processes with different seeds must give the same digest for every task.
    import subprocess
    import sys

    runs = []
    for seed in ("1", "2"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        out = subprocess.run(
            [sys.executable, "-c", _TASK_DIGESTS, str(VALID)], env=env, capture_output=True, text=True, check=True
        )
        runs.append(out.stdout)
    assert runs[0] == runs[1]
    assert runs[0].count("map:") == 2 and "site:lengths" in runs[0]


def test_a_big_maps_cycle_pages_are_made_in_parts(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # With parts of one cycle, each map of the fixture is a big map: its own pages, its data file and its
    # cycle pages in parts are units of their own.  A cycle's edited method makes its part's pages
    # again, and the data file (which lists the method), but not the map's pages (which do not show it)
    # nor the other parts'; the result is still the clean build's.
    monkeypatch.setattr("builder.site.pages.CYCLES_PER_PART", 1)
    cat = tmp_path / "catalogue"
    shutil.copytree(VALID, cat)
    site = tmp_path / "site"
    assert build_site(cat, site, jobs=1).report.ok
    tasks = json.loads((site / MANIFEST).read_text(encoding="utf-8"))["tasks"]
    edited = "maps/3x-plus-1/through-1/index.html"
    part = next(name for name, task in tasks.items() if edited in task["files"])
    assert part.startswith("map:3x-plus-1:part-")
    assert tasks["map:3x-plus-1:data"]["files"] == ["data/maps/3x-plus-1.json"]
    assert "maps/3x-plus-1/index.html" in tasks["map:3x-plus-1"]["files"]
    others = [
        f for name, t in tasks.items() if name.startswith("map:3x-plus-1:part-") and name != part for f in t["files"]
    ]
    assert others, "the map's other cycles are in other parts"
    before = inodes(site)
    _cycle_method(cat)
    assert build_site(cat, site, jobs=2).report.ok
    clean = tmp_path / "clean"
    assert build_site(cat, clean, jobs=1, reuse=False).report.ok
    assert tree(site) == tree(clean)
    after = inodes(site)
    for page in (edited, "data/maps/3x-plus-1.json"):
        assert after[page] != before[page], f"{page} was not written again"
    for page in [*others, "maps/3x-plus-1/index.html"]:
        assert after[page] == before[page], f"{page} was written again"


def test_a_linking_process_that_dies_leaves_a_full_build(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # Common practice, no source: work a stopped worker may have half done is thrown away, not trusted.
    # The process linking the previous site's files is killed after linking some: the build makes every
    # page itself, and the site is the clean build's, with no file of the old site in it.
    import signal

    from builder.site import manifest

    site, clean = tmp_path / "site", tmp_path / "clean"
    assert build_site(VALID, site).report.ok
    real = manifest._link_previous

    def dies(previous: manifest.Previous, staging: Path) -> frozenset[str]:
        first = next(iter(previous.tasks))
        real(manifest.Previous(previous.root, {first: previous.tasks[first]}), staging)
        os.kill(os.getpid(), signal.SIGKILL)
        raise AssertionError("not reached")

    monkeypatch.setattr(manifest, "_link_previous", dies)
    before = inodes(site)
    assert build_site(VALID, site, jobs=2).report.ok
    assert build_site(VALID, clean, reuse=False).report.ok
    assert tree(site) == tree(clean)
    after = inodes(site)
    assert not [p for p in after if before.get(p) == after[p]], "no file was taken from the old site"


def test_a_build_sharing_its_work_lists_the_catalogue_ahead_and_builds_the_same_site(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # With two processes, a helper lists and stamps the catalogue's files while the build reads the site it
    # replaces and the cache (builder.site.build); the site is the one a single process builds.
    from builder.catalogue.cache import VerifyCache
    from builder.catalogue.files import Survey
    from builder.site import build as build_module

    taken: list[object] = []
    real = build_module._surveyed
    monkeypatch.setattr(build_module, "_surveyed", lambda helper: taken.append(real(helper)) or taken[-1])
    cat = tmp_path / "catalogue"
    shutil.copytree(VALID, cat)
    site, clean = tmp_path / "site", tmp_path / "clean"
    for _ in range(2):  # a clean build, then one that takes the first's pages, both with the cache
        with VerifyCache.open(tmp_path / "cache") as cache:
            assert build_site(cat, site, jobs=2, cache=cache).report.ok
    assert build_site(cat, clean, jobs=1, reuse=False).report.ok
    assert tree(site) == tree(clean)
    assert [type(t) for t in taken] == [Survey, Survey, type(None)]
    assert sum(len(names) for names in taken[0].listings.values()) > 10  # type: ignore[union-attr]
