"""Comparing two verified catalogues entry by entry (pure), and writing the comparison for people and for CI.

:mod:`changes` holds what a comparison returns, :mod:`compare` computes it from two verification
reports (the types a comparison holds are in :mod:`changes`), :mod:`dependencies` words the warnings about removals, :mod:`report` writes it as Markdown
and :mod:`annotations` as workflow commands for a CI job.
"""

from builder.catalogue.written import coverage_bounds
from builder.diff.annotations import github_commands, workflow_command
from builder.diff.changes import KINDS, Change, ChangeKind, Comparison
from builder.diff.compare import compare, compare_series
from builder.diff.report import field_summary, render_markdown

__all__ = [
    "KINDS",
    "Change",
    "ChangeKind",
    "Comparison",
    "compare",
    "compare_series",
    "coverage_bounds",
    "field_summary",
    "github_commands",
    "render_markdown",
    "workflow_command",
]
