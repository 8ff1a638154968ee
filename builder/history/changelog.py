"""Releases and the changelog: what each tagged release of the record added, changed and removed.

A release is a git tag ``record-<version>`` of the repository that holds the catalogue (see
:mod:`builder.history`).  Each release's catalogue is read from its tagged commit without a
checkout, into memory (:func:`builder.history.revisions.revision_source`), verified there, and set beside
the release before it with :func:`builder.diff.compare`, the comparison a pull request review prints, so the
changelog and the review can never disagree about what changed.  The first release is compared
with an empty catalogue; the catalogue being built is compared with the newest release, and what
differs is listed as not yet released.

The build also learns here which edition of the record it shows (:class:`Edition`): exactly a
release, a release with later changes, or a version that has no tag yet.  Citations print that,
so a reader never cites a release for content the release does not hold.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date

from builder.catalogue.cache import VerifyCache
from builder.catalogue.limits import NO_RECHECK
from builder.catalogue.model import Report
from builder.catalogue.verify import Limits, verify_source
from builder.diff import Comparison, compare_series
from builder.errors import CatalogueUnreadable, NoCatalogueAtRevision
from builder.history.repo import RELEASE_TAG_PREFIX, NoHistory, Release, RepoHistory
from builder.history.revisions import empty_source, revision_source

__all__ = ["Changelog", "Edition", "Step", "read_changelog"]

# Old releases are compared, not re-certified: their coverage claims are not re-run.
_COMPARE_LIMITS = Limits(recheck_up_to=NO_RECHECK)


@dataclass(frozen=True, slots=True)
class Step:
    """One release (or the unreleased changes after the newest one) and what changed since the one before."""

    version: str | None  # None for the changes not yet released
    tag: str | None
    commit: str | None  # the tagged commit
    on: date | None  # the tagged commit's date
    previous: str | None  # the version of the release before, None for the first
    comparison: Comparison
    stated_version: str | None = None  # the version the release's own record.yaml states, if it differs

    @property
    def touched(self) -> int:
        return sum(1 for c in self.comparison.changes if c.change != "unchanged")


@dataclass(frozen=True, slots=True)
class Changelog:
    steps: tuple[Step, ...]  # oldest first; the unreleased step, if any, is last
    unavailable: str | None = None  # why the record has no changelog (no repository, no releases)
    shallow: bool = False  # read from a shallow clone: old releases may be missing
    skipped: tuple[tuple[str, str], ...] = ()  # (tag, why) for release tags whose catalogue cannot be read

    @property
    def releases(self) -> tuple[Step, ...]:
        return tuple(s for s in self.steps if s.version is not None)

    @property
    def unreleased(self) -> Step | None:
        return self.steps[-1] if self.steps and self.steps[-1].version is None else None


@dataclass(frozen=True, slots=True)
class Edition:
    """Which state of the record a build shows.

    ``status`` is "release" (the catalogue is exactly the tagged release ``version``), "after-release"
    (``version`` is tagged, but the catalogue has changed since) or "unreleased" (no tag for ``version``
    yet).  ``commit`` is the commit built from (None outside git); ``dirty`` when files differ from it.
    """

    version: str
    status: str
    commit: str | None
    dirty: bool
    released_on: date | None = None

    @property
    def exact(self) -> bool:
        return self.status == "release"

    @property
    def shown(self) -> str:
        """How pages name this edition: like ``label`` but without the commit, so that the pages a commit
        does not change stay byte-identical until the next release ("release 1.0 with later changes")."""
        if self.status == "release":
            return f"release {self.version}"
        if self.status == "after-release":
            return f"release {self.version} with later changes"
        return f"version {self.version}, not yet released"

    @property
    def label(self) -> str:
        """How the citation files and the data page name this edition, e.g. "release 1.0", or
        "release 1.0 with later changes (commit 0123456789ab)"."""
        if self.status == "release":
            return f"release {self.version}"
        state = f"commit {self.commit[:12]}" if self.commit else "a copy outside git"
        if self.dirty and self.commit:
            state += " with uncommitted changes"
        if self.status == "after-release":
            return f"release {self.version} with later changes ({state})"
        return f"version {self.version}, not yet released ({state})"


def _release_report(history: RepoHistory, release: Release, cache: VerifyCache | None = None) -> Report:
    """The release's catalogue, read from its tagged commit into memory and verified there."""
    try:
        source = revision_source(history.top, release.commit.id, history.prefix or ".")
    except NoCatalogueAtRevision:
        # The tagged commit has no catalogue at this path: the record was empty then.
        source = empty_source(f"{release.commit.id}:(no catalogue yet)")
    return verify_source(source, _COMPARE_LIMITS, cache)


def read_changelog(
    report: Report, history: RepoHistory | NoHistory, cache: VerifyCache | None = None
) -> tuple[Changelog, Edition]:
    """Compare each release with the one before, and the catalogue of ``report`` with the newest.

    ``report`` is the verified catalogue being built; its record must be present.  ``cache`` keeps
    the releases' verification results between builds.
    """
    record = report.catalogue.record
    assert record is not None, "a site is built only from a catalogue whose record verifies"
    if isinstance(history, NoHistory):
        edition = Edition(record.version, "unreleased", None, False)
        return Changelog((), f"no changelog: {history.reason}"), edition
    head = history.head.id if history.head else None
    read, skipped = _read_releases(history, cache)
    releases = tuple(release for release, _ in read)
    if not releases:
        edition = Edition(record.version, "unreleased", head, history.dirty)
        reason = (
            f"no changelog yet: the repository has no release tags (a release is a tag {RELEASE_TAG_PREFIX}<version>)"
        )
        return Changelog((), reason, history.shallow, skipped), edition
    reports = [verify_source(empty_source("(no catalogue yet)"), _COMPARE_LIMITS)]
    reports += [release_report for _, release_report in read]
    comparisons = compare_series([*reports, report])
    steps = _release_steps(releases, reports[1:], comparisons[:-1])
    previous = releases[-1]
    pending = Step(None, None, head, None, previous.version, comparisons[-1])
    if pending.touched:
        steps.append(pending)
    tagged = {r.version: r for r in releases}
    if record.version not in tagged:
        edition = Edition(record.version, "unreleased", head, history.dirty)
    elif record.version == previous.version and not pending.touched:
        edition = Edition(record.version, "release", head, history.dirty, previous.commit.date)
    else:
        edition = Edition(record.version, "after-release", head, history.dirty, tagged[record.version].commit.date)
    return Changelog(tuple(steps), None, history.shallow, skipped), edition


def _read_releases(
    history: RepoHistory, cache: VerifyCache | None
) -> tuple[list[tuple[Release, Report]], tuple[tuple[str, str], ...]]:
    """Each release with its verified catalogue; a release whose catalogue cannot be read is skipped, with why."""
    read: list[tuple[Release, Report]] = []
    skipped: list[tuple[str, str]] = []
    for release in history.releases:
        try:
            read.append((release, _release_report(history, release, cache)))
        except CatalogueUnreadable as exc:
            skipped.append((release.tag, f"its catalogue cannot be read: {exc.reason}"))
    return read, tuple(skipped)


def _release_steps(
    releases: Sequence[Release], reports: Sequence[Report], comparisons: Sequence[Comparison]
) -> list[Step]:
    """Each release with what changed since the one before (the first against an empty record)."""
    steps: list[Step] = []
    previous: Release | None = None
    for release, this, comparison in zip(releases, reports, comparisons, strict=True):
        stated = this.catalogue.record.version if this.catalogue.record else None
        steps.append(
            Step(
                release.version,
                release.tag,
                release.commit.id,
                release.commit.date,
                previous.version if previous else None,
                comparison,
                stated if stated != release.version else None,
            )
        )
        previous = release
    return steps
