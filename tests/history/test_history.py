"""Reading release tags and file dates from git (builder.history), on repositories made here.

Outside source: git's own documented behaviour, from its manual pages: git-log(1) (``--reverse``,
``-M`` rename detection, ``--name-status``, committer dates ``%ct`` as Unix time), git-tag(1)
(lightweight and annotated tags), git-clone(1) (``--depth`` makes a shallow clone),
git-status(1) (``--porcelain`` paths relative to the repository root) and git(1) (``GIT_DIR``).
The UTC calendar date of a Unix time is checked against Python's datetime (the standard library).
"""

from __future__ import annotations

from datetime import UTC, date, datetime
from pathlib import Path

import pytest
from gitrepo import Repo

from builder.history.repo import NoHistory, RepoHistory, read_history


def _history(path: Path, names: bool = False) -> RepoHistory:
    found = read_history(path, names)
    assert isinstance(found, RepoHistory), found
    return found


@pytest.fixture
def repo(tmp_path: Path) -> Repo:
    return Repo(tmp_path / "repo")


def test_outside_any_repository(tmp_path: Path) -> None:
    # git-rev-parse(1): outside a work tree git fails with "not a git repository".  The
    # temporary folder sits in no repository (pytest's tmp_path is under the system's temp dir).
    (tmp_path / "catalogue").mkdir()
    assert read_history(tmp_path / "catalogue") == NoHistory("the catalogue is not inside a git repository")


def test_git_missing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # Common practice, no source: with an empty PATH no program named git can be started.
    monkeypatch.setenv("PATH", str(tmp_path / "nothing-here"))
    assert read_history(tmp_path) == NoHistory("the git program was not found")


def test_inside_the_git_folder_is_not_a_work_tree(repo: Repo) -> None:
    # git-rev-parse(1): --is-inside-work-tree prints "false" inside the .git folder.
    assert read_history(repo.path / ".git") == NoHistory("the catalogue is not inside a git work tree")


def test_repository_without_commits(repo: Repo) -> None:
    repo.write({"maps/a.yaml": "x\n"})
    found = _history(repo.path)
    assert found.head is None
    assert found.releases == ()
    assert found.dirty
    entry = found.of("maps/a.yaml")
    assert (entry.added, entry.changed, entry.uncommitted) == (None, None, True)


def test_dates_are_utc_committer_dates(repo: Repo) -> None:
    # 23:30 at UTC-05:00 is 04:30 the next day in UTC (datetime arithmetic, standard library).
    when = "2026-03-15T23:30:00-05:00"
    expected = datetime.fromisoformat(when).astimezone(UTC).date()
    assert expected == date(2026, 3, 16)
    repo.write({"maps/a.yaml": "x\n"})
    oid = repo.commit("add a", when)
    found = _history(repo.path)
    assert found.head is not None and found.head.id == oid and found.head.date == expected
    entry = found.of("maps/a.yaml")
    assert entry.added is not None and entry.added.date == expected
    assert entry.changed == entry.added
    assert not entry.uncommitted and not found.dirty


def test_added_then_changed(repo: Repo) -> None:
    repo.write({"a.yaml": "one\n", "b.yaml": "b\n"})
    first = repo.commit("add", "2026-01-01T12:00:00+00:00")
    repo.write({"a.yaml": "two\n"})
    second = repo.commit("edit a", "2026-02-01T12:00:00+00:00")
    found = _history(repo.path)
    a, b = found.of("a.yaml"), found.of("b.yaml")
    assert a.added is not None and a.changed is not None and b.added is not None and b.changed is not None
    assert (a.added.id, a.changed.id) == (first, second)
    assert (b.added.id, b.changed.id) == (first, first)


def test_rename_keeps_the_first_date(repo: Repo) -> None:
    # git-log(1): -M detects a rename, so the file's history continues under its new name.
    text = "map: 3x-plus-1\nstart: 1\nlength: 3\nnotes: a file long enough for rename detection\n"
    repo.write({"cycles/old-name.yaml": text})
    first = repo.commit("add", "2026-01-01T12:00:00+00:00")
    repo.move("cycles/old-name.yaml", "cycles/new-name.yaml")
    moved = repo.commit("rename", "2026-02-01T12:00:00+00:00")
    found = _history(repo.path)
    entry = found.of("cycles/new-name.yaml")
    assert entry.added is not None and entry.changed is not None
    assert (entry.added.id, entry.changed.id) == (first, moved)
    assert "cycles/old-name.yaml" not in found.files


def test_removed_then_added_again_is_new(repo: Repo) -> None:
    repo.write({"a.yaml": "one\n"})
    repo.commit("add", "2026-01-01T12:00:00+00:00")
    repo.remove("a.yaml")
    repo.write({"keep.yaml": "k\n"})
    repo.commit("remove", "2026-02-01T12:00:00+00:00")
    assert "a.yaml" not in _history(repo.path).files
    repo.write({"a.yaml": "one again\n"})
    again = repo.commit("add again", "2026-03-01T12:00:00+00:00")
    entry = _history(repo.path).of("a.yaml")
    assert entry.added is not None and entry.added.id == again


def test_catalogue_in_a_subfolder_with_unusual_names(repo: Repo) -> None:
    # git-status(1) and git-log(1) with -z print names verbatim, so spaces and non-ASCII survive;
    # files outside the catalogue's folder are left out, and paths are relative to the catalogue.
    repo.write(
        {"data/cat/maps/3x + 1 ü.yaml": "x\n", "data/cat/record.yaml": "r\n", "data/other.yaml": "o\n", "README": "r\n"}
    )
    oid = repo.commit("add", "2026-01-01T12:00:00+00:00")
    found = _history(repo.path / "data" / "cat")
    assert found.prefix == "data/cat"
    assert found.top == repo.path.resolve()
    assert sorted(found.files) == ["maps/3x + 1 ü.yaml", "record.yaml"]
    entry = found.of("maps/3x + 1 ü.yaml")
    assert entry.added is not None and entry.added.id == oid
    # A sibling folder whose name starts with the catalogue's is not part of it.
    repo.write({"data/cat2/x.yaml": "x\n"})
    repo.commit("sibling", "2026-01-02T12:00:00+00:00")
    assert sorted(_history(repo.path / "data" / "cat").files) == ["maps/3x + 1 ü.yaml", "record.yaml"]


def test_uncommitted_changes_make_the_tree_dirty(repo: Repo) -> None:
    repo.write({"a.yaml": "one\n"})
    repo.commit("add", "2026-01-01T12:00:00+00:00")
    assert not _history(repo.path).dirty
    repo.write({"a.yaml": "edited\n", "new.yaml": "n\n"})
    found = _history(repo.path)
    assert found.dirty
    assert found.of("a.yaml").uncommitted and found.of("a.yaml").added is not None
    assert found.of("new.yaml").uncommitted and found.of("new.yaml").added is None


def test_release_tags(repo: Repo) -> None:
    # git-tag(1): lightweight tags name a commit, annotated tags name a tag object that is peeled
    # to its commit.  Only record-<version> tags count; order is by the tagged commit's time.
    repo.write({"a.yaml": "1\n"})
    one = repo.commit("one", "2026-01-01T12:00:00+00:00")
    repo.tag("record-2.0")  # a later version name on the earlier commit: time decides, not the name
    repo.tag("v1")
    repo.tag("record-")
    repo.write({"a.yaml": "2\n"})
    two = repo.commit("two", "2026-02-01T12:00:00+00:00")
    repo.tag("record-1.5", annotated=True, when="2026-06-01T12:00:00+00:00")
    repo.tag("record-1.4")  # the same commit as 1.5: then the tag name decides
    blob = repo.git("hash-object", "-w", "a.yaml").strip()
    repo.git("tag", "record-blob", blob)  # a tag of a file's content, not of a commit
    # git-check-ref-format(1) allows these names; as versions they would make no page of their own.
    repo.tag("record-unreleased")
    repo.tag("record-1.0/draft")
    repo.tag("record-.hidden")
    found = _history(repo.path)
    assert [(r.tag, r.version, r.commit.id) for r in found.releases] == [
        ("record-2.0", "2.0", one),
        ("record-1.4", "1.4", two),
        ("record-1.5", "1.5", two),
    ]
    assert found.releases[1].commit.date == date(2026, 2, 1)  # the commit's date, not the tag's
    assert [tag for tag, _ in found.ignored_tags] == [
        "record-",
        "record-.hidden",
        "record-1.0/draft",
        "record-blob",
        "record-unreleased",
    ]
    why = dict(found.ignored_tags)
    assert why["record-blob"] == "it does not name a commit"
    assert why["record-unreleased"] == (
        "its version 'unreleased' is not a release version: 'unreleased' names the changes not yet released"
    )
    assert why["record-1.0/draft"] == (
        "its version '1.0/draft' is not a release version: expected letters, digits, dots, hyphens and "
        "underscores, starting and ending with a letter or digit"
    )


def test_committer_names_only_when_asked(repo: Repo) -> None:
    repo.write({"a.yaml": "1\n"})
    repo.commit("one", "2026-01-01T12:00:00+00:00")
    repo.tag("record-1.0")
    plain, named = _history(repo.path), _history(repo.path, names=True)
    assert plain.head is not None and plain.head.committer is None
    assert plain.of("a.yaml").added is not None and plain.of("a.yaml").added.committer is None  # type: ignore[union-attr]
    assert plain.releases[0].commit.committer is None
    assert named.head is not None and named.head.committer == "Test Committer"
    assert named.releases[0].commit.committer == "Test Committer"


def test_merged_branch_dates_a_file_by_its_own_commit(repo: Repo) -> None:
    # git-log(1): merges show no --name-status of their own, so the branch commit dates the file.
    repo.write({"a.yaml": "1\n"})
    repo.commit("one", "2026-01-01T12:00:00+00:00")
    repo.git("checkout", "-q", "-b", "side")
    repo.write({"b.yaml": "b\n"})
    side = repo.commit("side", "2026-02-01T12:00:00+00:00")
    repo.git("checkout", "-q", "main")
    repo.write({"c.yaml": "c\n"})
    repo.commit("main", "2026-03-01T12:00:00+00:00")
    repo.git("merge", "-q", "--no-ff", "-m", "merge", "side", when="2026-04-01T12:00:00+00:00")
    entry = _history(repo.path).of("b.yaml")
    assert entry.added is not None and entry.added.id == side and entry.added.date == date(2026, 2, 1)


def test_shallow_clone_is_reported(repo: Repo, tmp_path: Path) -> None:
    # git-clone(1): --depth 1 keeps only the newest commit, so every file seems added by it.
    repo.write({"a.yaml": "1\n"})
    repo.commit("one", "2026-01-01T12:00:00+00:00")
    repo.write({"b.yaml": "2\n"})
    newest = repo.commit("two", "2026-02-01T12:00:00+00:00")
    assert not _history(repo.path).shallow
    clone = tmp_path / "clone"
    repo.git("clone", "-q", "--depth", "1", f"file://{repo.path}", str(clone))
    found = _history(clone)
    assert found.shallow
    a = found.of("a.yaml")
    assert a.added is not None and a.added.id == newest


def test_the_environment_does_not_leak_in(repo: Repo, tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    # git(1): GIT_DIR and GIT_WORK_TREE would point git elsewhere; the reader drops GIT_* variables.
    # The time zone must not change a date (dates are UTC).
    repo.write({"a.yaml": "1\n"})
    repo.commit("one", "2026-03-15T23:30:00-05:00")
    baseline = _history(repo.path)
    other = Repo(tmp_path / "other")
    other.write({"z.yaml": "z\n"})
    other.commit("other", "2020-01-01T00:00:00+00:00")
    monkeypatch.setenv("GIT_DIR", str(other.path / ".git"))
    monkeypatch.setenv("GIT_WORK_TREE", str(other.path))
    monkeypatch.setenv("TZ", "Pacific/Kiritimati")
    assert _history(repo.path) == baseline
    assert baseline.of("a.yaml").added is not None and baseline.of("a.yaml").added.date == date(2026, 3, 16)  # type: ignore[union-attr]


def test_same_state_same_history(repo: Repo) -> None:
    repo.write({"a.yaml": "1\n", "b/c.yaml": "c\n"})
    repo.commit("one", "2026-01-01T12:00:00+00:00")
    repo.tag("record-1.0", annotated=True, when="2026-01-02T12:00:00+00:00")
    assert _history(repo.path) == _history(repo.path)
