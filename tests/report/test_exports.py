"""Exports of ``quartet pick`` and ``quartet check`` (BOM, JSON file, SPICE netlist, report) and
the ``--verify-spice`` cross-check, each read back.

Sources of the expected values:

* **the catalog file this test writes**: the BOM must carry the values, tolerances, tempcos,
  sizes, costs and stock of the parts as the catalog gives them (read back with pandas);
* **CSV formula injection**: a cell starting with ``=``, ``+``, ``-`` or ``@`` is prefixed with a
  quote so spreadsheets show it as text (OWASP "CSV Injection" guidance; common practice);
* **JSON Schema, draft 2020-12** (json-schema.org): ``type``, ``required``, ``properties`` and
  ``additionalProperties`` keep their meaning; the schema dicts are checked to be valid JSON and
  the small validator to reject what the specification says it must reject;
* **ngspice** (Debian package ``ngspice``): the exported netlist and the ``--verify-spice`` gains
  are solved by the circuit simulator and compared with the closed form within 1e-6.
"""

from __future__ import annotations

import base64
import json
import re
import subprocess
from pathlib import Path

import pandas as pd
import pytest
from helpers import EXAMPLES, run_cli

from optimizer.analysis.transfer import coefficients
from optimizer.report.exports import BOM_COLUMNS
from optimizer.report.schemas import CHECK_SCHEMA, PICK_SCHEMA, schema_errors
from optimizer.specfile import load_spec

MOTOR = str(EXAMPLES / "motor_shunt.yaml")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2


def _run(argv: list[str], width: int = 200) -> tuple[int, str, str]:
    return run_cli(argv, width)


# Demo catalog (invented ids and costs); two ids start with formula characters on purpose.
CATALOG = """part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock,technology,drift
=HYPERLINK(1),1k,0.1%,25ppm/K,0603,0.1W,75V,2.5,120,thin film,0.1%
@R20K,20k,0.1%,25ppm/K,0805,0.125W,150V,3.25,0,thin film,0.1%
"""


@pytest.fixture(scope="module")
def check_run(tmp_path_factory: pytest.TempPathFactory) -> dict[str, object]:
    folder = tmp_path_factory.mktemp("check")
    catalog = folder / "crafted.csv"
    catalog.write_text(CATALOG, encoding="utf-8")
    files = {
        "bom": folder / "bom.csv",
        "json": folder / "check.json",
        "netlist": folder / "design.cir",
        "report": folder / "report.md",
    }
    argv = [
        "check", MOTOR, "--catalog", str(catalog),
        "--parts", "=HYPERLINK(1)", "@R20K", "=HYPERLINK(1)", "@R20K",
        "--bom", str(files["bom"]), "--json-out", str(files["json"]),
        "--netlist", str(files["netlist"]), "--report", str(files["report"]),
        "--samples", "2000",
    ]  # fmt: skip
    code, out, err = _run(argv)
    return {"code": code, "out": out, "err": err, "files": files, "argv": argv}


@pytest.fixture(scope="module")
def pick_run(tmp_path_factory: pytest.TempPathFactory) -> dict[str, object]:
    folder = tmp_path_factory.mktemp("pick")
    files = {
        "bom": folder / "bom.csv",
        "json": folder / "pick.json",
        "netlist": folder / "design.cir",
        "report": folder / "report.html",
    }
    argv = [
        "pick", MOTOR, "--top", "3", "--time-limit", "20",
        "--bom", str(files["bom"]), "--json-out", str(files["json"]),
        "--netlist", str(files["netlist"]), "--report", str(files["report"]),
    ]  # fmt: skip
    code, out, err = _run(argv)
    return {"code": code, "out": out, "err": err, "files": files}


def test_check_bom_read_back_with_escaped_ids(check_run: dict[str, object]) -> None:
    assert check_run["code"] in (0, 1), check_run["err"]
    files = check_run["files"]
    assert isinstance(files, dict)
    bom = pd.read_csv(files["bom"], dtype=str, keep_default_na=False)
    assert tuple(bom.columns) == BOM_COLUMNS
    assert len(bom) == 2  # one line per part id, quantity 2 each
    by_id = {row["part_id"]: row for _, row in bom.iterrows()}
    # Source: OWASP CSV injection guidance — a leading '=' or '@' is quoted away.
    assert set(by_id) == {"'=HYPERLINK(1)", "'@R20K"}
    low, high = by_id["'=HYPERLINK(1)"], by_id["'@R20K"]
    # Source: the catalog written above.
    assert low["positions"] == "R1 R3" and high["positions"] == "R2 R4"
    assert float(low["resistance_ohm"]) == 1000.0 and float(high["resistance_ohm"]) == 20000.0
    assert float(low["tolerance"]) == pytest.approx(0.001, rel=1e-12)
    assert float(low["tempco_ppm_per_k"]) == pytest.approx(25.0, rel=1e-12)
    assert low["size"] == "0603" and high["size"] == "0805"
    assert low["quantity"] == "2" and high["quantity"] == "2"
    assert float(low["unit_cost"]) == 2.5 and float(high["unit_cost"]) == 3.25
    assert low["house_stock"] == "120" and high["house_stock"] == "0"
    assert low["kind"] == "discrete" and low["ratio_tolerance"] == ""


def test_check_json_file_matches_stdout_and_schema(check_run: dict[str, object]) -> None:
    files = check_run["files"]
    assert isinstance(files, dict)
    document = json.loads(files["json"].read_text(encoding="utf-8"))
    assert document["schema"] == "quartet-check/1"
    assert schema_errors(document, CHECK_SCHEMA) == []
    argv = check_run["argv"]
    assert isinstance(argv, list)
    cut = argv.index("--bom")
    code, out, _ = _run([*argv[:cut], "--samples", "2000", "--json"])
    assert code == check_run["code"]
    assert json.loads(out) == document


def test_pick_json_file_matches_its_schema(pick_run: dict[str, object]) -> None:
    assert pick_run["code"] == 0, pick_run["err"]
    files = pick_run["files"]
    assert isinstance(files, dict)
    document = json.loads(files["json"].read_text(encoding="utf-8"))
    assert document["schema"] == "quartet-pick/1"
    assert schema_errors(document, PICK_SCHEMA) == []
    assert len(document["ranked"]) == 3
    # The winner's BOM lists the rank-1 parts.
    bom = pd.read_csv(files["bom"], dtype=str, keep_default_na=False)
    ids = {p["part_id"] for p in document["ranked"][0]["positions"]}
    assert set(bom["part_id"]) == ids
    assert sorted(" ".join(bom["positions"]).split()) == ["R1", "R2", "R3", "R4"]


@pytest.mark.parametrize("schema", [PICK_SCHEMA, CHECK_SCHEMA], ids=["pick", "check"])
def test_schemas_are_json_and_the_validator_rejects(schema: dict[str, object]) -> None:
    # Source: JSON Schema 2020-12 — a missing required key, a wrong type and an unknown key
    # under additionalProperties: false are each an error.
    assert json.loads(json.dumps(schema)) == schema
    assert schema_errors({"schema": "x"}, schema)  # wrong const, keys missing
    assert schema_errors([], schema) == ["$: expected object, got list"]
    nested = {"type": "object", "properties": {"a": {"type": "integer"}}, "required": ["a"],
              "additionalProperties": False}  # fmt: skip
    assert schema_errors({"a": 1}, nested) == []
    assert schema_errors({"a": True}, nested) == ["$.a: expected integer, got bool"]
    assert schema_errors({"a": 1, "b": 2}, nested) == ["$: unexpected key 'b'"]
    assert schema_errors({}, nested) == ["$: missing key 'a'"]


def test_report_markdown_has_budget_and_histogram(check_run: dict[str, object]) -> None:
    files = check_run["files"]
    assert isinstance(files, dict)
    text = files["report"].read_text(encoding="utf-8")
    assert "## Error budget" in text
    assert "| source of error |" in text
    assert "█" in text
    histogram = text.split("```text", 1)[1].split("```", 1)[0]
    assert "---- CMRR floor 80 dB ----" in histogram or "<- floor" in histogram
    bars = [line for line in histogram.splitlines() if " dB |" in line]
    assert len(bars) >= 10  # one line per bin, each with its count
    assert "```text" in text


def test_report_html_has_ranked_table_and_histogram(pick_run: dict[str, object]) -> None:
    files = pick_run["files"]
    assert isinstance(files, dict)
    text = files["report"].read_text(encoding="utf-8")
    assert "<h2>Ranked designs</h2>" in text
    assert text.count("<tr>") > 3 and "Error budget" in text
    assert "<pre>" in text and "CMRR floor" in text
    image = re.search(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        assert image is None
    else:
        assert image is not None
        assert base64.b64decode(image.group(1)).startswith(PNG_SIGNATURE)


@pytest.mark.ngspice
@pytest.mark.parametrize("which", ["check_run", "pick_run"])
def test_netlist_runs_in_ngspice(which: str, request: pytest.FixtureRequest, ngspice: str) -> None:
    run = request.getfixturevalue(which)
    files = run["files"]
    netlist = files["netlist"]
    text = netlist.read_text(encoding="ascii")
    completed = subprocess.run(
        [ngspice, "-b", str(netlist)], capture_output=True, text=True, timeout=60, check=False
    )
    match = re.search(r"v\(out\)\s*=\s*([-+0-9.eE]+)", completed.stdout)
    assert match is not None, completed.stdout + completed.stderr
    simulated = float(match.group(1))
    # The analysis at the netlist's own operating point and impedances.
    spec = load_spec(MOTOR)
    values = {m.group(1): float(m.group(2)) for m in re.finditer(r"^(R[1-4]) \S+ \S+ (\S+)$",
                                                                  text, re.M)}  # fmt: skip
    assert set(values) == {"R1", "R2", "R3", "R4"}
    vcm = (spec.signal.common_mode_min_v + spec.signal.common_mode_max_v) / 2
    vd = spec.signal.differential_max_v
    vref = (spec.reference.voltage_min_v + spec.reference.voltage_max_v) / 2
    rs, rref = spec.signal.source.max_ohm, spec.reference.impedance_max_ohm
    k = coefficients(values["R1"], values["R2"], values["R3"], values["R4"], rs, rs, rref,
                     spec.amplifier.open_loop_gain, spec.amplifier.cmrr_ratio, 1.0)  # fmt: skip
    expected = float(k.k1) * (vcm - vd / 2) + float(k.k2) * (vcm + vd / 2) + float(k.kref) * vref
    assert simulated == pytest.approx(expected, rel=1e-6)


def test_existing_files_need_force(tmp_path: Path) -> None:
    target = tmp_path / "mine.csv"
    target.write_text("my own work\n", encoding="utf-8")
    argv = ["check", MOTOR, "--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4", "20k",
            "--tolerance", "0.1%", "--tempco", "25ppm/K", "--samples", "1000",
            "--bom", str(target)]  # fmt: skip
    code, _, err = _run(argv)
    assert code == 2
    assert str(target) in err and "--force" in err
    assert target.read_text(encoding="utf-8") == "my own work\n"
    code, out, err = _run([*argv, "--force"])
    assert code in (0, 1), err
    assert target.read_text(encoding="utf-8").startswith(",".join(BOM_COLUMNS))
    assert f"wrote {target}" in out.replace("\n", "")


def test_report_extension_is_checked(tmp_path: Path) -> None:
    code, _, err = _run(["check", MOTOR, "--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4",
                         "20k", "--report", str(tmp_path / "r.pdf")])  # fmt: skip
    assert code == 2 and "r.pdf" in err and ".md or .html" in err


VALUES = ["--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4", "20k", "--tolerance", "0.1%",
          "--tempco", "25ppm/K", "--samples", "1000"]  # fmt: skip


def _figure(out: str, name: str) -> tuple[float, float, float]:
    match = re.search(rf"{name}\s*│\s*(\S+)\s*│\s*(\S+)\s*│\s*(\S+)", out)
    assert match is not None, out
    return float(match.group(1)), float(match.group(2)), float(match.group(3))


@pytest.mark.ngspice
def test_verify_spice_prints_both_gains(ngspice: str) -> None:
    code, out, err = _run(["check", MOTOR, *VALUES, "--verify-spice"])
    assert code in (0, 1), err
    for name in ("differential gain", "common-mode gain"):
        simulated, analysed, difference = _figure(out, name)
        assert difference < 1e-6
        assert abs(simulated - analysed) <= 1e-6 * abs(analysed)
    # Source: textbook ideal transfer, Adm = R2/R1 for a balanced bridge = 20 (less the
    # amplifier's finite gain and the source impedance: within 0.1 %).
    assert _figure(out, "differential gain")[0] == pytest.approx(20.0, rel=1e-3)


def test_verify_spice_without_ngspice_warns(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    code_with, _, _ = _run(["check", MOTOR, *VALUES])
    monkeypatch.setenv("PATH", str(tmp_path))
    code, out, _ = _run(["check", MOTOR, *VALUES, "--verify-spice"])
    assert code == code_with
    assert "warning" in out and "ngspice was not found" in out
    assert "Simulator cross-check" not in out


def test_html_report_without_plots_keeps_the_text_histogram() -> None:
    from optimizer.report.exports import Block, render_report

    blocks = [Block("heading", text="a <b> & c"), Block("table", headers=("x",), rows=(("1",),))]
    html_text = render_report("t", blocks, "html", plots=False)
    assert "<h2>a &lt;b&gt; &amp; c</h2>" in html_text and "<img" not in html_text
    assert render_report("t", blocks, "md").startswith("# t\n\n## a <b> & c\n\n| x |")


def test_mains_exports_carry_the_safety_cautions(tmp_path: Path) -> None:
    # Source: the cautions the analysis gives for this spec (analysis.safety.safety_cautions);
    # the exports must repeat them, not drop them.
    from optimizer.analysis.safety import safety_cautions

    mains = str(EXAMPLES / "mains_monitor.yaml")
    cautions = safety_cautions(load_spec(mains))
    assert cautions
    netlist, report = tmp_path / "m.cir", tmp_path / "m.md"
    code, _, err = _run(["check", mains, "--r1", "2M", "--r2", "15k", "--r3", "2M", "--r4",
                         "15k", "--tolerance", "0.1%", "--tempco", "25ppm/K", "--samples",
                         "1000", "--netlist", str(netlist), "--report", str(report)])  # fmt: skip
    assert code in (0, 1), err
    netlist_text = netlist.read_text(encoding="ascii")
    report_text = report.read_text(encoding="utf-8")
    for caution in cautions:
        assert f"* Caution: {caution[:60]}" in netlist_text
        assert f"SAFETY CAUTION: {caution}" in report_text


@pytest.mark.ngspice
def test_json_stdout_stays_json_with_files_and_spice(tmp_path: Path, ngspice: str) -> None:
    target = tmp_path / "c.json"
    code, out, err = _run(["check", MOTOR, *VALUES, "--json", "--json-out", str(target),
                           "--verify-spice"])  # fmt: skip
    assert code in (0, 1)
    assert json.loads(out) == json.loads(target.read_text(encoding="utf-8"))
    assert f"wrote {target}" in err.replace("\n", "") and "differential gain" in err


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--bom", "{d}/same.out", "--json-out", "{d}/same.out"], "named for two outputs"),
        (["--netlist", "{d}/missing/n.cir"], "does not exist"),
    ],
)
def test_outputs_are_checked_before_any_work(
    tmp_path: Path, extra: list[str], message: str
) -> None:
    argv = ["check", MOTOR, *VALUES, *(e.format(d=tmp_path) for e in extra)]
    code, out, err = _run(argv)
    assert code == 2 and message in err
    assert out == "" and list(tmp_path.iterdir()) == []
