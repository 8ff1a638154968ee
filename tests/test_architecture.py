"""The code's own rules: stage layers, what each layer may use, module and function size, strict tooling.

The layers, lowest first (DEVELOPERS.md, "How the code is organised"): a module may import
from its own layer and from the layers below it, never from a layer above.  Every module of
the package is checked, so a new module is covered the moment it exists.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import builder

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "builder"

#: Each layer, lowest first; "" holds the modules at the top of the package (errors, wording).
LAYERS = ("", "arith", "search", "catalogue", "diff", "history", "site", "commands")
#: The package's front door and ``python -m builder``: they may reach any layer.
ENTRY_POINTS = {"builder/__init__.py", "builder/__main__.py"}
MODULES = sorted(p.relative_to(ROOT).as_posix() for p in PACKAGE.rglob("*.py"))
LIBRARY_MODULES = [m for m in MODULES if m not in ENTRY_POINTS]
MAX_MODULE_LINES = 500
MAX_FUNCTION_LINES = 80
#: A function longer than MAX_FUNCTION_LINES carries this comment, saying why it is kept whole.
LONG_FUNCTION_MARK = "# kept whole:"


def layer_of(module: str) -> str:
    """The layer of a module given as ``builder/x/y.py`` or as the dotted ``builder.x.y``."""
    parts = module.removesuffix(".py").replace("/", ".").split(".")
    assert parts[0] == "builder", module
    return parts[1] if len(parts) > 2 else ""


def dotted(module: str) -> str:
    name = module.removesuffix(".py").replace("/", ".")
    return name.removesuffix(".__init__")


def imports_of(module: str) -> list[tuple[str, int]]:
    """Every module a source file imports (relative imports resolved), with the line."""
    tree = ast.parse((ROOT / module).read_text(encoding="utf-8"))
    package = dotted(module) if module.endswith("__init__.py") else dotted(module).rpartition(".")[0]
    out: list[tuple[str, int]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(alias.name, node.lineno) for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                name = ".".join([*base, node.module] if node.module else base)
            else:
                name = node.module or ""
            out.append((name, node.lineno))
            # ``from builder import x`` imports the module builder.x when x is one.
            out += [(f"{name}.{alias.name}", node.lineno) for alias in node.names if name.startswith("builder")]
    return out


def test_every_subpackage_has_a_layer() -> None:
    folders = {p.name for p in PACKAGE.iterdir() if p.is_dir() and not p.name.startswith(("_", "."))}
    assert folders <= set(LAYERS), f"folders without a layer: {sorted(folders - set(LAYERS))}"


@pytest.mark.parametrize("module", LIBRARY_MODULES)
def test_no_module_imports_from_a_layer_above_its_own(module: str) -> None:
    # Design rule (DEVELOPERS.md): arith < search < catalogue < diff < history < site < commands.
    rank = LAYERS.index(layer_of(module))
    for name, line in imports_of(module):
        if name == "builder" or not name.startswith("builder."):
            continue
        target = layer_of(name)
        if not (PACKAGE / target).is_dir() and target:
            target = ""  # builder.errors, builder.wording: the bottom layer
        assert LAYERS.index(target) <= rank, f"{module}:{line} imports {name}, from the layer above '{target}'"


def external_imports(module: str) -> set[str]:
    return {name.split(".")[0] for name, _ in imports_of(module) if not name.startswith("builder")}


@pytest.mark.parametrize("module", LIBRARY_MODULES)
def test_what_each_layer_may_use(module: str) -> None:
    layer = layer_of(module)
    names = external_imports(module)
    if layer in ("", "arith", "search"):
        # The number theory and the search stand alone: no file formats, no templates, no processes.
        assert not names & {"yaml", "jinja2", "markdown", "nh3", "markupsafe", "subprocess"}, names
    if layer != "history":
        assert "subprocess" not in names, "only history/ runs git (or any other program)"
    if layer != "commands":
        assert "argparse" not in names, "only commands/ parses command lines"


def calls(module: str) -> list[tuple[str, int]]:
    tree = ast.parse((ROOT / module).read_text(encoding="utf-8"))
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            f = node.func
            if isinstance(f, ast.Name):
                out.append((f.id, node.lineno))
            elif isinstance(f, ast.Attribute) and isinstance(f.value, ast.Name):
                out.append((f"{f.value.id}.{f.attr}", node.lineno))
    return out


@pytest.mark.parametrize("module", [m for m in LIBRARY_MODULES if layer_of(m) != "commands"])
def test_only_commands_print_or_exit(module: str) -> None:
    for name, line in calls(module):
        assert name not in ("print", "sys.exit", "exit", "quit"), f"{module}:{line} calls {name}"


@pytest.mark.parametrize("module", MODULES)
def test_modules_and_functions_stay_small(module: str) -> None:
    text = (ROOT / module).read_text(encoding="utf-8")
    assert text.count("\n") <= MAX_MODULE_LINES, f"{module} has {text.count(chr(10))} lines"
    lines = text.splitlines()
    for node in ast.walk(ast.parse(text)):
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            length = (node.end_lineno or node.lineno) - node.lineno + 1
            if length > MAX_FUNCTION_LINES:
                body = "\n".join(lines[node.lineno - 1 : node.end_lineno])
                assert LONG_FUNCTION_MARK in body, f"{module}:{node.lineno} {node.name} has {length} lines"


def test_every_public_name_is_exported() -> None:
    for name in builder.__all__:
        assert hasattr(builder, name), name
    for module in MODULES:
        if Path(module).stem.startswith("_") and not module.endswith("__init__.py"):
            continue
        tree = ast.parse((ROOT / module).read_text(encoding="utf-8"))
        assigned = [
            n
            for n in tree.body
            if isinstance(n, ast.Assign) and any(isinstance(t, ast.Name) and t.id == "__all__" for t in n.targets)
        ]
        if module.endswith("__init__.py") and module != "builder/__init__.py" and len(tree.body) == 1:
            continue  # a package with only its docstring
        assert assigned, f"{module} declares no __all__"


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


def test_every_package_is_installed() -> None:
    # pyproject.toml lists the packages explicitly (templates/ is installed as builder.templates),
    # so a new subpackage must be listed there or a plain `pip install .` would leave it out.
    import tomllib

    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["tool"]["setuptools"]["packages"])
    found = {dotted(m) for m in MODULES if m.endswith("__init__.py")}
    assert found <= listed, f"packages missing from pyproject.toml: {sorted(found - listed)}"


def test_every_page_kind_module_is_in_the_registry() -> None:
    # A page kind is one module of builder/site/pages and one name in MODULES (DEVELOPERS.md): a module
    # left out of the registry would make no pages without a word.
    from builder.site.pages import KINDS, MODULES

    shared = {"__init__", "common", "context"}
    found = {p.stem for p in (PACKAGE / "site" / "pages").glob("*.py")} - shared
    assert set(MODULES) == found
    assert len({kind.name for kind in KINDS}) == len(MODULES)  # one kind per module, each named apart
