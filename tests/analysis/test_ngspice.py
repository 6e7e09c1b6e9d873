"""The closed-form transfer against a circuit simulator, and the SPICE netlist writer.

Outside reference: ngspice (Debian package ``ngspice``), solving the netlists that
``optimizer.netlist`` writes. ngspice's operating point of a linear circuit is the direct
solution of its modified nodal equations, independent of Quartet's algebra; ``optimizer.spice``
refuses any run where ngspice fell back to gmin or source stepping.

Tolerances: k1, k2, kref and Adm agree within 1e-6 relative. Acm = k1 + k2 is a difference of
two nearly equal gains for a balanced bridge, so its error is set by the error of k1 and k2,
which is of the order of |Adm|·(relative error); it is compared with |ΔAcm| ≤ 1e-6·|Adm|, the
scale on which CMRR = |Adm/Acm| is judged.
"""

from __future__ import annotations

import dataclasses
import math
import re
import subprocess
from pathlib import Path

import numpy as np
import pytest

from optimizer.analysis.transfer import coefficients, common_mode_gain, differential_gain
from optimizer.design import Design, Placement
from optimizer.errors import ModelError, SimulatorError
from optimizer.netlist import (
    AmplifierModel,
    DiffAmpCircuit,
    design_netlist,
    difference_amp_netlist,
    multi_circuit_netlist,
    node_name,
)
from optimizer.parts import Amplifier, DiscretePart, NetworkPart, RailSpan
from optimizer.spec import Rails, Reference, Requirements, Signal, SourceImpedance, Spec
from optimizer.spice import run_netlist, run_ngspice

RTOL = 1e-6
SEED = 20240611
DESIGNS = 60


def _log_uniform(rng: np.random.Generator, low: float, high: float) -> float:
    return float(10.0 ** rng.uniform(math.log10(low), math.log10(high)))


def _random_designs(count: int) -> list[dict[str, float]]:
    """Seeded designs: resistors 100 Ω..1 MΩ (half of them near-balanced bridges, the case
    that matters for CMRR), source impedances 0..1 kΩ, REF impedance 0..10 kΩ (some exactly
    zero, exercising the direct connection), open-loop gain 1e3..1e7, amplifier CMRR 1e3..1e6
    or ideal, sign ±1, and a random operating point for the superposition check."""
    rng = np.random.default_rng(SEED)
    designs = []
    for index in range(count):
        r1 = _log_uniform(rng, 100.0, 1e6)
        r2 = _log_uniform(rng, 100.0, 1e6)
        if index % 2 == 0:  # near-balanced: R3/R4 within ±0.1 % of R1/R2
            r3 = min(max(r1 * (1.0 + rng.uniform(-1e-3, 1e-3)), 100.0), 1e6)
            r4 = min(max(r2 * (1.0 + rng.uniform(-1e-3, 1e-3)), 100.0), 1e6)
        else:
            r3 = _log_uniform(rng, 100.0, 1e6)
            r4 = _log_uniform(rng, 100.0, 1e6)
        rs1 = 0.0 if index % 4 == 1 else float(rng.uniform(0.0, 1e3))
        rs3 = 0.0 if index % 4 == 1 else float(rng.uniform(0.0, 1e3))
        rref = 0.0 if index % 5 == 2 else float(rng.uniform(0.0, 1e4))
        designs.append(
            {
                "r1": r1,
                "r2": r2,
                "r3": r3,
                "r4": r4,
                "rs1": rs1,
                "rs3": rs3,
                "rref": rref,
                "open_loop_gain": _log_uniform(rng, 1e3, 1e7),
                "amp_cmrr": math.inf if index % 3 == 0 else _log_uniform(rng, 1e3, 1e6),
                "cmrr_sign": float(rng.choice([-1.0, 1.0])),
                "v1": float(rng.uniform(-5.0, 5.0)),
                "v2": float(rng.uniform(-5.0, 5.0)),
                "vref": float(rng.uniform(-2.0, 2.0)),
            }
        )
    return designs


def _circuit(d: dict[str, float], v1: float, v2: float, vref: float) -> DiffAmpCircuit:
    return DiffAmpCircuit(
        r1_ohm=d["r1"],
        r2_ohm=d["r2"],
        r3_ohm=d["r3"],
        r4_ohm=d["r4"],
        rs1_ohm=d["rs1"],
        rs3_ohm=d["rs3"],
        rref_ohm=d["rref"],
        open_loop_gain=d["open_loop_gain"],
        amp_cmrr=d["amp_cmrr"],
        cmrr_sign=d["cmrr_sign"],
        v1_v=v1,
        v2_v=v2,
        vref_v=vref,
    )


def _simulate(designs: list[dict[str, float]]) -> list[dict[str, float]]:
    """One ngspice run for every design: four copies each (unit V1, unit V2, unit VREF — the
    three gains by superposition — and the random operating point)."""
    copies = []
    for i, d in enumerate(designs):
        copies += [
            (f"d{i}k1", _circuit(d, 1.0, 0.0, 0.0)),
            (f"d{i}k2", _circuit(d, 0.0, 1.0, 0.0)),
            (f"d{i}kref", _circuit(d, 0.0, 0.0, 1.0)),
            (f"d{i}op", _circuit(d, d["v1"], d["v2"], d["vref"])),
        ]
    netlist = multi_circuit_netlist(copies, title="Quartet cross-check")
    values = run_ngspice(netlist, [node_name("out", tag) for tag, _ in copies])
    return [
        {key: values[node_name("out", f"d{i}{key}")] for key in ("k1", "k2", "kref", "op")}
        for i in range(len(designs))
    ]


def _rel(simulated: float, expected: float) -> float:
    return abs(simulated - expected) / abs(expected)


@pytest.mark.ngspice
def test_closed_form_matches_ngspice_on_random_designs(ngspice: str) -> None:
    """k1, k2, kref, Adm, Acm and a general operating point from ngspice (superposition of
    unit sources) against transfer.coefficients, for 60 seeded finite-gain designs."""
    designs = _random_designs(DESIGNS)
    simulated = _simulate(designs)
    worst = 0.0
    for d, sim in zip(designs, simulated, strict=True):
        k = coefficients(
            d["r1"],
            d["r2"],
            d["r3"],
            d["r4"],
            d["rs1"],
            d["rs3"],
            d["rref"],
            d["open_loop_gain"],
            d["amp_cmrr"],
            d["cmrr_sign"],
        )
        expected = {"k1": float(k.k1), "k2": float(k.k2), "kref": float(k.kref)}
        for name, value in expected.items():
            err = _rel(sim[name], value)
            worst = max(worst, err)
            assert err <= RTOL, f"{name}: ngspice {sim[name]!r}, closed form {value!r}, design {d}"
        adm = float(differential_gain(k))
        acm = float(common_mode_gain(k))
        sim_adm = (sim["k2"] - sim["k1"]) / 2.0
        sim_acm = sim["k1"] + sim["k2"]
        assert _rel(sim_adm, adm) <= RTOL, f"Adm: ngspice {sim_adm!r}, closed form {adm!r}"
        assert abs(sim_acm - acm) <= RTOL * abs(adm), (
            f"Acm: ngspice {sim_acm!r}, closed form {acm!r}"
        )
        vout = expected["k1"] * d["v1"] + expected["k2"] * d["v2"] + expected["kref"] * d["vref"]
        scale = (
            abs(expected["k1"] * d["v1"])
            + abs(expected["k2"] * d["v2"])
            + abs(expected["kref"] * d["vref"])
        )
        assert abs(sim["op"] - vout) <= RTOL * scale, (
            f"Vout: ngspice {sim['op']!r}, closed form {vout!r}"
        )
    # Measured with ngspice-39: worst 2.8e-10, the rounding of ngspice's sparse LU solve for
    # open-loop gains near 1e7; anything near the 1e-6 tolerance would mean a model mismatch.
    assert worst < 1e-8


def test_random_designs_cover_the_brief() -> None:
    """The seeded set spans what the cross-check claims: zero and non-zero impedances,
    finite and ideal amplifier CMRR, both signs, near-balanced and unbalanced bridges."""
    designs = _random_designs(DESIGNS)
    assert len(designs) >= 50
    assert any(d["rs1"] == 0.0 for d in designs) and any(d["rs1"] > 0.0 for d in designs)
    assert any(d["rref"] == 0.0 for d in designs) and any(d["rref"] > 0.0 for d in designs)
    assert any(math.isinf(d["amp_cmrr"]) for d in designs)
    assert any(math.isfinite(d["amp_cmrr"]) for d in designs)
    assert {d["cmrr_sign"] for d in designs} == {-1.0, 1.0}
    assert all(100.0 <= d[r] <= 1e6 for d in designs for r in ("r1", "r2", "r3", "r4"))
    assert all(1e3 <= d["open_loop_gain"] <= 1e7 for d in designs)


# Textbook ideal difference amplifier (standard result, e.g. Sedra & Smith, "Microelectronic
# Circuits", difference-amplifier section; from memory):
# Vout = V2·R4/(R3+R4)·(1+R2/R1) - V1·R2/R1 + VREF·R3/(R3+R4)·(1+R2/R1)
IDEAL_CASES = [
    # r1, r2, r3, r4, v1, v2, vref
    (10e3, 100e3, 10e3, 100e3, 0.25, 0.75, 0.0),
    (4.99e3, 49.9e3, 4.99e3, 49.9e3, -1.0, 2.0, 2.5),
    (1e3, 1e3, 1.02e3, 0.98e3, 3.0, 3.0, 0.0),
    (100.0, 1e6, 100.0, 1e6, 0.001, -0.002, 1.0),
]


@pytest.mark.ngspice
def test_ideal_amplifier_is_an_exact_nullor(ngspice: str) -> None:
    """A = inf is modelled by a nullor, not a big gain: ngspice reproduces the textbook ideal
    formula to double precision, and with a finite amplifier CMRR the closed-form limit."""
    copies = []
    expected = []
    for i, (r1, r2, r3, r4, v1, v2, vref) in enumerate(IDEAL_CASES):
        copies.append((f"i{i}", DiffAmpCircuit(r1, r2, r3, r4, v1_v=v1, v2_v=v2, vref_v=vref)))
        g = r2 / r1
        expected.append(v2 * r4 / (r3 + r4) * (1 + g) - v1 * g + vref * r3 / (r3 + r4) * (1 + g))
        copies.append(
            (
                f"c{i}",
                DiffAmpCircuit(
                    r1, r2, r3, r4, amp_cmrr=3e3, cmrr_sign=-1, v1_v=v1, v2_v=v2, vref_v=vref
                ),
            )
        )
        k = coefficients(r1, r2, r3, r4, amp_cmrr=3e3, cmrr_sign=-1)
        expected.append(float(k.k1) * v1 + float(k.k2) * v2 + float(k.kref) * vref)
    values = run_ngspice(multi_circuit_netlist(copies), [node_name("out", t) for t, _ in copies])
    for (tag, _), want in zip(copies, expected, strict=True):
        got = values[node_name("out", tag)]
        assert got == pytest.approx(want, rel=1e-12, abs=1e-12), tag


def _demo_spec() -> Spec:
    """Demo data of our own (not a check value): a ±15 V amplifier, gain 10."""
    amp = Amplifier(
        name="demo op-amp",
        cmrr_db=100.0,
        open_loop_gain_db=110.0,
        gbw_hz=1e6,
        slew_v_per_s=1e6,
        offset_v=1e-4,
        bias_a=1e-9,
        voltage_noise_v_rthz=20e-9,
        current_noise_a_rthz=1e-13,
        input_span=RailSpan(1.5, 1.5),
        output_span=RailSpan(0.5, 0.5),
    )
    return Spec(
        amplifier=amp,
        rails=Rails(positive_v=15.0, negative_v=-15.0),
        signal=Signal(
            differential_min_v=-0.5,
            differential_max_v=0.8,
            common_mode_min_v=-2.0,
            common_mode_max_v=6.0,
            max_frequency_hz=1e3,
            source=SourceImpedance(min_ohm=0.0, max_ohm=250.0, imbalance_ohm=10.0),
        ),
        reference=Reference(
            voltage_min_v=1.0, voltage_max_v=2.0, impedance_min_ohm=0.0, impedance_max_ohm=20.0
        ),
        requirements=Requirements(gain=10.0, gain_accuracy=0.002, cmrr_floor_db=70.0),
    )


def _four(placements: list[Placement]) -> Design:
    p1, p2, p3, p4 = placements
    return Design((p1, p2, p3, p4))


def _demo_design() -> Design:
    """Invented part ids (demo data): four discrete parts, R3/R4 a little off R1/R2."""
    values = {"R1": 4990.0, "R2": 49900.0, "R3": 4991.5, "R4": 49880.0}
    return _four(
        [
            Placement(
                pos, DiscretePart(f"QT-{pos}-{int(v)}", v, 0.001, 25e-6, "0603", 0.1, 75.0, 1.0)
            )
            for pos, v in values.items()
        ]
    )


def _network_design() -> Design:
    """Invented quad network (demo data), elements 1..4 at R1..R4."""
    net = NetworkPart(
        "QT-NET4-10K", (10e3, 100e3, 10e3, 100e3), 0.001, 0.0005, 25e-6, 2e-6, 0.1, 50.0, 4.0
    )
    return _four([Placement(pos, net, element=i) for i, pos in enumerate(("R1", "R2", "R3", "R4"))])


_PRINTED = re.compile(r"^v\(out\)\s*=\s*(\S+)\s*$", re.MULTILINE)


@pytest.mark.ngspice
@pytest.mark.parametrize("model", [AmplifierModel.DATASHEET, AmplifierModel.IDEAL])
@pytest.mark.parametrize("make_design", [_demo_design, _network_design])
def test_design_netlist_runs_as_is(
    ngspice: str, tmp_path: Path, model: AmplifierModel, make_design: object
) -> None:
    """`ngspice -b file.cir` on the exported netlist completes (exit 0) and prints v(out)
    equal to the closed form at the same conditions."""
    assert callable(make_design)
    design = make_design()
    spec = _demo_spec()
    text = design_netlist(design, spec, model)
    path = tmp_path / "design.cir"
    path.write_text(text, encoding="ascii")
    done = subprocess.run(
        [ngspice, "-b", str(path)],
        cwd=tmp_path,
        capture_output=True,
        text=True,
        timeout=60,
        check=False,
    )
    assert done.returncode == 0, done.stdout + done.stderr
    printed = _PRINTED.findall(done.stdout)
    assert len(printed) == 1, done.stdout
    r1, r2, r3, r4 = design.resistances_ohm
    gain, cmrr = (
        (spec.amplifier.open_loop_gain, spec.amplifier.cmrr_ratio)
        if model is AmplifierModel.DATASHEET
        else (math.inf, math.inf)
    )
    k = coefficients(r1, r2, r3, r4, 250.0, 250.0, 20.0, gain, cmrr, 1.0)
    v1, v2, vref = 2.0 - 0.4, 2.0 + 0.4, 1.5  # Vcm mid-range, Vd = largest differential, VREF mid
    want = float(k.k1) * v1 + float(k.k2) * v2 + float(k.kref) * vref
    assert float(printed[0]) == pytest.approx(want, rel=RTOL)
    for placement in design.placements:
        assert placement.part.part_id in text
    assert text == design_netlist(design, spec, model)  # deterministic, no date
    assert text.isascii()


def test_design_netlist_writes_cautions_as_comments() -> None:
    cautions = ["Hazardous voltage: first line.", "Follow the local codes\nand standards."]
    text = design_netlist(_demo_design(), _demo_spec(), cautions=cautions)
    lines = text.splitlines()
    assert "* Caution: Hazardous voltage: first line." in lines
    assert "* Caution: Follow the local codes and standards." in lines  # one comment line each
    assert "Caution" not in design_netlist(_demo_design(), _demo_spec())


def _element_value(text: str, name: str) -> str | None:
    for line in text.splitlines():
        fields = line.split()
        if fields and fields[0] == name:
            return fields[-1]
    return None


def test_zero_impedance_is_a_direct_connection_and_numbers_round_trip() -> None:
    r = (4990.000000000001, 1.0 / 3.0 * 1e5, 4991.5, 49880.0)
    text = difference_amp_netlist(
        *r, rs1=0.0, rs3=123.456, rref=0.0, open_loop_gain=1e6, amp_cmrr=2e4
    )
    assert _element_value(text, "RS1") is None and _element_value(text, "RREF") is None
    assert _element_value(text, "RS3") == "123.456"
    for name, value in zip(("R1", "R2", "R3", "R4"), r, strict=True):
        printed = _element_value(text, name)
        assert printed is not None and float(printed) == value  # exact double round trip
    assert float(_element_value(text, "ECP") or "nan") == 1.0 / (2.0 * 2e4)
    assert "EAMP out 0 x 0 1000000.0" in text


def test_ideal_amplifier_uses_the_nullor_line() -> None:
    text = difference_amp_netlist(1e3, 1e4, 1e3, 1e4)
    assert "EAMP out 0 out x 1" in text
    assert "ECP" not in text  # ideal CMRR: no common-mode sources


@pytest.mark.parametrize(
    ("kwargs", "field"),
    [
        ({"r1": -1.0}, "r1_ohm"),
        ({"r4": math.nan}, "r4_ohm"),
        ({"rs1": -5.0}, "rs1_ohm"),
        ({"rref": math.inf}, "rref_ohm"),
        ({"open_loop_gain": 0.0}, "open_loop_gain"),
        ({"amp_cmrr": math.nan}, "amp_cmrr"),
        ({"cmrr_sign": 0}, "cmrr_sign"),
        ({"v2": math.inf}, "v2_v"),
        ({"part_labels": {"R5": "x"}}, "part_labels"),
        ({"analysis": "tran"}, "analysis"),
    ],
)
def test_bad_values_are_refused(kwargs: dict[str, object], field: str) -> None:
    args: dict[str, object] = {"r1": 1e3, "r2": 1e4, "r3": 1e3, "r4": 1e4}
    args.update(kwargs)
    r1, r2, r3, r4 = (args.pop(k) for k in ("r1", "r2", "r3", "r4"))
    with pytest.raises(ModelError) as info:
        difference_amp_netlist(r1, r2, r3, r4, **args)  # type: ignore[arg-type]
    assert info.value.field == field


def test_design_netlist_refuses_bad_options() -> None:
    with pytest.raises(ModelError, match="expected one of datasheet, ideal"):
        design_netlist(_demo_design(), _demo_spec(), "spicy")
    with pytest.raises(ModelError, match="cmrr_sign"):
        design_netlist(_demo_design(), _demo_spec(), cmrr_sign=math.nan)


def test_multi_circuit_tags_must_be_unique() -> None:
    c = DiffAmpCircuit(1e3, 1e4, 1e3, 1e4)
    with pytest.raises(ModelError, match="used twice"):
        multi_circuit_netlist([("a", c), ("A", c)])
    with pytest.raises(ModelError, match="tag"):
        multi_circuit_netlist([("a b", c)])


def test_missing_simulator_is_a_clear_error() -> None:
    with pytest.raises(SimulatorError, match=r"ngspice not found.*apt-get install ngspice"):
        run_ngspice("t\nV1 a 0 1\nR1 a 0 1k\n.end\n", ["a"], executable="/nonexistent/ngspice")


@pytest.mark.ngspice
def test_simulator_fallbacks_and_unknown_probes_are_errors(ngspice: str) -> None:
    floating = "t\nV1 a 0 1\nR1 a 0 1k\nR2 b c 1k\n.end\n"
    with pytest.raises(SimulatorError, match="singular matrix"):
        run_ngspice(floating, ["a"])
    with pytest.raises(SimulatorError, match="no value for"):
        run_ngspice("t\nV1 a 0 1\nR1 a 0 1k\n.end\n", ["nowhere"])
    assert run_ngspice("t\nV1 a 0 1.5\nR1 a 0 1k\n.end\n", ["a", "i(v1)"]) == {
        "a": 1.5,
        "i(v1)": -1.5e-3,
    }
    assert run_netlist(difference_amp_netlist(1e3, 1e4, 1e3, 1e4, v2=0.1)).returncode == 0


def test_design_netlist_runs_at_the_most_positive_differential_input() -> None:
    # README (issue 15 item 6): the default operating point takes Vd at the top of the
    # differential range (here -2 V to +0.5 V: +0.5 V), not its largest magnitude (-2 V);
    # V1 = Vcm - Vd/2, V2 = Vcm + Vd/2 with Vcm the middle of the common-mode range (2 V).
    spec = _demo_spec()
    spec = dataclasses.replace(
        spec,
        signal=dataclasses.replace(spec.signal, differential_min_v=-2.0, differential_max_v=0.5),
    )
    text = design_netlist(_demo_design(), spec)
    assert "* Operating point: Vcm = 2 V, Vd = V2 - V1 = 0.5 V, VREF = 1.5 V" in text.splitlines()
