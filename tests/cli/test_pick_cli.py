"""``quartet pick``: the ranked table, the status, the diagnosis, the JSON document and exit codes.

Sources of the expected values:

* **handbook formula**: the worst-case CMRR of a difference amplifier (ideal amplifier, no
  source or REF impedance) is ``CMRR = (1 + G)/|Δk/k|``, ``k = R2/R1 ≈ R4/R3``, to first order
  in the resistor errors, with ``Δk/k = δR2 − δR1 − δR4 + δR3``; four independent errors of
  bound ``ε`` give the familiar ``(1 + G)/(4ε)`` (S. Franco, *Design with Operational Amplifiers
  and Analog Integrated Circuits*, difference-amplifier section; from memory). It follows from
  the textbook ideal transfer ``Vout = V2·R4/(R3 + R4)·(1 + R2/R1) − V1·R2/R1``:
  ``Acm = (k2 − k1)/(1 + k2)`` and ``Adm ≈ k``. :func:`handbook_cmrr_db` evaluates it with plain
  Python, independently of ``optimizer.analysis``.
* **how the error bounds add up** (the analysis' drift and ratio-tracking model, as the README
  states it): a part's error at the worst temperature is ``tolerance + tempco·|ΔT|max + D``
  with the drift growing with the square root of time, ``D = drift_1000h·√(life_h/1000 h)``
  (common practice, from memory); an element of a matched network deviates from its
  package's mean by at most half the ratio tolerance, half the tracking tempco and half the
  ratio drift, while the package mean (absolute tolerance, tempco, drift) is shared by all its
  elements — and cancels in ``Δk/k`` wherever the package's positions carry opposite signs.
* The part catalogs used for the checks (``tiny.csv``, ``tiny_networks.yaml`` below, and the
  house stock of ``examples/``) are invented demo data; the check values are computed from their
  figures with the formulas above, never taken from the program.
* House stock is read back here with the ``csv`` module and PyYAML, not with Quartet's loader.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re
from pathlib import Path
from typing import Any

import pytest
import yaml
from helpers import EXAMPLES, ideal_spec_text, run_cli
from rich.console import Console

from optimizer.catalog import builtin_catalog
from optimizer.cli import EXIT_BAD_INPUT, EXIT_NOT_MET, EXIT_OK, EXIT_TIME_LIMIT, main
from optimizer.design import Topology
from optimizer.report.pick import TABLE_COLUMNS
from optimizer.report.pickjson import SCHEMA

HOUSE_CSV = EXAMPLES / "house_stock.csv"
HOUSE_NETWORKS = EXAMPLES / "house_stock_networks.yaml"
JULIAN_YEAR_H = 365.25 * 24.0
NETWORK_TOPOLOGIES = {t.value for t in Topology if t is not Topology.DISCRETE}

#: The example specs (every YAML file in examples/ that is a spec, not a catalog).
EXAMPLE_SPECS = sorted(
    p.name for p in EXAMPLES.glob("*.yaml") if "quartet_spec:" in p.read_text(encoding="utf-8")
)
#: Examples whose search runs past ~20 s (adc_driver: about 70 s without a proven ranking at
#: the 60 s default when measured): a shorter limit, and the time-limit exit is accepted.
SLOW_EXAMPLES = {"adc_driver.yaml": 5.0, "adc_driver_stock.yaml": 5.0}
#: Examples that nothing in their catalogs can meet (the example's own comment says so).
INFEASIBLE_EXAMPLES = {"bridge_front_end_stock_infeasible.yaml"}


#: A gain-1 receiver over -40..125 °C and ten years, ideal amplifier, no source or REF
#: impedance: the handbook formula applies as it stands.
def gain_one_spec(floor: str, extra: str = "") -> str:
    """The gain-1 spec text at a CMRR floor of ``floor`` dB, ``extra`` (YAML lines) after it."""
    return (
        ideal_spec_text(
            "  gain: 1\n"
            "  gain_accuracy: 1 %\n"
            f"  cmrr_floor: {floor} dB\n"
            "  cmrr_basis: worst_case\n"
            "  temperature: {min: -40 °C, max: 125 °C}\n"
            "  operating_life: 10 years\n",
            title="gain 1, ten years, -40 to 125 C",
            label="ideal amplifier",
            differential_v=1.0,
        )
        + extra
    )


GAIN = 1.0
DELTA_T_MAX_K = 100.0  # 125 °C − 25 °C, the larger end of the range
LIFE_H = 10 * JULIAN_YEAR_H

#: Invented demo parts: one foil and one thin-film 10 kΩ chip, one 10 kΩ quad network.
TINY_CSV = """\
part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock,technology,drift
TD-10K-F,10k,0.01%,2ppm/K,0805,0.2W,150V,9,0,foil,0.005%
TD-10K-T,10k,0.1%,10ppm/K,0603,0.1W,75V,1,0,thin film,0.05%
"""
TINY_NETWORKS = """\
networks:
  - part_id: TN-Q10K
    values: [10k, 10k, 10k, 10k]
    tolerance: 0.1%
    ratio_tolerance: 0.01%
    tempco: 10ppm/K
    tracking: 1ppm/K
    power: 100mW
    max_voltage: 80V
    cost: 20
    stock: 0
    drift: 0.05%
    ratio_drift: 0.005%
"""
TINY_PREFERENCES = """\
preferences:
  catalogs: [tiny.csv, tiny_networks.yaml]
  builtin_catalogs: false
"""
#: The quad TN-Q10K as the handbook sees it: each element ±(ratio/2 + tracking/2·ΔT + D/2).
TN_Q10K_ELEMENT = 0.0001 / 2 + 1e-6 / 2 * DELTA_T_MAX_K + 0.00005 * math.sqrt(LIFE_H / 1000) / 2


# ---------------------------------------------------------------------------------------------
# helpers
# ---------------------------------------------------------------------------------------------


def _run(argv: list[str], width: int = 250) -> tuple[int, str, str]:
    return run_cli(argv, width)


def _run_json(argv: list[str]) -> tuple[int, dict[str, Any]]:
    code, out, err = _run([*argv, "--json"])
    assert err == ""
    document: dict[str, Any] = json.loads(out)
    return code, document


def _drift_root(life_h: float) -> float:
    """√(life_h/1000 h): the square-root-of-time growth of drift (common practice)."""
    return math.sqrt(life_h / 1000.0)


def handbook_cmrr_db(
    positions: list[dict[str, Any]], gain: float, delta_t_k: float, life_h: float
) -> float:
    """First-order worst-case CMRR ``(1 + G)/|Δk/k|max`` in dB (module docstring), from the
    part figures the JSON document lists for R1..R4."""
    signs = (-1, +1, +1, -1)  # Δk/k = δR2 − δR1 − δR4 + δR3
    root = _drift_root(life_h)
    bound = 0.0
    packages: dict[tuple[str, int], tuple[int, float]] = {}
    for sign, p in zip(signs, positions, strict=True):
        if p["kind"] == "discrete":
            bound += p["tolerance"] + p["tempco_per_k"] * delta_t_k + p["drift_1000h"] * root
            continue
        own = p["ratio_tolerance"] + p["tracking_tempco_per_k"] * delta_t_k
        bound += (own + p["ratio_drift_1000h"] * root) / 2.0
        shared = p["tolerance"] + p["tempco_per_k"] * delta_t_k + p["drift_1000h"] * root
        key = (p["part_id"], p["network_package"])
        total, _ = packages.get(key, (0, shared))
        packages[key] = (total + sign, shared)
    bound += sum(abs(total) * shared for total, shared in packages.values())
    return 20.0 * math.log10((1.0 + gain) / bound)


def _gain_one_spec(directory: Path, floor_db: float, *, tiny: bool) -> Path:
    extra = ""
    if tiny:
        (directory / "tiny.csv").write_text(TINY_CSV, encoding="utf-8")
        (directory / "tiny_networks.yaml").write_text(TINY_NETWORKS, encoding="utf-8")
        extra = TINY_PREFERENCES
    path = directory / f"gain_one_{floor_db:g}.yaml"
    path.write_text(gain_one_spec(f"{floor_db:g}", extra), encoding="utf-8")
    return path


def _stocked(cell: object) -> bool:
    text = str(cell).strip().lower()
    if text in ("yes", "true"):
        return True
    if text in ("", "no", "false"):
        return False
    return int(text) > 0


def _house_stock() -> tuple[set[str], set[str]]:
    """(stocked ids, every listed id) of the example house stock, read with csv and PyYAML."""
    stocked: set[str] = set()
    listed: set[str] = set()
    with HOUSE_CSV.open(encoding="utf-8", newline="") as handle:
        lines = [line for line in handle if not line.lstrip().startswith("#")]
    for row in csv.DictReader(lines):
        listed.add(row["part_id"])
        if _stocked(row["stock"]):
            stocked.add(row["part_id"])
    for network in yaml.safe_load(HOUSE_NETWORKS.read_text(encoding="utf-8"))["networks"]:
        listed.add(network["part_id"])
        if _stocked(network.get("stock", 0)):
            stocked.add(network["part_id"])
    return stocked, listed


def _shown_part_ids(document: dict[str, Any]) -> list[str]:
    return [
        p["part_id"] for d in document["ranked"] + document["other_kind"] for p in d["positions"]
    ]


# ---------------------------------------------------------------------------------------------
# every example
# ---------------------------------------------------------------------------------------------


def test_examples_are_found() -> None:
    """The parametrized run below covers the four scenarios, their stock variants and the mains
    monitor (nine specs when this was written)."""
    assert len(EXAMPLE_SPECS) >= 9
    assert "mains_monitor.yaml" in EXAMPLE_SPECS
    assert "house_stock_networks.yaml" not in EXAMPLE_SPECS  # a catalog, not a spec


@pytest.mark.parametrize("name", EXAMPLE_SPECS)
def test_pick_every_example(name: str) -> None:
    limit = SLOW_EXAMPLES.get(name, 60.0)
    code, out, err = _run(
        ["pick", str(EXAMPLES / name), "--top", "3", "--time-limit", f"{limit:g}"]
    )
    assert err == ""
    assert "Status:" in out
    if name in INFEASIBLE_EXAMPLES:
        assert code == EXIT_NOT_MET
        assert "nothing meets the spec" in out
        assert "Diagnosis: nothing in the catalogs meets the spec" in out
        return
    expected = {EXIT_OK, EXIT_TIME_LIMIT} if name in SLOW_EXAMPLES else {EXIT_OK}
    assert code in expected
    header = next((line for line in out.splitlines() if "cost (rel.)" in line), "")
    if code == EXIT_OK:
        assert "proven optimal" in out
    if header:
        for column in TABLE_COLUMNS:
            assert column in header
        assert "The best design in full:" in out
        assert "Verdict: meets the spec" in out
    else:
        assert code == EXIT_TIME_LIMIT
        assert "no design found" in out
    if name == "mains_monitor.yaml":
        assert "SAFETY CAUTIONS" in out
        assert "licensed" in out


# ---------------------------------------------------------------------------------------------
# only a matched network meets the floor
# ---------------------------------------------------------------------------------------------


def test_only_a_network_meets_a_long_life_floor(tmp_path: Path) -> None:
    """Gain 1 over -40..125 °C and ten years with a 59 dB floor. Why only a network can do it:
    four discrete parts drift and move with temperature independently, so each brings its full
    error; in a matched network the shared part of the error (absolute tolerance, tempco and
    drift) cancels in the ratio and only half the ratio tolerance, tracking tempco and ratio
    drift remains per element (the analysis' drift/ratio-tracking model). Even the best
    discrete figures of the built-in catalog, taken from different parts at once, stay below
    the floor by the handbook formula."""
    floor = 59.0
    discrete = builtin_catalog().discrete
    best_error = (
        float(discrete["tolerance"].min())
        + float(discrete["tempco_per_k"].min()) * DELTA_T_MAX_K
        + float(discrete["drift_1000h"].min()) * _drift_root(LIFE_H)
    )
    best_discrete_db = 20.0 * math.log10((1.0 + GAIN) / (4.0 * best_error))
    assert best_discrete_db < floor - 1.0  # the spec is what this test says it is

    spec = _gain_one_spec(tmp_path, floor, tiny=False)
    code, document = _run_json(["pick", str(spec), "--top", "3"])
    assert code == EXIT_OK
    assert document["search"]["status"] == "proven_optimal"
    assert document["ranked"], "a network design meets the floor"
    assert document["ranked"][0]["topology"] in NETWORK_TOPOLOGIES
    for design in document["ranked"]:
        assert design["topology"] in NETWORK_TOPOLOGIES
        assert design["worst_case"]["cmrr_db"] >= floor
        expected = handbook_cmrr_db(design["positions"], GAIN, DELTA_T_MAX_K, LIFE_H)
        assert design["worst_case"]["cmrr_db"] == pytest.approx(expected, abs=0.05)
    # No discrete design meets it, so there is no best-of-the-other-kind either.
    assert document["other_kind"] == []


# ---------------------------------------------------------------------------------------------
# stock only
# ---------------------------------------------------------------------------------------------


def test_stock_only_uses_house_stock(tmp_path: Path) -> None:
    """Gain 1, 0..70 °C, 66 dB, with the example house stock next to the built-in catalogs
    (none of whose parts is stocked): with --stock-only every part of every shown design is
    stocked; without it the cheaper-per-design built-in parts appear too."""
    text = (
        gain_one_spec("66")
        .replace("temperature: {min: -40 °C, max: 125 °C}", "temperature: {min: 0 °C, max: 70 °C}")
        .replace("  operating_life: 10 years\n", "")
    )
    spec = tmp_path / "house.yaml"
    spec.write_text(text, encoding="utf-8")
    catalogs = ["--catalog", str(HOUSE_CSV), "--catalog", str(HOUSE_NETWORKS)]
    stocked, listed = _house_stock()
    assert stocked and listed - stocked  # the stockroom lists some parts it does not hold

    code, document = _run_json(["pick", str(spec), "--top", "3", "--stock-only", *catalogs])
    assert code == EXIT_OK
    assert document["search"]["stock_policy"] == "only"
    assert len(document["ranked"]) == 3
    ids = _shown_part_ids(document)
    assert ids and all(part_id in stocked for part_id in ids), ids
    for design in document["ranked"]:
        # Handbook check at 45 K (70 °C − 25 °C), no operating life.
        expected = handbook_cmrr_db(design["positions"], GAIN, 45.0, 0.0)
        assert design["worst_case"]["cmrr_db"] == pytest.approx(expected, abs=0.05)
        assert design["worst_case"]["cmrr_db"] >= 66.0

    code, free = _run_json(["pick", str(spec), "--top", "3", *catalogs])
    assert code == EXIT_OK
    assert any(part_id not in stocked for part_id in _shown_part_ids(free))


# ---------------------------------------------------------------------------------------------
# infeasible: the diagnosis
# ---------------------------------------------------------------------------------------------


def test_infeasible_floor_is_diagnosed(tmp_path: Path) -> None:
    """A 66 dB floor with a catalog whose best is the quad TN-Q10K: the handbook puts its
    worst-case CMRR at (1 + G)/(4·ε_element) ≈ 63.5 dB, so nothing meets the floor; the
    diagnosis names the floor and the CMRR reachable, and the operating life that would let
    the quad reach 66 dB (the same formula solved for the drift term)."""
    spec = _gain_one_spec(tmp_path, 66.0, tiny=True)
    code, out, err = _run(["pick", str(spec), "--top", "3"])
    assert code == EXIT_NOT_MET
    assert err == ""
    assert "nothing meets the spec" in out
    assert "Diagnosis:" in out
    flat = " ".join(out.split())
    assert "66 dB was asked" in flat
    found = re.search(r"worst-case CMRR (\d+(?:\.\d+)?) dB is reachable", flat)
    assert found is not None, flat
    expected_db = 20.0 * math.log10((1.0 + GAIN) / (4.0 * TN_Q10K_ELEMENT))
    assert float(found.group(1)) == pytest.approx(expected_db, abs=0.1)
    assert "TN-Q10K" in flat

    # Life at which the quad just reaches 66 dB: 4·(ratio/2 + tracking/2·ΔT + D(h)/2) = 2/CMRR.
    per_element = (1.0 + GAIN) / 10.0 ** (66.0 / 20.0) / 4.0
    root = (per_element - 0.0001 / 2 - 1e-6 / 2 * DELTA_T_MAX_K) / (0.00005 / 2)
    life_years = root**2 * 1000.0 / JULIAN_YEAR_H
    life = re.search(r"operating_life: (\d+(?:\.\d+)?) years is reachable", flat)
    assert life is not None, flat
    assert float(life.group(1)) <= life_years * 1.001
    assert float(life.group(1)) >= life_years * 0.95

    code, document = _run_json(["pick", str(spec), "--top", "3"])
    assert code == EXIT_NOT_MET
    assert document["search"]["status"] == "infeasible"
    assert document["ranked"] == []
    diagnosis = document["diagnosis"]
    assert diagnosis is not None
    assert "cmrr_floor" in diagnosis["binding"]
    assert " ".join(diagnosis["text"].split()) in flat


# ---------------------------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------------------------

TOP_KEYS = [
    "schema",
    "quartet_version",
    "spec",
    "search",
    "ranked",
    "family_members",
    "other_kind",
    "kind_trade",
    "diagnosis",
    "safety_cautions",
    "warnings",
    "timing",
    "non_finite",
]
SEARCH_KEYS = [
    "status",
    "proven_optimal",
    "objective",
    "stock_policy",
    "designs_asked",
    "designs_found",
    "time_limit_s",
    "gap",
    "rejected_by_exact_check",
    "solves",
    "model_size",
]
DESIGN_KEYS = [
    "rank",
    "kind_label",
    "topology",
    "placement_count",
    "positions",
    "cost",
    "meets_spec",
    "worst_case",
    "statistics",
    "output_noise_v_rms",
    "tightest",
    "family_key",
    "family_size",
    "in_stock",
]
POSITION_KEYS = [
    "position",
    "resistance_ohm",
    "part_id",
    "kind",
    "network_element",
    "network_package",
    "tolerance",
    "tempco_per_k",
    "drift_1000h",
    "ratio_tolerance",
    "tracking_tempco_per_k",
    "ratio_drift_1000h",
    "power_w",
    "max_voltage_v",
]


def test_json_document_keys_and_determinism(tmp_path: Path) -> None:
    """A 50 dB floor with the tiny catalog: the quad (63.5 dB by the handbook) ranks first
    at cost 20, four foil chips (56.3 dB) are the best discrete design; --top 1 leaves them
    to ``other_kind``. Two runs give the same document once ``timing`` is dropped."""
    spec = _gain_one_spec(tmp_path, 50.0, tiny=True)
    argv = ["pick", str(spec), "--top", "1", "--objective", "lowest_cost"]
    code, first = _run_json(argv)
    assert code == EXIT_OK
    assert list(first) == TOP_KEYS
    assert first["schema"] == SCHEMA == "quartet-pick/1"
    assert list(first["search"]) == SEARCH_KEYS
    assert first["search"]["proven_optimal"] is True
    assert first["search"]["objective"] == "lowest_cost"
    assert first["search"]["designs_asked"] == 1
    assert first["diagnosis"] is None
    assert first["safety_cautions"] == []
    assert first["non_finite"] == []
    assert set(first["timing"]) == {"build_s", "solve_s", "verify_s", "statistics_s"}

    (winner,) = first["ranked"]
    (other,) = first["other_kind"]
    for design in (winner, other):
        assert list(design) == DESIGN_KEYS
        assert [p["position"] for p in design["positions"]] == ["R1", "R2", "R3", "R4"]
        for position in design["positions"]:
            assert list(position) == POSITION_KEYS
        assert set(design["cost"]) == {"parts", "placements", "lines", "stock_penalty", "total"}
        assert design["meets_spec"] is True
        # The Monte Carlo runs for every shown design, with the spec's default builds.
        assert design["statistics"]["builds"] == 100_000
        assert design["statistics"]["yield_target"] == pytest.approx(0.999)
        expected = handbook_cmrr_db(design["positions"], GAIN, DELTA_T_MAX_K, LIFE_H)
        assert design["worst_case"]["cmrr_db"] == pytest.approx(expected, abs=0.05)
        assert design["tightest"]["name"] == "cmrr_worst_case"
        assert design["tightest"]["margin"] == pytest.approx(design["worst_case"]["cmrr_db"] - 50.0)
    assert winner["rank"] == 1 and winner["topology"] == "quad_network"
    assert [p["network_element"] for p in winner["positions"]] == [1, 2, 3, 4]
    assert winner["cost"]["total"] == pytest.approx(20.0)
    assert other["rank"] is None and other["topology"] == "four_discrete"
    assert other["kind_label"] == "best four-discrete design"
    assert {p["part_id"] for p in other["positions"]} == {"TD-10K-F"}
    assert other["cost"]["total"] == pytest.approx(36.0)

    code, second = _run_json(argv)
    assert code == EXIT_OK
    del first["timing"], second["timing"]
    assert first == second


# ---------------------------------------------------------------------------------------------
# bad input
# ---------------------------------------------------------------------------------------------


def test_unknown_catalog_path(tmp_path: Path) -> None:
    spec = _gain_one_spec(tmp_path, 50.0, tiny=True)
    missing = tmp_path / "nowhere" / "parts.csv"
    code, out, err = _run(["pick", str(spec), "--catalog", str(missing)])
    assert code == EXIT_BAD_INPUT
    assert out == ""
    assert "CatalogError" in err and str(missing) in err and "no such file" in err


def test_bad_spec_is_located(tmp_path: Path) -> None:
    spec = _gain_one_spec(tmp_path, 50.0, tiny=True)
    text = spec.read_text(encoding="utf-8").replace("  gain: 1\n", "  gain: banana\n")
    spec.write_text(text, encoding="utf-8")
    line = text.splitlines().index("  gain: banana") + 1
    code, out, err = _run(["pick", str(spec)])
    assert code == EXIT_BAD_INPUT
    assert out == ""
    flat = " ".join(err.split())
    assert f"{spec}:{line}:" in flat and "requirements.gain" in flat and "banana" in flat


@pytest.mark.parametrize(
    "options",
    [["--time-limit", "0"], ["--time-limit", "soon"], ["--top", "0"], ["--objective", "cheap"]],
)
def test_bad_options(tmp_path: Path, options: list[str]) -> None:
    spec = _gain_one_spec(tmp_path, 50.0, tiny=True)
    code, out, err = _run(["pick", str(spec), *options])
    assert code == EXIT_BAD_INPUT
    assert out == ""
    assert "error: quartet pick: argument" in err


def test_missing_spec_file(tmp_path: Path) -> None:
    code, _, err = _run(["pick", str(tmp_path / "absent.yaml")])
    assert code == EXIT_BAD_INPUT
    assert "SpecError" in err and "absent.yaml" in err and "not found" in err


def test_time_limit_with_a_design_found_exits_3(monkeypatch: pytest.MonkeyPatch) -> None:
    """Exit code 3 (README: the time limit ended the search with a best design found): the
    clock is made to run out after the first solves, deterministically, by letting
    ``Clock.remaining`` report time left for its first calls only."""
    from optimizer.solve import streams

    calls = {"n": 0}
    real = streams.Clock.remaining

    def running_out(self: streams.Clock) -> float:
        calls["n"] += 1
        return real(self) if calls["n"] <= 6 else -1.0

    monkeypatch.setattr(streams.Clock, "remaining", running_out)
    out = io.StringIO()
    err = io.StringIO()
    code = main(
        ["pick", str(EXAMPLES / "motor_shunt.yaml"), "--top", "5"],
        console=Console(file=out, width=200),
        err=Console(file=err, width=200),
    )
    text = out.getvalue()
    assert code == EXIT_TIME_LIMIT, text + err.getvalue()
    assert "Traceback" not in text + err.getvalue()
    assert "time limit" in text.lower()
