"""What git knows about the record: release tags, entry history, catalogues at revisions, the changelog."""

from builder.history.changelog import Changelog, Edition, Step, read_changelog
from builder.history.repo import Commit, FileHistory, NoHistory, Release, RepoHistory, read_history
from builder.history.revisions import empty_catalogue, revision_catalogue

__all__ = [
    "Changelog",
    "Commit",
    "Edition",
    "FileHistory",
    "NoHistory",
    "Release",
    "RepoHistory",
    "Step",
    "empty_catalogue",
    "read_changelog",
    "read_history",
    "revision_catalogue",
]
