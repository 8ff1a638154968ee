"""Releases, the changelog and entry history, on a repository with three tagged releases made here.

Outside sources: the cycles are those of the valid fixture (3x+1 and 3x-1 on Z, Lagarias 1985 via
literature.md) and the 3x+5 cycle through 19 (19 -> 31 -> 49 -> 76 -> 38 -> 19 under the shortcut map
(3n+5)/2, n/2: checked by hand, common practice, no source); git's behaviour from its manual pages
(git-tag(1), git-log(1)).  The release dates are set by the test.
"""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest
from bs4 import BeautifulSoup
from conftest import PROVENANCE, VALID
from gitrepo import Repo

from builder.catalogue.verify import verify_catalogue, verify_source
from builder.commands import main
from builder.diff import compare, compare_series
from builder.history import revision_source
from builder.history.changelog import read_changelog
from builder.history.repo import read_history
from builder.site.build import build_site

MAP_3X_PLUS_5 = (
    "name: 3x+5 (shortcut form)\n"
    "modulus: 2\n"
    "branches:\n"
    "  - {residue: 0, multiplier: 1, increment: 0}\n"
    "  - {residue: 1, multiplier: 3, increment: 5}\n"
    "summary: T(n) = n/2 for even n and (3n+5)/2 for odd n.\n"
)
CYCLE_19 = "map: 3x-plus-5\nstart: 19\nlength: 5\n" + PROVENANCE

DATES = {"1.0": "2026-01-05T10:00:00+00:00", "1.1": "2026-02-10T10:00:00+00:00", "2.0": "2026-03-15T23:30:00-05:00"}


def _set_version(repo: Repo, version: str) -> None:
    path = repo.path / "catalogue/record.yaml"
    text = path.read_text(encoding="utf-8")
    path.write_text(re.sub(r"(?m)^version: .*$", f'version: "{version}"', text), encoding="utf-8")


@pytest.fixture(scope="module")
def releases(tmp_path_factory: pytest.TempPathFactory) -> Repo:
    """A catalogue repository with the releases record-1.0, record-1.1 and record-2.0 (and a tag v9 to ignore)."""
    repo = Repo(tmp_path_factory.mktemp("releases") / "repo")
    shutil.copytree(VALID, repo.path / "catalogue")
    repo.commit("first release", DATES["1.0"])
    repo.tag("record-1.0")
    # 1.1: a new map with its cycle, and an edited provenance.
    repo.write({"catalogue/maps/3x-plus-5.yaml": MAP_3X_PLUS_5, "catalogue/cycles/3x-plus-5/through-19.yaml": CYCLE_19})
    one = repo.path / "catalogue/cycles/3x-plus-1/through-1.yaml"
    one.write_text(one.read_text(encoding="utf-8").replace("iteration by hand", "iterated from 1 by hand"), "utf-8")
    _set_version(repo, "1.1")
    repo.commit("add 3x+5", DATES["1.1"])
    repo.tag("record-1.1", annotated=True, when=DATES["1.1"])
    repo.tag("v9")
    # 2.0: a file renamed (the same cycle), a cycle removed.
    repo.move("catalogue/cycles/3x-plus-1/through-minus-5.yaml", "catalogue/cycles/3x-plus-1/minus-five.yaml")
    repo.remove("catalogue/cycles/3x-minus-1/through-17.yaml")
    _set_version(repo, "2.0")
    repo.commit("rename and remove", DATES["2.0"])
    repo.tag("record-2.0")
    return repo


def _changes(step) -> set[tuple[str, str, str]]:
    return {(c.kind, c.key, c.change) for c in step.comparison.changes if c.change != "unchanged"}


def test_each_release_lists_exactly_what_it_changed(releases: Repo) -> None:
    root = releases.path / "catalogue"
    report = verify_catalogue(root)
    assert report.ok, report.problems
    changelog, edition = read_changelog(report, read_history(root))
    assert [s.version for s in changelog.steps] == ["1.0", "1.1", "2.0"]  # v9 is not a release tag
    first, second, third = changelog.steps
    valid = verify_catalogue(VALID).catalogue
    assert _changes(first) == (
        {("record", "record", "added")}
        | {("map", m, "added") for m in valid.maps}
        | {("cycle", f"{m}/{c.id}", "added") for m, cs in valid.cycles.items() for c in cs}
        | {("reference", r, "added") for r in valid.references}
    )
    assert first.previous is None
    assert _changes(second) == {
        ("record", "record", "changed"),
        ("map", "3x-plus-5", "added"),
        ("cycle", "3x-plus-5/through-19", "added"),
        ("cycle", "3x-plus-1/through-1", "changed"),
    }
    assert second.previous == "1.0"
    edited = next(c for c in second.comparison.changes if c.key == "3x-plus-1/through-1")
    assert [f.name for f in edited.fields] == ["provenance.method"] and edited.identity == "same cycle"
    assert _changes(third) == {
        ("record", "record", "changed"),
        ("cycle", "3x-plus-1/minus-five", "renamed"),
        ("cycle", "3x-minus-1/through-17", "removed"),
    }
    renamed = next(c for c in third.comparison.changes if c.change == "renamed")
    assert renamed.base_key == "3x-plus-1/through-minus-5" and renamed.identity == "same cycle, renamed"
    # The working tree is exactly record-2.0: the build shows that release, dated by its commit (UTC).
    assert changelog.unreleased is None
    assert (edition.status, edition.label, str(edition.released_on)) == ("release", "release 2.0", "2026-03-16")


def test_the_changelog_pages(releases: Repo, tmp_path: Path) -> None:
    result = build_site(releases.path / "catalogue", tmp_path / "site")
    assert result.report.ok
    index = BeautifulSoup((tmp_path / "site/changes/index.html").read_text(encoding="utf-8"), "html.parser")
    rows = [[td.get_text(" ", strip=True) for td in tr.find_all("td")] for tr in index.select("tbody tr")]
    assert rows == [
        ["Release 2.0", "2026-03-16", "0", "1", "1", "1"],
        ["Release 1.1", "2026-02-10", "2", "2", "0", "0"],
        ["Release 1.0", "2026-01-05", "13", "0", "0", "0"],
    ]
    page = BeautifulSoup((tmp_path / "site/changes/2.0/index.html").read_text(encoding="utf-8"), "html.parser")
    cells = [[td.get_text(" ", strip=True) for td in tr.find_all("td")] for tr in page.select("tbody tr")]
    assert (next(c for c in cells if c[0].startswith("3x-plus-1/minus-five"))[:3]) == [
        "3x-plus-1/minus-five (was 3x-plus-1/through-minus-5)",
        "renamed: same cycle, renamed",
        "none",
    ]
    removed = next(c for c in cells if c[0] == "3x-minus-1/through-17")
    assert removed[1] == "removed"
    # A renamed entry links to its page; a removed one has none to link to.
    links = {a.get_text(strip=True): a["href"] for a in page.select("tbody a")}
    assert links["3x-plus-1/minus-five"] == "../../maps/3x-plus-1/minus-five/index.html"
    assert "3x-minus-1/through-17" not in links
    footer = BeautifulSoup((tmp_path / "site/index.html").read_text(encoding="utf-8"), "html.parser").footer
    assert footer is not None and "release 2.0" in footer.get_text()


def test_later_changes_are_listed_as_unreleased_and_citations_say_so(releases: Repo, tmp_path: Path) -> None:
    copy = tmp_path / "repo"
    shutil.copytree(releases.path, copy)
    repo = Repo.existing(copy)
    path = copy / "catalogue/cycles/3x-plus-1/through-0.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "# a comment added after the release\n", "utf-8")
    result = build_site(copy / "catalogue", tmp_path / "site")
    assert result.changelog is not None and result.edition is not None
    pending = result.changelog.unreleased
    assert pending is not None and _changes(pending) == {("cycle", "3x-plus-1/through-0", "changed")}
    head = repo.git("rev-parse", "HEAD").strip()
    assert result.edition.label == f"release 2.0 with later changes (commit {head[:12]} with uncommitted changes)"
    page = (tmp_path / "site/maps/3x-plus-1/through-1/index.html").read_text(encoding="utf-8")
    cite = BeautifulSoup(page, "html.parser").select("pre.cite")[0].get_text()
    # Issue 13: pages name the edition without the commit, so a commit leaves untouched pages as they
    # were; the commit is in the citation file and on the data page.
    assert "release 2.0 with later changes," in cite and head[:12] not in page
    assert head in (tmp_path / "site/CITATION.cff").read_text(encoding="utf-8")
    data = (tmp_path / "site/data/index.html").read_text(encoding="utf-8")
    assert head in data and "with changes not yet committed" in data
    assert (tmp_path / "site/changes/unreleased/index.html").is_file()


def test_entry_history_follows_renames_and_is_the_same_in_two_builds(releases: Repo, tmp_path: Path) -> None:
    root = releases.path / "catalogue"
    build_site(root, tmp_path / "one")
    build_site(root, tmp_path / "two")
    one = sorted(p.relative_to(tmp_path / "one") for p in (tmp_path / "one").rglob("*") if p.is_file())
    two = sorted(p.relative_to(tmp_path / "two") for p in (tmp_path / "two").rglob("*") if p.is_file())
    assert one == two
    for rel in one:
        assert (tmp_path / "one" / rel).read_bytes() == (tmp_path / "two" / rel).read_bytes(), rel
    page = BeautifulSoup(
        (tmp_path / "one/maps/3x-plus-1/minus-five/index.html").read_text(encoding="utf-8"), "html.parser"
    )
    history = page.find(id="history").find_next("dl").get_text(" ", strip=True)
    assert history.startswith("Added 2026-01-05 (commit ")  # the rename keeps the date the file was added
    assert "Last changed 2026-03-16 (commit " in history  # 23:30 at UTC-5 is the next day in UTC
    edited = BeautifulSoup(
        (tmp_path / "one/maps/3x-plus-1/through-1/index.html").read_text(encoding="utf-8"), "html.parser"
    )
    text = edited.find(id="history").find_next("dl").get_text(" ", strip=True)
    assert "Added 2026-01-05" in text and "Last changed 2026-02-10" in text


def test_outside_a_repository_the_build_says_there_is_no_history(tmp_path: Path) -> None:
    root = shutil.copytree(VALID, tmp_path / "catalogue")
    result = build_site(root, tmp_path / "site")
    assert result.report.ok and result.pages > 0
    changes = BeautifulSoup((tmp_path / "site/changes/index.html").read_text(encoding="utf-8"), "html.parser")
    assert "not inside a git repository" in changes.main.get_text()
    assert changes.select("tbody tr") == []
    page = BeautifulSoup((tmp_path / "site/maps/3x-plus-1/index.html").read_text(encoding="utf-8"), "html.parser")
    assert "No history:" in page.find(id="history").find_next("p").get_text()
    assert result.edition is not None and result.edition.label == "version 1.0, not yet released (a copy outside git)"


def test_a_repository_without_release_tags_builds_and_says_so(tmp_path: Path) -> None:
    repo = Repo(tmp_path / "repo")
    shutil.copytree(VALID, repo.path / "catalogue")
    repo.commit("start", DATES["1.0"])
    repo.tag("v1.0")  # not a release tag
    result = build_site(repo.path / "catalogue", tmp_path / "site")
    assert result.report.ok
    text = (tmp_path / "site/changes/index.html").read_text(encoding="utf-8")
    assert "no release tags" in text
    head = repo.git("rev-parse", "HEAD").strip()
    assert result.edition is not None and result.edition.label == f"version 1.0, not yet released (commit {head[:12]})"


def test_build_names_the_tags_it_does_not_read_as_releases(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # git-check-ref-format(1) allows a slash in a tag name (but not record-1.0 and record-1.0/x together);
    # such a version would make no page of its own.
    repo = Repo(tmp_path / "repo")
    shutil.copytree(VALID, repo.path / "catalogue")
    repo.commit("start", DATES["1.0"])
    repo.tag("record-1.0")
    repo.tag("record-2/candidate")
    repo.tag("record-unreleased")
    assert main(["build", str(repo.path / "catalogue"), "--out", str(tmp_path / "site")]) == 0
    lines = [line for line in capsys.readouterr().out.splitlines() if line.startswith("note:")]
    assert lines == [
        "note: the tag record-2/candidate is not read as a release, because its version '2/candidate' is "
        "not a release version: expected letters, digits, dots, hyphens and underscores, starting and ending "
        "with a letter or digit",
        "note: the tag record-unreleased is not read as a release, because its version 'unreleased' is not a "
        "release version: 'unreleased' names the changes not yet released",
    ]
    assert sorted(p.name for p in (tmp_path / "site/changes").iterdir()) == ["1.0", "index.html"]


def test_a_series_of_comparisons_is_each_pair_compared(releases: Repo, tmp_path: Path) -> None:
    # compare_series reads each catalogue once; it must give what compare gives pair by pair
    # (common practice, no source: an optimisation keeps the result of the plain computation).
    reports = []
    for tag in ("record-1.0", "record-1.1", "record-2.0"):
        reports.append(verify_source(revision_source(releases.path, tag, "catalogue")))
    series = compare_series(reports)
    assert series == [compare(reports[0], reports[1]), compare(reports[1], reports[2])]
    assert all(c.changes for c in series)


def test_a_commit_leaves_the_pages_it_does_not_touch_byte_identical(
    releases: Repo, tmp_path: Path, tmp_path_factory: pytest.TempPathFactory
) -> None:
    # Issue 13: pages name the edition, not the commit, so two commits after one release differ only
    # in the pages of what changed (and the pages that list every change or every commit).
    copy = tmp_path_factory.mktemp("one-more") / "repo"
    shutil.copytree(releases.path, copy)
    repo = Repo.existing(copy)
    path = copy / "catalogue/cycles/3x-plus-1/through-0.yaml"
    path.write_text(path.read_text(encoding="utf-8") + "# a comment\n", "utf-8")
    repo.commit("a comment", "2026-05-01T12:00:00+00:00")
    build_site(copy / "catalogue", tmp_path / "before")
    path.write_text(path.read_text(encoding="utf-8") + "# another comment\n", "utf-8")
    repo.commit("another comment", "2026-05-02T12:00:00+00:00")
    build_site(copy / "catalogue", tmp_path / "after")
    for page in ("maps/3x-minus-1/index.html", "maps/3x-minus-1/through-5/index.html", "lengths/index.html"):
        assert (tmp_path / "before" / page).read_bytes() == (tmp_path / "after" / page).read_bytes(), page
    changed = (tmp_path / "after/maps/3x-plus-1/through-0/index.html").read_text(encoding="utf-8")
    assert "2026-05-02" in changed  # the edited entry's own page says when it last changed
    assert (tmp_path / "before/data/index.html").read_bytes() != (tmp_path / "after/data/index.html").read_bytes()
