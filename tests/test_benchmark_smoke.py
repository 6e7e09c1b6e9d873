"""Smoke test of the benchmark script (tests/benchmarks/bench_quartet.py) on a tiny
configuration: it runs, exits 0 and writes the JSON it promises; a command fed to it that fails
on purpose is reported FAILED, with no figure, as a missed target and a non-zero exit. No timing
assertions (speed targets are checked by the benchmark itself, never by tests: project rule).

Sources of the values checked beyond the file's shape: the optimum of the exhaustive
reference enumerator (``optimizer.solve.exhaustive.reference_search``; the minimum over a
finite set, exact by construction) must equal the CP-SAT pick's on the benchmark's 6-part
catalog; a spec that is not valid YAML gets exit code 2 from every command (README, "Exit
codes"). Generated catalogs are invented demo data.
"""

from __future__ import annotations

import importlib.util
import io
import json
import math
import os
import subprocess
import sys
from pathlib import Path
from types import ModuleType

import pytest
from rich.console import Console

import optimizer
from optimizer.cli import main

SCRIPT = Path(__file__).parent / "benchmarks" / "bench_quartet.py"
EXAMPLE = Path(__file__).resolve().parent.parent / "examples" / "motor_shunt.yaml"


def _run(*args: str, cwd: Path) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, str(SCRIPT), *args],
        capture_output=True, text=True, check=False, timeout=120, cwd=cwd,
        env={**os.environ, "PYTHONWARNINGS": "error"},
    )  # fmt: skip


def _bench_module() -> ModuleType:
    """The benchmark script imported as a module (it is not a package)."""
    spec = importlib.util.spec_from_file_location("bench_quartet", SCRIPT)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_quick_json_mode_runs(tmp_path: Path) -> None:
    out = tmp_path / "bench.json"
    proc = _run(
        "--quick", "--json", str(out), "--sections", "oracle,scaling,montecarlo",
        "--oracle-sizes", "6", "--scale-sizes", "300", "--time-limit", "5",
        "--mc-samples", "10000",
        cwd=tmp_path,  # from any folder: the script finds the examples itself
    )  # fmt: skip
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert "Targets" in proc.stdout and "every timed run succeeded" in proc.stdout
    result = json.loads(out.read_text(encoding="utf-8"))
    assert result["quick"] is True and result["runs"] == 1
    assert result["machine"]["nproc"] >= 1
    assert result["failures"] == []
    # The header names the package measured: the one these tests import.
    package = result["package"]
    assert Path(package["path"]).resolve() == Path(str(optimizer.__file__)).resolve().parent
    assert package["version"] == optimizer.__version__
    assert f"measured: optimizer {optimizer.__version__} at " in proc.stdout
    assert "checkout: " in proc.stdout and result["date_utc"].endswith(" UTC")

    (oracle,) = result["oracle"]
    assert oracle["parts"] == 6
    assert oracle["designs"] == 6**4  # four discrete positions, 6 parts each (hand count)
    assert oracle["agree"] is True
    assert oracle["ref_cost"] is not None
    assert math.isclose(oracle["ref_cost"], oracle["pick_cost"], rel_tol=1e-9)

    assert oracle["pick_status"] == "proven_optimal"

    (scale,) = result["scaling"]
    assert scale["parts"] == 300 and "failed" not in scale
    assert scale["top1_status"] == "proven_optimal"
    assert scale["peak_rss_bytes"] > 0 and scale["read_s"] > 0.0

    assert result["montecarlo"]["samples"] == 10_000
    assert result["montecarlo"]["samples_per_s"] > 0.0
    names = [t["target"] for t in result["targets"]]
    assert any(n.startswith("MC kernel") for n in names)
    assert any(n.startswith("peak RSS") for n in names)


def test_a_failing_command_is_reported_failed(tmp_path: Path) -> None:
    """The CLI section on a spec that is not valid YAML: both commands exit with code 2, so
    both rows are FAILED with the command's message and no figure, their targets are missed
    while the Monte-Carlo row still counts, and the script exits 1."""
    broken = tmp_path / "broken.yaml"
    broken.write_text("quartet_spec: 1\namplifier: [\n", encoding="utf-8")  # unclosed list
    out = tmp_path / "bench.json"
    proc = _run(
        "--quick", "--json", str(out), "--sections", "cli,montecarlo", "--mc-samples", "10000",
        "--cli-spec", str(broken), cwd=tmp_path,
    )  # fmt: skip
    assert proc.returncode == 1, proc.stdout + proc.stderr
    result = json.loads(out.read_text(encoding="utf-8"))
    rows = result["cli"]
    assert [r["command"].split()[3] for r in rows] == ["spec", "pick"]
    for row in rows:
        assert row["status"] == "FAILED"
        assert "wall_s" not in row and "exit_code" not in row  # no figure from a failed run
        assert row["failed"].startswith("warm-up run: exit code 2, expected 0: SpecError: ")
        assert str(broken) in row["failed"] and "not valid YAML" in row["failed"]
        assert f"FAILED {row['command']}: {row['failed']}" in proc.stdout
    cli_targets = [t for t in result["targets"] if t["target"].startswith("CLI wall")]
    assert len(cli_targets) == 2
    for target in cli_targets:
        assert target["met"] is False and target["measured"] is None
        assert target["note"].startswith("FAILED: warm-up run: exit code 2")
    (mc,) = [t for t in result["targets"] if t["target"].startswith("MC kernel")]
    # the Monte-Carlo row still counts: it ran and has a figure (whether the speed target is
    # met depends on the machine's load and is not asserted here)
    assert mc["measured"] is not None and isinstance(mc["met"], bool)
    assert "failed" not in result["montecarlo"]
    assert len(result["failures"]) == 2
    assert "FAILED: 2 row(s) had a failed run" in proc.stdout


def test_the_pick_status_is_read_from_the_real_json(tmp_path: Path) -> None:
    """The benchmark reads "proven optimal" from ``quartet pick --json-out`` as the CLI writes
    it today, and a document without a status is a failed run, not a success."""
    bench = _bench_module()
    out = tmp_path / "pick.json"
    con = Console(file=io.StringIO(), width=160)
    code = main(["pick", str(EXAMPLE), "--top", "1", "--json-out", str(out)], console=con, err=con)
    assert code == 0
    doc = json.loads(out.read_text(encoding="utf-8"))
    assert bench.json_status(doc) == bench.PROVEN
    stopped = {"search": {"status": "time_limit", "proven_optimal": False}}
    assert bench.json_status(stopped) == "time_limit"
    with pytest.raises(bench.RunFailed, match="has no status"):
        bench.json_status({"search": {"designs_found": 3}})
    with pytest.raises(bench.RunFailed, match="no 'search' object"):
        bench.json_status({"ranked": []})
    with pytest.raises(bench.RunFailed, match="status time_limit, expected proven_optimal"):
        bench.check_status("time_limit", 3, (bench.PROVEN,))
    with pytest.raises(bench.RunFailed, match="with no design ranked"):
        bench.check_status("time_limit", 0, (bench.PROVEN, "time_limit"))


def test_every_module_the_script_imports_is_there() -> None:
    """Every module the script imports, at the top or inside a section (the sections the smoke
    runs leave out import theirs only when they run), resolves with the tests folder on the
    path, as the script puts it: a moved or renamed helper fails here, not in a full run."""
    import ast

    tests_dir = str(SCRIPT.resolve().parent.parent)
    tree = ast.parse(SCRIPT.read_text(encoding="utf-8"))
    wanted = {
        node.module
        for node in ast.walk(tree)
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0
    } | {
        alias.name
        for node in ast.walk(tree)
        if isinstance(node, ast.Import)
        for alias in node.names
    }
    assert "battery" in wanted and "reference.cheapest" in wanted
    added = tests_dir not in sys.path
    if added:
        sys.path.insert(0, tests_dir)
    try:
        missing = sorted(name for name in wanted if importlib.util.find_spec(name) is None)
    finally:
        if added:
            sys.path.remove(tests_dir)
    assert not missing
