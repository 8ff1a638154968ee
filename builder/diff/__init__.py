"""Comparing two verified catalogues entry by entry (pure), and writing the comparison for people and for CI."""

from builder.diff.annotations import github_commands, workflow_command
from builder.diff.compare import (
    CHANGES,
    KINDS,
    Change,
    Comparison,
    FieldChange,
    Outcome,
    ReviewWarning,
    compare,
    compare_series,
    coverage_bounds,
)
from builder.diff.report import field_summary, render_markdown

__all__ = [
    "CHANGES",
    "KINDS",
    "Change",
    "Comparison",
    "FieldChange",
    "Outcome",
    "ReviewWarning",
    "compare",
    "compare_series",
    "coverage_bounds",
    "field_summary",
    "github_commands",
    "render_markdown",
    "workflow_command",
]
