"""The code's own rules: stage boundaries, the public surface, and strict tooling."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import builder

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "builder"
NUMBER_THEORY = ("integers", "words", "dynamics", "hunt")


def imported_modules(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    names: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.update(alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.add(node.module.split(".")[0])
        elif isinstance(node, ast.ImportFrom) and node.level:
            names.add("." + (node.module or ""))
    return names


@pytest.mark.parametrize("module", NUMBER_THEORY)
def test_number_theory_imports_neither_yaml_nor_jinja(module: str) -> None:
    # Design rule of the project (DEVELOPERS.md): the arithmetic stands alone.
    names = imported_modules(PACKAGE / f"{module}.py")
    assert not names & {"yaml", "jinja2", "markdown"}, names
    assert not {n for n in names if n.startswith(".")} - {f".{m}" for m in NUMBER_THEORY}, names


def test_every_public_name_is_exported() -> None:
    for name in builder.__all__:
        assert hasattr(builder, name), name
    for path in PACKAGE.glob("*.py"):
        if path.stem.startswith("_"):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        assigned = [
            n
            for n in tree.body
            if isinstance(n, ast.Assign) and any(isinstance(t, ast.Name) and t.id == "__all__" for t in n.targets)
        ]
        assert assigned, f"{path.name} declares no __all__"


def test_ruff_is_clean() -> None:
    result = subprocess.run(
        [sys.executable, "-m", "ruff", "check", "builder", "tests", "bench", "scripts"],
        cwd=ROOT,
        capture_output=True,
        text=True,
    )
    assert result.returncode == 0, result.stdout + result.stderr


def test_mypy_strict_is_clean() -> None:
    result = subprocess.run([sys.executable, "-m", "mypy"], cwd=ROOT, capture_output=True, text=True)
    assert result.returncode == 0, result.stdout + result.stderr
