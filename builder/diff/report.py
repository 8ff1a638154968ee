"""The review as Markdown: counts, a table per kind of entry, warnings, other problems and a verdict."""

from __future__ import annotations

import re
from collections.abc import Callable

from builder.diff.changes import CHANGES, KINDS, PLURAL, Change, ChangeKind, Comparison
from builder.errors import Problem, Severity, printable
from builder.wording import count

__all__ = ["field_summary", "render_markdown"]

_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|&~#])")


def _md(text: str) -> str:
    """Text for a Markdown table cell: one line, with Markdown's punctuation escaped."""
    return _MD_SPECIAL.sub(r"\\\1", printable(" ".join(text.split())))


def _code(text: str) -> str:
    """A code span for a name or path; falls back to escaped text when a backtick or pipe would break it."""
    if "`" in text or "|" in text or "\n" in text:
        return _md(text)
    return f"`{printable(text)}`"


def _where(p: Problem) -> str:
    return _code(str(p.position))


def _problem_text(p: Problem) -> str:
    label = "" if p.severity == Severity.ERROR else f"{p.severity}: "
    return f"{_where(p)} {label}{_md(p.message)}"


def _verification(c: Change) -> str:
    check = c.check
    if check is None:
        return "—"
    problems = "<br>".join(_problem_text(p) for p in check.problems)
    if check.holds:
        return f"holds; {problems}" if problems else "holds"
    if check.problems:
        return f"fails: {problems}"
    return f"not verified: {_md(check.reason or 'unknown')}"


def field_summary(c: Change, code: Callable[[str], str], text: Callable[[str], str]) -> str:
    """The fields a change touched, in one line: ``name: before → after`` for short values, else the name.

    ``code`` writes a field name and ``text`` a value, for the output at hand (Markdown here, plain
    text for the site, which escapes it itself).
    """
    if c.layout_only:
        return "comments or layout only"
    if c.change in (ChangeKind.ADDED, ChangeKind.REMOVED, ChangeKind.UNCHANGED) or not c.fields:
        return "—" if c.change != ChangeKind.RENAMED else "none"
    parts = []
    for f in c.fields:
        name = code(f.name)
        if f.before is None and f.after is not None:
            parts.append(f"{name} (added)")
        elif f.after is None and f.before is not None:
            parts.append(f"{name} (removed)")
        elif f.values and f.before is not None and f.after is not None and max(len(f.before), len(f.after)) <= 24:
            parts.append(f"{name}: {text(f.before)} → {text(f.after)}")
        else:
            parts.append(name)
    return ", ".join(parts)


def _fields_cell(c: Change) -> str:
    return field_summary(c, _code, _md)


def _entry_cell(c: Change) -> str:
    if c.change == ChangeKind.RENAMED and c.base_key is not None:
        return f"{_code(c.key)} (was {_code(c.base_key)})"
    return _code(c.key)


def _identity_cell(c: Change) -> str:
    if c.fingerprint is None:
        return c.identity if c.identity is not None else "—"
    return f"{c.identity} ({_code(c.fingerprint)})" if c.identity is not None else _code(c.fingerprint)


def _change_cell(c: Change) -> str:
    return "unchanged, now fails" if c.change == ChangeKind.UNCHANGED else str(c.change)


def render_markdown(comparison: Comparison, base_label: str, head_label: str) -> str:
    """The review as Markdown: title, counts, a table per kind, warnings, other problems, verdict."""
    lines = [f"# Catalogue review: {_code(base_label)} → {_code(head_label)}", ""]
    lines.append("| entries | " + " | ".join(CHANGES) + " | unchanged |")
    lines.append("| --- |" + " ---: |" * (len(CHANGES) + 1))
    for kind in KINDS:
        counts = [comparison.count(kind, ch) for ch in (*CHANGES, ChangeKind.UNCHANGED)]
        lines.append(f"| {PLURAL[kind]} | " + " | ".join(map(str, counts)) + " |")
    for kind in KINDS:
        rows = comparison.of_kind(kind)
        if not rows:
            continue
        lines += ["", f"## {PLURAL[kind].capitalize()}", ""]
        if kind in ("record", "reference"):
            lines += ["| entry | change | fields changed | verification |", "| --- | --- | --- | --- |"]
        else:
            same = "same cycle? (fingerprint)" if kind == "cycle" else f"same {kind}?"
            lines += [
                f"| entry | change | fields changed | {same} | verification |",
                "| --- | --- | --- | --- | --- |",
            ]
        for c in rows:
            cells = [_entry_cell(c), _change_cell(c), _fields_cell(c)]
            if kind not in ("record", "reference"):
                cells.append(_identity_cell(c))
            cells.append(_verification(c))
            lines.append("| " + " | ".join(cells) + " |")
    if comparison.census:
        lines += ["", "## Census claims", ""]
        lines += [f"- {_md(note)}" for note in comparison.census]
    if comparison.warnings:
        lines += ["", "## Warnings", ""]
        lines += [f"- {_md(w.message)}" for w in comparison.warnings]
    if comparison.other_problems:
        lines += ["", "## Other problems in the head", ""]
        lines += [f"- {_problem_text(p)}" for p in comparison.other_problems]
    lines += ["", _verdict(comparison)]
    return "\n".join(lines) + "\n"


def _verdict(comparison: Comparison) -> str:
    failures = comparison.failures
    others = sum(1 for p in comparison.other_problems if p.severity == Severity.ERROR)
    if failures or others:
        parts = []
        if failures:
            text = f"{count(len(failures), 'entry', 'entries')} {'fails' if len(failures) == 1 else 'fail'}"
            untouched = sum(1 for c in failures if c.change == ChangeKind.UNCHANGED)
            if untouched and len(failures) == 1:
                text += ", untouched by the change (it held in the base)"
            elif untouched:
                text += f", {untouched} of them untouched by the change (they held in the base)"
            parts.append(text)
        if others:
            parts.append(f"{count(others, 'other problem')} in the head")
        return "**Verdict: does not hold** — " + " and ".join(parts) + "."
    touched = sum(1 for c in comparison.changes if c.change != ChangeKind.UNCHANGED)
    if not touched:
        text = "**Verdict: holds** — no entry changed"
    else:
        text = "**Verdict: holds** — every added, changed and renamed entry verifies"
    if comparison.warnings:
        text += f"; read the {count(len(comparison.warnings), 'warning')} above"
    return text + "."
