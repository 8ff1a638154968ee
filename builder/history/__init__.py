"""What git knows about the record: release tags, entry history, catalogues at revisions, the changelog.

Only this stage runs git, always through :func:`builder.history.git.run_git`.
"""

from builder.history.changelog import Changelog, Edition, Step, read_changelog
from builder.history.repo import Commit, FileHistory, NoHistory, Release, RepoHistory, read_history
from builder.history.revisions import empty_source, revision_source

__all__ = [
    "Changelog",
    "Commit",
    "Edition",
    "FileHistory",
    "NoHistory",
    "Release",
    "RepoHistory",
    "Step",
    "empty_source",
    "read_changelog",
    "read_history",
    "revision_source",
]
