"""The import-layer contract of DEVELOPERS.md ("Data flow"), enforced on the source.

Data flows one way::

    errors → units, eseries → parts / design / spec → specfile, catalog → analysis → verify
    → solve → statistics → report → cli

Each module of ``optimizer`` is given its layer below; a module may import from its own layer
and from lower ones only. The analysis and the solver never print, never open files and never
import Rich (only ``cli`` talks to the terminal; ``report`` builds renderables for it). The
rule is the project's own design (DEVELOPERS.md), checked on the syntax tree of every module,
so a new import that breaks it fails here.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "optimizer"

#: Layer of each module or package prefix, lowest first (the longest matching prefix wins).
LAYERS: dict[str, int] = {
    "optimizer._version": 0,
    "optimizer.errors": 0,
    "optimizer.interrupt": 0,
    "optimizer.units": 1,
    "optimizer.bounds": 1,
    "optimizer.eseries": 1,
    "optimizer.inputs": 1,
    "optimizer.safewrite": 1,
    "optimizer.parts": 2,
    "optimizer.design": 2,
    "optimizer.spec": 2,
    "optimizer.yamlread": 3,
    "optimizer.specfile": 3,
    "optimizer.catalog": 3,
    "optimizer.userdesign": 3,
    "optimizer.cost": 3,
    "optimizer.analysis": 4,
    "optimizer.verify": 5,
    "optimizer.netlist": 5,
    "optimizer.spice": 5,
    "optimizer.spicecheck": 5,
    "optimizer.solve": 6,
    "optimizer.sweep": 6,
    "optimizer.board": 6,
    "optimizer.statistics": 6,
    "optimizer.report": 7,
    "optimizer.api": 7,
    "optimizer.cli": 8,
    "optimizer.__main__": 8,
    "optimizer": 8,  # the package itself re-exports the public API
}

#: Packages that compute and so never print, open files or import Rich.
QUIET = ("optimizer.analysis", "optimizer.solve")


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _layer(module: str) -> int:
    best = ""
    for prefix in LAYERS:
        if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > len(best):
            best = prefix
    if not best:
        raise AssertionError(f"{module}: no layer assigned in LAYERS")
    return LAYERS[best]


def _imports_of(source: str, module: str, is_package: bool) -> list[tuple[int, str]]:
    """``(line, module)`` of every optimizer module imported by ``source`` (the text of
    ``module``; relative imports resolved; ``from . import name`` counts as importing
    ``package.name``)."""
    package = module if is_package else module.rpartition(".")[0]
    found: list[tuple[int, str]] = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - (node.level - 1)]
                target = ".".join([*base, *([node.module] if node.module else [])])
            else:
                target = node.module or ""
            if not target.startswith("optimizer"):
                continue
            if node.module is None:  # from . import a, b
                found += [(node.lineno, f"{target}.{a.name}") for a in node.names]
            else:
                found.append((node.lineno, target))
        elif isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.startswith("optimizer")]
    return found


def _upward(source: str, module: str, is_package: bool) -> list[str]:
    own = _layer(module)
    return [
        f"{module}:{line}: imports {target} (layer {_layer(target)} > {own})"
        for line, target in _imports_of(source, module, is_package)
        if target != module and _layer(target) > own
    ]


MODULES = sorted(PACKAGE.rglob("*.py"))


@pytest.mark.parametrize("path", MODULES, ids=[_module_name(p) for p in MODULES])
def test_imports_only_go_down_the_layers(path: Path) -> None:
    source = path.read_text(encoding="utf-8")
    assert _upward(source, _module_name(path), path.name == "__init__.py") == []


@pytest.mark.parametrize(
    "path",
    [p for p in MODULES if _module_name(p).startswith(QUIET)],
    ids=lambda p: _module_name(p),
)
def test_the_analysis_and_the_solver_stay_quiet(path: Path) -> None:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name):
            if node.func.id in ("print", "open", "input"):
                found.append(f"{path.name}:{node.lineno}: calls {node.func.id}()")
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Attribute):
            if node.func.attr in ("read_text", "write_text", "read_bytes", "write_bytes"):
                found.append(f"{path.name}:{node.lineno}: calls .{node.func.attr}()")
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            names = [a.name for a in node.names] if isinstance(node, ast.Import) else []
            names += [node.module or ""] if isinstance(node, ast.ImportFrom) else []
            if any(n == "rich" or n.startswith("rich.") for n in names):
                found.append(f"{path.name}:{node.lineno}: imports Rich")
    assert found == []


#: What computes, and so has no place in the render layer: the exact analyses, the solver's
#: entry points, and threads (the project's rule, DEVELOPERS.md "Data flow").
COMPUTING = {
    "monte_carlo", "monte_carlo_from_variation", "worst_case", "worst_case_from_variation",
    "verify", "verify_candidate", "pick", "sweep", "board_search", "run_checks",
    "ThreadPoolExecutor",
}  # fmt: skip


def _computing_imports(source: str) -> list[str]:
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom):
            found += [
                f"{node.lineno}: imports {a.name} from {node.module}"
                for a in node.names
                if a.name in COMPUTING
            ]
    return found


@pytest.mark.parametrize(
    "path",
    [p for p in MODULES if _module_name(p).startswith("optimizer.report")],
    ids=lambda p: _module_name(p),
)
def test_the_report_layer_only_renders(path: Path) -> None:
    assert _computing_imports(path.read_text(encoding="utf-8")) == []


def test_the_render_rule_can_fail() -> None:
    source = "from ..analysis.montecarlo import MonteCarloResult, monte_carlo\n"
    assert _computing_imports(source) == ["1: imports monte_carlo from analysis.montecarlo"]


def test_the_contract_can_fail() -> None:
    """The checker itself: an upward import (the analysis importing the CLI, relative and
    absolute) is reported; a downward one is not."""
    source = "from ..cli import main\nimport optimizer.report.pick\nfrom ..units import parse_db\n"
    assert _upward(source, "optimizer.analysis.transfer", False) == [
        "optimizer.analysis.transfer:1: imports optimizer.cli (layer 8 > 4)",
        "optimizer.analysis.transfer:2: imports optimizer.report.pick (layer 7 > 4)",
    ]
    assert _imports_of("from . import interrupt\n", "optimizer.cli", False) == [
        (1, "optimizer.interrupt")
    ]
