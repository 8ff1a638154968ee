"""A catalogue as a git revision holds it, read from git objects into memory, without a checkout.

The tree under the catalogue's path is listed (git ls-tree) and its blobs read in one batch (git
cat-file), so the working tree, the index and export attributes play no part, and nothing is
written to disk: the result is a :class:`~builder.catalogue.files.TreeSource` that verification
reads like a folder.  A symbolic link in the revision stays a link (verification reports links
without following them); a submodule is an empty folder, as a checkout would leave it.
"""

from __future__ import annotations

import os
from pathlib import Path, PurePosixPath

from builder.catalogue.files import TreeSource
from builder.errors import NoCatalogueAtRevision, UsageError
from builder.history.git import GitFailed, GitMissing, run_git

__all__ = ["catalogue_path", "empty_source", "repository_top", "revision_source"]

_LINK_MODE = b"120000"


def _git(repo: Path, *args: str, data: bytes | None = None) -> bytes:
    try:
        return run_git(repo, *args, data=data)
    except GitMissing:
        raise UsageError("--git needs the git program, which was not found") from None
    except GitFailed as exc:
        raise UsageError(f"git {exc.command} failed: {exc.reason}") from None


def catalogue_path(path: str) -> PurePosixPath:
    """The catalogue's path inside a repository, refused when it would leave the repository."""
    pure = PurePosixPath(path)
    if pure.is_absolute() or ".." in pure.parts:
        raise UsageError(f"--path: expected a path inside the repository, got '{path}'")
    return pure


def repository_top(repo: Path) -> Path:
    """The top folder of the work tree that holds ``repo`` (UsageError outside git)."""
    return Path(os.fsdecode(_git(repo, "rev-parse", "--show-toplevel").rstrip(b"\n")))


def empty_source(label: str) -> TreeSource:
    """A catalogue with no entries: it stands for a revision from before the catalogue existed, so that
    comparing with it lists every entry of the other side as added."""
    return TreeSource(Path(label), {}, folders=["maps"])


def revision_source(repo: Path, revision: str, path: str) -> TreeSource:
    """The files under ``path`` at ``revision`` of the git repository ``repo``, in memory.

    Raises UsageError for an unknown revision, and NoCatalogueAtRevision (a UsageError) for a
    revision without ``path``.
    """
    if revision.startswith("-"):
        raise UsageError(f"expected a git revision, got '{revision}'")
    pure = catalogue_path(path)
    try:
        oid = _git(repo, "rev-parse", "--verify", "--quiet", f"{revision}^{{commit}}").decode().strip()
    except UsageError:
        raise UsageError(f"'{revision}' is not a commit of the repository at {repo}") from None
    listing = _git(repo, "ls-tree", "-r", "-z", oid, "--", str(pure))
    items = []
    for record in listing.split(b"\0"):
        if record:
            meta, _, raw_name = record.partition(b"\t")
            mode, kind, obj = meta.split(b" ")
            items.append((mode, kind, obj, PurePosixPath(os.fsdecode(raw_name)).relative_to(pure).as_posix()))
    if not items:
        raise NoCatalogueAtRevision(revision, str(pure))
    blobs = [obj for mode, kind, obj, _ in items if kind == b"blob" and mode != _LINK_MODE]
    contents = _cat_blobs(repo, blobs)
    files = {name: contents[obj] for mode, kind, obj, name in items if kind == b"blob" and mode != _LINK_MODE}
    links = [name for mode, kind, _, name in items if kind == b"blob" and mode == _LINK_MODE]
    folders = [name for _, kind, _, name in items if kind == b"commit"]
    return TreeSource(Path(f"{revision}:{pure}"), files, links, folders)


def _cat_blobs(repo: Path, objects: list[bytes]) -> dict[bytes, bytes]:
    if not objects:
        return {}
    out = _git(repo, "cat-file", "--batch", data=b"".join(o + b"\n" for o in objects))
    contents: dict[bytes, bytes] = {}
    pos = 0
    while pos < len(out):
        end = out.index(b"\n", pos)
        oid, _, size = out[pos:end].split(b" ")
        start = end + 1
        contents[oid] = out[start : start + int(size)]
        pos = start + int(size) + 1
    return contents
