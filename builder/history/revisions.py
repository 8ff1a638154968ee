"""A catalogue as a git revision holds it, read from git objects without a checkout."""

from __future__ import annotations

import os
import subprocess
from pathlib import Path, PurePosixPath

from builder.errors import NoCatalogueAtRevision, PeriplusError, UsageError

__all__ = ["catalogue_path", "empty_catalogue", "git_output", "revision_catalogue"]


def git_output(repo: Path, *args: str, data: bytes | None = None) -> bytes:
    try:
        done = subprocess.run(["git", "-C", str(repo), *args], input=data, capture_output=True, check=False)
    except FileNotFoundError:
        raise UsageError("--git needs the git program, which was not found") from None
    if done.returncode:
        reason = done.stderr.decode("utf-8", "replace").strip().splitlines()
        raise UsageError(f"git {args[0]} failed: {reason[-1] if reason else 'exit status ' + str(done.returncode)}")
    return done.stdout


def catalogue_path(path: str) -> PurePosixPath:
    pure = PurePosixPath(path)
    if pure.is_absolute() or ".." in pure.parts:
        raise UsageError(f"--path: expected a path inside the repository, got '{path}'")
    return pure


def revision_catalogue(repo: Path, revision: str, path: str, dest: Path) -> Path:
    """Write the files under ``path`` at ``revision`` of the git repository ``repo`` into ``dest``.

    Nothing is checked out: the tree is listed (git ls-tree) and the blobs read (git cat-file), so the
    working tree, the index and export attributes play no part.  A symbolic link in the revision becomes
    a link to nowhere (verification reports links without following them).  Returns the catalogue root
    inside ``dest``.  Raises UsageError for an unknown revision, and NoCatalogueAtRevision (a UsageError)
    for a revision without ``path``.
    """
    if revision.startswith("-"):
        raise UsageError(f"expected a git revision, got '{revision}'")
    pure = catalogue_path(path)
    try:
        oid = git_output(repo, "rev-parse", "--verify", "--quiet", f"{revision}^{{commit}}").decode().strip()
    except UsageError:
        raise UsageError(f"'{revision}' is not a commit of the repository at {repo}") from None
    listing = git_output(repo, "ls-tree", "-r", "-z", oid, "--", str(pure))
    items = []
    for record in listing.split(b"\0"):
        if not record:
            continue
        meta, _, raw_name = record.partition(b"\t")
        mode, kind, obj = meta.split(b" ")
        items.append((mode, kind, obj, PurePosixPath(os.fsdecode(raw_name))))
    if not items:
        raise NoCatalogueAtRevision(revision, str(pure))
    blobs = [obj for mode, kind, obj, _ in items if kind == b"blob" and mode != b"120000"]
    contents = _cat_blobs(repo, blobs)
    root = dest / pure
    root.mkdir(parents=True, exist_ok=True)
    for mode, kind, obj, name in items:
        if any(part in ("", ".", "..") for part in name.parts) or name.is_absolute():
            raise PeriplusError(f"revision '{revision}' holds a path that cannot be written safely: '{name}'")
        target = dest.joinpath(*name.parts)
        target.parent.mkdir(parents=True, exist_ok=True)
        if kind == b"commit":  # a submodule: a folder, as a checkout would leave it
            target.mkdir(exist_ok=True)
        elif mode == b"120000":
            os.symlink("symbolic-link-in-the-revision", target)
        else:
            target.write_bytes(contents[obj])
    return root


def empty_catalogue(folder: Path) -> Path:
    """Make a catalogue with no entries inside ``folder`` and return its root.

    It stands for a revision from before the catalogue existed, so that comparing with it lists every
    entry of the other side as added.
    """
    root = folder / "no-catalogue-yet"
    (root / "maps").mkdir(parents=True)
    return root


def _cat_blobs(repo: Path, objects: list[bytes]) -> dict[bytes, bytes]:
    if not objects:
        return {}
    out = git_output(repo, "cat-file", "--batch", data=b"".join(o + b"\n" for o in objects))
    contents: dict[bytes, bytes] = {}
    pos = 0
    while pos < len(out):
        end = out.index(b"\n", pos)
        oid, _, size = out[pos:end].split(b" ")
        start = end + 1
        contents[oid] = out[start : start + int(size)]
        pos = start + int(size) + 1
    return contents
