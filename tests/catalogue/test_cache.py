"""The verification cache (builder.catalogue.cache): a warm cache gives exactly the report a cold run gives.

The reference for every comparison here is Periplus's own verification without a cache; the claims
that are made false below are facts of the fixture catalogue, with their sources in its comments
(Lagarias 1985 via literature.md).  Each test also shows that the cache was really used (or really
not), by counting the files parsed: a test that passed whether or not the cache were read would
prove nothing.
"""

from __future__ import annotations

import os
import shutil
import sqlite3
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from conftest import BROKEN_CASES, FIXTURES, REPO, Run
from test_coverage import with_claim

from builder.catalogue import cache as cache_module
from builder.catalogue import serial
from builder.catalogue import signing as signing_module
from builder.catalogue import store as store_module
from builder.catalogue import verify as verify_module
from builder.catalogue.cache import DATABASE, FOLDER_NAME, PathsUnder, VerifyCache, default_cache_folder
from builder.catalogue.model import Report
from builder.catalogue.verify import Limits, verify_catalogue
from builder.search import engine as engine_module

NO_RECHECK = Limits(recheck_up_to=-1)


def detail(report: Report) -> tuple[Any, ...]:
    """Everything a report holds, problems field by field (a Problem compares by position alone)."""
    problems = [
        (p.position.file, p.position.line, p.position.column, p.position.key_path, p.message, p.code, p.severity)
        for p in report.problems
    ]
    written = list(report.written.items())  # in the order the files were read
    return report.catalogue, written, problems, report.files, report.references_readable


@pytest.fixture
def parses(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    """The map and cycle files verification parses (those it does not take from the cache)."""
    seen: list[str] = []
    real = verify_module.parse_bytes

    def counting(file: Any, *args: Any) -> Any:
        seen.append(file.rel)
        return real(file, *args)

    monkeypatch.setattr(verify_module, "parse_bytes", counting)
    return seen


@pytest.fixture
def searches(monkeypatch: pytest.MonkeyPatch) -> list[tuple[Any, ...]]:
    """The coverage searches verification runs (those it does not take from the cache)."""
    ran: list[tuple[Any, ...]] = []
    real = engine_module.hunt_range

    def counting(*args: Any, **kwargs: Any) -> Any:
        ran.append(args)
        return real(*args, **kwargs)

    monkeypatch.setattr(engine_module, "hunt_range", counting)  # imported from it when a search runs
    return ran


def verified(root: Path, folder: Path | None, limits: Limits = NO_RECHECK) -> Report:
    with VerifyCache.open(folder) as cache:
        return verify_catalogue(root, limits, cache)


def entry_files(root: Path) -> int:
    return len(list((root / "maps").glob("*.yaml"))) + len(list((root / "cycles").rglob("*.yaml")))


# --- the same report, cold or warm ----------------------------------------------------------------


def test_a_warm_cache_gives_the_report_of_a_cold_run_and_checks_no_file_again(catalogue, tmp_path, parses):
    root = catalogue()
    folder = tmp_path / "cache"
    cold = verify_catalogue(root, NO_RECHECK)
    assert cold.ok
    parses.clear()
    first = verified(root, folder)
    assert len(parses) == entry_files(root) == 10
    parses.clear()
    warm = verified(root, folder)
    assert parses == []
    assert detail(first) == detail(cold) == detail(warm)


@pytest.mark.parametrize("case", BROKEN_CASES)
def test_a_warm_cache_gives_the_report_of_a_cold_run_for_every_broken_case(case, catalogue, tmp_path, parses):
    root = catalogue(case)
    folder = tmp_path / "cache"
    cold = verify_catalogue(root, NO_RECHECK)
    assert not cold.ok  # each case makes at least one false claim or malformed file
    verified(root, folder)
    parses.clear()
    warm = verified(root, folder)
    assert parses == []
    assert detail(warm) == detail(cold)


def test_a_warm_cache_gives_the_report_of_a_cold_run_for_the_hostile_entries(tmp_path, parses):
    root = shutil.copytree(FIXTURES / "hostile", tmp_path / "hostile")
    cold = verify_catalogue(root)
    verified(root, tmp_path / "cache", Limits())
    parses.clear()
    warm = verified(root, tmp_path / "cache", Limits())
    assert parses == []
    assert detail(warm) == detail(cold)


def test_the_entries_as_written_are_kept_apart_and_read_only_when_asked_for(catalogue, tmp_path, monkeypatch):
    # The outcomes a warm run loads leave out the entries as written (two thirds of what is kept), which
    # only a changelog or a review reads; read, they are those of a cold run, the edited file's new ones.
    from builder.catalogue import shared as shared_module

    root = catalogue()
    folder = tmp_path / "cache"
    assert verified(root, folder).ok
    path = root / "cycles" / "3x-plus-1" / "through-minus-5.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "  notes: an edited note\n", encoding="utf-8")
    decoded: list[object] = []
    real = shared_module.Share.entries

    def counting(share: shared_module.Share) -> object:
        if share._read is None:
            decoded.append(share)
        return real(share)

    monkeypatch.setattr(shared_module.Share, "entries", counting)
    warm = verified(root, folder)
    assert warm.ok and decoded == []  # verified without reading them
    cold = verify_catalogue(root, NO_RECHECK)
    assert detail(warm) == detail(cold)  # read now, in file order
    assert decoded
    edited = warm.written["cycle", "3x-plus-1/through-minus-5"]
    assert "an edited note" in str(edited.fields)
    again = verified(root, folder)  # the folder kept anew: its other files' entries carried over
    assert detail(again) == detail(cold)


def _rows(folder: Path, cycles: str) -> dict[tuple[int, int], bytes]:
    with sqlite3.connect(folder / DATABASE) as db:
        rows = db.execute("SELECT part, parts, value FROM files WHERE folder = ?", (cycles,)).fetchall()
    db.close()
    return {(part, parts): value for part, parts, value in rows}


def test_a_big_folder_is_kept_in_parts_and_a_changed_file_writes_its_part_again(
    catalogue, tmp_path, parses, monkeypatch
):
    # With parts of one file, the five cycle files of 3x+1 are kept in eight parts (a power of two, by a
    # hash of the path).  One edited file is checked again and its part alone written again; files
    # removed cut the folder into fewer parts; every report is the cold run's, entries as written included.
    monkeypatch.setattr(store_module, "FILES_PER_PART", 1)
    root = catalogue()
    folder = tmp_path / "cache"
    cycles = "cycles/3x-plus-1"
    assert verified(root, folder).ok
    before = _rows(folder, cycles)
    assert {parts for _, parts in before} == {8} and 1 < len(before) <= 5
    path = root / cycles / "through-minus-5.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "  notes: an edited note\n", encoding="utf-8")
    parses.clear()
    warm = verified(root, folder)
    assert parses == [f"{cycles}/through-minus-5.yaml"]
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))
    after = _rows(folder, cycles)
    assert after.keys() == before.keys()
    assert len([k for k in after if after[k] != before[k]]) == 1
    for name in ("through-0.yaml", "through-minus-17.yaml", "through-minus-1.yaml"):
        (root / cycles / name).unlink()
    parses.clear()
    fewer = verified(root, folder)
    assert parses == []
    assert detail(fewer) == detail(verify_catalogue(root, NO_RECHECK))
    assert {parts for _, parts in _rows(folder, cycles)} == {2}
    parses.clear()
    again = verified(root, folder)
    assert parses == []
    assert detail(again) == detail(fewer)


@pytest.fixture
def reads(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    """The map and cycle files whose bytes are read (the others are known by their stamps)."""
    from builder.catalogue import files as files_module

    seen: list[str] = []
    real = files_module.FolderSource.read

    def counting(source: Any, rel: str) -> bytes:
        if rel.startswith(("maps/", "cycles/")):
            seen.append(rel)
        return real(source, rel)

    monkeypatch.setattr(files_module.FolderSource, "read", counting)
    return seen


def test_a_file_whose_stamp_is_kept_is_not_read_again(catalogue, tmp_path, reads, monkeypatch):
    # Files changed SETTLE_NS ago or more: with no wait, every file of the fixture is settled at once.
    monkeypatch.setattr("builder.catalogue.files.SETTLE_NS", 0)
    root = catalogue()
    folder = tmp_path / "cache"
    cold = verified(root, folder)
    assert set(reads) == {f.relative_to(root).as_posix() for f in root.glob("*/**/*.yaml")}
    reads.clear()
    warm = verified(root, folder)
    assert reads == []
    assert detail(warm) == detail(cold)


def test_the_stamps_of_many_files_are_each_file_s_stamp(tmp_path, monkeypatch):
    # FolderSource.stamps looks up once what stamp looks up for each file: the same answers, in order,
    # for a settled file, a file changed within SETTLE_NS, a missing one, a link and a folder.
    from builder.catalogue.files import FolderSource

    (tmp_path / "old.yaml").write_text("a: 1\n", encoding="utf-8")
    os.utime(tmp_path / "old.yaml", ns=(10**18, 10**18))  # its change time is now: settled only with no wait
    (tmp_path / "folder").mkdir()
    (tmp_path / "link.yaml").symlink_to(tmp_path / "old.yaml")
    rels = ["old.yaml", "missing.yaml", "link.yaml", "folder", "old.yaml"]
    source = FolderSource(tmp_path)
    fresh = source.stamps(rels)
    assert fresh == [source.stamp(rel) for rel in rels] == [None] * 5
    monkeypatch.setattr("builder.catalogue.files.SETTLE_NS", 0)
    settled = source.stamps(rels)
    assert settled == [source.stamp(rel) for rel in rels]
    st = (tmp_path / "old.yaml").lstat()
    assert settled == [(st.st_size, 10**18, st.st_ctime_ns, st.st_ino, st.st_dev), None, None, None, settled[0]]


def test_a_file_rewritten_with_its_size_and_times_put_back_is_read_again(catalogue, tmp_path, reads, monkeypatch):
    # The cycle through -5 of 3x+1 is -5, -7, -10 (the fixture's source): -8 is not its second member.  The
    # edit keeps the size, and the modification time is put back; the change time, which only the system
    # sets, still tells the file has changed.
    monkeypatch.setattr("builder.catalogue.files.SETTLE_NS", 0)
    root = catalogue()
    folder = tmp_path / "cache"
    assert verified(root, folder).ok
    path = root / "cycles" / "3x-plus-1" / "through-minus-5.yaml"
    before = path.stat()
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("[-5, -7, -10]", "[-5, -8, -10]"), encoding="utf-8")
    os.utime(path, ns=(before.st_atime_ns, before.st_mtime_ns))
    assert path.stat().st_size == before.st_size and path.stat().st_mtime_ns == before.st_mtime_ns
    reads.clear()
    warm = verified(root, folder)
    assert set(reads) == {"cycles/3x-plus-1/through-minus-5.yaml"}  # read to hash it, then to check it
    assert [p.code for p in warm.errors] == ["wrong-members"]
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))


def test_a_file_changed_lately_is_read_every_time(catalogue, tmp_path, reads):
    # The fixture's files were just written: within SETTLE_NS, a stamp could miss a second write in the
    # same tick of a coarse clock, so none is kept and every file is read (its outcome still kept).
    root = catalogue()
    folder = tmp_path / "cache"
    cold = verified(root, folder)
    reads.clear()
    warm = verified(root, folder)
    assert len(reads) == len(set(reads)) == entry_files(root)
    assert detail(warm) == detail(cold)


def test_unsigned_parts_of_another_cut_are_not_left_behind(catalogue, tmp_path, parses, monkeypatch):
    # The folder's parts signed by someone else, and the folder then cut into fewer parts: the run after
    # checks its files again and keeps them anew, and leaves no row of the old cut, so the next run
    # checks nothing (rows of two cuts would be ignored at every run).
    monkeypatch.setattr(store_module, "FILES_PER_PART", 1)
    root = catalogue()
    folder = tmp_path / "cache"
    cycles = "cycles/3x-plus-1"
    assert verified(root, folder).ok
    with sqlite3.connect(folder / DATABASE) as db:
        db.execute("UPDATE files SET mac = ? WHERE folder = ?", (b"\0" * 32, cycles))
    db.close()
    for name in ("through-0.yaml", "through-minus-17.yaml", "through-minus-1.yaml"):
        (root / cycles / name).unlink()
    parses.clear()
    warm = verified(root, folder)
    assert sorted(parses) == [f"{cycles}/through-1.yaml", f"{cycles}/through-minus-5.yaml"]
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))
    assert {parts for _, parts in _rows(folder, cycles)} == {2}
    parses.clear()
    verified(root, folder)
    assert parses == []


# --- what makes the cache miss ----------------------------------------------------------------------


def test_a_changed_file_is_checked_again_and_its_false_claim_is_reported(catalogue, tmp_path, parses):
    # The cycle through -5 of 3x+1 is -5, -7, -10 (the fixture's source): -8 is not its second member.
    root = catalogue()
    folder = tmp_path / "cache"
    assert verified(root, folder).ok
    path = root / "cycles" / "3x-plus-1" / "through-minus-5.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("[-5, -7, -10]", "[-5, -8, -10]"), encoding="utf-8")
    parses.clear()
    warm = verified(root, folder)
    assert parses == ["cycles/3x-plus-1/through-minus-5.yaml"]
    assert [(p.code, str(p)) for p in warm.errors] == [
        ("wrong-members", f"{path}:5:15: error: members[1]: expected -7 (step 1 of the orbit of -5), got -8")
    ]
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))


def test_a_changed_map_is_seen_by_its_cycles(catalogue, tmp_path, parses):
    # 3x+1 with the odd branch (3n+3)/2 is another map: the cycle through -5 is no cycle of it.
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    path = root / "maps" / "3x-plus-1.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("increment: 1}", "increment: 3}"), encoding="utf-8")
    parses.clear()
    warm = verified(root, folder)
    assert sorted(parses) == sorted(
        ["maps/3x-plus-1.yaml"] + [f"cycles/3x-plus-1/{p.name}" for p in (root / "cycles" / "3x-plus-1").iterdir()]
    )
    assert not warm.ok
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))


def test_a_removed_reference_is_seen_by_the_entries_that_cite_it(catalogue, tmp_path, parses):
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    path = root / "references.yaml"
    path.write_text(path.read_text(encoding="utf-8").replace("lagarias-1985:", "lagarias-1985a:"), encoding="utf-8")
    parses.clear()
    warm = verified(root, folder)
    citing = sorted(
        p.relative_to(root).as_posix()
        for p in [*(root / "maps").glob("*.yaml"), *(root / "cycles").rglob("*.yaml")]
        if "lagarias-1985" in p.read_text(encoding="utf-8")
    )
    assert citing and sorted(parses) == citing  # only the entries citing it are checked again
    assert any(p.code == "unknown-reference" for p in warm.errors)
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))


def test_other_limits_miss_the_cache(catalogue, tmp_path, parses):
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    parses.clear()
    other = Limits(max_steps=500, recheck_up_to=-1)
    warm = verified(root, folder, other)
    assert len(parses) == 10
    assert detail(warm) == detail(verify_catalogue(root, other))


def test_another_engine_version_misses_the_cache(catalogue, tmp_path, parses, monkeypatch):
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    monkeypatch.setattr(store_module, "engine_version", lambda: "another version")
    parses.clear()
    verified(root, folder)
    assert len(parses) == 10
    with sqlite3.connect(folder / DATABASE) as db:
        assert db.execute("SELECT value FROM meta WHERE name = 'engine'").fetchone() == ("another version",)
    db.close()


def test_the_same_catalogue_at_another_root_misses_the_cache(catalogue, tmp_path, parses):
    # Problems name files through the root as given, so a cached outcome is kept per root.
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    moved = shutil.copytree(root, tmp_path / "elsewhere")
    parses.clear()
    warm = verified(moved, folder)
    assert len(parses) == 10
    assert detail(warm) == detail(verify_catalogue(moved, NO_RECHECK))


# --- a cache that cannot be trusted or used -------------------------------------------------------


@pytest.mark.parametrize("damage", ["garbage", "truncated", "empty"])
def test_a_damaged_cache_is_ignored_and_made_anew(damage, catalogue, tmp_path, parses):
    root = catalogue("wrong-length")
    folder = tmp_path / "cache"
    cold = verify_catalogue(root, NO_RECHECK)
    verified(root, folder)
    db = folder / DATABASE
    if damage == "garbage":
        db.write_bytes(b"not a database at all\n" * 100)
    elif damage == "truncated":
        data = db.read_bytes()
        db.write_bytes(data[: len(data) // 2])
    else:
        db.write_bytes(b"")
    parses.clear()
    assert detail(verified(root, folder)) == detail(cold)
    parses.clear()
    assert detail(verified(root, folder)) == detail(cold)
    assert parses == []  # made anew, and warm again


def test_a_cache_signed_with_another_key_is_not_trusted(catalogue, tmp_path, parses, monkeypatch):
    # A cache folder committed to a repository, or copied from another machine, is checked, not believed.
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "another-user"))
    parses.clear()
    warm = verified(root, folder)
    assert len(parses) == 10
    assert detail(warm) == detail(verify_catalogue(root, NO_RECHECK))


def test_a_planted_outcome_is_believed_only_with_the_users_own_signature(catalogue, tmp_path):
    # The outcome kept for the cycle through -5 is replaced by that of the cycle through 1: believed,
    # it would list the cycle through 1 twice and lose the one through -5.
    root = catalogue()
    folder = tmp_path / "cache"
    cold = verified(root, folder)
    cycles = "cycles/3x-plus-1"
    paths = {f"{cycles}/{p.name}": p for p in (root / "cycles" / "3x-plus-1").iterdir()}
    with sqlite3.connect(folder / DATABASE) as db:
        value, aside = db.execute("SELECT value, aside FROM files WHERE folder = ?", (cycles,)).fetchone()
    db.close()
    kept = serial.loads(value, paths)
    planted = dict(kept)
    planted[f"{cycles}/through-minus-5.yaml"] = (
        kept[f"{cycles}/through-minus-5.yaml"][0],
        kept[f"{cycles}/through-1.yaml"][1],
    )
    data = serial.dumps(planted, {path: rel for rel, path in paths.items()})

    def plant(signer: VerifyCache) -> Report:
        with sqlite3.connect(folder / DATABASE) as db:
            scope, part, parts = db.execute(
                "SELECT scope, part, parts FROM files WHERE folder = ?", (cycles,)
            ).fetchone()
            numbers = (part.to_bytes(8, "little"), parts.to_bytes(8, "little"))
            mac = signer._mac(b"f", scope, cycles.encode(), *numbers, data, aside or b"")
            db.execute("UPDATE files SET value = ?, mac = ? WHERE folder = ?", (data, mac, cycles))
        db.close()
        return verified(root, folder)

    stranger = VerifyCache(None, b"\x01" * 32, False, (), None)
    assert detail(plant(stranger)) == detail(cold)  # signed by another key: checked again
    with VerifyCache.open(None) as nobody:
        nobody._key = signing_module.signing_key() or b""
        fooled = plant(nobody)  # signed with the user's own key, as only this program does
    assert [p.code for p in fooled.errors] == ["duplicate-cycle"]


def test_a_read_only_cache_is_read_and_not_written(catalogue, tmp_path, parses, monkeypatch):
    # Tests may run as root, for whom no folder is read-only: the database is opened read-only instead.
    root = catalogue()
    folder = tmp_path / "cache"
    verified(root, folder)
    before = (folder / DATABASE).read_bytes()
    path = root / "cycles" / "3x-plus-1" / "through-minus-5.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "# edited\n", encoding="utf-8")
    monkeypatch.setattr(cache_module, "connect", lambda db: (store_module.connect_read_only(db), False))
    parses.clear()
    with VerifyCache.open(folder) as cache:
        assert cache.notes == (f"the cache {folder} is read-only: it is read, and nothing new is kept",)
        report = verify_catalogue(root, NO_RECHECK, cache)
    assert parses == ["cycles/3x-plus-1/through-minus-5.yaml"]
    assert detail(report) == detail(verify_catalogue(root, NO_RECHECK))
    assert (folder / DATABASE).read_bytes() == before


_ALL_ROWS = "SELECT folder, part, parts, value, aside, mac FROM files WHERE scope = ?"
_ONE_FOLDER = _ALL_ROWS + " AND folder = ?"


@pytest.mark.parametrize("prefetched", [False, True])
def test_a_folder_s_rows_are_read_with_the_others_once_and_read_again_when_asked_again(
    tmp_path, monkeypatch, prefetched
):
    # The first folder asked for reads every folder's rows of the scope in one query (or a prefetch did, before);
    # a folder asked for again (as a run that left it and comes back does) is read again, with what this run
    # wrote meanwhile.
    monkeypatch.setattr(cache_module, "_BATCH_BYTES", 0)  # every folder left is written at once
    folder, scope = tmp_path / "cache", b"s" * 32
    paths = {rel: tmp_path / rel for rel in ("a/1.yaml", "b/1.yaml", "c/1.yaml")}
    with VerifyCache.open(folder) as cache:
        for rel in paths:
            cache.keep_file(scope, rel, ("key", 1), ("outcome", rel), paths)
    queries: list[str] = []
    with VerifyCache.open(folder) as cache:
        real = cache._select
        monkeypatch.setattr(
            cache, "_select", lambda sql, args: (" FROM files " in sql and queries.append(sql)) or real(sql, args)
        )
        if prefetched:
            cache.prefetch(scope)
            assert queries == [_ALL_ROWS]
        assert cache.file(scope, "a/1.yaml", ("key", 1), paths) == ("outcome", "a/1.yaml")
        cache.keep_file(scope, "a/1.yaml", ("key", 2), ("outcome 2", "a/1.yaml"), paths)
        assert cache.file(scope, "b/1.yaml", ("key", 1), paths) == ("outcome", "b/1.yaml")
        assert queries == [_ALL_ROWS]
        assert cache.file(scope, "a/1.yaml", ("key", 2), paths) == ("outcome 2", "a/1.yaml")
        assert cache.file(scope, "c/1.yaml", ("key", 1), paths) == ("outcome", "c/1.yaml")
        # a, asked for again, was read again, alone; c, not asked for before, was read with the others.
        assert queries == [_ALL_ROWS, _ONE_FOLDER]


@pytest.mark.parametrize("prefetched", [False, True])
def test_rows_not_signed_by_this_user_are_not_used_whether_prefetched_or_not(tmp_path, prefetched):
    # A row whose signature is not this user's is not used: its files are checked again.
    scope, paths = b"s" * 32, {"a/1.yaml": tmp_path / "a/1.yaml"}
    for tampered in (False, True):
        folder = tmp_path / f"cache-{tampered}"
        with VerifyCache.open(folder) as cache:
            cache.keep_file(scope, "a/1.yaml", ("key", 1), ("outcome", 1), paths)
        if tampered:
            with sqlite3.connect(folder / DATABASE) as db:
                db.execute("UPDATE files SET mac = ?", (b"\0" * 32,))
            db.close()
        with VerifyCache.open(folder) as cache:
            if prefetched:
                cache.prefetch(scope)
            assert cache.file(scope, "a/1.yaml", ("key", 1), paths) == (None if tampered else ("outcome", 1))


def _kept_under(folder: Path, root: Path, scope: bytes) -> list[str]:
    """Keep, in the cache at ``folder``, an outcome naming its own file's path for each of three folders' files."""
    paths = PathsUnder(root)
    rels = ["a/1.yaml", "b/1.yaml", "c/1.yaml"]
    with VerifyCache.open(folder) as cache:
        for rel in rels:
            cache.keep_file(scope, rel, ("key", 1), ("outcome of", paths[rel]), paths)
    return rels


def test_folders_loaded_ahead_give_what_loading_them_when_asked_gives(tmp_path, monkeypatch):
    # A build loads what the cache keeps while a helper lists the files, until the helper is done; a folder
    # loaded ahead is not loaded again, and gives each file's path as the run names it.
    folder, scope, root = tmp_path / "cache", b"s" * 32, tmp_path / "catalogue"
    rels = _kept_under(folder, root, scope)
    loads: list[bytes] = []
    real = store_module.loads
    monkeypatch.setattr(store_module, "loads", lambda data, paths: loads.append(data) or real(data, paths))
    with VerifyCache.open(folder) as cache:
        cache.prefetch(scope, PathsUnder(root), until=lambda: len(loads) == 2)  # the helper is done after two
        assert len(loads) == 2
        paths = PathsUnder(root, {rel: root / rel for rel in rels})
        for rel in rels:
            assert cache.file(scope, rel, ("key", 1), paths) == ("outcome of", root / rel)
        assert len(loads) == 3  # the third folder, not loaded ahead, was loaded when asked for


def test_folders_loaded_ahead_under_another_root_are_loaded_again(tmp_path, monkeypatch):
    folder, scope = tmp_path / "cache", b"s" * 32
    rels = _kept_under(folder, tmp_path / "catalogue", scope)
    elsewhere = tmp_path / "elsewhere"
    with VerifyCache.open(folder) as cache:
        cache.prefetch(scope, PathsUnder(tmp_path / "catalogue"))
        # Not the root the outcomes were loaded with: each names its file as the run asking does.
        for rel in rels:
            assert cache.file(scope, rel, ("key", 1), PathsUnder(elsewhere)) == ("outcome of", elsewhere / rel)
    with VerifyCache.open(folder) as cache:
        cache.prefetch(scope, PathsUnder(tmp_path / "catalogue"))
        # Nor a plain mapping, which says nothing of its root.
        paths = {rel: elsewhere / rel for rel in rels}
        assert cache.file(scope, rels[0], ("key", 1), paths) == ("outcome of", elsewhere / rels[0])


def test_rows_not_signed_by_this_user_are_not_loaded_ahead(tmp_path):
    folder, scope, root = tmp_path / "cache", b"s" * 32, tmp_path / "catalogue"
    rels = _kept_under(folder, root, scope)
    with sqlite3.connect(folder / DATABASE) as db:
        db.execute("UPDATE files SET mac = ?", (b"\0" * 32,))
    db.close()
    with VerifyCache.open(folder) as cache:
        cache.prefetch(scope, PathsUnder(root))
        assert all(cache.file(scope, rel, ("key", 1), PathsUnder(root)) is None for rel in rels)


def test_paths_under_a_root_are_those_given_and_made_from_the_root_for_any_other(tmp_path):
    given = tmp_path / "given.yaml"
    paths = PathsUnder(tmp_path / "root", {"a.yaml": given})
    assert paths["a.yaml"] is given
    assert paths["cycles/x/1.yaml"] == tmp_path / "root" / "cycles" / "x" / "1.yaml"
    assert serial.loads(serial.dumps(("at", given), {given: "a.yaml"}), {}) == ("at", None)  # a plain mapping


def test_a_cache_folder_that_is_a_file_is_not_used(catalogue, tmp_path, cli):
    root = catalogue()
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("a file\n", encoding="utf-8")
    run = cli("verify", str(root), "--cache", str(blocker))
    assert run.code == 0
    assert run.err == f"note: the cache {blocker} can be neither read nor written; it is not used\n"
    assert blocker.read_text(encoding="utf-8") == "a file\n"


# --- coverage searches ------------------------------------------------------------------------------


def test_coverage_searches_are_kept_and_a_changed_recheck_limit_searches_again(catalogue, tmp_path, searches):
    # 3x+1 on Z: every cycle with least |member| <= 1000 passes through 0, 1, -1, -5 or -17
    # (Lagarias 1985 via literature.md); the fixture lists all five, so the claim holds.
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    folder = tmp_path / "cache"
    cold = verified(root, folder, Limits())
    assert cold.ok and len(searches) == 1
    searches.clear()
    warm = verified(root, folder, Limits())
    assert searches == []
    assert detail(warm) == detail(cold)
    lower = Limits(recheck_up_to=500)
    partly = verified(root, folder, lower)
    assert len(searches) == 1
    assert detail(partly) == detail(verify_catalogue(root, lower))


def test_a_cycle_removed_under_a_kept_search_is_still_missed(catalogue, tmp_path, searches):
    # Same fact: the cycle through -17 (length 11) has least |member| 17 <= 1000.  The search is
    # taken from the cache; comparing it with the listed cycles is not.
    root = catalogue()
    with_claim(root, "3x-plus-1", 1000)
    folder = tmp_path / "cache"
    assert verified(root, folder, Limits()).ok
    (root / "cycles" / "3x-plus-1" / "through-minus-17.yaml").unlink()
    searches.clear()
    warm = verified(root, folder, Limits())
    assert searches == []
    assert [p.code for p in warm.errors] == ["coverage-missing-cycle"]
    assert detail(warm) == detail(verify_catalogue(root, Limits()))


def test_a_review_searches_what_both_sides_claim_once_even_without_a_cache(catalogue, cli, searches):
    base, head = catalogue(), catalogue()
    for root in (base, head):
        with_claim(root, "3x-plus-1", 1000)
    run = cli("review", str(base), str(head), "--no-cache")
    assert run.code == 0
    assert len(searches) == 1


# --- the command line -------------------------------------------------------------------------------


def test_the_cache_goes_beside_the_catalogue_folder_by_default(catalogue, cli, parses):
    root = catalogue()
    assert default_cache_folder(root) == root.parent / FOLDER_NAME
    first = cli("verify", str(root))
    assert (root.parent / FOLDER_NAME / DATABASE).is_file()
    # Marked as a cache: git ignores what it holds.
    assert (root.parent / FOLDER_NAME / ".gitignore").read_text(encoding="utf-8").splitlines()[-1] == "*"
    parses.clear()
    second = cli("verify", str(root))
    assert parses == []
    assert (first.code, first.out, first.err) == (second.code, second.out, "")


def test_no_cache_neither_reads_nor_writes_the_cache(catalogue, cli, parses, tmp_path):
    root = catalogue()
    assert cli("verify", str(root), "--no-cache").code == 0
    assert not (root.parent / FOLDER_NAME).exists()
    assert cli("verify", str(root)).code == 0  # now there is a warm cache...
    db = root.parent / FOLDER_NAME / DATABASE
    before = db.read_bytes()
    parses.clear()
    assert cli("verify", str(root), "--no-cache").code == 0
    assert len(parses) == 10  # ...which --no-cache does not read
    assert db.read_bytes() == before  # nor write


def test_the_cache_option_puts_the_cache_elsewhere(catalogue, cli, tmp_path):
    root = catalogue()
    folder = tmp_path / "my-cache"
    assert cli("verify", str(root), "--cache", str(folder)).code == 0
    assert (folder / DATABASE).is_file()
    assert not (root.parent / FOLDER_NAME).exists()


def test_cache_and_no_cache_cannot_be_given_together(catalogue, cli, tmp_path):
    run = cli("verify", str(catalogue()), "--cache", str(tmp_path / "c"), "--no-cache")
    assert run.code == 2
    assert "not allowed with argument" in run.err


@pytest.mark.parametrize("command", ["build", "review", "draft", "odds", "hunt"])
def test_every_command_that_verifies_a_folder_takes_the_cache_options(command, cli):
    run: Run = cli(command, "--help")
    assert "--cache DIR" in run.out and "--no-cache" in run.out


def test_two_runs_at_once_share_the_cache(catalogue, tmp_path):
    # Two processes write the same database at once; both finish with the report of a cold run.
    root = catalogue("wrong-length")
    folder = tmp_path / "cache"

    def start() -> subprocess.Popen[str]:
        argv = [sys.executable, "-m", "builder", "verify", str(root), "--cache", str(folder)]
        return subprocess.Popen(argv, cwd=REPO, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)

    def finish(runs: Iterator[subprocess.Popen[str]]) -> list[tuple[int, str, str]]:
        out = []
        for proc in runs:
            stdout, stderr = proc.communicate(timeout=120)
            out.append((proc.returncode, stdout, stderr))
        return out

    together = finish(iter([start(), start()]))
    alone = finish(iter([start()]))
    assert together == alone * 2
    assert alone[0][0] == 1 and alone[0][2] == ""


def test_the_readme_names_the_cache_folder_and_its_options() -> None:
    readme = (REPO / "README.md").read_text(encoding="utf-8")
    assert FOLDER_NAME in readme
    assert "--no-cache" in readme and "--cache DIR" in readme


def test_equal_provenances_load_as_one_object_and_compare_as_before(tmp_path: Path) -> None:
    # The cycles one search found share a provenance (common practice, no source): loaded from separate
    # bytes (two folders of the cache, two workers' shares), equal provenances are one object; another
    # provenance stays its own, and a loaded one equals the one written.
    import dataclasses
    from datetime import date

    from builder.catalogue.model import Provenance

    one = Provenance("a finder", date(2026, 1, 1), "a search up to 10^6", ("ref",), None)
    other = Provenance("a finder", date(2026, 1, 1), "a search up to 10^6", ("ref",), "a note")
    first = serial.loads(serial.dumps([one, other], {}), {})
    second = serial.loads(serial.dumps(dataclasses.replace(one), {}), {})  # an equal object, not the same
    assert first[0] == one and first[1] == other and second == one
    assert second is first[0] and first[1] is not first[0]
