"""``quartet check``: a design the user brings, verified against a spec.

Sources of the expected values:

* **handbook formula**: the worst-case CMRR of a difference amplifier built from four resistors
  of tolerance ``t`` (ideal amplifier, one temperature, no ageing, no source impedance) is
  ``CMRR ≈ (1 + G)/(4t)`` (first order in ``t``); e.g. S. Franco, *Design with Operational
  Amplifiers and Analog Integrated Circuits*, the difference-amplifier section (from memory).
* **textbook ideal op-amp transfer**: ``Vout = V2·R4/(R3 + R4)·(1 + R2/R1) − V1·R2/R1``
  (superposition), so ``Acm = R4/(R3 + R4)·(1 + R2/R1) − R2/R1`` and
  ``Adm = (R4/(R3 + R4)·(1 + R2/R1) + R2/R1)/2``; its 16 tolerance corners, enumerated here
  with plain Python, give the exact worst case independently of ``optimizer.analysis``.
* The JSON's figures are compared with :func:`optimizer.verify.verify` run directly (the CLI
  must report what the library computes, not a copy of it).
"""

from __future__ import annotations

import io
import itertools
import json
import math
import re
from pathlib import Path

import pytest
from helpers import EXAMPLES, ideal_spec_text, run_cli
from rich.console import Console

from optimizer.analysis.safety import safety_cautions
from optimizer.catalog import builtin_catalog
from optimizer.errors import DesignError
from optimizer.report.check import render_check
from optimizer.report.checkjson import SCHEMA, check_json_text, check_to_json
from optimizer.specfile import load_spec
from optimizer.userdesign import (
    build_user_design,
    design_from_network,
    design_from_parts,
    design_from_values,
    parse_part_text,
)
from optimizer.verify import verify

INDUSTRIAL = str(EXAMPLES / "industrial_input.yaml")
MAINS = str(EXAMPLES / "mains_monitor.yaml")
FAST = ["--samples", "2000"]

#: A spec where the handbook formula holds: gain 10, ideal amplifier, one temperature (25 °C),
#: no operating life, no source or REF impedance; CMRR floor 60 dB on the worst-case basis.
HANDBOOK_SPEC = ideal_spec_text(
    "  gain: 10\n"
    "  gain_accuracy: 5 %\n"
    "  cmrr_floor: 60 dB\n"
    "  cmrr_basis: worst_case\n"
    "  temperature: {min: 25 °C, max: 25 °C}\n",
    title="handbook check: gain 10, ideal amplifier, one temperature",
    label="ideal amplifier",
)

SECTION_TITLES = (
    "The design",
    "Requirements",
    "Worst case (every bound at once)",
    "Error budget (each source alone, worst case)",
    "Statistics (Monte Carlo)",
    "Other checks in detail",
    "Verdict: ",
)


def _run(argv: list[str], width: int = 1000) -> tuple[int, str, str]:
    return run_cli(argv, width)


def _json(argv: list[str], width: int = 1000) -> tuple[int, dict[str, object]]:
    code, out, err = _run([*argv, "--json"], width)
    assert err == ""
    return code, json.loads(out)


@pytest.fixture()
def handbook_spec(tmp_path: Path) -> str:
    path = tmp_path / "handbook.yaml"
    path.write_text(HANDBOOK_SPEC, encoding="utf-8")
    return str(path)


def _handbook_cmrr_db(gain: float, tolerance: float) -> float:
    """Handbook formula: worst-case CMRR ≈ (1 + G)/(4t), in dB."""
    return 20.0 * math.log10((1.0 + gain) / (4.0 * tolerance))


def _textbook_corners(r: tuple[float, float, float, float], t: float) -> tuple[float, float, float]:
    """Worst CMRR (dB) and the gain range over the 16 tolerance corners of the textbook ideal
    op-amp transfer (module docstring)."""
    worst = 0.0
    gains = []
    for signs in itertools.product((-1.0, 1.0), repeat=4):
        r1, r2, r3, r4 = (value * (1.0 + s * t) for value, s in zip(r, signs, strict=True))
        k2 = r4 / (r3 + r4) * (1.0 + r2 / r1)
        k1 = -r2 / r1
        acm, adm = k1 + k2, (k2 - k1) / 2.0
        worst = max(worst, abs(acm / adm))
        gains.append(adm)
    return -20.0 * math.log10(worst), min(gains), max(gains)


# ---------------------------------------------------------------------------------------------
# Passing and failing designs against independent figures
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("tolerance", "t", "expected_code"),
    [("0.1%", 0.001, 0), ("1%", 0.01, 1)],  # 68.8 dB passes a 60 dB floor; 48.8 dB fails it
)
def test_handbook_worst_case(
    handbook_spec: str, tolerance: str, t: float, expected_code: int
) -> None:
    argv = ["check", handbook_spec, "--r1", "1k", "--r2", "10k", "--r3", "1k", "--r4", "10k",
            "--tolerance", tolerance, "--tempco", "0ppm/K", *FAST]  # fmt: skip
    code, doc = _json(argv)
    assert code == expected_code
    worst = doc["worst_case"]
    assert isinstance(worst, dict)
    # handbook formula (first order in t: agrees to well under 0.01 dB at t <= 1 %)
    assert worst["cmrr_db"] == pytest.approx(_handbook_cmrr_db(10.0, t), abs=0.01)
    # textbook ideal op-amp transfer, 16 corners: exact
    cmrr, gain_min, gain_max = _textbook_corners((1e3, 1e4, 1e3, 1e4), t)
    assert worst["cmrr_db"] == pytest.approx(cmrr, rel=1e-9)
    assert worst["gain_min"] == pytest.approx(gain_min, rel=1e-9)
    assert worst["gain_max"] == pytest.approx(gain_max, rel=1e-9)
    assert worst["gain_error_min"] == pytest.approx(gain_min / 10.0 - 1.0, abs=1e-12)
    assert worst["gain_error_max"] == pytest.approx(gain_max / 10.0 - 1.0, abs=1e-12)
    verdict = doc["verdict"]
    assert isinstance(verdict, dict)
    assert verdict["meets_spec"] is (expected_code == 0)
    assert verdict["failed"] == ([] if expected_code == 0 else ["cmrr_worst_case"])


@pytest.mark.parametrize(("tolerance", "expected_code"), [("0.1%", 0), ("1%", 1)])
def test_report_has_every_section(handbook_spec: str, tolerance: str, expected_code: int) -> None:
    argv = ["check", handbook_spec, "--r1", "1k", "--r2", "10k", "--r3", "1k", "--r4", "10k",
            "--tolerance", tolerance, "--tempco", "0ppm/K", *FAST]  # fmt: skip
    code, out, err = _run(argv)
    assert code == expected_code
    assert err == ""
    for title in SECTION_TITLES:
        assert title in out, title
    lines = out.splitlines()
    verdicts = [line for line in lines if line.startswith("Verdict: ")]
    assert len(verdicts) == 1
    cmrr_row = next(line for line in lines if "CMRR, worst case" in line)
    if expected_code == 0:
        assert "meets the spec" in verdicts[0]
        assert "NOT MET" not in out
        assert re.search(r"68\.79 dB .* 60\.00 dB .* \+8\.79 dB .* met", cmrr_row)
    else:
        assert "does NOT meet the spec; not met: CMRR, worst case" in verdicts[0]
        assert re.search(r"48\.79 dB .* 60\.00 dB .* -11\.21 dB .* NOT MET", cmrr_row)
    # the design as given, in engineering notation, with the assumed ratings said so
    assert re.search(r"R1 .* 1 kΩ .* ±" + re.escape(tolerance.replace("%", " %")), out)
    assert "user-R4" in out
    assert "100 mW each at 70 °C, assumed (not given; set it with --power)" in out
    assert "75 V assumed (not given; set it with --max-voltage)" in out
    assert "SAFETY" not in out  # ±1 V common mode: no caution


def test_industrial_example_passes_and_json_matches_verify() -> None:
    values = ["--r1", "100k", "--r2", "10k", "--r3", "100k", "--r4", "10k"]
    options = ["--tolerance", "0.01%", "--tempco", "2ppm/K"]
    code, doc = _json(["check", INDUSTRIAL, *values, *options, *FAST])
    assert code == 0
    spec = load_spec(INDUSTRIAL)
    design = design_from_values("100k", "10k", "100k", "10k", tolerance="0.01%", tempco="2ppm/K")
    expected = verify(design, spec, statistics=True, samples=2000)
    assert expected.passed
    assert expected.monte_carlo is not None
    worst = doc["worst_case"]
    stats = doc["statistics"]
    assert isinstance(worst, dict) and isinstance(stats, dict)
    assert doc["schema"] == SCHEMA == "quartet-check/1"
    assert worst["cmrr_db"] == expected.worst_case.cmrr_db
    assert worst["gain_error_min"] == expected.worst_case.gain_error_min
    assert worst["gain_error_max"] == expected.worst_case.gain_error_max
    assert stats["cmrr_at_yield_db"] == expected.monte_carlo.cmrr_at_yield_db
    assert stats["yield"] == expected.monte_carlo.yield_fraction
    assert stats["builds"] == 2000
    assert [p["value"] for p in stats["cmrr_percentiles_db"]] == [
        v for _, v in expected.monte_carlo.cmrr_percentiles_db
    ]
    budget = doc["error_budget"]
    assert isinstance(budget, list)
    assert [b["contributor"] for b in budget] == [b.name for b in expected.worst_case.budget]
    assert sum(b["cmrr_share"] for b in budget) == pytest.approx(1.0)
    checks = doc["checks"]
    assert isinstance(checks, list)
    assert [c["name"] for c in checks] == [c.name for c in expected.checks]
    assert doc["safety_cautions"] == []
    requirements = doc["requirements"]
    assert isinstance(requirements, list)
    assert [r["name"] for r in requirements] == [m.name for m in expected.requirements]
    assert all(r["met"] for r in requirements)


def test_yield_basis_spec_judges_the_cmrr_by_the_monte_carlo() -> None:
    path = str(EXAMPLES / "adc_driver.yaml")
    spec = load_spec(path)
    assert spec.requirements.cmrr_basis.value == "yield"
    values = ("10k", "10k", "10k", "10k")
    design = design_from_values(*values, tolerance="0.1%", tempco="10ppm/K")
    expected = verify(design, spec, statistics=True, samples=2000)
    assert expected.monte_carlo is not None
    argv = ["check", path, "--tolerance", "0.1%", "--tempco", "10ppm/K", *FAST]
    for position, value in zip(("--r1", "--r2", "--r3", "--r4"), values, strict=True):
        argv += [position, value]
    code, doc = _json(argv)
    assert code == (0 if expected.passed else 1)
    first = doc["requirements"][0]  # type: ignore[index]
    assert first["name"] == "yield"
    assert first["value"] == doc["statistics"]["yield"] == expected.monte_carlo.yield_fraction  # type: ignore[index]
    assert first["limit"] == spec.requirements.yield_target


def test_json_is_deterministic_and_survives_a_narrow_console() -> None:
    argv = ["check", INDUSTRIAL, "--r1", "100k", "--r2", "10k", "--r3", "100k", "--r4", "10k",
            "--tolerance", "0.01%", "--tempco", "2ppm/K", "--json", *FAST]  # fmt: skip
    first = _run(argv, width=30)
    second = _run(argv, width=30)
    assert first == second
    doc = json.loads(first[1])  # long lines were not wrapped by the console
    assert doc["design"]["assumptions"][0].startswith("power rating of R1, R2, R3, R4")
    assert "[" not in first[1].splitlines()[0]  # no Rich markup or decoration


def test_json_non_finite_figures_are_null_and_listed(handbook_spec: str) -> None:
    argv = ["check", handbook_spec, "--r1", "1k", "--r2", "10k", "--r3", "1k", "--r4", "10k",
            "--tolerance", "0.1%", "--tempco", "0ppm/K", *FAST]  # fmt: skip
    _, doc = _json(argv)
    # ideal amplifier and exact nominal ratio: the nominal CMRR is infinite
    assert doc["worst_case"]["nominal_cmrr_db"] is None  # type: ignore[index]
    listed = {entry["key"]: entry["was"] for entry in doc["non_finite"]}  # type: ignore[attr-defined]
    assert listed["worst_case.nominal_cmrr_db"] == "inf"
    offset = next(i for i, c in enumerate(doc["checks"]) if c["name"] == "output_offset")  # type: ignore[arg-type]
    assert listed[f"checks[{offset}].limit"] == "nan"
    assert doc["checks"][offset]["has_requirement"] is False  # type: ignore[index]


def test_seed_option_reaches_the_monte_carlo() -> None:
    base = ["check", INDUSTRIAL, "--r1", "100k", "--r2", "10k", "--r3", "100k", "--r4", "10k",
            "--tolerance", "0.05%", "--tempco", "10ppm/K", *FAST]  # fmt: skip
    _, one = _json([*base, "--seed", "7"])
    _, two = _json([*base, "--seed", "8"])
    assert one["statistics"]["seed"] == 7  # type: ignore[index]
    assert two["statistics"]["seed"] == 8  # type: ignore[index]
    assert one["statistics"]["cmrr_at_yield_db"] != two["statistics"]["cmrr_at_yield_db"]  # type: ignore[index]
    assert one["worst_case"] == two["worst_case"]


# ---------------------------------------------------------------------------------------------
# Catalog ids and networks
# ---------------------------------------------------------------------------------------------


def test_parts_from_the_builtin_catalog() -> None:
    ids = ["Q-0603-T10-25-100K", "Q-0603-T10-25-10K0", "Q-0603-T10-25-100K", "Q-0603-T10-25-10K0"]
    spec = load_spec(INDUSTRIAL)
    catalog = builtin_catalog()
    expected = verify(design_from_parts(ids, catalog), spec, statistics=True, samples=2000)
    code, doc = _json(["check", INDUSTRIAL, "--parts", *ids, *FAST])
    assert code == (0 if expected.passed else 1)
    assert doc["worst_case"]["cmrr_db"] == expected.worst_case.cmrr_db  # type: ignore[index]
    positions = doc["design"]["positions"]  # type: ignore[index]
    assert [p["part_id"] for p in positions] == ids
    part = catalog.find(ids[0])
    assert positions[0]["tolerance"] == part.tolerance  # type: ignore[union-attr]
    assert positions[0]["drift_1000h"] == part.drift_1000h
    assert doc["design"]["assumptions"] == []  # type: ignore[index]
    code, out, _ = _run(["check", INDUSTRIAL, "--parts", *ids, *FAST])
    assert code == (0 if expected.passed else 1)
    assert "drift over the operating life" in out
    assert "Q-0603-T10-25-100K" in out


def test_extra_catalog_and_the_spec_catalogs() -> None:
    ids = ["SR-1001", "SR-1001", "SR-1001", "SR-1001"]  # demo house-stock ids (gain 1)
    house = str(EXAMPLES / "house_stock.csv")
    code, out, err = _run(["check", INDUSTRIAL, "--parts", *ids, *FAST])
    assert code == 2 and out == ""
    assert err.startswith("DesignError: --parts R1: unknown part id 'SR-1001'")
    code, doc = _json(["check", INDUSTRIAL, "--parts", *ids, "--catalog", house, *FAST])
    assert code == 1  # gain 1 where the spec asks for 0.1
    assert doc["design"]["positions"][0]["tolerance"] == pytest.approx(0.01)  # type: ignore[index]
    # the stock spec already lists house_stock.csv: naming it again is not a duplicate
    stock_spec = str(EXAMPLES / "industrial_input_stock.yaml")
    code, _ = _json(["check", stock_spec, "--parts", *ids, "--catalog", house, *FAST])
    assert code == 1


def test_quad_network_matches_the_handbook_formula(handbook_spec: str) -> None:
    """A quad's elements each sit within ±ratio_tolerance/2 of the package (the catalog's
    network model), so at one temperature without ageing the handbook formula applies with
    t = ratio_tolerance/2; the shared absolute error cancels in every ratio."""
    network = builtin_catalog().find("QN4-G10-1K-250")
    assert network.values_ohm == (1e3, 1e4, 1e3, 1e4)  # type: ignore[union-attr]
    t = network.ratio_tolerance / 2.0  # type: ignore[union-attr]
    code, doc = _json(["check", handbook_spec, "--network", "QN4-G10-1K-250:1,2,3,4", *FAST])
    assert code == 0
    assert doc["worst_case"]["cmrr_db"] == pytest.approx(_handbook_cmrr_db(10.0, t), abs=0.01)  # type: ignore[index]
    cmrr, _, _ = _textbook_corners((1e3, 1e4, 1e3, 1e4), t)
    assert doc["worst_case"]["cmrr_db"] == pytest.approx(cmrr, rel=1e-6)  # type: ignore[index]
    design = doc["design"]
    assert design["topology"] == "quad_network"  # type: ignore[index]
    assert [p["network_element"] for p in design["positions"]] == [1, 2, 3, 4]  # type: ignore[index]
    assert {p["network_package"] for p in design["positions"]} == {1}  # type: ignore[index]


def test_quad_network_with_a_permuted_mapping_on_the_industrial_example() -> None:
    # industrial gain is 0.1: R1 = 10k (element 2), R2 = 1k (element 1), R3 = 10k, R4 = 1k
    code, out, err = _run(["check", INDUSTRIAL, "--network", "QN4-G10-1K-250:2,1,4,3", *FAST])
    assert err == ""
    spec = load_spec(INDUSTRIAL)
    design = design_from_network("QN4-G10-1K-250", (2, 1, 4, 3), builtin_catalog())
    assert design.resistances_ohm == (1e4, 1e3, 1e4, 1e3)
    expected = verify(design, spec, statistics=True, samples=2000)
    assert code == (0 if expected.passed else 1)
    assert "QN4-G10-1K-250 element 2 (package 1)" in out
    assert f"{expected.worst_case.cmrr_db:.2f} dB" in out


def test_two_dual_networks_are_two_packages(handbook_spec: str) -> None:
    argv = ["check", handbook_spec, "--network", "QN2-G10-1K-250:1,2,-,-",
            "--network", "QN2-G10-1K-250:-,-,1,2", *FAST]  # fmt: skip
    code, doc = _json(argv)
    assert code == 0
    design = doc["design"]
    assert design["topology"] == "divider_pairs"  # type: ignore[index]
    assert [p["network_package"] for p in design["positions"]] == [1, 1, 2, 2]  # type: ignore[index]


def test_mixing_values_parts_and_networks(handbook_spec: str) -> None:
    argv = ["check", handbook_spec, "--network", "QN2-EQ-1K-250:1,-,2,-", "--parts", "-",
            "Q-0603-T10-25-10K0", "-", "-", "--r4", "10k/0.1%/25ppm/K", *FAST]  # fmt: skip
    code, doc = _json(argv)
    assert code in (0, 1)
    given = [p["given_as"] for p in doc["design"]["positions"]]  # type: ignore[index]
    assert given == [
        "--network QN2-EQ-1K-250:1,-,2,- (element 1)",
        "--parts Q-0603-T10-25-10K0",
        "--network QN2-EQ-1K-250:1,-,2,- (element 2)",
        "--r4 10k/0.1%/25ppm/K",
    ]
    assert doc["design"]["topology"] == "pair_plus_discrete"  # type: ignore[index]


# ---------------------------------------------------------------------------------------------
# Safety cautions
# ---------------------------------------------------------------------------------------------


def test_mains_example_shows_the_safety_cautions() -> None:
    spec = load_spec(MAINS)
    cautions = safety_cautions(spec)
    assert cautions  # 185 V peak is far above 30 V rms
    argv = ["check", MAINS, "--r1", "1M", "--r2", "7.5k", "--r3", "1M", "--r4", "7.5k",
            "--tolerance", "0.1%", "--tempco", "25ppm/K", "--max-voltage", "200V",
            "--power", "0.25W", *FAST]  # fmt: skip
    code, out, err = _run(argv)
    assert code in (0, 1)
    assert err == ""
    assert "SAFETY CAUTIONS" in out
    flat = " ".join(out.split())
    for caution in cautions:
        assert " ".join(caution.split()) in flat
    assert "hazardous voltages: read the safety cautions" in flat
    _, doc = _json(argv)
    assert doc["safety_cautions"] == list(cautions)


def test_render_and_json_without_the_cli() -> None:
    spec = load_spec(MAINS)
    user = build_user_design(
        values=("1M", "7.5k", "1M", "7.5k"), tolerance="0.1%", tempco="25ppm/K"
    )
    result = verify(user.design, spec, statistics=False)
    document = check_to_json(user.design, spec, result, assumptions=user.assumptions)
    assert document["statistics"] is None
    assert json.loads(check_json_text(document)) == document
    console = Console(file=io.StringIO(), width=200, color_system=None)
    console.print(render_check(user.design, spec, result))
    text = console.file.getvalue()  # type: ignore[attr-defined]
    assert "Statistics: not run." in text
    assert "SAFETY CAUTIONS" in text


# ---------------------------------------------------------------------------------------------
# Bad input: exit 2, located message, no traceback
# ---------------------------------------------------------------------------------------------

R_OK = ["--r2", "10k", "--r3", "100k", "--r4", "10k"]


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (
            ["--r1", "10q", *R_OK, "--tolerance", "0.1%", "--tempco", "25ppm/K"],
            "DesignError: --r1 '10q': cannot read '10q' (unknown suffix 'q'): expected a "
            "resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            ["--r1", "100k", *R_OK, "--tempco", "25ppm/K"],
            "DesignError: --r1 '100k': no tolerance given; give one for every value with "
            "--tolerance (e.g. --tolerance 0.1%) or for this part as 100k/0.1%",
        ),
        (
            ["--r1", "100k/0.1%", *R_OK, "--tolerance", "0.1%"],
            "DesignError: --r1 '100k/0.1%': no tempco given; give one for every value with "
            "--tempco (e.g. --tempco 25ppm/K) or for this part as 100k/25ppm/K",
        ),
        (
            ["--r1", "100k/0.1%/0.2%", *R_OK, "--tolerance", "0.1%", "--tempco", "1ppm"],
            "DesignError: --r1 '100k/0.1%/0.2%': two tolerances given; expected at most one",
        ),
        (
            ["--r1", "100k/fast", *R_OK, "--tolerance", "0.1%", "--tempco", "1ppm"],
            "DesignError: --r1 '100k/fast': cannot tell what 'fast' is; after the value write "
            "a tolerance with % (0.1%) or a tempco with ppm/K (25ppm/K)",
        ),
        (
            ["--r1", "100k", *R_OK, "--tolerance", "0.1%", "--tempco", "25"],
            "DesignError: --tempco '25': cannot read '25' (larger than 10,000 ppm/K; did you "
            "mean ppm/K?): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        ),
        (
            [*R_OK, "--tolerance", "0.1%", "--tempco", "25ppm/K"],
            "DesignError: R1 not given (given: R2, R3, R4); give each of R1, R2, R3, R4 with "
            "--r1 .. --r4 VALUE, a part id in --parts, or an element of --network ID:E1,E2,E3,E4",
        ),
        (
            ["--network", "QN4-G10-1K-250:1,2,3,5"],
            "DesignError: --network 'QN4-G10-1K-250:1,2,3,5': R4: element 5 does not exist; "
            "network QN4-G10-1K-250 has elements 1 to 4",
        ),
        (
            ["--network", "QN4-G10-1K-250:1,2,3,3"],
            "DesignError: --network 'QN4-G10-1K-250:1,2,3,3': element 3 is mapped to both R3 "
            "and R4; each element of one package can sit at one position only (use a second "
            "--network option for a second package)",
        ),
        (
            ["--network", "QN4-G10-1K-250:1,2,3"],
            "DesignError: --network 'QN4-G10-1K-250:1,2,3': 3 mapping entries '1,2,3'; "
            "expected 4, one for each of R1, R2, R3, R4: ID:E1,E2,E3,E4 (the element at "
            "R1..R4, 1-based, or - for none)",
        ),
        (
            ["--network", "QN4-G10-1K-250:a,2,3,4"],
            "DesignError: --network 'QN4-G10-1K-250:a,2,3,4': R1: 'a' is not an element "
            "number; expected a whole number from 1 or - (not from this network)",
        ),
        (
            ["--network", "QN2-G10-1K-250:1,2,-,-"],
            "DesignError: R3, R4 not given (given: R1, R2); give each of R1, R2, R3, R4 with "
            "--r1 .. --r4 VALUE, a part id in --parts, or an element of --network ID:E1,E2,E3,E4",
        ),
        (
            [
                "--network",
                "QN4-G10-1K-250:1,2,3,4",
                "--r1",
                "10k",
                "--tolerance",
                "1%",
                "--tempco",
                "1ppm",
            ],
            "DesignError: R1 is given twice: by --r1 10k and by --network "
            "QN4-G10-1K-250:1,2,3,4 (element 1); expected each of R1, R2, R3, R4 exactly once",
        ),
        (
            [
                "--parts",
                "QN4-G10-1K-250",
                "-",
                "-",
                "-",
                *R_OK,
                "--tolerance",
                "1%",
                "--tempco",
                "1ppm",
            ],
            "DesignError: --parts R1 'QN4-G10-1K-250': 'QN4-G10-1K-250' is a network with 4 "
            "elements; say which element sits at R1 as QN4-G10-1K-250:E (E from 1 to 4), or "
            "map the whole network with --network QN4-G10-1K-250:E1,E2,E3,E4",
        ),
        (
            ["--network", "Q-0603-T10-25-10K0:1,2,3,4"],
            "DesignError: --network 'Q-0603-T10-25-10K0:1,2,3,4': 'Q-0603-T10-25-10K0' is a "
            "discrete part, not a network; give it in --parts",
        ),
    ],
)
def test_bad_design_input(argv: list[str], message: str) -> None:
    code, out, err = _run(["check", INDUSTRIAL, *argv, *FAST])
    assert code == 2
    assert out == ""
    assert err.splitlines() == [message]


def test_unknown_part_id_lists_close_ids() -> None:
    bad = "Q-0603-T10-25-10K"
    code, out, err = _run(["check", INDUSTRIAL, "--parts", bad, "Q-0603-T10-25-10K0",
                           "Q-0603-T10-25-100K", "Q-0603-T10-25-10K0", *FAST])  # fmt: skip
    assert code == 2
    assert out == ""
    close = builtin_catalog().close_ids(bad)
    assert close and all(c.startswith(bad) for c in close)
    assert err.splitlines() == [
        f"DesignError: --parts R1: unknown part id '{bad}' (not in built-in:discrete_recipe.yaml, "
        f"built-in:networks.yaml); close ids: {', '.join(close)}"
    ]


def test_spec_that_fails_to_load(tmp_path: Path) -> None:
    missing = tmp_path / "absent.yaml"
    values = ["--r1", "100k", *R_OK, "--tolerance", "0.1%", "--tempco", "25ppm/K"]
    code, out, err = _run(["check", str(missing), *values])
    assert (code, out) == (2, "")
    assert err.splitlines() == [f"SpecError: {missing}: file not found"]
    broken = tmp_path / "broken.yaml"
    broken.write_text(HANDBOOK_SPEC.replace("cmrr_floor: 60 dB", "cmrr_floor: 60 dBB"), "utf-8")
    line = HANDBOOK_SPEC.splitlines().index("  cmrr_floor: 60 dB") + 1  # 1-based, as editors
    code, out, err = _run(["check", str(broken), *values])
    assert (code, out) == (2, "")
    assert err.splitlines() == [
        f"SpecError: {broken}:{line}: requirements.cmrr_floor: cannot read '60 dBB' "
        "(unknown suffix 'dBB'): expected a level in decibels such as 80 dB"
    ]


@pytest.mark.parametrize(
    ("argv", "fragment"),
    [
        (["--samples", "0"], "argument --samples: expected 1 or more, got '0'"),
        (["--seed", "x"], "argument --seed: expected a whole number, got 'x'"),
        (["--parts", "a", "b"], "argument --parts: expected 4 arguments"),
    ],
)
def test_usage_errors(argv: list[str], fragment: str) -> None:
    code, out, err = _run(["check", INDUSTRIAL, *argv])
    assert (code, out) == (2, "")
    assert fragment in err


# ---------------------------------------------------------------------------------------------
# The user-design builder on its own
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text", ["10k/0.1%/25ppm/K", "10k/25ppm/K/0.1%", "10k/25ppm/0.1%", "10k/0.1%/25 ppm/°C"]
)
def test_part_string_tokens_in_any_order(text: str) -> None:
    parsed = parse_part_text(text, "--r1")
    assert parsed.resistance_ohm == 10_000.0
    assert parsed.tolerance == pytest.approx(0.001)
    assert parsed.tempco_per_k == pytest.approx(25e-6)


def test_per_part_tolerance_overrides_the_common_one() -> None:
    design = design_from_values(
        "100k/0.01%", "10k", "100k/2ppm/K", "10k", tolerance="0.1%", tempco="25ppm/K"
    )
    tolerances = [p.part.tolerance for p in design.placements]  # type: ignore[union-attr]
    tempcos = [p.part.tempco_per_k for p in design.placements]  # type: ignore[union-attr]
    assert tolerances == pytest.approx([0.0001, 0.001, 0.001, 0.001])
    assert tempcos == pytest.approx([25e-6, 25e-6, 2e-6, 25e-6])
    assert [p.part.part_id for p in design.placements] == [f"user-R{k}" for k in range(1, 5)]


def test_ratings_given_are_not_reported_as_assumed() -> None:
    user = build_user_design(
        values=("1k", "10k", "1k", "10k"), tolerance="1%", tempco="100ppm",
        power="0.25 W", max_voltage="150 V", drift="0.05%",
    )  # fmt: skip
    part = user.design.placements[0].part
    assert (part.power_w, part.max_voltage_v, part.drift_1000h) == (0.25, 150.0, 0.0005)  # type: ignore[union-attr]
    assert user.assumptions == ("life drift of R1, R2, R3, R4: 0.05 % per 1000 h",)


def test_options_for_values_without_values_are_refused() -> None:
    with pytest.raises(DesignError, match=r"--tolerance '1%' applies to values given with --r1"):
        build_user_design(
            networks=("QN4-G10-1K-250:1,2,3,4",), catalog=builtin_catalog(), tolerance="1%"
        )


def test_json_nominal_gains_say_what_they_are(handbook_spec: str) -> None:
    # README (issue 15 item 6): design.nominal_gain is R2/R1; worst_case.nominal_gain is the
    # full differential gain of the nominal values. Textbook ideal op-amp transfer (module
    # docstring): R4 = 10.1 kΩ against R3 = 1 kΩ gives Adm = (10.1/11.1·11 + 10)/2.
    argv = ["check", handbook_spec, "--r1", "1k", "--r2", "10k", "--r3", "1k", "--r4", "10.1k",
            "--tolerance", "0.1%", "--tempco", "0ppm/K", *FAST]  # fmt: skip
    _, doc = _json(argv)
    assert doc["design"]["nominal_gain"] == 10.0  # type: ignore[index]
    assert doc["worst_case"]["nominal_gain"] == pytest.approx(  # type: ignore[index]
        (10.1 / 11.1 * 11.0 + 10.0) / 2.0, rel=1e-12
    )


@pytest.mark.parametrize(("model", "shared"), [("symmetric", None), ("one_sided", 0.5)])
def test_report_and_json_name_the_drift_model(
    tmp_path: Path, model: str, shared: float | None
) -> None:
    # Issue 15 item 4: the check report says which drift model was used.
    path = tmp_path / "drift.yaml"
    text = HANDBOOK_SPEC + "  operating_life: 1000 h\n"
    if model != "symmetric":
        text += f"  drift_model: {model}\n"
    path.write_text(text, encoding="utf-8")
    argv = ["check", str(path), "--r1", "1k", "--r2", "10k", "--r3", "1k", "--r4", "10k",
            "--tolerance", "0.1%", "--tempco", "0ppm/K", "--drift", "0.05%", *FAST]  # fmt: skip
    _, doc = _json(argv)
    assert doc["worst_case"]["drift_model"] == model  # type: ignore[index]
    assert doc["statistics"]["drift_model"] == model  # type: ignore[index]
    assert doc["statistics"]["drift_shared_variance"] == shared  # type: ignore[index]
    _, out, _ = _run(argv)
    line = "one-sided: each part's drift d in [0, D]" if shared else "symmetric: each part's"
    assert line in out
