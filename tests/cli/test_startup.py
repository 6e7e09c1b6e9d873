"""What the command line loads before it works: heavy libraries only where a command needs
them, and the fast paths of the built-in catalog build the same thing as the plain ones.

Sources named beside the checks:

* PyYAML's pure-Python ``SafeLoader`` is the reference reader of the built-in recipes; the
  catalog reads them with libyaml's ``CSafeLoader`` when PyYAML has it.
* pandas' ``factorize`` (categories in order of first appearance) is the reference for the
  categorical columns the generator builds straight from its blocks.
* Which modules a command imports is checked in a fresh interpreter (``sys.modules``); no
  timing is asserted here (speed is measured by tests/benchmarks/bench_quartet.py).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from helpers import ROOT

import optimizer
from optimizer.catalog import DISCRETE_COLUMNS, builtin_data_folder, generate_discrete

SPEC = ROOT / "examples" / "motor_shunt.yaml"
HEAVY = ("pandas", "ortools")


def _loaded_after(code: str, tmp: Path) -> list[str]:
    """Run ``code`` in a fresh interpreter; the heavy top-level packages it left loaded. The
    interpreter starts in an empty directory with ``PYTHONPATH`` leading to the folder that
    holds the ``optimizer`` these tests import (an install, or the source tree when nothing is
    installed), and the probe checks that it imported that same package."""
    home = str(Path(str(optimizer.__file__)).resolve().parent.parent)
    env = {
        **os.environ,
        "PYTHONPATH": os.pathsep.join(filter(None, (home, os.environ.get("PYTHONPATH")))),
    }
    probe = (
        f"{code}\nimport json, sys, optimizer\n"
        "print(json.dumps(optimizer.__file__))\n"
        f"print(json.dumps(sorted({{m.split('.')[0] for m in sys.modules}} & {set(HEAVY)!r})))"
    )
    done = subprocess.run(
        [sys.executable, "-c", probe], cwd=tmp, env=env, capture_output=True, text=True, check=True
    )
    *_, imported, last = done.stdout.strip().splitlines()
    assert Path(json.loads(imported)).resolve() == Path(str(optimizer.__file__)).resolve()
    loaded: list[str] = json.loads(last)
    return loaded


def test_importing_the_cli_and_the_catalog_loads_neither_pandas_nor_ortools(
    tmp_path: Path,
) -> None:
    code = (
        "import optimizer, optimizer.cli, optimizer.catalog, optimizer.userdesign, "
        "optimizer.report.check, optimizer.report.exports, optimizer.specfile"
    )
    assert _loaded_after(code, tmp_path) == []


def test_check_without_catalog_parts_runs_without_pandas_or_ortools(tmp_path: Path) -> None:
    """``quartet check`` of typed values (with a report and a BOM) builds no catalog and runs
    no search."""
    code = (
        "import io\n"
        "from rich.console import Console\n"
        "from optimizer.cli import main\n"
        "con = Console(file=io.StringIO(), width=160)\n"
        f"args = ['check', {str(SPEC)!r}, '--r1', '1k', '--r2', '20k', '--r3', '1k', "
        "'--r4', '20k', '--tolerance', '0.1%', '--tempco', '25ppm', "
        f"'--report', {str(tmp_path / 'r.md')!r}, '--bom', {str(tmp_path / 'b.csv')!r}]\n"
        "assert main(args, console=con, err=con) in (0, 1)\n"
    )
    assert _loaded_after(code, tmp_path) == []
    assert (tmp_path / "r.md").is_file() and (tmp_path / "b.csv").is_file()


def test_building_a_catalog_still_loads_pandas(tmp_path: Path) -> None:
    """The probe can fail: a catalog is a pandas table, so building one loads pandas."""
    code = "import optimizer.catalog as c\nc.builtin_catalog()"
    assert _loaded_after(code, tmp_path) == ["pandas"]


@pytest.mark.parametrize("name", ["discrete_recipe.yaml", "networks.yaml"])
def test_builtin_recipes_read_alike_by_libyaml_and_pure_python(name: str) -> None:
    """The catalog's reader gives what PyYAML's pure-Python safe loader gives."""
    from optimizer.catalog.builtin import _read_builtin

    text = builtin_data_folder().joinpath(name).read_text(encoding="utf-8")
    reference = yaml.load(text, Loader=yaml.SafeLoader)
    assert _read_builtin(name) == reference
    if hasattr(yaml, "CSafeLoader"):
        assert yaml.load(text, Loader=yaml.CSafeLoader) == reference


def test_generated_columns_match_a_row_by_row_build() -> None:
    """Blocks whose labels first appear out of sorted order, a grade whose range holds no
    value (its size must not become a category) and two grades sharing one value ladder: the
    table equals one built row by row, its categories as pandas' factorize orders them."""
    recipe = {
        "range": [10, 100],
        "series_by_tolerance": [{"from": "2%", "series": "E24"}, {"from": 0, "series": "E96"}],
        "sizes": {
            "1206": {"power": "250mW", "max_voltage": "200V", "cost_factor": 1.2},
            "0402": {"power": "63mW", "max_voltage": "50V", "cost_factor": 1.1},
            "0805": {"power": "125mW", "max_voltage": "150V", "cost_factor": 1.0},
        },
        "technologies": {
            "thin_film": {"code": "T", "drift": "0.05%"},
            "thick_film": {"code": "K", "drift": "1%"},
        },
        "tempco_premium": {"200ppm/K": 0, "100ppm/K": 0.5, "25ppm/K": 1},
        "grades": [
            {"tolerance": "1%", "technology": "thin_film", "tempcos": ["25ppm/K"], "cost": 3,
             "range": [12, 12.05], "sizes": ["0805"]},  # no E96 value in range
            {"tolerance": "5%", "technology": "thick_film", "tempcos": ["200ppm/K", "100ppm/K"],
             "cost": 1, "sizes": ["1206", "0402"]},
            {"tolerance": "2%", "technology": "thick_film", "tempcos": ["100ppm/K"], "cost": 2,
             "sizes": ["0402"]},  # the same E24 ladder as the 5 % grade
        ],
    }  # fmt: skip
    frame = generate_discrete(recipe, source="test-recipe")
    assert tuple(frame.columns) == DISCRETE_COLUMNS
    e24 = [10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68]
    e24 += [75, 82, 91, 100]  # IEC 60063 E24, one decade and the next decade's first value
    rows = [
        (size, tol, tc, float(v))
        for size, tol, tcs in (("1206", 0.05, (200, 100)), ("0402", 0.05, (200, 100)),
                               ("0402", 0.02, (100,)))
        for tc in tcs
        for v in e24
    ]  # fmt: skip
    assert len(frame) == len(rows)
    expected = pd.DataFrame(rows, columns=["size", "tolerance", "tempco", "resistance_ohm"])
    assert list(frame["size"].astype(str)) == list(expected["size"])
    assert np.array_equal(frame["tolerance"].to_numpy(), expected["tolerance"].to_numpy())
    assert np.allclose(frame["tempco_per_k"].to_numpy() * 1e6, expected["tempco"].to_numpy())
    assert np.allclose(frame["resistance_ohm"].to_numpy(), expected["resistance_ohm"], rtol=1e-12)
    for column in ("size", "technology", "series", "source"):
        labels = frame[column].astype(object).to_numpy()
        _, uniques = pd.factorize(labels)
        categorical = frame[column].array
        assert isinstance(categorical, pd.Categorical)
        assert list(categorical.categories) == list(uniques), column
        assert categorical.categories.dtype == object, column
    assert list(frame["size"].cat.categories) == ["1206", "0402"]  # 0805 had no value
    assert list(frame["technology"].cat.categories) == ["thick_film"]
    assert frame["part_id"].is_unique
    assert frame["part_id"].iloc[0] == "Q-1206-K500-200-10R"
    assert frame["part_id"].iloc[-1] == "Q-0402-K200-100-100R"
    assert (frame["stock_qty"] == 0).all() and frame["stock_qty"].dtype == np.int64
