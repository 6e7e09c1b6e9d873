"""Smoke test of the benchmark script (tests/benchmarks/bench_quartet.py) on a tiny
configuration: it runs, exits 0 and writes the JSON it promises. No timing assertions (speed
targets are checked by the benchmark itself, never by tests: project rule).

Source of the one value checked beyond the file's shape: the optimum of the exhaustive
reference enumerator (``optimizer.solve.enumerate.reference_search``; the minimum over a
finite set, exact by construction) must equal the CP-SAT pick's on the benchmark's 6-part
catalog. Generated catalogs are invented demo data.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
import sys
from pathlib import Path

SCRIPT = Path(__file__).parent / "benchmarks" / "bench_quartet.py"


def test_quick_json_mode_runs(tmp_path: Path) -> None:
    out = tmp_path / "bench.json"
    proc = subprocess.run(
        [
            sys.executable, str(SCRIPT), "--quick", "--json", str(out),
            "--sections", "oracle,scaling,montecarlo",
            "--oracle-sizes", "6", "--scale-sizes", "300",
            "--time-limit", "1", "--mc-samples", "10000",
        ],
        capture_output=True, text=True, check=False, timeout=120,
        cwd=SCRIPT.parent.parent.parent, env={**os.environ, "PYTHONWARNINGS": "error"},
    )  # fmt: skip
    assert proc.returncode == 0, proc.stderr
    assert "Targets" in proc.stdout
    result = json.loads(out.read_text(encoding="utf-8"))
    assert result["quick"] is True and result["runs"] == 1
    assert result["machine"]["nproc"] >= 1

    (oracle,) = result["oracle"]
    assert oracle["parts"] == 6
    assert oracle["designs"] == 6**4  # four discrete positions, 6 parts each (hand count)
    assert oracle["agree"] is True
    assert oracle["ref_cost"] is not None
    assert math.isclose(oracle["ref_cost"], oracle["pick_cost"], rel_tol=1e-9)

    (scale,) = result["scaling"]
    assert scale["parts"] == 300 and "error" not in scale
    assert scale["peak_rss_bytes"] > 0 and scale["read_s"] > 0.0

    assert result["montecarlo"]["samples"] == 10_000
    assert result["montecarlo"]["samples_per_s"] > 0.0
    names = [t["target"] for t in result["targets"]]
    assert any(n.startswith("MC kernel") for n in names)
    assert any(n.startswith("peak RSS") for n in names)
