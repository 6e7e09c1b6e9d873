"""The test folders mirror the package (DEVELOPERS.md, "Running the tests"): every folder of
tests under ``tests/`` is a subpackage of ``optimizer`` of the same name, and no two test files
share a name (pytest imports test files by their name: a second one of the same name would not
be collected, or would shadow the first)."""

from __future__ import annotations

import ast
from collections import Counter

from helpers import ROOT

TESTS = ROOT / "tests"
#: Folders under tests/ that hold data or helpers, not tests of a subpackage.
NOT_MIRRORS = {"data", "reference", "benchmarks", "__pycache__"}


def test_every_test_folder_is_a_subpackage() -> None:
    folders = {p.name for p in TESTS.iterdir() if p.is_dir() and p.name not in NOT_MIRRORS}
    subpackages = {p.parent.name for p in (ROOT / "optimizer").glob("*/__init__.py")}
    assert folders, "expected test folders mirroring the package"
    assert folders <= subpackages, f"test folders without a subpackage: {folders - subpackages}"


def test_test_file_names_are_unique() -> None:
    names = Counter(p.name for p in TESTS.rglob("test_*.py"))
    assert names, "expected test files"
    assert not [n for n, k in names.items() if k > 1]


#: How a test of the command line reaches it besides importing ``optimizer.cli``: the shared
#: in-process runner of tests/helpers.py, or the installed command in a child process.
CLI_WAYS = ("run_cli", '"-m", "optimizer"', "QUARTET")


def test_each_folder_tests_its_subpackage() -> None:
    """A test file in ``tests/<sub>/`` imports ``optimizer.<sub>`` (or a module of it); one in
    ``tests/cli/`` may instead run the command line (:data:`CLI_WAYS`)."""
    for folder in (p for p in TESTS.iterdir() if p.is_dir() and p.name not in NOT_MIRRORS):
        for test in folder.glob("test_*.py"):
            text = test.read_text(encoding="utf-8")
            imports = f"optimizer.{folder.name}" in text or (
                f"from optimizer import {folder.name}" in text
            )
            runs = folder.name == "cli" and any(way in text for way in CLI_WAYS)
            assert imports or runs, (
                f"{test.relative_to(ROOT)} does not test optimizer.{folder.name}"
            )


def test_developers_md_names_every_module() -> None:
    """DEVELOPERS.md ("Modules") gives every module of the package its line: by path, by its
    name in a row of its folder (``optimizer/report/check.py``, ``checkjson.py``), or, for the
    spec reader's package, in the package's own row."""
    text = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8")
    missing = []
    for path in sorted((ROOT / "optimizer").rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        if path.name == "__init__.py" or "__pycache__" in rel:
            continue
        folder_row = f"`{path.parent.relative_to(ROOT).as_posix()}/`"
        if (
            rel in text
            or f"`{path.name}`" in text
            or (path.parent.name == "specfile" and folder_row in text)
        ):
            continue
        missing.append(rel)
    assert not missing


#: The most lines a module of the package may have, and the most lines of code (docstring,
#: comments and blank lines not counted) a function may have: issue #14's "one concept per
#: module, each under ~600 lines, no function over ~80 lines" (common practice: a unit a reader
#: can hold in mind; the longest function of a well-kept HTTP client is 133 lines).
MODULE_LINES = 620
FUNCTION_LINES = 80


def _code_lines(lines: list[str], node: ast.FunctionDef | ast.AsyncFunctionDef) -> int:
    """Lines of code in a function's body: its docstring, comment and blank lines left out."""
    first = node.body[0]
    docstring = isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant)
    start = first.end_lineno + 1 if docstring and first.end_lineno else first.lineno
    body = lines[start - 1 : node.end_lineno]
    return sum(1 for line in body if line.strip() and not line.strip().startswith("#"))


def test_modules_and_functions_stay_small() -> None:
    long_modules, long_functions = [], []
    for path in sorted((ROOT / "optimizer").rglob("*.py")):
        text = path.read_text(encoding="utf-8")
        lines = text.splitlines()
        rel = path.relative_to(ROOT).as_posix()
        if len(lines) > MODULE_LINES:
            long_modules.append(f"{rel}: {len(lines)} lines")
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                count = _code_lines(lines, node)
                if count > FUNCTION_LINES:
                    long_functions.append(f"{rel}: {node.name}, {count} lines of code")
    assert not long_modules, long_modules
    assert not long_functions, long_functions
