"""What git knows about the catalogue: release tags, and when each file was added and last changed.

Releases are the tags ``record-<version>`` (:data:`RELEASE_TAG_PREFIX`); any other tag is ignored.
A ``record-`` tag whose version breaks :func:`version_problem`'s rule, or that names no commit, is
listed in ``ignored_tags`` with the reason, for the build to report.  Annotated tags are peeled to their commit.
Releases are ordered by the committer time of the tagged commit, then by tag name.

For each file under the catalogue, ``added`` is the commit that first added it and ``changed`` the
newest commit that changed its content or name, both read in one ``git log`` pass over the
catalogue's path with rename detection (``-M``), so a renamed file keeps the date it was first
added.  The log follows git's default history simplification for a path; merge commits show no
file changes of their own (git-log(1): "--name-status" shows no diff for merges unless asked), so
a file is dated by the commit on its branch that touched it.  Dates are committer dates converted
to UTC, so every machine agrees; nothing depends on the clock, the locale, the user's git
configuration or the time zone.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import UTC, date, datetime
from pathlib import Path

from builder.catalogue.versions import version_problem
from builder.history.git import GitFailed, GitMissing, run_git

__all__ = [
    "RELEASE_TAG_PREFIX",
    "Commit",
    "FileHistory",
    "NoHistory",
    "Release",
    "RepoHistory",
    "read_history",
]

RELEASE_TAG_PREFIX = "record-"


@dataclass(frozen=True, slots=True)
class Commit:
    id: str  # full hexadecimal object name
    date: date  # the committer date, in UTC
    committer: str | None = None  # the committer's name, only when asked for


@dataclass(frozen=True, slots=True)
class Release:
    version: str
    tag: str
    commit: Commit


@dataclass(frozen=True, slots=True)
class FileHistory:
    added: Commit | None
    changed: Commit | None
    uncommitted: bool


@dataclass(frozen=True, slots=True)
class RepoHistory:
    top: Path
    prefix: str  # the catalogue's path from top, POSIX; "" when the catalogue is the top
    head: Commit | None
    shallow: bool
    releases: tuple[Release, ...]
    files: Mapping[str, FileHistory] = field(default_factory=dict)
    dirty: bool = False
    ignored_tags: tuple[tuple[str, str], ...] = ()  # (tag, why) for record-* tags that are not releases

    def of(self, rel: str) -> FileHistory:
        """The history of a file by its path relative to the catalogue root."""
        return self.files.get(rel, FileHistory(None, None, True))


@dataclass(frozen=True, slots=True)
class NoHistory:
    reason: str


def _commit(fields: list[str], names: bool) -> Commit:
    oid, stamp, name = fields
    day = datetime.fromtimestamp(int(stamp), UTC).date()
    return Commit(oid, day, name if names else None)


def read_history(catalogue_root: Path, names: bool = False) -> RepoHistory | NoHistory:
    """Read the release tags and the history of every file under ``catalogue_root`` from git.

    Returns NoHistory, with a reason for a reader, when the folder is in no git work tree, git is
    missing, or git refuses the repository.
    """
    root = catalogue_root.resolve()
    try:
        inside = run_git(root, "rev-parse", "--is-inside-work-tree").decode().strip()
    except GitMissing:
        return NoHistory("the git program was not found")
    except GitFailed as exc:
        if "not a git repository" in str(exc):
            return NoHistory("the catalogue is not inside a git repository")
        return NoHistory(f"git failed: {exc}")
    if inside != "true":
        return NoHistory("the catalogue is not inside a git work tree")
    try:
        return _read(root, names)
    except GitFailed as exc:
        return NoHistory(f"git failed: {exc}")


def _read(root: Path, names: bool) -> RepoHistory:
    top = Path(os.fsdecode(run_git(root, "rev-parse", "--show-toplevel").rstrip(b"\n")))
    prefix = root.relative_to(top.resolve()).as_posix() if root != top.resolve() else ""
    prefix = "" if prefix == "." else prefix
    shallow = run_git(root, "rev-parse", "--is-shallow-repository").decode().strip() == "true"
    spec = f":(literal){prefix}" if prefix else "."
    try:
        head_fields = run_git(top, "log", "-1", "--format=%H%x00%ct%x00%cn", "HEAD").decode().rstrip("\n").split("\0")
        head: Commit | None = _commit(head_fields, names)
    except GitFailed:
        head = None  # no commits yet
    files: dict[str, FileHistory] = {}
    added: dict[str, Commit] = {}
    changed: dict[str, Commit] = {}
    if head is not None:
        out = run_git(top, "log", "--reverse", "-M", "--name-status", "-z", "--format=%x01%H%x00%ct%x00%cn", "--", spec)
        for chunk in out.split(b"\x01")[1:]:
            parts = chunk.split(b"\0")
            commit = _commit([p.decode("utf-8", "replace") for p in parts[:3]], names)
            rest = [p for p in parts[3:] if p not in (b"", b"\n")]
            rest = [p.lstrip(b"\n") for p in rest]
            i = 0
            while i < len(rest):
                status = rest[i].decode()
                if status.startswith(("R", "C")):
                    old, new = os.fsdecode(rest[i + 1]), os.fsdecode(rest[i + 2])
                    i += 3
                    if status.startswith("R"):
                        added[new] = added.pop(old, commit)
                        changed.pop(old, None)
                    else:
                        added[new] = commit
                    changed[new] = commit
                    continue
                path = os.fsdecode(rest[i + 1])
                i += 2
                if status == "D":
                    added.pop(path, None)
                    changed.pop(path, None)
                    continue
                added.setdefault(path, commit)
                changed[path] = commit
    listing = run_git(top, "status", "--porcelain=v1", "-z", "--untracked-files=all", "--no-renames", "--", spec)
    pending: set[str] = set()
    for record in listing.split(b"\0"):
        if len(record) > 3:
            pending.add(os.fsdecode(record[3:]))
    for path in sorted(set(added) | pending):
        if prefix and not path.startswith(prefix + "/"):
            continue
        rel = path[len(prefix) + 1 :] if prefix else path
        files[rel] = FileHistory(added.get(path), changed.get(path), path in pending)
    releases, ignored = _releases(top, names)
    return RepoHistory(top, prefix, head, shallow, releases, files, bool(pending), ignored)


def _releases(top: Path, names: bool) -> tuple[tuple[Release, ...], tuple[tuple[str, str], ...]]:
    fmt = "%(refname:strip=2)%00%(objectname)%00%(*objectname)"
    # Every tag, filtered here: the pattern refs/tags/record-* would skip names with a slash.
    out = run_git(top, "for-each-ref", f"--format={fmt}", "refs/tags/").decode()
    found = []
    ignored: list[tuple[str, str]] = []
    for line in out.splitlines():
        tag, obj, peeled = line.split("\0")
        if not tag.startswith(RELEASE_TAG_PREFIX):
            continue
        version = tag[len(RELEASE_TAG_PREFIX) :]
        why = version_problem(version)
        if why is not None:
            ignored.append((tag, f"its version '{version}' is not a release version: {why}"))
            continue
        oid = peeled or obj
        try:
            # gitrevisions(7): <rev>^{commit} fails unless the object is, or peels to, a commit;
            # git log of a tagged file's content or folder prints nothing rather than failing.
            raw = run_git(top, "log", "-1", "--format=%H%x00%ct%x00%cn", f"{oid}^{{commit}}", "--")
        except GitFailed:
            ignored.append((tag, "it does not name a commit"))
            continue
        fields = raw.decode().rstrip("\n").split("\0")
        found.append((int(fields[1]), tag, Release(version, tag, _commit(fields, names))))
    releases = tuple(r for _, _, r in sorted(found, key=lambda item: (item[0], item[1])))
    return releases, tuple(sorted(ignored))
