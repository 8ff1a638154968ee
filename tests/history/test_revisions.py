"""Catalogues read from git objects into memory (builder.history.revisions), against the same files on disk.

Common practice, no source: a revision read from git's objects must verify exactly as a checkout of
the same commit does, since git stores a file's bytes unchanged (git-cat-file(1): the blob's content).
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest
from conftest import BROKEN, BROKEN_CASES, VALID
from gitrepo import Repo

from builder.catalogue.files import PathKind, TreeSource
from builder.catalogue.verify import verify_catalogue, verify_source
from builder.errors import CatalogueUnreadable, NoCatalogueAtRevision, UsageError
from builder.history.revisions import empty_source, revision_source


def _relative(report_problems: tuple, root: Path) -> list[tuple[str, int, int, str, str]]:
    """Problems with paths relative to the catalogue root (messages that name another file included)."""
    prefix = f"{root.as_posix()}/"
    return [
        (
            p.position.file.relative_to(root).as_posix(),
            p.position.line,
            p.position.column,
            p.message.replace(prefix, ""),
            p.severity,
        )
        for p in report_problems
    ]


def _commit_tree(repo: Repo, source: Path) -> str:
    for path in sorted(source.rglob("*")):
        if path.is_file():
            rel = path.relative_to(source).as_posix()
            target = repo.path / "catalogue" / rel
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(path.read_bytes())
    return repo.commit("catalogue", "2024-05-01T12:00:00+00:00")


@pytest.mark.parametrize("case", ["valid", *BROKEN_CASES])
def test_a_revision_verifies_as_its_checkout_does(case: str, tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    source = VALID if case == "valid" else BROKEN / case / "overlay"
    if case != "valid":
        _commit_tree(repo, VALID)
    commit = _commit_tree(repo, source)
    on_disk = verify_catalogue(repo.path / "catalogue")
    in_memory = verify_source(revision_source(repo.path, commit, "catalogue"))
    root = Path(f"{commit}:catalogue")
    assert _relative(in_memory.problems, root) == _relative(on_disk.problems, repo.path / "catalogue")
    assert in_memory.files == on_disk.files
    assert list(in_memory.catalogue.maps) == list(on_disk.catalogue.maps)
    assert {k: [c.fingerprint for c in v] for k, v in in_memory.catalogue.cycles.items()} == {
        k: [c.fingerprint for c in v] for k, v in on_disk.catalogue.cycles.items()
    }
    # The entries as written are the same too: fields, file digests and positions.
    assert dict(in_memory.written) == dict(on_disk.written)


def test_a_link_in_a_revision_stays_a_link(tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    _commit_tree(repo, VALID)
    os.symlink("3x-plus-1.yaml", repo.path / "catalogue" / "maps" / "linked.yaml")
    commit = repo.commit("a link", "2024-05-02T12:00:00+00:00")
    report = verify_source(revision_source(repo.path, commit, "catalogue"))
    messages = [(p.position.file.name, p.message) for p in report.problems]
    assert ("linked.yaml", "expected a regular file, got a symbolic link") in messages


def test_a_revision_whose_catalogue_path_is_a_file(tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    repo.write({"catalogue": "not a folder\n"})
    commit = repo.commit("a file", "2024-05-01T12:00:00+00:00")
    source = revision_source(repo.path, commit, "catalogue")
    assert source.kind(".") is PathKind.FILE
    with pytest.raises(CatalogueUnreadable, match="expected a catalogue directory, got a file"):
        verify_source(source)


def test_revisions_that_hold_no_catalogue_or_do_not_exist(tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    repo.write({"README": "no catalogue yet\n"})
    commit = repo.commit("start", "2024-05-01T12:00:00+00:00")
    with pytest.raises(NoCatalogueAtRevision, match="has no files under 'catalogue'"):
        revision_source(repo.path, commit, "catalogue")
    with pytest.raises(UsageError, match="is not a commit"):
        revision_source(repo.path, "no-such-revision", "catalogue")
    with pytest.raises(UsageError, match="expected a git revision"):
        revision_source(repo.path, "--all", "catalogue")
    # The stand-in for a revision from before the catalogue: a catalogue with no entries.
    empty = verify_source(empty_source("before"))
    assert (empty.catalogue.maps, empty.catalogue.cycles, empty.files) == ({}, {}, 1)
    assert [p.code for p in empty.problems] == ["missing-record"]


def test_a_tree_in_memory_lists_folders_as_git_implies_them() -> None:
    tree = TreeSource(Path("t"), {"maps/a.yaml": b"x", "cycles/a/1.yaml": b"y"}, links=["cycles/b"], folders=["sub"])
    assert tree.listing(".") == [("cycles", PathKind.FOLDER), ("maps", PathKind.FOLDER), ("sub", PathKind.FOLDER)]
    assert tree.listing("cycles") == [("a", PathKind.FOLDER), ("b", PathKind.LINK)]
    assert (tree.kind("maps/a.yaml"), tree.kind("nothing")) == (PathKind.FILE, PathKind.MISSING)
    assert tree.read("cycles/a/1.yaml") == b"y"
    with pytest.raises(FileNotFoundError):
        tree.read("maps")


# --- repository content that once broke review and build (issue 12, item 4) --------------------------


def test_a_release_tag_on_a_commit_whose_catalogue_is_a_file_is_skipped_with_a_note(cli, tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    repo.write({"catalogue": "not a folder\n"})
    repo.commit("a file where the catalogue goes", "2024-05-01T12:00:00+00:00")
    repo.tag("record-0.1")
    (repo.path / "catalogue").unlink()
    _commit_tree(repo, VALID)
    run = cli("build", str(repo.path / "catalogue"), "--out", str(tmp_path / "site"))
    assert run.code == 0, run.out + run.err
    assert (
        "note: the tag record-0.1 is not read as a release, because its catalogue cannot be read: "
        "expected a catalogue directory, got a file"
    ) in run.lines


def test_a_file_name_that_is_not_utf8_is_reported_not_a_crash(cli, tmp_path: Path) -> None:
    # POSIX file names are bytes; Python keeps undecodable ones as lone surrogates (PEP 383), which
    # must reach the output escaped, on disk and from git objects alike.
    repo = Repo(tmp_path / "repo")
    _commit_tree(repo, VALID)
    name = os.path.join(os.fsencode(repo.path / "catalogue" / "maps"), b"caf\xe9.yaml")
    with open(name, "wb") as f:
        f.write(b"name: x\n")
    repo.commit("a name that is not UTF-8", "2024-05-02T12:00:00+00:00")
    on_disk = cli("verify", str(repo.path / "catalogue"))
    assert on_disk.code == 1 and "Traceback" not in on_disk.err
    assert any(
        line.endswith(
            "maps/caf\\xe9.yaml: error: expected an id of lowercase letters, digits and hyphens "
            "([a-z0-9][a-z0-9-]*), got 'caf\\xe9'"
        )
        for line in on_disk.lines
    ), on_disk.lines
    review = cli("review", "--git", "--repo", str(repo.path), "--format", "github", "HEAD~1", "HEAD")
    assert review.code == 1 and "Traceback" not in review.err
    assert "caf\\xe9" in review.out


def test_a_folder_that_cannot_be_read_is_a_problem_not_a_crash(
    cli, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # As root (CI) every folder is readable, so the refusal is made here: os.scandir raising
    # PermissionError is what a folder without read permission gives (POSIX opendir(3), EACCES).
    import builder.catalogue.files as files

    real = files.FolderSource.listing

    def listing(self: files.FolderSource, rel: str) -> list[tuple[str, PathKind]]:
        if rel == "cycles/3x-plus-1":
            raise PermissionError(13, "Permission denied")
        return real(self, rel)

    monkeypatch.setattr(files.FolderSource, "listing", listing)
    root = tmp_path / "cat"
    shutil.copytree(VALID, root)
    run = cli("verify", str(root))
    assert run.code == 1 and "Traceback" not in run.err
    assert f"{root}/cycles/3x-plus-1: error: cannot read the folder: Permission denied" in run.lines
