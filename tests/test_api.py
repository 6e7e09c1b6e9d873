"""The public Python API (``optimizer/__init__.py``, :mod:`optimizer.api`): its names are
pinned, it stays cheap to import, and "load spec, load catalogs, pick, check" gives what the
command line gives for the same spec (the CLI's JSON document is the outside view here)."""

from __future__ import annotations

import io
import json
import subprocess
import sys
from pathlib import Path

import pytest
from helpers import ROOT
from rich.console import Console

import optimizer
from optimizer.cli import main

MOTOR = ROOT / "examples" / "motor_shunt.yaml"

#: The public names, pinned: adding or removing one is a decision, made here on purpose.
PUBLIC = [
    "POSITIONS",
    "Amplifier",
    "Candidate",
    "Catalog",
    "CatalogError",
    "Design",
    "DesignError",
    "DiscretePart",
    "ModelError",
    "NetworkPart",
    "PickResult",
    "Placement",
    "QuartetError",
    "RailSpan",
    "Spec",
    "SpecError",
    "SweepResult",
    "Technology",
    "Topology",
    "UnitError",
    "Verification",
    "__version__",
    "check",
    "load_catalogs",
    "load_spec",
    "pick",
    "spec_catalogs",
    "sweep",
]


def test_the_public_names_are_pinned() -> None:
    assert optimizer.__all__ == PUBLIC
    for name in PUBLIC:
        assert getattr(optimizer, name) is not None
    with pytest.raises(AttributeError, match="no attribute 'nope'"):
        _ = optimizer.nope  # type: ignore[attr-defined]


def test_importing_the_package_loads_neither_the_solver_nor_pandas() -> None:
    code = "import sys, optimizer; print('ortools' in sys.modules, 'pandas' in sys.modules)"
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT
    )
    assert out.stdout.split() == ["False", "False"]


def test_load_pick_check_gives_what_the_command_line_gives() -> None:
    spec = optimizer.load_spec(MOTOR)
    single = optimizer.pick(spec, top=3, distinct=False)
    assert len(single.ranked) == 3
    costs = [c.cost.total for c in single.ranked]
    assert costs == sorted(costs)
    for candidate in single.ranked:
        assert optimizer.check(candidate.design, spec).passed
    result = optimizer.pick(spec, top=3)  # distinct choices, as the command line ranks
    out = Console(file=io.StringIO(), width=200, color_system=None)
    code = main(["pick", str(MOTOR), "--top", "3", "--json"], console=out, err=out)
    assert code == 0
    document = json.loads(out.file.getvalue())  # type: ignore[attr-defined]
    shown = [d["cost"]["total"] for d in document["ranked"]]
    first_of_each = {}
    for number, candidate in zip(result.choices, result.ranked, strict=True):
        first_of_each.setdefault(number, candidate.cost.total)
    assert shown == pytest.approx(list(first_of_each.values()), rel=1e-12)
    assert shown[0] == pytest.approx(costs[0], rel=1e-12)


def test_a_spec_with_its_own_catalogs_only(tmp_path: Path) -> None:
    """``spec_catalogs`` reads the spec's files and leaves the built-in catalog out when the
    spec says so; ``pick`` with that catalog only uses its parts."""
    catalog = tmp_path / "mine.csv"
    rows = ["part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock"]
    # demo parts of our own: 0.01 %, 2 ppm/K, enough for the example's 80 dB at G = 20
    rows += [f"ZZ-{v},{v},0.01%,2ppm,0603,0.1W,75V,1.0,yes" for v in ("1k", "20k")]
    catalog.write_text("\n".join(rows) + "\n", encoding="utf-8")
    text = MOTOR.read_text(encoding="utf-8")
    spec_file = tmp_path / "spec.yaml"
    spec_file.write_text(text, encoding="utf-8")
    spec = optimizer.load_spec(spec_file)
    mine = optimizer.load_catalogs([str(catalog)], include_builtin=False)
    assert mine.discrete_count == 2
    result = optimizer.pick(spec, mine, top=1)
    assert result.status.name == "OPTIMAL"
    (candidate,) = result.ranked
    assert [p.part.part_id for p in candidate.design.placements] == ["ZZ-1k", "ZZ-20k"] * 2
