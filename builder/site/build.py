"""``periplus build``: verify, then write the whole site beside its target and swap it in.

A reader or a host never sees half a site: the new site is written into a
fresh folder next to the target and exchanged with it in one step (Linux
renameat2 RENAME_EXCHANGE where available, else two renames in quick
succession, between which the target is briefly absent but never partial).
If verification fails nothing is written; if the build is killed, the old
site is untouched and the half-written folder is removed by the next build.
Builds into one folder take turns: each verifies and writes while holding an exclusive lock
(``.<name>.lock`` beside the folder), so none removes another's staging folder.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import fcntl
import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field, replace
from functools import partial
from pathlib import Path

from builder.catalogue.cache import PathsUnder, VerifyCache, scope_of
from builder.catalogue.files import Survey, read_survey, take_survey
from builder.catalogue.model import Report
from builder.catalogue.verify import Limits, verify_catalogue
from builder.errors import UsageError
from builder.history.changelog import Changelog, Edition, read_changelog
from builder.history.repo import NoHistory, RepoHistory, read_history
from builder.processes import Background, WorkerStopped, keep_to_the_end, no_cycle_collection
from builder.site.manifest import HeadStart
from builder.site.render import MARKER, default_jobs, render_site
from builder.site.views import SiteViews, build_views

__all__ = ["BuildResult", "build_site"]

_STAGING = ".{}.building-"
_RETIRED = ".{}.old-"
_LOCK = ".{}.lock"


@dataclass(frozen=True, slots=True)
class BuildResult:
    report: Report
    pages: int  # 0 when nothing was written
    edition: Edition | None = None
    changelog: Changelog | None = None
    history: RepoHistory | NoHistory | None = None
    views: SiteViews | None = field(default=None, repr=False)  # while the build writes the site


def _check_target(out: Path) -> None:
    """Refuse to replace a folder that is not a site this tool built (or empty)."""
    if out.is_symlink():
        raise UsageError(f"{out}: expected a folder for the site, got a symbolic link")
    if not out.exists():
        return
    if not out.is_dir():
        raise UsageError(f"{out}: expected a folder for the site, got a file")
    if (out / MARKER).is_file():
        return
    leftovers = [p.name for p in out.iterdir() if p.name != ".gitkeep"]
    if leftovers:
        raise UsageError(
            f"{out}: expected an empty folder or a site built by periplus, got a folder with other files "
            f"(such as {sorted(leftovers)[0]}); choose another --out"
        )


def _check_place(out: Path) -> None:
    """Refuse, before any work, a site folder whose nearest existing ancestor is no folder this user may write."""
    ancestor = out.absolute().parent
    while not ancestor.exists() and ancestor != ancestor.parent:
        ancestor = ancestor.parent
    if not ancestor.is_dir():
        raise UsageError(f"{out}: cannot write the site here: {ancestor} is not a folder")
    if not os.access(ancestor, os.W_OK | os.X_OK):
        raise UsageError(f"{out}: cannot write the site here: {ancestor} is not writable")


@contextmanager
def _lock(out: Path, wait: bool) -> Iterator[None]:
    """Hold the exclusive lock on ``out`` (flock(2) on ``.<name>.lock`` beside it) while the site is written.

    Only one build writes a site folder at a time: a second waits, or with ``wait`` False is refused at
    once.  The holder removes the lock file when it is done, so a lock taken on a file that is no longer
    at the path (removed by the build before) does not count, and is taken again on the new file.  The
    lock goes with the process, so a killed build never leaves it held (only its file, which the next
    build takes and removes).
    """
    path = out.parent / _LOCK.format(out.name)
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        while True:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | (0 if wait else fcntl.LOCK_NB))
            except BaseException as exc:  # Ctrl-C while waiting included: the descriptor is not kept
                os.close(fd)
                if isinstance(exc, BlockingIOError):
                    raise UsageError(f"{out}: another build is writing this site; try again once it is done") from None
                raise
            if _same_file(fd, path):
                break
            os.close(fd)
    except OSError as exc:
        raise UsageError(f"{out}: cannot write the site here ({exc.strerror or exc})") from None
    try:
        yield
    finally:
        path.unlink(missing_ok=True)
        os.close(fd)


def _same_file(fd: int, path: Path) -> bool:
    """Whether the open file ``fd`` is still the file at ``path``."""
    try:
        there = os.stat(path)
    except FileNotFoundError:
        return False
    here = os.fstat(fd)
    return (here.st_dev, here.st_ino) == (there.st_dev, there.st_ino)


def _staging(out: Path) -> Path:
    """A new, empty staging folder beside ``out``, once the leftovers of killed builds are removed.

    Called with the lock held: no other build is writing, so every staging folder found is a leftover.
    """
    try:
        _clean_leftovers(out.parent, out.name)
        return Path(tempfile.mkdtemp(prefix=_STAGING.format(out.name), dir=out.parent))
    except OSError as exc:
        raise UsageError(f"{out}: cannot write the site here ({exc.strerror or exc})") from None


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux renameat2 RENAME_EXCHANGE); False where unsupported."""
    libc_name = ctypes.util.find_library("c")
    if not libc_name:
        return False
    libc = ctypes.CDLL(libc_name, use_errno=True)
    renameat2 = getattr(libc, "renameat2", None)
    if renameat2 is None:
        return False
    at_fdcwd, rename_exchange = -100, 2
    result = renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange)
    return bool(result == 0)


def _clean_leftovers(parent: Path, name: str) -> None:
    # Compared as plain prefixes, not glob patterns: a name such as site[1] is a name, not a pattern.
    prefixes = (_STAGING.format(name), _RETIRED.format(name))
    for path in parent.iterdir():
        if path.name.startswith(prefixes) and path.is_dir() and not path.is_symlink():
            shutil.rmtree(path, ignore_errors=True)


def build_site(
    catalogue: Path,
    out: Path,
    limits: Limits | None = None,
    base_url: str | None = None,
    *,
    wait: bool = True,
    jobs: int | None = None,
    reuse: bool = True,
    remove_later: bool = False,
    cache: VerifyCache | None = None,
) -> BuildResult:
    """Verify ``catalogue``; if every claim holds, write the site to ``out`` atomically.

    ``wait`` False refuses at once (UsageError) when another build is writing ``out``, instead of waiting.
    ``jobs`` processes check the cycle files and render the pages (default: one per usable core).  With ``reuse``, the pages whose
    inputs did not change are taken from the site already in ``out`` (hard links), not written again.
    With ``remove_later``, the site replaced is removed by a process of its own once the new one is in
    place, so the caller does not wait for it (a big site's folders take long to remove on some disks);
    if that process is stopped, the next build removes what it left.
    ``cache`` keeps verification results between builds (the catalogue's and its releases').
    """
    _check_target(out)
    _check_place(out)
    jobs = jobs if jobs is not None else default_jobs()
    out = out.absolute()
    result, pages = _build(catalogue, out, limits, base_url, wait, jobs, reuse, remove_later, cache)
    if result.views is None:
        return result
    keep_to_the_end(result)  # the model and the views: dropped with the process, when it ends with the build
    return replace(result, pages=len(pages), views=None)


def _build(
    catalogue: Path,
    out: Path,
    limits: Limits | None,
    base_url: str | None,
    wait: bool,
    jobs: int,
    reuse: bool,
    remove_later: bool,
    cache: VerifyCache | None,
) -> tuple[BuildResult, list[str]]:
    """The result of build_site (views still held, None if it did not verify), and the pages written."""
    if reuse and (out / MARKER).is_file():
        # A site to replace: its files are linked into the staging folder while the catalogue is verified,
        # which the lock covers too (no other build may replace the site meanwhile).
        with _lock(out, wait):
            _check_target(out)
            with _surveying(catalogue, jobs) as survey, _staged(out, reuse, jobs) as staged:
                result = _verified(catalogue, limits, base_url, jobs, cache, survey, staged.head)
                if result.views is None:
                    return result, []
                return result, _write(result.views, out, staged, jobs, remove_later, cache)
    # Nothing to take from: nothing is made (not even the lock beside the folder) unless it verifies.
    with _surveying(catalogue, jobs) as survey:
        result = _verified(catalogue, limits, base_url, jobs, cache, survey, None)
    if result.views is None:
        return result, []
    with _lock(out, wait):
        _check_target(out)  # another build may have written it while this one waited
        with _staged(out, reuse, 1) as staged:
            return result, _write(result.views, out, staged, jobs, remove_later, cache)


def _verified(
    catalogue: Path,
    limits: Limits | None,
    base_url: str | None,
    jobs: int,
    cache: VerifyCache | None,
    survey: Background[bytes] | None,
    head: HeadStart | None,
) -> BuildResult:
    """The result of the build so far: the report, and with it the site's views of the verified catalogue
    (pages 0, ``views`` None when it does not verify).  The previous site's files (``head``) are linked by a
    helper process once the one that lists the catalogue is done: the two do not share a core."""
    limits = limits or Limits()
    with no_cycle_collection():  # the model and the site's records: millions of objects, and no cycles
        if cache is not None:  # while the helper lists the files: what the cache keeps, loaded until it is done
            ahead = PathsUnder(catalogue) if survey is not None else None
            cache.prefetch(scope_of(catalogue, limits), ahead, survey.ready if survey is not None else None)
        surveyed = _surveyed(survey)
        if head is not None:
            head.start()
        report = verify_catalogue(catalogue, limits, cache, jobs, surveyed)
        if not report.ok:
            return BuildResult(report, 0)
        record = report.catalogue.record
        assert record is not None, "a catalogue that verifies has its record"
        history = read_history(catalogue, names=record.credit_committers)
        changelog, edition = read_changelog(report, history, cache)
        # The entries as written serve comparisons (the changelog, done now); the pages read the model.
        report = replace(report, written={})
        views = build_views(
            report.catalogue,
            base_url,
            edition=edition,
            changelog=changelog,
            history=history,
            cache=cache,
            digests=report.digests,
        )
    return BuildResult(report, 0, edition, changelog, history, views)


@contextmanager
def _surveying(catalogue: Path, jobs: int) -> Iterator[Background[bytes] | None]:
    """A helper process (with ``jobs`` above 1) that lists and stamps the catalogue's files while this one reads
    the site it replaces and what the cache keeps; started once the build may go on (it holds the lock, or
    needs none yet), so that what it finds is the catalogue as verified."""
    survey = Background(partial(take_survey, catalogue)) if jobs > 1 else None
    try:
        yield survey
    finally:
        if survey is not None:
            survey.stop()


def _surveyed(helper: Background[bytes] | None) -> Survey | None:
    """The survey the helper took; None if it took none (it stopped, or failed: the files are listed here)."""
    if helper is None:
        return None
    try:
        return read_survey(helper.result())
    except (WorkerStopped, OSError, ValueError, EOFError):
        return None


@dataclass(slots=True)
class _Staged:
    """The staging folder of a build, what it takes from the site it replaces, and whether it was swapped in."""

    folder: Path
    head: HeadStart
    swapped: bool = False


@contextmanager
def _staged(out: Path, reuse: bool, jobs: int) -> Iterator[_Staged]:
    """A staging folder beside ``out`` (the lock held), removed unless the build swaps it in; with ``reuse``,
    the files of the site in ``out`` are linked into it ahead of the pages (in a forked process if ``jobs`` > 1)."""
    folder = _staging(out)
    staged: _Staged | None = None
    try:
        staged = _Staged(folder, HeadStart(folder, out if reuse and (out / MARKER).is_file() else None, jobs))
        yield staged
    finally:
        if staged is not None:
            staged.head.stop()
        if staged is None or not staged.swapped:
            shutil.rmtree(folder, ignore_errors=True)


def _remove(folder: Path, later: bool) -> None:
    """Remove a folder this build no longer needs (a replaced site), now or in a process of its own."""
    if not later:
        shutil.rmtree(folder)
        return
    if not hasattr(os, "fork"):
        shutil.rmtree(folder)
        return
    # Fork twice, so that the remover belongs to no one (no child of this process is left running, and
    # the terminal's Ctrl-C meant for the next command does not reach it); the first child returns at once.
    child = os.fork()
    if child == 0:
        try:
            os.setsid()
            if os.fork() == 0:
                # Nor does it hold the command's output open: whoever reads it (a pipe, a script) is done
                # when the build is, not when the old site is gone.
                quiet = os.open(os.devnull, os.O_RDWR)
                for fd in (0, 1, 2):
                    os.dup2(quiet, fd)
                shutil.rmtree(folder, ignore_errors=True)
        finally:
            os._exit(0)
    os.waitpid(child, 0)


def _write(
    views: SiteViews, out: Path, staged: _Staged, jobs: int, remove_later: bool, cache: VerifyCache | None
) -> list[str]:
    """Write the site into the staging folder beside ``out`` and swap it in; return the pages written."""
    staging = staged.folder
    pages = render_site(views, staging, jobs, staged.head, cache)
    os.chmod(staging, 0o755)  # mkdtemp makes it private; a site is for reading
    if not out.exists():
        staging.rename(out)
        staged.swapped = True
    elif _exchange(staging, out):
        staged.swapped = True
        _remove(staging, remove_later)  # now holds the old site
    else:
        retired = Path(tempfile.mkdtemp(prefix=_RETIRED.format(out.name), dir=out.parent))
        retired.rmdir()
        out.rename(retired)
        try:
            staging.rename(out)
        except BaseException:
            retired.rename(out)  # put the previous site back before giving up
            raise
        staged.swapped = True
        _remove(retired, remove_later)
    return pages
