"""Parts catalogs: the built-in generic catalog, CSV and YAML user catalogs, combining them,
the ``catalog`` commands and the installed wheel.

Sources named beside the checks:

* E-series values: IEC 60063, checked twice, with the project's ``optimizer.eseries`` and with
  the ``eseries`` package from PyPI (a general-purpose implementation of IEC 60063).
* Which series goes with which tolerance grade (E24 for 5 % and 2 %, E96 for 1 %, E192 for
  0.5 % and tighter) and which tempco and technology go with which grade: common practice.
  (IEC 60063 itself associates E24 with ±5 %, E96 with ±1 % and E192 with ±0.5 % and better.)
* The RKM code in part ids: IEC 60062 (the letter R, K or M takes the place of the decimal
  point: 4R7, 4K7, 4M7), examples from memory of that standard.
* Error messages are Quartet's own wording: those tests pin the exact text, file, line and
  column of each message.

The catalog contents themselves (costs, ratings) are illustrative data and never a check value;
the tests only check their structure and the pairings above.
"""

from __future__ import annotations

import io
import json
import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import eseries as reference  # the `eseries` package from PyPI (IEC 60063), test-only
import numpy as np
import ortools
import pandas as pd
import pytest
import rich
import yaml
from helpers import EXAMPLES, ROOT
from rich.console import Console

from optimizer.catalog import (
    DISCRETE_COLUMNS,
    STOCK_UNCOUNTED,
    Catalog,
    builtin_catalog,
    empty_discrete_frame,
    generate_discrete,
    load_catalog,
    load_catalogs,
    rkm_code,
    series_of_values,
)
from optimizer.cli import main
from optimizer.errors import CatalogError, DesignError
from optimizer.eseries import is_member, series_for_name
from optimizer.parts import DiscretePart, NetworkPart, Technology
from optimizer.report.catalog import catalog_counts, render_catalog_summary
from optimizer.units import parse_resistance

HOUSE_CSV = EXAMPLES / "house_stock.csv"
HOUSE_NETWORKS = EXAMPLES / "house_stock_networks.yaml"

HEADER = "part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock\n"
GOOD_ROW = "A1,10k,0.1%,25ppm,0603,0.1W,75V,1.5,10\n"


def _render(renderable: object, width: int = 200) -> str:
    console = Console(file=io.StringIO(), width=width)
    console.print(renderable)
    out = console.file
    assert isinstance(out, io.StringIO)
    return out.getvalue()


def _write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# ---------------------------------------------------------------------------------------------
# The built-in catalog
# ---------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def builtin() -> Catalog:
    return builtin_catalog()


@pytest.fixture(scope="module")
def value_pairs(builtin: Catalog) -> list[tuple[str, float]]:
    """The distinct (series, value) pairs of the built-in discrete catalog."""
    pairs = builtin.discrete[["series", "resistance_ohm"]].astype({"series": str}).drop_duplicates()
    return [(str(s), float(v)) for s, v in pairs.itertuples(index=False)]


def test_builtin_catalog_has_at_least_20000_discrete_parts(builtin: Catalog) -> None:
    assert builtin.discrete_count >= 20_000
    assert tuple(builtin.discrete.columns) == DISCRETE_COLUMNS
    assert len(builtin) == builtin.discrete_count + builtin.network_count
    assert builtin_catalog() is builtin  # built once per process


def test_builtin_values_are_iec60063_members_by_the_project_eseries(
    value_pairs: list[tuple[str, float]],
) -> None:
    """IEC 60063, by optimizer.eseries."""
    assert {s for s, _ in value_pairs} == {"E24", "E96", "E192"}
    bad = [(s, v) for s, v in value_pairs if not is_member(series_for_name(s), v)]
    assert bad == []


def test_builtin_values_are_iec60063_members_by_the_eseries_package(
    value_pairs: list[tuple[str, float]],
) -> None:
    """IEC 60063, by the `eseries` package from PyPI: every value is its own nearest series
    value."""
    bad = [
        (s, v)
        for s, v in value_pairs
        if reference.find_nearest(reference.ESeries[s], v) != pytest.approx(v, rel=1e-9)
    ]
    assert bad == []


def test_each_builtin_line_has_every_series_value_of_its_range(builtin: Catalog) -> None:
    """No gaps: each line (technology, grade, tempco, size) holds exactly the IEC 60063 values
    the `eseries` package lists between its lowest and highest value."""
    frame = builtin.discrete
    keys = ["technology", "tolerance", "tempco_per_k", "size", "series"]
    for key, group in frame.groupby(keys, observed=True):
        series = reference.ESeries[str(key[4])]
        low, high = group["resistance_ohm"].min(), group["resistance_ohm"].max()
        expected = [v for v in reference.erange(series, low, high) if v <= high * (1 + 1e-9)]
        assert np.allclose(np.sort(group["resistance_ohm"].to_numpy()), expected, rtol=1e-9), key


@pytest.mark.parametrize(
    ("tolerance", "series"),
    [
        (0.05, "E24"),
        (0.02, "E24"),
        (0.01, "E96"),
        (0.005, "E192"),
        (0.0025, "E192"),
        (0.001, "E192"),
        (0.0005, "E192"),
        (0.0002, "E192"),
        (0.0001, "E192"),
    ],
)
def test_grades_use_their_usual_series(builtin: Catalog, tolerance: float, series: str) -> None:
    """Common practice (and the tolerances IEC 60063 associates with E24, E96, E192)."""
    rows = builtin.discrete[np.isclose(builtin.discrete["tolerance"], tolerance)]
    assert len(rows) > 0
    assert set(rows["series"].astype(str)) == {series}


def test_builtin_grade_and_tempco_pairings_are_realistic(builtin: Catalog) -> None:
    """Common practice: tight tolerance comes with low tempco; thick film for the loose
    grades, thin film for precision, foil only for the tightest."""
    frame = builtin.discrete
    tol, tc = frame["tolerance"].to_numpy(), frame["tempco_per_k"].to_numpy()
    technology = frame["technology"].astype(str).to_numpy()
    assert not np.any((tol >= 0.05) & (tc <= 25e-6))  # no 5 % part at 25 ppm/K or better
    assert not np.any((tol <= 0.001) & (tc > 25e-6))  # 0.1 % and tighter: 25 ppm/K or better
    assert not np.any((tol <= 0.0005) & (tc > 10e-6))  # 0.05 % and tighter: 10 ppm/K or better
    assert set(tol[technology == "thick_film"]) <= {0.05, 0.02, 0.01}
    assert max(tol[technology == "foil"]) <= 0.0002
    assert set(np.round(tc * 1e6, 6)) == {200, 100, 50, 25, 15, 10, 5, 2}
    assert set(np.round(tol * 100, 6)) == {5, 2, 1, 0.5, 0.25, 0.1, 0.05, 0.02, 0.01}


def test_builtin_sizes_ratings_and_costs(builtin: Catalog) -> None:
    """Common practice: a larger chip is rated for more power and voltage. Costs are
    illustrative; the check is only that tighter grades never get cheaper."""
    frame = builtin.discrete
    assert set(frame["size"].astype(str)) == {"0402", "0603", "0805", "1206"}
    ratings = frame.groupby("size", observed=True)[["power_w", "max_voltage_v"]].agg(["min", "max"])
    for column in ("power_w", "max_voltage_v"):
        assert (ratings[(column, "min")] == ratings[(column, "max")]).all()  # one rating per size
        by_size = ratings[(column, "min")].loc[["0402", "0603", "0805", "1206"]].to_numpy()
        assert np.all(np.diff(by_size) > 0)
    assert (frame["unit_cost"] > 0).all()
    cheapest = frame.groupby("tolerance")["unit_cost"].min().sort_index(ascending=False)
    assert np.all(np.diff(cheapest.to_numpy()) >= 0)
    assert (frame["stock_qty"] == 0).all()
    assert (frame["drift_1000h"] > 0).all()


def test_builtin_part_ids_follow_the_scheme_and_decode_to_the_row(builtin: Catalog) -> None:
    """Q-<size>-<technology><tolerance in 0.01 %>-<tempco ppm/K>-<RKM value (IEC 60062)>."""
    frame = builtin.discrete
    assert frame["part_id"].is_unique
    pattern = re.compile(r"^Q-(\d{4})-([KTF])(\d+)-(\d+)-(\d*[RKM]\d*)$")
    letters = {"thick_film": "K", "thin_film": "T", "foil": "F"}
    sample = frame.iloc[:: max(1, len(frame) // 3000)]
    for row in sample.itertuples(index=False):
        match = pattern.match(row.part_id)
        assert match is not None, row.part_id
        size, letter, grade, tempco, value = match.groups()
        assert size == row.size
        assert letter == letters[row.technology]
        assert int(grade) == round(row.tolerance * 1e4)
        assert int(tempco) == round(row.tempco_per_k * 1e6)
        assert parse_resistance(value) == pytest.approx(row.resistance_ohm, rel=1e-12)


@pytest.mark.parametrize(
    ("ohms", "figures", "short", "code"),
    [
        # IEC 60062 RKM examples (from memory): the letter marks the decimal point.
        (4.7, 2, False, "4R7"),
        (470.0, 2, False, "470R"),
        (4700.0, 2, False, "4K7"),
        (47e3, 2, False, "47K"),
        (470e3, 2, False, "470K"),
        (4.7e6, 2, False, "4M7"),
        (4990.0, 3, False, "4K99"),
        (1000.0, 3, False, "1K00"),
        (10e6, 2, False, "10M"),
        (1000.0, 3, True, "1K"),
        (2200.0, 3, True, "2K2"),
        (100.0, 3, True, "100R"),
    ],
)
def test_rkm_code(ohms: float, figures: int, short: bool, code: str) -> None:
    assert rkm_code(ohms, figures, short=short) == code
    assert parse_resistance(code) == pytest.approx(ohms, rel=1e-12)


def test_discrete_part_builds_the_row_on_demand(builtin: Catalog) -> None:
    part = builtin.find("Q-0603-T10-25-4K99")
    assert part == DiscretePart(
        part_id="Q-0603-T10-25-4K99",
        resistance_ohm=4990.0,
        tolerance=0.001,
        tempco_per_k=25e-6,
        size="0603",
        power_w=0.1,
        max_voltage_v=75.0,
        unit_cost=part.unit_cost,
        stock_qty=0,
        technology=Technology.THIN_FILM,
        drift_1000h=0.0005,  # thin film figure of catalogs/discrete_recipe.yaml
    )
    index = int(np.flatnonzero(builtin.discrete["part_id"].to_numpy() == "Q-0603-T10-25-4K99")[0])
    assert builtin.discrete_part(index) == part


def test_generate_discrete_from_a_small_recipe() -> None:
    """One grade, one decade: 24 E24 values in [10, 91] plus 100, x 2 tempcos x 1 size."""
    recipe = {
        "range": [10, 100],
        "series_by_tolerance": [{"from": "2%", "series": "E24"}, {"from": 0, "series": "E96"}],
        "sizes": {"0805": {"power": "125mW", "max_voltage": "150V", "cost_factor": 1.0}},
        "technologies": {"thick_film": {"code": "K", "drift": "1%"}},
        "tempco_premium": {"200ppm/K": 0, "100ppm/K": 0.5},
        "grades": [
            {
                "tolerance": "5%",
                "technology": "thick_film",
                "tempcos": ["200ppm/K", "100ppm/K"],
                "cost": 2,
            }
        ],
    }
    frame = generate_discrete(recipe, source="test-recipe")
    assert len(frame) == 2 * 25
    assert set(frame["source"].astype(str)) == {"test-recipe"}
    assert sorted(set(frame["unit_cost"])) == [2.0, 2.5]
    assert frame["part_id"].iloc[0] == "Q-0805-K500-200-10R"


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (
            lambda r: r["series_by_tolerance"][0].update(series="E25"),
            "test-recipe: column 'series_by_tolerance[0].series': cannot read 'E25' "
            "(unknown E-series): expected one of E3, E6, E12, E24, E48, E96, E192",
        ),
        (
            lambda r: r["grades"][0].update(tempcos=["50ppm/K"]),
            "test-recipe: column 'grades[0].tempcos[0]': no tempco_premium entry for 50 ppm/K",
        ),
        (
            lambda r: r["grades"][0].update(technology="carbon"),
            "test-recipe: column 'grades[0].technology': expected one of the technologies "
            "thick_film, got 'carbon'",
        ),
        (
            lambda r: r["sizes"].update({603: r["sizes"].pop("0805")}),
            "test-recipe: column 'sizes.603': expected a size code as text (quote it: \"603\")",
        ),
        (
            lambda r: r.pop("grades"),
            "test-recipe: missing key 'grades'",
        ),
    ],
)
def test_generate_discrete_refuses_a_broken_recipe(change: object, message: str) -> None:
    recipe: dict[str, object] = {
        "range": [10, 100],
        "series_by_tolerance": [{"from": 0, "series": "E24"}],
        "sizes": {"0805": {"power": "125mW", "max_voltage": "150V", "cost_factor": 1.0}},
        "technologies": {"thick_film": {"code": "K", "drift": "1%"}},
        "tempco_premium": {"200ppm/K": 0},
        "grades": [
            {"tolerance": "5%", "technology": "thick_film", "tempcos": ["200ppm/K"], "cost": 1}
        ],
    }
    assert callable(change)
    change(recipe)
    with pytest.raises(CatalogError) as info:
        generate_discrete(recipe, source="test-recipe")
    assert str(info.value) == message


# ---------------------------------------------------------------------------------------------
# The built-in networks
# ---------------------------------------------------------------------------------------------


def test_builtin_networks_cover_the_usual_gains(builtin: Catalog) -> None:
    """Quads [R, G*R, R, G*R] (elements 1..4 -> R1..R4) and duals [R, G*R] for gains 1, 2, 5,
    10, 20, 50, 100 and attenuations 0.1, 0.2, 0.5."""
    networks = builtin.networks
    quads = [n for n in networks if n.elements == 4]
    duals = [n for n in networks if n.elements == 2]
    assert quads and duals
    wanted = {1.0, 2.0, 5.0, 10.0, 20.0, 50.0, 100.0, 0.1, 0.2, 0.5}
    for group in (quads, duals):
        gains = {round(n.values_ohm[1] / n.values_ohm[0], 9) for n in group}
        assert gains == wanted
    for quad in quads:
        r1, r2, r3, r4 = quad.values_ohm
        assert (r1, r2) == (r3, r4)
    g10 = [n for n in quads if n.part_id.startswith("QN4-G10-1K-")]
    assert g10 and all(n.values_ohm == (1e3, 10e3, 1e3, 10e3) for n in g10)
    assert len({n.part_id for n in networks}) == len(networks)


def test_builtin_network_grades(builtin: Catalog) -> None:
    """Ratio tolerance 0.1 % .. 0.01 % with tracking 5 .. 1 ppm/K; the absolute tolerance
    (0.1 % .. 0.5 %) is looser than the ratio tolerance (common practice)."""
    networks = builtin.networks
    assert {n.ratio_tolerance for n in networks} == {1e-3, 5e-4, 2.5e-4, 1e-4}
    assert {round(n.tracking_tempco_per_k * 1e6, 9) for n in networks} == {5, 2, 1}
    for n in networks:
        assert 1e-3 <= n.abs_tolerance <= 5e-3
        assert n.abs_tolerance >= n.ratio_tolerance
        assert n.abs_tempco_per_k >= n.tracking_tempco_per_k
        assert n.unit_cost > 0 and n.stock_qty == 0
        assert all(100.0 <= v <= 1e6 for v in n.values_ohm)
    tight = [n for n in networks if n.ratio_tolerance == 1e-4]
    assert all(n.tracking_tempco_per_k == 1e-6 for n in tight)


# ---------------------------------------------------------------------------------------------
# CSV catalogs
# ---------------------------------------------------------------------------------------------


def test_csv_reads_engineering_notation_and_plain_si(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        "parts.csv",
        "part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock,technology,drift\n"
        "P1,4k99,0.1%,25ppm/K,0603,100mW,75V,6.5,12,thin film,0.25%\n"
        "P2,4.99k,1000ppm,25 ppm/°C,0603,0.1 W,75 V,6.5,yes,Thin-Film,2500ppm\n"
        "P3,4990,0.001,25e-6,0603,0.1,75,6.5,0,thin_film,0.0025\n"
        "P4,2M2,5%,200ppm,1206,250mW,200V,1,no,,\n",
    )
    frame = load_catalog(str(path)).discrete
    assert list(frame["resistance_ohm"]) == [4990.0, 4990.0, 4990.0, 2.2e6]
    assert list(frame["tolerance"]) == [0.001, 0.001, 0.001, 0.05]
    assert list(frame["tempco_per_k"]) == [25e-6, 25e-6, 25e-6, 200e-6]
    assert list(frame["power_w"]) == [0.1, 0.1, 0.1, 0.25]
    assert list(frame["stock_qty"]) == [12, STOCK_UNCOUNTED, 0, 0]
    assert list(frame["technology"].astype(str)) == ["thin_film"] * 3 + [""]
    assert list(frame["drift_1000h"]) == [0.0025, 0.0025, 0.0025, 0.0]
    assert list(frame["size"].astype(str)) == ["0603", "0603", "0603", "1206"]
    assert set(frame["source"].astype(str)) == {str(path)}


@pytest.mark.parametrize(
    ("token", "quantity"),
    [
        ("0", 0),
        ("12", 12),
        ("1e3", 1000),
        ("yes", STOCK_UNCOUNTED),
        ("Yes", STOCK_UNCOUNTED),
        ("y", STOCK_UNCOUNTED),
        ("TRUE", STOCK_UNCOUNTED),
        ("no", 0),
        ("N", 0),
        ("false", 0),
    ],
)
def test_stock_is_a_whole_number_or_yes_no(tmp_path: Path, token: str, quantity: int) -> None:
    path = _write(tmp_path, "stock.csv", HEADER + GOOD_ROW.replace(",10\n", f",{token}\n"))
    catalog = load_catalog(str(path))
    assert catalog.discrete["stock_qty"].tolist() == [quantity]
    assert catalog.stock_count == (1 if quantity else 0)


@pytest.mark.parametrize(
    ("values", "tolerances", "expected"),
    [
        # IEC 60063: 4.99 is in E96 (and E192); 1.0 in every series; 2.2 in E24 only (E192 has
        # 2.21); 1.234 in none. The grade's own series comes first (common practice).
        ([4990.0], [0.01], ["E96"]),
        ([4990.0], [0.001], ["E192"]),
        ([1000.0], [0.05], ["E24"]),
        ([1000.0], [0.001], ["E192"]),
        ([2200.0], [0.001], ["E24"]),
        ([1234.0], [0.01], [""]),
    ],
)
def test_series_of_user_values(
    values: list[float], tolerances: list[float], expected: list[str]
) -> None:
    got = series_of_values(np.array(values), np.array(tolerances))
    assert list(got) == expected
    for value, name in zip(values, expected, strict=True):
        if name:  # cross-check with the eseries package
            assert reference.find_nearest(reference.ESeries[name], value) == pytest.approx(value)
    assert reference.find_nearest(reference.ESeries.E192, 2200.0) != pytest.approx(2200.0)


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "",
            "{path}: the file is empty: expected a header line with the columns part_id, "
            "resistance, tolerance, tempco, size, power, max_voltage, cost, stock",
        ),
        (
            "# only a comment\n\n",
            "{path}: the file is empty: expected a header line with the columns part_id, "
            "resistance, tolerance, tempco, size, power, max_voltage, cost, stock",
        ),
        (HEADER, "{path}: no parts: expected data rows below the header line 1"),
        (
            HEADER.replace("tolerance", "tolerence") + GOOD_ROW,
            "{path}:1: column 'tolerance': missing required column (found: part_id, "
            "resistance, tolerence, tempco, size, power, max_voltage, cost, stock); is "
            "'tolerence' meant to be 'tolerance'?",
        ),
        (
            HEADER.replace("stock", "stock,values") + GOOD_ROW.replace("\n", ",x\n"),
            "{path}:1: column 'values': unknown column: a CSV catalog lists discrete parts only; "
            "list networks in a YAML catalog under networks:",
        ),
        (
            HEADER.replace(",stock", "") + "A1,10k,0.1%,25ppm,0603,0.1W,75V,1.5\n",
            "{path}:1: column 'stock': missing required column (found: part_id, resistance, "
            "tolerance, tempco, size, power, max_voltage, cost)",
        ),
        (
            HEADER.replace("stock", "stock,cost") + GOOD_ROW.replace("\n", ",1\n"),
            "{path}:1: column 'cost': the column appears twice",
        ),
        (
            HEADER + GOOD_ROW + "A2,4x99,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'resistance': cannot read '4x99' (unknown suffix 'x99'): expected "
            "a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            HEADER + GOOD_ROW + "A2,0,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'resistance': cannot read '0' (not above zero): expected a "
            "resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            HEADER + "A1,10,0.001,25e-6,0603,0.1,75,1.5,10\nA2,-5,0.001,25e-6,0603,0.1,75,1.5,10\n",
            "{path}:3: column 'resistance': cannot read '-5' (not above zero): expected a "
            "resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            HEADER + GOOD_ROW + "A2,,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'resistance': no value: expected a resistance above zero such as "
            "4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            HEADER + GOOD_ROW + "A2,inf,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'resistance': cannot read 'inf' (no number at the start): "
            "expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,60%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'tolerance': found '60%': expected a tolerance below 50 %",
        ),
        (
            HEADER + "A1,10k,0.6,25e-6,0603,0.1,75,1.5,10\n",
            "{path}:2: column 'tolerance': found '0.6': expected a tolerance below 50 %",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'tempco': cannot read '25' (larger than 10,000 ppm/K; did you mean "
            "ppm/K?): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'size': found '603': expected a size code such as 0603; did you "
            "mean '0603'? (a spreadsheet may have dropped the leading zero)",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,06 03,0.1W,75V,1.5,10\n",
            "{path}:3: column 'size': found '06 03': expected a size code such as 0603; a size "
            "code has no spaces",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,-1W,75V,1.5,10\n",
            "{path}:3: column 'power': cannot read '-1W' (below zero): expected a power above "
            "zero such as 0.1 W or 63 mW",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,-75V,1.5,10\n",
            "{path}:3: column 'max_voltage': found '-75V': expected a limiting voltage above "
            "zero such as 75 V",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,cheap,10\n",
            "{path}:3: column 'cost': cannot read 'cheap' (not a number): expected a relative "
            "cost of zero or more such as 1.5",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,lots\n",
            "{path}:3: column 'stock': found 'lots': expected a whole number of zero or more, or "
            "yes/no",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,2.5\n",
            "{path}:3: column 'stock': found '2.5': expected a whole number of zero or more, or "
            "yes/no",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,-1\n",
            "{path}:3: column 'stock': found '-1': expected a whole number of zero or more, or "
            "yes/no",
        ),
        (
            HEADER + GOOD_ROW + "\nA1,10k,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:4: column 'part_id': duplicate part id 'A1' (first at line 2)",
        ),
        (
            HEADER + GOOD_ROW + ",10k,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}:3: column 'part_id': no value: expected a part id",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,10,9\n",
            "{path}:3: found 10 cells: expected 9 as in the header line 1",
        ),
        (
            HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm\n",
            "{path}:3: found 4 cells: expected 9 as in the header line 1",
        ),
        (
            HEADER.replace("stock", "stock,technology") + GOOD_ROW.replace("\n", ",carbon\n"),
            "{path}:2: column 'technology': found 'carbon': expected one of thin_film, "
            "thick_film, foil, metal_film, wirewound",
        ),
        (
            HEADER.replace("stock", "stock,drift") + GOOD_ROW.replace("\n", ",lots\n"),
            "{path}:2: column 'drift': cannot read 'lots' (no number at the start): expected a "
            "fraction such as 0.1%, 1000 ppm or 0.001",
        ),
        (
            # two problems in two columns: both are reported, in file order
            HEADER
            + GOOD_ROW
            + "A2,10k,0.1%,25,0603,0.1W,75V,1.5,10\n"
            + "A3,bad,0.1%,25ppm,0603,0.1W,75V,1.5,10\n",
            "{path}: 2 problems:\n"
            "{path}:3: column 'tempco': cannot read '25' (larger than 10,000 ppm/K; did you mean "
            "ppm/K?): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6\n"
            "{path}:4: column 'resistance': cannot read 'bad' (no number at the start): expected "
            "a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            # comment lines before the header and blank lines count as lines
            "# stock list\n\n" + HEADER + GOOD_ROW + "\n\nA2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,x\n",
            "{path}:7: column 'stock': found 'x': expected a whole number of zero or more, or "
            "yes/no",
        ),
    ],
)
def test_csv_refusals_name_file_line_and_column(tmp_path: Path, text: str, message: str) -> None:
    path = _write(tmp_path, "cat.csv", text)
    with pytest.raises(CatalogError) as info:
        load_catalog(str(path))
    assert str(info.value) == message.format(path=path)


def test_csv_that_is_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "binary.csv"
    path.write_bytes(b"part_id\xff\n")
    with pytest.raises(CatalogError) as info:
        load_catalog(str(path))
    # Not UTF-8: read as Latin-1 (0xff is 'ÿ' in ISO 8859-1), and the message says so.
    assert str(info.value).startswith(f"{path}: no known column in the header line (found ")
    assert str(info.value).endswith(
        "not UTF-8 text (byte 0xff at byte 7); read as Latin-1 (ISO 8859-1)"
    )


def test_header_names_ignore_case_and_spaces(tmp_path: Path) -> None:
    path = _write(
        tmp_path,
        "cat.csv",
        " Part_ID , Resistance,TOLERANCE,tempco,size,power,max_voltage,cost,stock\n"
        + GOOD_ROW.replace("A1", " A1 "),
    )
    frame = load_catalog(str(path)).discrete
    assert frame["part_id"].tolist() == ["A1"]
    assert frame["resistance_ohm"].tolist() == [10e3]


@pytest.mark.parametrize(
    ("name", "message"),
    [
        ("missing.csv", "{path}: cannot open the file: no such file"),
        ("parts.txt", "{path}: unknown catalog type '.txt': expected a .csv, .yaml or .yml file"),
    ],
)
def test_unreadable_paths(tmp_path: Path, name: str, message: str) -> None:
    path = tmp_path / name
    if name.endswith(".txt"):
        path.write_text("x", encoding="utf-8")
    with pytest.raises(CatalogError) as info:
        load_catalog(str(path))
    assert str(info.value) == message.format(path=path)


def test_builtin_discrete_round_trips_through_a_csv_file(builtin: Catalog, tmp_path: Path) -> None:
    """Write the built-in table in the CSV schema (plain SI numbers) and read it back."""
    frame = builtin.discrete
    out = pd.DataFrame(
        {
            "part_id": frame["part_id"],
            "resistance": frame["resistance_ohm"],
            "tolerance": frame["tolerance"],
            "tempco": frame["tempco_per_k"],
            "size": frame["size"],
            "power": frame["power_w"],
            "max_voltage": frame["max_voltage_v"],
            "cost": frame["unit_cost"],
            "stock": frame["stock_qty"],
            "technology": frame["technology"],
            "drift": frame["drift_1000h"],
        }
    )
    path = tmp_path / "all.csv"
    out.to_csv(path, index=False)
    back = load_catalog(str(path)).discrete
    for column in DISCRETE_COLUMNS[:-1]:
        assert back[column].astype(object).tolist() == frame[column].astype(object).tolist(), column


# ---------------------------------------------------------------------------------------------
# YAML catalogs
# ---------------------------------------------------------------------------------------------

YAML_DISCRETE = """\
discrete:
  - part_id: Y1
    resistance: 10k
    tolerance: 0.1%
    tempco: 25ppm/K
    size: 0603
    power: 100mW
    max_voltage: 75V
    cost: 6
    stock: yes
"""
YAML_NETWORKS = """\
networks:
  - part_id: N1
    values: [1k, 10k, 1k, 10k]
    tolerance: 0.1%
    ratio_tolerance: 0.05%
    tempco: 25ppm/K
    tracking: 2ppm/K
    power: 100mW
    max_voltage: 80V
    cost: 12
    stock: 5
"""


def test_yaml_catalog_with_discrete_parts_and_networks(tmp_path: Path) -> None:
    path = _write(tmp_path, "cat.yaml", YAML_DISCRETE + YAML_NETWORKS)
    catalog = load_catalog(str(path))
    row = catalog.discrete.iloc[0]
    assert (row["part_id"], row["resistance_ohm"], row["size"], row["stock_qty"]) == (
        "Y1",
        10e3,
        "0603",
        STOCK_UNCOUNTED,
    )  # `size: 0603` stays the text 0603 (not the YAML 1.1 octal 387)
    assert catalog.networks == (
        NetworkPart(
            part_id="N1",
            values_ohm=(1e3, 10e3, 1e3, 10e3),
            abs_tolerance=0.001,
            ratio_tolerance=0.0005,
            abs_tempco_per_k=25e-6,
            tracking_tempco_per_k=2e-6,
            power_per_element_w=0.1,
            max_voltage_v=80.0,
            unit_cost=12.0,
            stock_qty=5,
        ),
    )
    assert catalog.network_sources == (str(path),)
    assert catalog.find("N1") is catalog.networks[0]


@pytest.mark.parametrize(
    ("text", "message"),
    [
        (
            "",
            "{path}: the file is empty: expected a mapping with a discrete: list and/or a "
            "networks: list",
        ),
        (
            "# nothing\n",
            "{path}: the file is empty: expected a mapping with a discrete: list and/or a "
            "networks: list",
        ),
        (
            "- a\n- b\n",
            "{path}:1: expected a mapping with a discrete: list and/or a networks: list",
        ),
        (
            "discrete: [\n",
            "{path}:2: not valid YAML: expected the node content, but found '<stream end>' "
            "(while parsing a flow node)",
        ),
        ("discreet: []\n", "{path}:1: column 'discreet': unknown key; did you mean 'discrete'?"),
        ("discrete: 5\n", "{path}:1: column 'discrete': expected a list of parts under discrete:"),
        ("discrete: []\n", "{path}:1: column 'discrete': the discrete: list is empty"),
        (
            "discrete:\n  - 5\n",
            "{path}:2: column 'discrete': expected a mapping of part_id, resistance, tolerance, "
            "tempco, size, power, max_voltage, cost, stock for each entry of discrete:",
        ),
        (
            YAML_DISCRETE.replace("tolerance:", "tolerence:"),
            "{path}:4: column 'tolerence': unknown key; did you mean 'tolerance'?",
        ),
        (
            YAML_DISCRETE.replace("    stock: yes\n", ""),
            "{path}:2: column 'stock': no value: expected a whole number of zero or more, or "
            "yes/no",
        ),
        (
            YAML_DISCRETE.replace("10k", "ten k"),
            "{path}:3: column 'resistance': cannot read 'ten k' (no number at the start): "
            "expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            YAML_DISCRETE.replace("cost: 6", "cost: ~"),
            "{path}:9: column 'cost': no value: expected a relative cost of zero or more such "
            "as 1.5",
        ),
        (
            YAML_DISCRETE.replace("cost: 6", "cost: [6]"),
            "{path}:9: column 'cost': expected a single value, not a list or mapping",
        ),
        (
            YAML_DISCRETE + "    stock: 3\n",
            "{path}:11: column 'stock': the key appears twice in this entry",
        ),
        (
            YAML_NETWORKS.replace("[1k, 10k, 1k, 10k]", "[1k, 10k, 1k]"),
            "{path}:3: column 'values': found 3 element values: expected 2 (a dual) or 4 (a quad)",
        ),
        (
            YAML_NETWORKS.replace("[1k, 10k, 1k, 10k]", "[1k, 10k,\n             1q, 10k]"),
            "{path}:4: column 'values': cannot read '1q' (unknown suffix 'q'): expected a "
            "resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            YAML_NETWORKS.replace("[1k, 10k, 1k, 10k]", "1k"),
            "{path}:3: column 'values': expected a list of element values such as "
            "[1k, 10k, 1k, 10k]",
        ),
        (
            YAML_NETWORKS.replace("    values: [1k, 10k, 1k, 10k]\n", ""),
            "{path}:2: column 'values': no value: expected a list of 2 or 4 element values such "
            "as [1k, 10k, 1k, 10k]",
        ),
        (
            YAML_NETWORKS.replace("tracking: 2ppm/K", "tracking: 2"),
            "{path}:7: column 'tracking': cannot read '2' (larger than 10,000 ppm/K; did you "
            "mean ppm/K?): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        ),
        (
            YAML_NETWORKS.replace("tracking:", "trackng:"),
            "{path}:7: column 'trackng': unknown key; did you mean 'tracking'?",
        ),
        (
            YAML_DISCRETE + YAML_NETWORKS.replace("N1", "Y1"),
            "{path}:12: column 'part_id': duplicate part id 'Y1' (first at line 2)",
        ),
    ],
)
def test_yaml_refusals_name_file_line_and_key(tmp_path: Path, text: str, message: str) -> None:
    path = _write(tmp_path, "cat.yaml", text)
    with pytest.raises(CatalogError) as info:
        load_catalog(str(path))
    assert str(info.value) == message.format(path=path)


# ---------------------------------------------------------------------------------------------
# Combining catalogs
# ---------------------------------------------------------------------------------------------


def test_house_stock_example_serves_the_demo_gains() -> None:
    """The example stockroom holds pairs for G = 20, 1, 50 and 0.1 in 0.1 % or better."""
    catalog = load_catalogs([str(HOUSE_CSV), str(HOUSE_NETWORKS)], include_builtin=False)
    stocked = catalog.stock_only()
    precise = stocked.discrete[stocked.discrete["tolerance"] <= 0.001]
    values = set(precise["resistance_ohm"])
    for gain in (20.0, 1.0, 50.0, 0.1):
        assert any(r1 * gain in values for r1 in values), gain
    network_gains = {round(n.values_ohm[1] / n.values_ohm[0], 9) for n in stocked.networks}
    assert {20.0, 1.0, 50.0, 0.1} <= network_gains


def test_load_catalogs_combines_in_order(builtin: Catalog) -> None:
    catalog = load_catalogs([str(HOUSE_CSV), str(HOUSE_NETWORKS)])
    house = load_catalog(str(HOUSE_CSV))
    networks = load_catalog(str(HOUSE_NETWORKS))
    assert catalog.discrete_count == builtin.discrete_count + house.discrete_count
    assert catalog.network_count == builtin.network_count + networks.network_count
    assert catalog.sources == (*builtin.sources, str(HOUSE_CSV), str(HOUSE_NETWORKS))
    assert catalog.stock_count == house.stock_count + networks.stock_count
    assert catalog.find("SR-2003").resistance_ohm == 4990.0
    assert catalog.network_sources[-1] == str(HOUSE_NETWORKS)
    assert tuple(catalog.discrete.columns) == DISCRETE_COLUMNS
    assert load_catalogs([], include_builtin=False).discrete_count == 0


def test_stock_only_keeps_the_stocked_parts() -> None:
    catalog = load_catalogs([str(HOUSE_CSV), str(HOUSE_NETWORKS)]).stock_only()
    assert (catalog.discrete["stock_qty"] > 0).all()
    assert catalog.discrete_count == 33  # SR-2012 and SR-3009 have none
    assert {n.part_id for n in catalog.networks} == {
        "SR-N01",
        "SR-N02",
        "SR-N03",
        "SR-N04",
        "SR-N05",
    }


@pytest.mark.parametrize("order", ["csv-first", "yaml-first"])
def test_a_duplicate_id_across_files_names_both(tmp_path: Path, order: str) -> None:
    csv = _write(tmp_path, "a.csv", HEADER + "Y1,1k,1%,100ppm,0603,0.1,75,1,0\n")
    yml = _write(tmp_path, "b.yaml", YAML_DISCRETE)
    paths = [str(csv), str(yml)] if order == "csv-first" else [str(yml), str(csv)]
    with pytest.raises(CatalogError) as info:
        load_catalogs(paths, include_builtin=False)
    first, second = (f"{csv}:2", f"{yml}:2") if order == "csv-first" else (f"{yml}:2", f"{csv}:2")
    assert (
        str(info.value)
        == f"{second}: column 'part_id': duplicate part id 'Y1': already defined in {first}"
    )


def test_a_duplicate_of_a_builtin_id(tmp_path: Path) -> None:
    path = _write(tmp_path, "a.csv", HEADER + "Q-0603-T10-25-4K99,1k,1%,100ppm,0603,0.1,75,1,0\n")
    with pytest.raises(CatalogError) as info:
        load_catalogs([str(path)])
    assert str(info.value) == (
        f"{path}:2: column 'part_id': duplicate part id 'Q-0603-T10-25-4K99': already defined "
        "in built-in:discrete_recipe.yaml"
    )


def test_merge_refuses_a_duplicate_id(tmp_path: Path) -> None:
    first = load_catalog(str(_write(tmp_path, "a.csv", HEADER + GOOD_ROW)))
    second = load_catalog(str(_write(tmp_path, "b.csv", HEADER + GOOD_ROW)))
    with pytest.raises(CatalogError) as info:
        first.merge(second)
    assert str(info.value) == (
        f"{tmp_path / 'b.csv'}: column 'part_id': duplicate part id 'A1': it is in "
        f"{tmp_path / 'a.csv'} and in {tmp_path / 'b.csv'}"
    )
    third = load_catalog(str(_write(tmp_path, "c.csv", HEADER + GOOD_ROW.replace("A1", "A3"))))
    merged = first.merge(third)
    assert merged.discrete["part_id"].tolist() == ["A1", "A3"]
    assert merged.sources == (str(tmp_path / "a.csv"), str(tmp_path / "c.csv"))


def test_find_an_unknown_id_lists_close_ids() -> None:
    catalog = load_catalog(str(HOUSE_CSV))
    with pytest.raises(DesignError) as info:
        catalog.find("SR-1O04")
    text = str(info.value)
    assert text.startswith(f"unknown part id 'SR-1O04' (not in {HOUSE_CSV}); close ids: ")
    assert "SR-1004" in text


def test_empty_catalog() -> None:
    catalog = Catalog(empty_discrete_frame())
    assert len(catalog) == 0 and catalog.stock_count == 0
    assert re.search(r"discrete parts │\s+0 │\s+0 │", _render(render_catalog_summary(catalog)))


# ---------------------------------------------------------------------------------------------
# Summary and command line
# ---------------------------------------------------------------------------------------------


def test_summary_counts_the_house_stock() -> None:
    catalog = load_catalogs([str(HOUSE_CSV), str(HOUSE_NETWORKS)], include_builtin=False)
    assert catalog_counts(catalog) == {
        "discrete": 35,
        "discrete_in_stock": 33,
        "networks": 6,
        "quad": 4,
        "dual": 2,
        "networks_in_stock": 5,
    }
    text = _render(render_catalog_summary(catalog))
    for line in (
        "│ discrete parts │    35 │       33 │",
        "│ networks       │     6 │        5 │",
    ):
        assert line in text, line
    # The grade-by-series matrix: counted by hand from examples/house_stock.csv (demo data; the
    # check is of the counting, not of the data): the ±0.05 %, 10 ppm/K grade has 7 E192 parts,
    # all stocked, at cost 15.5; the ±5 % grade 3 E24 parts.
    rows = [line for line in text.splitlines() if line.startswith("│ ±")]
    grade = next(r for r in rows if "±0.05 %, 10 ppm/K" in r)
    assert re.search(r"│\s+7 \(7 stocked\) │", grade)
    assert re.search(r"│\s+3 \(3 stocked\) │", next(r for r in rows if "±5 %" in r))
    # Networks by matching grade and kind: 4 quads (3 stocked) and 2 duals (2 stocked) in all.
    networks = text.split("Networks:")[1]
    quads = re.findall(r"│\s+(\d+) \((\d+) stocked\) │\s+– │", networks)
    duals = re.findall(r"│\s+– │\s+(\d+) \((\d+) stocked\) │", networks)
    assert sum(int(a) for a, _ in quads) == 4 and sum(int(b) for _, b in quads) == 3
    assert sum(int(a) for a, _ in duals) == 2 and sum(int(b) for _, b in duals) == 2


def _run(argv: list[str]) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    code = main(argv, console=Console(file=out, width=200), err=Console(file=err, width=200))
    return code, out.getvalue(), err.getvalue()


def test_cli_catalog_show_prints_the_builtin_total() -> None:
    code, out, _ = _run(["catalog", "show"])
    assert code == 0
    match = re.search(r"discrete parts │\s*([\d,]+)", out)
    assert match is not None
    assert int(match.group(1).replace(",", "")) >= 20_000
    assert "built-in:discrete_recipe.yaml" in out


def test_cli_catalog_validate_the_examples(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    code, out, err = _run(["catalog", "validate", "examples/house_stock.csv"])
    assert (code, err) == (0, "")
    assert "valid: examples/house_stock.csv" in out
    code, out, err = _run(["catalog", "validate", str(HOUSE_CSV), str(HOUSE_NETWORKS)])
    assert (code, err) == (0, "")
    assert f"valid: {HOUSE_CSV}, {HOUSE_NETWORKS}" in out
    assert "│ networks       │     6 │        5 │" in out


def test_cli_catalog_validate_reports_a_broken_file(tmp_path: Path) -> None:
    path = _write(
        tmp_path, "broken.csv", HEADER + GOOD_ROW + "A2,10k,0.1%,25ppm,0603,0.1W,75V,1.5,lots\n"
    )
    code, out, err = _run(["catalog", "validate", str(path)])
    assert code == 2
    assert out == ""
    assert err.strip() == (
        f"CatalogError: {path}:3: column 'stock': found 'lots': expected a whole number of zero "
        "or more, or yes/no"
    )


# ---------------------------------------------------------------------------------------------
# The installed wheel
# ---------------------------------------------------------------------------------------------

_WHEEL_CHECK = """\
import json, sys, optimizer
from importlib import resources
from optimizer.catalog import builtin_catalog, builtin_data_folder
catalog = builtin_catalog()
print(json.dumps({
    "module": optimizer.__file__,
    "data": str(resources.files("optimizer.catalogs").joinpath("discrete_recipe.yaml")),
    "folder": str(builtin_data_folder()),
    "package_loaded": "optimizer.catalogs" in sys.modules,
    "discrete": catalog.discrete_count,
    "networks": catalog.network_count,
}))
"""

_SOURCE_TREE_CHECK = """\
import json, sys, optimizer
from optimizer.catalog import builtin_catalog, builtin_data_folder
catalog = builtin_catalog()
print(json.dumps({
    "module": optimizer.__file__,
    "folder": str(builtin_data_folder()),
    "package_loaded": "optimizer.catalogs" in sys.modules,
    "discrete": catalog.discrete_count,
    "networks": catalog.network_count,
}))
"""


def _dependency_folders() -> str:
    """The folders holding the runtime dependencies (numpy, pandas, ...) of the test runner,
    joined as ``PYTHONPATH`` wants them."""
    folders = {
        str(Path(str(m.__file__)).resolve().parent.parent) for m in (np, pd, ortools, rich, yaml)
    }
    return os.pathsep.join(sorted(folders))


def test_wheel_install_carries_the_builtin_catalog(tmp_path: Path) -> None:
    """Build a wheel from a copy of the source tree, install it into a fresh venv and, from a
    folder outside the source tree, load the built-in catalog and run ``quartet catalog show``."""
    source = tmp_path / "src"
    source.mkdir()
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc")
    for name in ("optimizer", "catalogs"):
        shutil.copytree(ROOT / name, source / name, ignore=ignore)
    for name in ("pyproject.toml", "LICENSE", "README.md"):
        if (ROOT / name).exists():
            shutil.copy(ROOT / name, source / name)
    if not (source / "README.md").exists():
        (source / "README.md").write_text("# Quartet\n", encoding="utf-8")
    env = {
        k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV")
    }
    dist = tmp_path / "dist"
    subprocess.run(
        [sys.executable, "-m", "pip", "wheel", str(source), "--no-deps", "-q", "-w", str(dist)],
        check=True,
        cwd=tmp_path,
        env=env,
        timeout=600,
    )
    wheels = list(dist.glob("quartet-*.whl"))
    assert len(wheels) == 1

    venv = tmp_path / "venv"
    subprocess.run(
        [sys.executable, "-m", "venv", "--system-site-packages", str(venv)],
        check=True,
        env=env,
        timeout=300,
    )
    python = venv / ("Scripts" if os.name == "nt" else "bin") / "python"
    site = Path(
        subprocess.run(
            [str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
            check=True,
            capture_output=True,
            text=True,
            env=env,
        ).stdout.strip()
    )
    # Install the wheel first, so that pip cannot mistake the runner's own installed copy of
    # the project (CI installs it non-editable) for this one.
    subprocess.run(
        [
            str(python),
            "-m",
            "pip",
            "install",
            "--no-deps",
            "--no-index",
            "--force-reinstall",
            "-q",
            str(wheels[0]),
        ],
        check=True,
        env=env,
        timeout=300,
    )
    # The dependencies (numpy, pandas, ...) may live in the test runner's own venv rather than
    # in the system site-packages: make their folders visible. A .pth file's folders come after
    # the venv's own site-packages on sys.path, so the wheel just installed is found first.
    folders = {
        str(Path(str(m.__file__)).resolve().parent.parent) for m in (np, pd, ortools, rich, yaml)
    }
    (site / "zz_test_dependencies.pth").write_text(
        "\n".join(sorted(folders)) + "\n", encoding="utf-8"
    )

    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    result = subprocess.run(
        [str(python), "-c", _WHEEL_CHECK],
        check=True,
        capture_output=True,
        text=True,
        cwd=elsewhere,
        env=env,
    )
    report = json.loads(result.stdout)
    assert Path(report["module"]).resolve().is_relative_to(site.resolve())  # not the source tree
    assert Path(report["data"]).resolve().is_relative_to(site.resolve())
    # builtin_data_folder takes the installed package's resource (importlib.resources).
    assert Path(report["folder"]).resolve() == Path(report["data"]).resolve().parent
    assert report["package_loaded"] is True
    assert report["discrete"] >= 20_000 and report["networks"] > 0
    show = subprocess.run(
        [str(python.parent / "quartet"), "catalog", "show"],
        capture_output=True,
        text=True,
        cwd=elsewhere,
        env=env,
    )
    assert show.returncode == 0, show.stderr
    assert "discrete parts" in show.stdout


@pytest.mark.parametrize(
    ("value_range", "count"),
    [
        # A one-value range, and one whose ends differ by float64 rounding only (IEEE 754
        # binary64: 0.1 + 0.2 is 0.30000000000000004, scaled here to 330 Ω): both hold the one
        # E24 value 330 Ω (IEC 60063), in each of the two tempcos (issue 15, item 2).
        ([330, 330], 2),
        ([(0.1 + 0.2) * 1100, 330], 2),
    ],
)
def test_generate_discrete_range_low_equal_to_high(value_range: list[float], count: int) -> None:
    recipe = {
        "range": value_range,
        "series_by_tolerance": [{"from": 0, "series": "E24"}],
        "sizes": {"0805": {"power": "125mW", "max_voltage": "150V", "cost_factor": 1.0}},
        "technologies": {"thick_film": {"code": "K", "drift": "1%"}},
        "tempco_premium": {"200ppm/K": 0, "100ppm/K": 0.5},
        "grades": [
            {
                "tolerance": "5%",
                "technology": "thick_film",
                "tempcos": ["200ppm/K", "100ppm/K"],
                "cost": 2,
            }
        ],
    }
    frame = generate_discrete(recipe, source="test-recipe")
    assert len(frame) == count
    assert set(frame["resistance_ohm"]) == {330.0}


def test_generate_discrete_range_low_above_high_is_refused() -> None:
    recipe = {
        "range": [331, 330],
        "series_by_tolerance": [{"from": 0, "series": "E24"}],
        "sizes": {"0805": {"power": "125mW", "max_voltage": "150V", "cost_factor": 1.0}},
        "technologies": {"thick_film": {"code": "K", "drift": "1%"}},
        "tempco_premium": {"200ppm/K": 0},
        "grades": [
            {"tolerance": "5%", "technology": "thick_film", "tempcos": ["200ppm/K"], "cost": 1}
        ],
    }
    with pytest.raises(CatalogError) as info:
        generate_discrete(recipe, source="test-recipe")
    assert str(info.value) == ("test-recipe: column 'range': expected low <= high, got [331, 330]")


def test_source_tree_without_install_reads_the_top_level_catalogs(tmp_path: Path) -> None:
    """A checkout used without installing (only the dependencies on the path) has no package
    ``optimizer.catalogs``: the built-in catalog comes from the tree's top-level ``catalogs/``
    (``python -S`` keeps out every installed copy of Quartet, editable ones included; the
    interpreter's working folder is the tree, as for ``python -m optimizer`` run there)."""
    tree = tmp_path / "checkout"
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc")
    for name in ("optimizer", "catalogs"):
        shutil.copytree(ROOT / name, tree / name, ignore=ignore)
    env = {
        **{k: v for k, v in os.environ.items() if k not in ("PYTHONHOME", "PYTHONPATH")},
        "PYTHONPATH": _dependency_folders(),
    }
    result = subprocess.run(
        [sys.executable, "-S", "-c", _SOURCE_TREE_CHECK],
        check=True,
        capture_output=True,
        text=True,
        cwd=tree,
        env=env,
    )
    report = json.loads(result.stdout)
    assert Path(report["module"]).resolve() == (tree / "optimizer" / "__init__.py").resolve()
    assert Path(report["folder"]).resolve() == (tree / "catalogs").resolve()
    assert report["package_loaded"] is False
    assert report["discrete"] >= 20_000 and report["networks"] > 0
    show = subprocess.run(
        [sys.executable, "-S", "-m", "optimizer", "catalog", "show"],
        capture_output=True,
        text=True,
        cwd=tree,
        env=env,
    )
    assert show.returncode == 0, show.stderr
    assert "discrete parts" in show.stdout


def test_missing_builtin_data_is_a_located_error(tmp_path: Path) -> None:
    """A source tree whose ``catalogs/`` is gone: a CatalogError naming the folder, exit 2."""
    tree = tmp_path / "checkout"
    shutil.copytree(
        ROOT / "optimizer", tree / "optimizer", ignore=shutil.ignore_patterns("__pycache__")
    )
    env = {
        **{k: v for k, v in os.environ.items() if k not in ("PYTHONHOME", "PYTHONPATH")},
        "PYTHONPATH": _dependency_folders(),
        "COLUMNS": "1000",  # a long temporary path is not cut across lines
    }
    show = subprocess.run(
        [sys.executable, "-S", "-m", "optimizer", "catalog", "show"],
        capture_output=True,
        text=True,
        cwd=tree,
        env=env,
    )
    assert show.returncode == 2
    assert "Traceback" not in show.stderr
    assert " ".join(show.stderr.split()) == (
        f"CatalogError: {tree / 'catalogs'}: built-in catalog data not found: no package "
        "optimizer.catalogs and no source tree folder with discrete_recipe.yaml; reinstall "
        "Quartet (pip install .)"
    )
