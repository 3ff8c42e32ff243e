"""Project hygiene that must hold on every commit: lint, format, types, import layering."""

from __future__ import annotations

import ast
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "amort"
BIN = Path(sys.executable).parent


def _tool(name: str) -> str:
    found = BIN / name
    if found.exists():
        return str(found)
    path = shutil.which(name)
    if path is None:
        pytest.fail(f"{name} is not installed; install the test extra: pip install -e '.[test]'")
    return path


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(args, cwd=ROOT, capture_output=True, text=True, check=False)


def test_ruff_check_is_clean() -> None:
    result = _run(_tool("ruff"), "check", "amort", "tests", "bench")
    assert result.returncode == 0, result.stdout + result.stderr


def test_ruff_format_is_clean() -> None:
    result = _run(_tool("ruff"), "format", "--check", "amort", "tests", "bench")
    assert result.returncode == 0, result.stdout + result.stderr


def test_mypy_is_clean() -> None:
    result = _run(_tool("mypy"))
    assert result.returncode == 0, result.stdout + result.stderr


# Imports point one way: cli -> io -> loan/quote -> schedule -> conventions -> recurrence.
# The mathematical core imports numpy and the standard library only.
CORE = {
    "recurrence",
    "solve",
    "money",
    "exact",
    "schedule",
    "conventions",
    "rates",
    "errors",
    "daycount",
    "calendar",
    "variable",
    "batch",
    "schedule_fast",
    "dated",
    "compounding",
    "graduated",
    "annuity_forms",
    "annuity_cents",
    "annuity_fast",
    "apr",
    "flows",
    "toml_lines",
    "book_dates",
    "book_step",
}
FORBIDDEN_IN_CORE = {"pandas", "sympy", "openpyxl", "typer", "rich", "amort.cli", "amort.io"}


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    names: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            names.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names.add(node.module)
    return names


@pytest.mark.parametrize("module", sorted(CORE))
def test_core_modules_import_only_numpy_and_the_standard_library(module: str) -> None:
    imported = _imports(PACKAGE / f"{module}.py")
    bad = {
        name
        for name in imported
        if any(name == f or name.startswith(f + ".") for f in FORBIDDEN_IN_CORE)
    }
    assert not bad, f"amort.{module} imports {sorted(bad)}"


def test_only_the_cli_imports_typer_and_rich() -> None:
    for path in PACKAGE.rglob("*.py"):
        if path.name.startswith("cli"):
            continue
        imported = _imports(path)
        assert not {n for n in imported if n.split(".")[0] in ("typer", "rich")}, path


def test_library_never_prints_or_exits() -> None:
    for path in PACKAGE.rglob("*.py"):
        if path.name.startswith("cli") or path.name == "__main__.py":
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
                assert node.func.id not in ("print", "exit", "quit"), f"{path}:{node.lineno}"
            if isinstance(node, ast.Attribute) and node.attr == "exit":
                assert not (isinstance(node.value, ast.Name) and node.value.id == "sys"), path


def test_importing_amort_does_not_pull_in_the_cli() -> None:
    code = (
        "import sys, amort; "
        "print(sorted(m for m in ('typer', 'rich', 'sympy') if m in sys.modules))"
    )
    result = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    )
    assert result.stdout.strip() == "[]"
