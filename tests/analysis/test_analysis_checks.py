"""The other checks (optimizer.analysis.checks) against sources outside the project.

Sources named beside each check:
- Boltzmann constant: ``scipy.constants.k`` (CODATA 2018, exact in the 2019 SI).
- Johnson-Nyquist noise e = sqrt(4kTR): textbook formula, evaluated here with scipy's k.
- Input impedance and noise superposition: independent nodal analyses solved with sympy in this
  file (they never call the helpers under test), and an ngspice ``.noise`` run.
- Gain-bandwidth, full-power bandwidth, derating: textbook worked examples and common practice.
- Ranges, ratings, offset: hand computations written out beside each case.
- Extra-low-voltage limits 60 V DC / 30 V rms: common practice.
"""

from __future__ import annotations

import math
import subprocess
from functools import cache
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from scipy import constants

from optimizer.analysis import formulas, operating
from optimizer.analysis.checks import Outcome, run_checks
from optimizer.analysis.formulas import (
    closed_loop_bandwidth,
    common_mode_input_resistance,
    derated_power,
    differential_input_resistance,
    full_power_bandwidth,
    johnson_noise_density,
    output_noise_terms,
    required_bandwidth,
    rss,
    single_pole_magnitude,
)
from optimizer.analysis.safety import safety_cautions
from optimizer.design import Design, Placement
from optimizer.errors import ModelError
from optimizer.parts import Amplifier, DiscretePart, NetworkPart, RailSpan
from optimizer.spec import (
    DriftModel,
    Rails,
    Reference,
    Requirements,
    Signal,
    SourceImpedance,
    Spec,
)

# ---------------------------------------------------------------------------------------------
# Builders (dataclasses constructed directly)
# ---------------------------------------------------------------------------------------------


def part(
    ohms: float,
    *,
    tol: float = 0.0,
    tc: float = 0.0,
    size: str = "0603",
    power: float = 0.1,
    vmax: float = 75.0,
) -> DiscretePart:
    return DiscretePart(f"X{ohms:g}", ohms, tol, tc, size, power, vmax, 1.0)


def design(r1: float, r2: float, r3: float, r4: float, **kw: float | str) -> Design:
    names = ("R1", "R2", "R3", "R4")
    return Design(
        tuple(Placement(n, part(r, **kw)) for n, r in zip(names, (r1, r2, r3, r4), strict=True))  # type: ignore[arg-type]
    )


def amplifier(**kw: object) -> Amplifier:
    """An ideal amplifier (infinite gain and CMRR, no offset or noise) unless overridden."""
    fields: dict[str, object] = {
        "name": "ideal",
        "cmrr_db": math.inf,
        "open_loop_gain_db": math.inf,
        "gbw_hz": 1e6,
        "slew_v_per_s": 1e6,
        "offset_v": 0.0,
        "bias_a": 0.0,
        "voltage_noise_v_rthz": 0.0,
        "current_noise_a_rthz": 0.0,
        "input_span": RailSpan(0.0, 0.0),
        "output_span": RailSpan(0.0, 0.0),
    }
    fields.update(kw)
    return Amplifier(**fields)  # type: ignore[arg-type]


SPLIT_15V = Rails(15.0, -15.0)
NO_SOURCE = SourceImpedance()
GROUNDED_REF = Reference()


def make_spec(
    *,
    amp: Amplifier | None = None,
    rails: Rails = SPLIT_15V,
    diff: tuple[float, float] = (-1.0, 1.0),
    cm: tuple[float, float] = (0.0, 0.0),
    fmax: float = 1e3,
    source: SourceImpedance = NO_SOURCE,
    ref: Reference = GROUNDED_REF,
    ac: bool = False,
    **req: object,
) -> Spec:
    fields: dict[str, object] = {"gain": 1.0, "gain_accuracy": 0.01, "cmrr_floor_db": 60.0}
    fields.update(req)
    return Spec(
        amplifier=amp or amplifier(),
        rails=rails,
        signal=Signal(diff[0], diff[1], cm[0], cm[1], fmax, source, ac),
        reference=ref,
        requirements=Requirements(**fields),  # type: ignore[arg-type]
    )


def by_name(results: tuple[Outcome, ...]) -> dict[str, Outcome]:
    return {r.name: r for r in results}


# ---------------------------------------------------------------------------------------------
# Johnson-Nyquist noise: scipy.constants.k (CODATA)
# ---------------------------------------------------------------------------------------------


def test_boltzmann_constant_is_codata() -> None:
    # Source: scipy.constants.k (CODATA 2018; exact in the 2019 SI).
    assert constants.k == formulas.BOLTZMANN_J_PER_K
    assert constants.zero_Celsius == formulas.ZERO_CELSIUS_K


def test_johnson_noise_10k_at_25c() -> None:
    # Source: sqrt(4kTR) with scipy.constants.k: 10 kΩ at 25 °C is 12.83 nV/√Hz.
    assert johnson_noise_density(10e3, 25.0) * 1e9 == pytest.approx(12.83, abs=0.01)


@pytest.mark.parametrize(
    ("ohms", "celsius"), [(1.0, -40.0), (1e3, 25.0), (49.9e3, 85.0), (1e6, 125.0)]
)
def test_johnson_noise_matches_scipy(ohms: float, celsius: float) -> None:
    # Source: e = sqrt(4·k·T·R) with scipy.constants (k, zero_Celsius).
    expected = math.sqrt(4.0 * constants.k * (celsius + constants.zero_Celsius) * ohms)
    assert float(johnson_noise_density(ohms, celsius)) == pytest.approx(expected, rel=1e-14)


# ---------------------------------------------------------------------------------------------
# Bandwidth and derating: textbook worked examples, common practice
# ---------------------------------------------------------------------------------------------


def test_gain_bandwidth_worked_example() -> None:
    # Common practice worked example: 1.2 MHz GBW at noise gain 3 gives 400 kHz.
    assert float(closed_loop_bandwidth(1.2e6, 3.0)) == pytest.approx(400e3, rel=1e-12)


def test_full_power_bandwidth_worked_example() -> None:
    # Common practice worked example: 2 V/µs at 12 V peak: 2e6/(2π·12) = 26.53 kHz.
    assert float(full_power_bandwidth(2e6, 12.0)) == pytest.approx(26.5e3, abs=50.0)


def test_required_bandwidth_meets_the_droop_exactly() -> None:
    # Single-pole |H| = 1/sqrt(1 + (f/f3)²) (textbook); at the required f3 the droop equals ε.
    # Hand: ε = 0.001: (1/0.999² - 1) = 0.0020030040..., sqrt = 0.0447549..., 10 kHz / that.
    need = float(required_bandwidth(10e3, 0.001))
    assert need == pytest.approx(10e3 / math.sqrt(1.0 / 0.999**2 - 1.0), rel=1e-12)
    assert need == pytest.approx(223.44e3, rel=1e-4)
    assert float(single_pole_magnitude(10e3, need)) == pytest.approx(0.999, rel=1e-12)
    assert float(single_pole_magnitude(1e3, 1e3)) == pytest.approx(1.0 / math.sqrt(2.0))  # -3 dB


@pytest.mark.parametrize(
    ("celsius", "fraction"),
    [(-55.0, 1.0), (25.0, 1.0), (70.0, 1.0), (112.5, 0.5), (155.0, 0.0), (170.0, 0.0)],
)
def test_derating_curve(celsius: float, fraction: float) -> None:
    # Common practice: full rating to 70 °C, linear to zero at 155 °C (half at 112.5 °C).
    assert float(derated_power(0.1, celsius)) == pytest.approx(0.1 * fraction, abs=1e-15)


# ---------------------------------------------------------------------------------------------
# Input impedance: common practice and an independent sympy nodal solve
# ---------------------------------------------------------------------------------------------

R1s, R2s, R3s, R4s, As = sp.symbols("R1 R2 R3 R4 A", positive=True)


def _at_infinite_gain(expr: sp.Expr) -> sp.Expr:
    """The limit A → ∞ of a rational function of A: write A = 1/x, cancel, set x = 0."""
    x = sp.Symbol("x", positive=True)
    reduced = sp.cancel(sp.together(expr.subs(As, 1 / x)))
    num, den = sp.fraction(reduced)
    assert sp.simplify(den.subs(x, 0)) != 0
    return sp.factor(num.subs(x, 0) / den.subs(x, 0))


@cache
def _sympy_input_impedances() -> tuple[sp.Expr, sp.Expr]:
    """Nodal analysis with an op-amp of open-loop gain A (limit A → ∞), REF grounded.

    Differential: a floating source pushes I into input 2 and takes I out of input 1.
    Common mode: both inputs at Vcm; Z = Vcm / (current into input 1 + input 2)."""
    v1, v2, vn, vp, vo, cur, vcm = sp.symbols("v1 v2 vn vp vo I vcm")
    eqs = [
        sp.Eq((v2 - vp) / R3s, cur),  # current into input 2 flows through R3
        sp.Eq((v2 - vp) / R3s, vp / R4s),  # ... and on through R4 to REF
        sp.Eq((v1 - vn) / R1s, -cur),  # the same current leaves through input 1
        sp.Eq((v1 - vn) / R1s + (vo - vn) / R2s, 0),  # node N
        sp.Eq(vo, As * (vp - vn)),  # amplifier
    ]
    sol = sp.solve(eqs, [v1, vn, vp, vo, cur], dict=True)[0]
    z_diff = _at_infinite_gain((v2 - sol[v1]) / sol[cur])
    eqs_cm = [
        sp.Eq((vcm - vp) / R3s, vp / R4s),
        sp.Eq((vcm - vn) / R1s + (vo - vn) / R2s, 0),
        sp.Eq(vo, As * (vp - vn)),
    ]
    sol = sp.solve(eqs_cm, [vn, vp, vo], dict=True)[0]
    total = (vcm - sol[vn]) / R1s + (vcm - sol[vp]) / R3s
    z_cm = _at_infinite_gain(vcm / total)
    return z_diff, z_cm


VALUE_SETS = [  # (R1, R2, R3, R4): balanced, unbalanced, odd values
    (10e3, 10e3, 10e3, 10e3),
    (10e3, 100e3, 10e3, 100e3),
    (4.99e3, 49.9e3, 5.1e3, 47e3),
    (1e3, 2e3, 3.3e3, 120e3),
    (100e3, 10e3, 82e3, 15e3),
]


def test_balanced_differential_input_is_twice_r1() -> None:
    # Common practice: R1 = R3 = 10 kΩ gives a 20 kΩ differential input resistance.
    assert float(differential_input_resistance(10e3, 10e3)) == 20e3


@pytest.mark.parametrize("values", VALUE_SETS)
def test_input_impedance_matches_sympy_nodal_solve(values: tuple[float, ...]) -> None:
    # Source: sympy nodal analysis above (limit of open-loop gain → ∞).
    z_diff, z_cm = _sympy_input_impedances()
    subs = dict(zip((R1s, R2s, R3s, R4s), values, strict=True))
    r1, _, r3, r4 = values
    assert float(differential_input_resistance(r1, r3)) == pytest.approx(
        float(z_diff.subs(subs)), rel=1e-12
    )
    assert float(common_mode_input_resistance(r1, r3, r4)) == pytest.approx(
        float(z_cm.subs(subs)), rel=1e-12
    )


@pytest.mark.parametrize(
    ("r1", "g", "r3"), [(10e3, 1.0, 10e3), (4.99e3, 10.0, 1e3), (1e3, 0.5, 20e3)]
)
def test_common_mode_input_equals_textbook_for_balanced_bridge(
    r1: float, g: float, r3: float
) -> None:
    # Common practice: (R1 + R2) ∥ (R3 + R4) when R2/R1 = R4/R3.
    r2, r4 = g * r1, g * r3
    textbook = 1.0 / (1.0 / (r1 + r2) + 1.0 / (r3 + r4))
    assert float(common_mode_input_resistance(r1, r3, r4)) == pytest.approx(textbook, rel=1e-12)


def test_input_impedance_check_against_floor() -> None:
    # Hand: R_diff = 10k + 10k = 20 kΩ < 25 kΩ floor (margin -5 kΩ);
    # Z_cm = 10k·110k/20k = 55 kΩ = 110k ∥ 110k (margin +30 kΩ).
    res = by_name(
        run_checks(design(10e3, 100e3, 10e3, 100e3), make_spec(min_input_impedance_ohm=25e3))
    )
    diff, cm = res["input_impedance_differential"], res["input_impedance_common_mode"]
    assert (diff.passed, diff.value, diff.limit, diff.margin, diff.unit) == (
        False,
        20e3,
        25e3,
        -5e3,
        "Ω",
    )
    assert cm.passed and cm.value == pytest.approx(55e3) and cm.margin == pytest.approx(30e3)


def test_input_impedance_uses_lowest_value_over_tolerance_and_temperature() -> None:
    # Hand: δ = 1 % + 100 ppm/K · 65 K (25 → -40 °C) = 1.65 %; R_diff min = 20 kΩ · 0.9835.
    d = design(10e3, 10e3, 10e3, 10e3, tol=0.01, tc=100e-6)
    res = by_name(
        run_checks(d, make_spec(min_input_impedance_ohm=1e3, temp_min_c=-40.0, temp_max_c=85.0))
    )
    assert res["input_impedance_differential"].value == pytest.approx(20e3 * 0.9835, rel=1e-12)


def test_input_impedance_not_required_is_reported_not_judged() -> None:
    res = by_name(run_checks(design(10e3, 10e3, 10e3, 10e3), make_spec()))[
        "input_impedance_differential"
    ]
    assert (
        res.passed
        and res.value == 20e3
        and math.isnan(res.limit)
        and "no requirement" in res.detail
    )


# ---------------------------------------------------------------------------------------------
# Noise: independent sympy superposition and ngspice .noise
# ---------------------------------------------------------------------------------------------

NOISE_NAMES = ("e_s1", "e_r1", "e_r2", "e_s3", "e_r3", "e_r4", "e_ref", "e_n", "i_m", "i_p")


@cache
def _sympy_noise_transfers() -> dict[str, sp.Expr]:
    """Output per unit of each noise source, from the node equations of the circuit with all
    signal sources at 0 V: series voltage sources in each resistor branch, current sources
    into N and P, the amplifier's voltage noise in series with its + input; A → ∞."""
    r1, r2, r3, r4, rs1, rs3, rref = sp.symbols("r1 r2 r3 r4 rs1 rs3 rref", positive=True)
    e_s1, e_r1, e_r2, e_s3, e_r3, e_r4, e_ref, e_n, i_m, i_p = sp.symbols(NOISE_NAMES)
    vn, vp, vo = sp.symbols("vn vp vo")
    eqs = [
        sp.Eq((e_s1 + e_r1 - vn) / (rs1 + r1) + (vo + e_r2 - vn) / r2 + i_m, 0),
        sp.Eq((e_s3 + e_r3 - vp) / (rs3 + r3) + (e_r4 + e_ref - vp) / (r4 + rref) + i_p, 0),
        sp.Eq(vo, As * (vp + e_n - vn)),
    ]
    vout = sp.solve(eqs, [vn, vp, vo], dict=True)[0][vo]
    return {name: _at_infinite_gain(sp.diff(vout, sp.Symbol(name))) for name in NOISE_NAMES}


def _independent_noise_density(
    rv: tuple[float, float, float, float],
    rs1: float,
    rs3: float,
    rref: float,
    en: float,
    i_n: float,
    celsius: float,
) -> float:
    transfers = _sympy_noise_transfers()
    r1, r2, r3, r4 = rv
    names = dict(r1=r1, r2=r2, r3=r3, r4=r4, rs1=rs1, rs3=rs3, rref=rref)
    subs = {sp.Symbol(k, positive=True): v for k, v in names.items()}
    four_kt = 4.0 * constants.k * (celsius + constants.zero_Celsius)
    density = {
        "e_s1": math.sqrt(four_kt * rs1), "e_r1": math.sqrt(four_kt * r1),
        "e_r2": math.sqrt(four_kt * r2), "e_s3": math.sqrt(four_kt * rs3),
        "e_r3": math.sqrt(four_kt * r3), "e_r4": math.sqrt(four_kt * r4),
        "e_ref": math.sqrt(four_kt * rref), "e_n": en, "i_m": i_n, "i_p": i_n,
    }  # fmt: skip
    return math.sqrt(sum((float(transfers[k].subs(subs)) * density[k]) ** 2 for k in NOISE_NAMES))


NoiseCase = tuple[tuple[float, float, float, float], float, float, float, float, float, float]
NOISE_CASES: list[NoiseCase] = [  # (R1..R4), Rs1, Rs3, Rref, en, in, °C
    ((10e3, 100e3, 12e3, 90e3), 100.0, 50.0, 10.0, 20e-9, 1e-12, 85.0),
    ((10e3, 10e3, 10e3, 10e3), 0.0, 0.0, 0.0, 8e-9, 0.5e-12, 25.0),
    ((1e3, 49.9e3, 1e3, 49.9e3), 1e3, 1e3, 0.0, 3e-9, 2e-12, 125.0),
    ((100e3, 10e3, 100e3, 10e3), 10.0, 20.0, 5e3, 40e-9, 10e-15, -40.0),
]


@pytest.mark.parametrize("case", NOISE_CASES)
def test_noise_density_matches_sympy_superposition(case: NoiseCase) -> None:
    # Source: independent sympy nodal superposition (above) with scipy.constants.k.
    (r1, r2, r3, r4), rs1, rs3, rref, en, i_n, celsius = case
    ours = float(rss(output_noise_terms(r1, r2, r3, r4, rs1, rs3, rref, en, i_n, celsius)))
    assert ours == pytest.approx(
        _independent_noise_density((r1, r2, r3, r4), rs1, rs3, rref, en, i_n, celsius), rel=1e-12
    )


def _ngspice_netlist(case: NoiseCase, k_spice: float) -> str:
    (r1, r2, r3, r4), rs1, rs3, rref, en, i_n, celsius = case
    four_kt = 4.0 * k_spice * (celsius + 273.15)
    # en: the thermal noise of a resistor in series with the + input (it carries no current);
    # in: the thermal noise current of a resistor shorted by a 0 V source, copied by a CCCS.
    lines = [
        "difference amplifier noise",
        "V1 in1 0 dc 0 ac 1",
        "V2 in2 0 dc 0",
        "VR ref 0 dc 0",
        f"Rs1 in1 a1 {max(rs1, 1e-6)!r}",
        f"R1 a1 n {r1!r}",
        f"R2 n out {r2!r}",
        f"Rs3 in2 a3 {max(rs3, 1e-6)!r}",
        f"R3 a3 p {r3!r}",
        f"R4 p b4 {r4!r}",
        f"Rr b4 ref {max(rref, 1e-6)!r}",
        f"Ren p pp {en**2 / four_kt!r}",
        "E1 out 0 pp n 1e9",
        f"Rim dm 0 {four_kt / i_n**2!r}",
        "Vm dm 0 0",
        "Fm n 0 Vm 1",
        f"Rip dp 0 {four_kt / i_n**2!r}",
        "Vp dp 0 0",
        "Fp p 0 Vp 1",
        f".options temp={celsius!r}",
        ".control",
        "noise v(out) V1 dec 1 1k 1k",
        "setplot noise1",
        "print onoise_spectrum",
        ".endc",
        ".end",
    ]
    return "\n".join(lines) + "\n"


@pytest.mark.ngspice
@pytest.mark.parametrize("case", NOISE_CASES)
def test_noise_density_matches_ngspice(case: NoiseCase, ngspice: str, tmp_path: Path) -> None:
    # Source: ngspice .noise analysis (Debian package), ideal VCVS amplifier of gain 1e9.
    # en and in are modelled by noise resistors sized with k = 1.38064852e-23 J/K (CODATA 2014);
    # the recent CODATA values of k differ by < 1e-6 relative, below the tolerance, as does
    # ngspice's 7-digit print-out.
    netlist = tmp_path / "noise.cir"
    netlist.write_text(_ngspice_netlist(case, 1.38064852e-23))
    run = subprocess.run([ngspice, "-b", str(netlist)], capture_output=True, text=True, timeout=60)
    line = next(x for x in run.stdout.splitlines() if x.strip().startswith("onoise_spectrum"))
    spice = float(line.split("=")[1])
    (r1, r2, r3, r4), rs1, rs3, rref, en, i_n, celsius = case
    ours = float(rss(output_noise_terms(r1, r2, r3, r4, rs1, rs3, rref, en, i_n, celsius)))
    assert ours == pytest.approx(spice, rel=2e-6)


def test_noise_check_rms_over_band() -> None:
    # Hand: RMS = density·sqrt(f_high - f_low) for a brick-wall band; density from the
    # independent sympy superposition at the hottest temperature (85 °C).
    amp = amplifier(voltage_noise_v_rthz=10e-9, current_noise_a_rthz=1e-12)
    d = design(10e3, 100e3, 10e3, 100e3)
    density = _independent_noise_density(
        (10e3, 100e3, 10e3, 100e3), 0.0, 0.0, 0.0, 10e-9, 1e-12, 85.0
    )
    spec = make_spec(
        amp=amp, fmax=10e3, temp_min_c=0.0, temp_max_c=85.0, max_output_noise_v_rms=20e-6
    )
    res = by_name(run_checks(d, spec))["output_noise"]
    expected = density * math.sqrt(10e3 - 0.1)  # band: 0.1 Hz default to the signal's 10 kHz
    assert res.value == pytest.approx(expected, rel=1e-12)
    assert res.passed is (expected <= 20e-6) and res.margin == pytest.approx(
        20e-6 - expected, rel=1e-9
    )
    assert "1/f noise not modelled" in res.detail and "brick-wall" in res.detail
    tight = make_spec(amp=amp, fmax=10e3, temp_max_c=85.0, max_output_noise_v_rms=expected * 0.99)
    assert not by_name(run_checks(d, tight))["output_noise"].passed
    band = make_spec(
        amp=amp, fmax=10e3, temp_max_c=85.0, noise_band_low_hz=10.0, noise_band_high_hz=1e3
    )
    assert by_name(run_checks(d, band))["output_noise"].value == pytest.approx(
        density * math.sqrt(990.0)
    )


def test_noise_source_impedance_raises_noise() -> None:
    # Source impedances add their own noise: the worst corner takes Rs at its maximum.
    d = design(1e3, 10e3, 1e3, 10e3)
    quiet = by_name(run_checks(d, make_spec()))["output_noise"].value
    loud = by_name(run_checks(d, make_spec(source=SourceImpedance(0.0, 1e3, 1e3))))[
        "output_noise"
    ].value
    assert loud > quiet


def test_empty_noise_band_is_a_located_error() -> None:
    spec = make_spec(fmax=0.05)  # default band low edge 0.1 Hz is above the signal's 0.05 Hz
    with pytest.raises(ModelError, match="noise band low"):
        run_checks(design(10e3, 10e3, 10e3, 10e3), spec)


# ---------------------------------------------------------------------------------------------
# Input range and output swing: hand computations
# ---------------------------------------------------------------------------------------------


def test_input_range_pass() -> None:
    # Hand: G = 1, all 10 kΩ, REF 0: V+ = V2/2 = (Vcm + Vd/2)/2 in [-6.25, 6.25] V for
    # Vcm ±12 V, Vd ±1 V. Allowed [-15 + 0.1, 15 - 1.5] = [-14.9, 13.5]; margin 13.5 - 6.25.
    amp = amplifier(input_span=RailSpan(0.1, 1.5))
    res = by_name(run_checks(design(10e3, 10e3, 10e3, 10e3), make_spec(amp=amp, cm=(-12.0, 12.0))))
    r = res["amp_input_range"]
    assert r.passed and r.value == pytest.approx(6.25) and r.limit == 13.5
    assert r.margin == pytest.approx(7.25)


def test_input_range_fail() -> None:
    # Hand: Vcm ±30 V: V+ in [-15.25, 15.25]; high side 13.5 - 15.25 = -1.75 V (worse than
    # the low side -15.25 + 14.9 = -0.35 V).
    amp = amplifier(input_span=RailSpan(0.1, 1.5))
    r = by_name(run_checks(design(10e3, 10e3, 10e3, 10e3), make_spec(amp=amp, cm=(-30.0, 30.0))))
    assert not r["amp_input_range"].passed
    assert r["amp_input_range"].margin == pytest.approx(-1.75)


def test_input_range_with_reference() -> None:
    # Hand: G = 10 (1k/10k), single 5 V supply, REF 2.5 V, Vcm 0, Vd ±0.2 V:
    # V+ = (10/11)·V2 + (1/11)·2.5 with V2 = ±0.1 -> [0.1364 , 0.3182]; allowed [0, 3.5].
    amp = amplifier(input_span=RailSpan(0.0, 1.5))
    spec = make_spec(amp=amp, rails=Rails(5.0, 0.0), diff=(-0.2, 0.2), ref=Reference(2.5, 2.5))
    r = by_name(run_checks(design(1e3, 10e3, 1e3, 10e3), spec))["amp_input_range"]
    low = (10 / 11) * -0.1 + 2.5 / 11
    assert r.passed and r.value == pytest.approx(low) and r.margin == pytest.approx(low - 0.0)


def test_output_swing_pass_with_offset() -> None:
    # Hand: G = 10, REF 2.5 V, Vd ±0.2 V: Vout in [0.5, 4.5] V; offset 1 mV·(1 + 10) = 11 mV;
    # allowed [0.05, 4.95]: margin 4.95 - 4.511 = 0.439 V.
    amp = amplifier(offset_v=1e-3, output_span=RailSpan(0.05, 0.05))
    spec = make_spec(
        amp=amp, rails=Rails(5.0, 0.0), diff=(-0.2, 0.2), cm=(0.0, 1.0), ref=Reference(2.5, 2.5)
    )
    r = by_name(run_checks(design(1e3, 10e3, 1e3, 10e3), spec))["output_swing"]
    assert r.passed and r.margin == pytest.approx(0.439) and r.unit == "V"


def test_output_swing_fail() -> None:
    # Hand: REF 2.0 V, Vd ±0.5 V: Vout in [-3, 7] V; low side -3 - 0.05 = -3.05 V is worse
    # than the high side 4.95 - 7 = -2.05 V.
    amp = amplifier(output_span=RailSpan(0.05, 0.05))
    spec = make_spec(amp=amp, rails=Rails(5.0, 0.0), diff=(-0.5, 0.5), ref=Reference(2.0, 2.0))
    r = by_name(run_checks(design(1e3, 10e3, 1e3, 10e3), spec))["output_swing"]
    assert not r.passed
    assert r.value == pytest.approx(-3.0) and r.limit == 0.05
    assert r.margin == pytest.approx(-3.05)


def test_output_swing_includes_common_mode_error_of_mismatch() -> None:
    # Hand: R4 1 % high (10.1 kΩ): Acm = k1 + k2 = -10 + (10.1/11.1)·11 = 0.009009...;
    # Vcm 100 V, Vd 0 -> Vout = 0.9009 V, outside a ±0.5 V window by 0.4009 V.
    amp = amplifier(output_span=RailSpan(-0.5, 0.5, relative=False))
    spec = make_spec(amp=amp, diff=(0.0, 0.0), cm=(100.0, 100.0))
    r = by_name(run_checks(design(1e3, 10e3, 1e3, 10.1e3), spec))["output_swing"]
    acm = -10.0 + (10.1 / 11.1) * 11.0
    assert (
        not r.passed
        and r.value == pytest.approx(100.0 * acm)
        and r.margin == pytest.approx(0.5 - 100.0 * acm)
    )


# ---------------------------------------------------------------------------------------------
# Bandwidth checks
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(("fmax", "passes"), [(10e3, True), (30e3, False)])
def test_small_signal_bandwidth_check(fmax: float, passes: bool) -> None:
    # Hand: G = 1 -> noise gain 2 -> 1 MHz/2 = 500 kHz. ε = 0.1 · 1 % = 0.001 needs
    # f_max/0.0447549 = 223.4 kHz at 10 kHz (pass) and 670.3 kHz at 30 kHz (fail).
    r = by_name(run_checks(design(10e3, 10e3, 10e3, 10e3), make_spec(fmax=fmax)))[
        "small_signal_bandwidth"
    ]
    need = fmax / math.sqrt(1.0 / 0.999**2 - 1.0)
    assert r.value == pytest.approx(500e3) and r.limit == pytest.approx(need)
    assert r.passed is passes and r.margin == pytest.approx(500e3 - need)


@pytest.mark.parametrize(("fmax", "passes"), [(20e3, True), (40e3, False)])
def test_full_power_bandwidth_check(fmax: float, passes: bool) -> None:
    # Hand: G = 10, Vd ±0.5 V -> 5 V output peak; 1 V/µs / (2π·5 V) = 31.83 kHz.
    spec = make_spec(diff=(-0.5, 0.5), fmax=fmax, gain_accuracy=0.5)
    r = by_name(run_checks(design(1e3, 10e3, 1e3, 10e3), spec))["full_power_bandwidth"]
    assert r.value == pytest.approx(1e6 / (2 * math.pi * 5.0)) and r.passed is passes


@pytest.mark.parametrize("gain", [10.0, 100.0])
def test_full_power_bandwidth_takes_the_largest_open_loop_gain(gain: float) -> None:
    # Issue 15, item 1. Textbook closed forms: f_FP = SR/(2π·Vpk) with Vpk = |Adm|·|Vd|; for a
    # balanced bridge and an ideal CMRR, Adm = G/(1 + (1 + G)/A) (finite-gain feedback), which
    # rises with A. A 40 dB amplifier (A_min = 100) may have any A ≥ 100, so the check takes
    # the largest peak, G·|Vd| at A = ∞ (G = 100, Vd 0.1 V, 1 V/µs: 15.9 kHz), not the
    # A_min end (31.99 kHz, twice as high: the optimistic figure the check used to give).
    amp = amplifier(open_loop_gain_db=40.0)
    spec = make_spec(amp=amp, diff=(-0.1, 0.1), fmax=1e3, gain=gain, gain_accuracy=0.5)
    r = by_name(run_checks(design(1e3, gain * 1e3, 1e3, gain * 1e3), spec))["full_power_bandwidth"]
    at_infinite_gain = 1e6 / (2 * math.pi * gain * 0.1)
    at_minimum_gain = 1e6 / (2 * math.pi * 0.1 * gain / (1.0 + (1.0 + gain) / 100.0))
    assert r.value == pytest.approx(at_infinite_gain, rel=1e-12)
    assert r.value < at_minimum_gain
    assert r.margin == pytest.approx(at_infinite_gain - 1e3, rel=1e-12)


def test_output_swing_takes_both_ends_of_the_open_loop_gain() -> None:
    # Same closed form: with G = 100 and A_min = 100, Vd 0.1 V gives Vout between
    # 10 V/(1 + 101/100) = 4.975 V (A = A_min) and 10 V (A = ∞); a ±8 V window fails.
    amp = amplifier(open_loop_gain_db=40.0, output_span=RailSpan(-8.0, 8.0, relative=False))
    spec = make_spec(amp=amp, diff=(-0.1, 0.1), gain=100.0, gain_accuracy=0.5)
    r = by_name(run_checks(design(1e3, 100e3, 1e3, 100e3), spec))["output_swing"]
    assert not r.passed
    assert r.value == pytest.approx(10.0, rel=1e-12) and r.margin == pytest.approx(-2.0)


# ---------------------------------------------------------------------------------------------
# Resistor power and voltage ratings
# ---------------------------------------------------------------------------------------------


def test_attenuator_with_low_voltage_parts_fails_on_r1() -> None:
    # Hand: G = 0.1 (R1 = R3 = 100k, R2 = R4 = 10k), Vd ±10 V, Vcm 0, REF 0, parts rated 5 V.
    # V2 = 5, V1 = -5: R3-R4 leg current 5/110k; V_R3 = 50/11 = 4.545 V, V_R4 = 5/11 V;
    # V+ = V- = 5/11; V_R1 = -5 - 5/11 = -60/11 V; Vout = 1 V; V_R2 = 5/11 - 1 = -6/11 V.
    d = design(100e3, 10e3, 100e3, 10e3, size="0402", vmax=5.0, power=0.0625)
    res = by_name(run_checks(d, make_spec(diff=(-10.0, 10.0), gain=0.1)))
    expected = {"R1": 60 / 11, "R2": 6 / 11, "R3": 50 / 11, "R4": 5 / 11}
    for name, volts in expected.items():
        r = res[f"voltage_{name}"]
        assert r.value == pytest.approx(volts) and r.margin == pytest.approx(5.0 - volts)
        assert r.passed is (volts <= 5.0)
    assert not res["voltage_R1"].passed and res["voltage_R1"].margin == pytest.approx(-5 / 11)
    assert res["power_R1"].value == pytest.approx((60 / 11) ** 2 / 100e3)


def test_power_with_derating_fails_and_passes() -> None:
    # Hand: G = 1, all 1 kΩ, Vd ±20 V: V2 = 10, V1 = -10: leg current 5 mA, V_R3 = V_R4 = 5 V,
    # V+ = 5 V, V_R1 = -15 V (0.225 W), Vout = 20 V, V_R2 = 5 - 20 = -15 V (0.225 W),
    # V_R4 = 5 V (0.025 W). Rating 0.1 W derated to 125 °C: 0.1·30/85 = 0.035294 W.
    d = design(1e3, 1e3, 1e3, 1e3)
    res = by_name(run_checks(d, make_spec(diff=(-20.0, 20.0), temp_min_c=25.0, temp_max_c=125.0)))
    allowed = 0.1 * 30.0 / 85.0
    assert res["power_R1"].limit == pytest.approx(allowed)
    assert not res["power_R1"].passed and res["power_R1"].margin == pytest.approx(allowed - 0.225)
    assert not res["power_R2"].passed and res["power_R2"].value == pytest.approx(0.225)
    assert res["power_R4"].passed and res["power_R4"].margin == pytest.approx(allowed - 0.025)


def test_network_parts_use_power_per_element() -> None:
    # Same circuit as above with a quad network rated 50 mW per element at 25 °C:
    # R1 0.225 W > 0.05 W (margin -0.175 W); R3 0.025 W passes (margin 0.025 W).
    net = NetworkPart("NQ", (1e3, 1e3, 1e3, 1e3), 0.0, 0.0, 0.0, 0.0, 0.05, 50.0, 1.0)
    d = Design(tuple(Placement(n, net, element=i) for i, n in enumerate(("R1", "R2", "R3", "R4"))))  # type: ignore[arg-type]
    res = by_name(run_checks(d, make_spec(diff=(-20.0, 20.0))))
    assert res["power_R1"].margin == pytest.approx(0.05 - 0.225)
    assert res["power_R3"].passed and res["power_R3"].margin == pytest.approx(0.025)
    assert res["voltage_R1"].limit == 50.0 and res["voltage_R1"].passed


# ---------------------------------------------------------------------------------------------
# Output offset (textbook bias-current analysis, hand computed)
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(("ios", "expected"), [(None, 3.1e-3), (1e-9, 1.2e-3)])
def test_output_offset(ios: float | None, expected: float) -> None:
    # Hand: R1 = R3 = 10k, R2 = R4 = 100k: NG = 11, R3∥R4 = 9.0909k, Rp·NG = 100k = R2.
    # Vos term 100 µV·11 = 1.1 mV. Independent currents (no Ios): 10 nA·(100k + 100k) = 2 mV.
    # With Ios = 1 nA the 10 nA common part cancels (R2 = Rp·NG, the textbook balance) and
    # 0.5 nA·200k = 0.1 mV remains.
    amp = amplifier(offset_v=-100e-6, bias_a=10e-9, offset_current_a=ios)
    r = by_name(run_checks(design(10e3, 100e3, 10e3, 100e3), make_spec(amp=amp)))["output_offset"]
    assert r.value == pytest.approx(expected) and r.passed and math.isnan(r.limit)


# ---------------------------------------------------------------------------------------------
# End of life: input impedance and noise with drift applied (issue 15, item 5)
# ---------------------------------------------------------------------------------------------

LIFE_1000_H_S = 1000.0 * 3600.0  # D = drift_1000h·√(1000 h/1000 h) = drift_1000h exactly


def drifting(values: tuple[float, float, float, float], drift: float) -> Design:
    def part_(i: int, ohms: float) -> DiscretePart:
        return DiscretePart(f"X{i}", ohms, 0.0, 0.0, "0603", 0.1, 75.0, 1.0, drift_1000h=drift)

    names = ("R1", "R2", "R3", "R4")
    return Design(
        tuple(Placement(n, part_(i, v)) for i, (n, v) in enumerate(zip(names, values, strict=True)))  # type: ignore[arg-type]
    )


def test_life_value_bounds_and_drift_intervals() -> None:
    # r/R0 from (1 ± δ)·(1 + d): δ = 0.1 %, drift interval [−0.5 %, 0.5 %] or [0, 0.5 %].
    low, high = formulas.life_value_bounds(0.001, -0.005, 0.005)
    assert (float(low), float(high)) == (pytest.approx(0.999 * 0.995), pytest.approx(1.001 * 1.005))
    net = NetworkPart("NQ", (1e3,) * 4, 0.0, 0.0, 0.0, 0.0, 0.05, 50.0, 1.0,
                      drift_1000h=0.001, ratio_drift_1000h=0.0005)  # fmt: skip
    element = Placement("R1", net, element=0)
    assert operating.placement_life_drift(element, LIFE_1000_H_S) == pytest.approx(
        (-0.00125, 0.00125)
    )
    one_sided = operating.placement_life_drift(element, LIFE_1000_H_S, DriftModel.ONE_SIDED)
    assert one_sided == pytest.approx((-0.00025, 0.00125))


@pytest.mark.parametrize(
    ("model", "lowest", "passes"),
    [(DriftModel.SYMMETRIC, 2 * 10e3 * 0.99, False), (DriftModel.ONE_SIDED, 20e3, True)],
)
def test_differential_input_impedance_at_end_of_life(
    model: DriftModel, lowest: float, passes: bool
) -> None:
    # Hand: R1 + R3 with R1 = R3 = 10 kΩ exactly (no tolerance), drift 1 % over the life:
    # lowest at the end of life 2·10k·(1 − 1 %) = 19.8 kΩ (symmetric); one-sided drift only
    # raises it, so the start-of-life 20 kΩ stays the lowest. Floor 19.9 kΩ.
    spec = make_spec(
        life_s=LIFE_1000_H_S, drift_model=model, min_input_impedance_ohm=19.9e3, gain=10.0
    )
    r = by_name(run_checks(drifting((10e3, 100e3, 10e3, 100e3), 0.01), spec))[
        "input_impedance_differential"
    ]
    assert r.value == pytest.approx(lowest, rel=1e-12) and r.passed is passes
    where = (
        "at the end of life with drift applied"
        if model is DriftModel.SYMMETRIC
        else "at the start of life"
    )
    assert where in r.detail


@pytest.mark.parametrize("model", [DriftModel.SYMMETRIC, DriftModel.ONE_SIDED])
def test_common_mode_input_impedance_at_end_of_life(model: DriftModel) -> None:
    # Hand: Zcm = R1·(R3 + R4)/(R1 + R3) rises with R1 and R4 and, as R1 < R4, falls with R3.
    # R1 = R3 = 10k, R4 = 100k, drift 1 %: symmetric lowest at R1 = 9.9k, R3 = 10.1k,
    # R4 = 99k; one-sided at R1 = 10k, R3 = 10.1k, R4 = 100k.
    spec = make_spec(life_s=LIFE_1000_H_S, drift_model=model, gain=10.0)
    r = by_name(run_checks(drifting((10e3, 100e3, 10e3, 100e3), 0.01), spec))[
        "input_impedance_common_mode"
    ]
    if model is DriftModel.SYMMETRIC:
        r1, r3, r4 = 9.9e3, 10.1e3, 99e3
    else:
        r1, r3, r4 = 10e3, 10.1e3, 100e3
    assert r.value == pytest.approx(r1 * (r3 + r4) / (r1 + r3), rel=1e-12)
    assert "at the end of life with drift applied" in r.detail


@pytest.mark.parametrize("model", [DriftModel.SYMMETRIC, DriftModel.ONE_SIDED])
def test_output_noise_at_end_of_life(model: DriftModel) -> None:
    # Johnson noise sqrt(4kTR) (scipy.constants.k) through the textbook superposition gains,
    # written out here: R1: R2/R1, R2: 1, R3: a·NG, R4: (1 − a)·NG, NG = 1 + R2/R1,
    # a = R4/(R3 + R4); ideal noiseless amplifier, no source impedance. All four 10 kΩ, drift
    # 2 % over the life: the largest of the 16 end-of-life corners (each resistor at an end
    # of its drift interval), over a 10 kHz band, exceeds the start-of-life figure.
    t_k = 25.0 + 273.15
    low, high = (-0.02, 0.02) if model is DriftModel.SYMMETRIC else (0.0, 0.02)

    def density(r1: float, r2: float, r3: float, r4: float) -> float:
        ng, a = 1 + r2 / r1, r4 / (r3 + r4)
        terms = (r1 * (r2 / r1) ** 2, r2, r3 * (a * ng) ** 2, r4 * ((1 - a) * ng) ** 2)
        return math.sqrt(4 * constants.k * t_k * sum(terms))

    ends = [10e3 * (1 + low), 10e3 * (1 + high)]
    eol = max(density(a, b, c, d) for a in ends for b in ends for c in ends for d in ends)
    spec = make_spec(
        life_s=LIFE_1000_H_S, drift_model=model, fmax=10e3, noise_band_low_hz=1e-9,
        max_output_noise_v_rms=1.0,
    )  # fmt: skip
    r = by_name(run_checks(drifting((10e3,) * 4, 0.02), spec))["output_noise"]
    band = math.sqrt(10e3 - 1e-9)
    assert r.value == pytest.approx(eol * band, rel=1e-9)
    assert r.value > density(10e3, 10e3, 10e3, 10e3) * band
    assert "at the end of life with drift applied" in r.detail


# ---------------------------------------------------------------------------------------------
# The source-impedance corners are the vertices of the region (README, issue 15 item 6)
# ---------------------------------------------------------------------------------------------


def test_checks_use_every_vertex_of_the_source_region() -> None:
    # Plane geometry: {0 ≤ Rs1, Rs3 ≤ 100, |Rs1 − Rs3| ≤ 10} is a hexagon with vertices
    # (0, 0), (0, 10), (90, 100), (100, 100), (100, 90), (10, 0); the checks see each of them,
    # not only the pairs of leg ends, and nothing outside the region.
    spec = make_spec(source=SourceImpedance(0.0, 100.0, 10.0))
    corners = operating.operating_corners(design(1e3, 1e3, 1e3, 1e3), spec)
    seen = set(zip(corners.rs1.tolist(), corners.rs3.tolist(), strict=True))
    hexagon = {(0.0, 0.0), (0.0, 10.0), (90.0, 100.0), (100.0, 100.0), (100.0, 90.0), (10.0, 0.0)}
    assert hexagon <= seen
    assert all(0 <= a <= 100 and 0 <= b <= 100 and abs(a - b) <= 10 for a, b in seen)


def test_output_swing_worst_at_the_vertex_min_and_min_plus_imbalance() -> None:
    # Hand (textbook ideal op-amp transfer, superposition): all four 1 kΩ, both inputs at
    # Vcm = 10 V, Rs1, Rs3 ∈ [0, 100] Ω with imbalance 30 Ω, ideal amplifier:
    # Acm = a·(1 + R2/R1') − R2/R1', a = R4/(R3 + Rs3 + R4). At the vertex (Rs1, Rs3) =
    # (min, min + imbalance) = (0, 30): Acm = 2·1000/2030 − 1 = −30/2030, the lowest output
    # −300/2030 V; at (30, 0) it is +15/1030 (+0.1456 V), at the far vertices (70, 100) and
    # (100, 70) smaller still. A ±1 V window is nearest at that first vertex.
    amp = amplifier(output_span=RailSpan(-1.0, 1.0, relative=False))
    spec = make_spec(
        amp=amp, diff=(0.0, 0.0), cm=(10.0, 10.0), source=SourceImpedance(0.0, 100.0, 30.0)
    )
    r = by_name(run_checks(design(1e3, 1e3, 1e3, 1e3), spec))["output_swing"]
    assert r.value == pytest.approx(-300.0 / 2030.0, rel=1e-12)
    assert r.margin == pytest.approx(1.0 - 300.0 / 2030.0, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# The whole run
# ---------------------------------------------------------------------------------------------


def test_run_checks_shape_and_convention() -> None:
    amp = amplifier(cmrr_db=90.0, open_loop_gain_db=110.0, offset_v=50e-6, bias_a=1e-9)
    spec = make_spec(
        amp=amp, source=SourceImpedance(0.0, 100.0, 10.0), ref=Reference(0.0, 1.0, 0.0, 5.0)
    )
    d = design(10e3, 20e3, 10e3, 20e3, tol=0.001, tc=25e-6)
    results = run_checks(d, spec)
    names = [r.name for r in results]
    assert names == [
        "input_impedance_differential", "input_impedance_common_mode", "output_noise",
        "amp_input_range", "output_swing", "small_signal_bandwidth", "full_power_bandwidth",
        "power_R1", "power_R2", "power_R3", "power_R4",
        "voltage_R1", "voltage_R2", "voltage_R3", "voltage_R4", "output_offset",
    ]  # fmt: skip
    for r in results:
        assert isinstance(r, Outcome) and r.detail
        if not math.isnan(r.limit):
            assert r.passed is bool(r.margin >= 0.0)
    corners = operating.operating_corners(d, spec)
    # 2^4 resistor ends · Rs pairs {(0,0),(0,10),(10,0),(90,100),(100,90),(100,100)... } · ...
    assert np.all(np.abs(corners.rs1 - corners.rs3) <= 10.0 + 1e-9)
    assert corners.rs1.max() == 100.0 and corners.rs1.min() == 0.0


# ---------------------------------------------------------------------------------------------
# Safety cautions (common practice: 60 V DC, 30 V AC rms extra-low-voltage limits)
# ---------------------------------------------------------------------------------------------


def test_mains_common_mode_gets_cautions() -> None:
    peak = 230.0 * math.sqrt(2.0)
    spec = make_spec(cm=(-peak, peak), diff=(-0.1, 0.1), ac=True)
    text = " ".join(safety_cautions(spec)).lower()
    for word in ("creepage", "clearance", "insulation", "local electrical codes", "licensed"):
        assert word in text


def test_low_voltage_design_has_no_caution() -> None:
    assert safety_cautions(make_spec(cm=(0.0, 5.0), diff=(-0.1, 0.1))) == ()


@pytest.mark.parametrize(
    ("cm_max", "diff", "warned"),
    [(60.0, 0.0, False), (60.5, 0.0, True), (59.9, 0.4, True), (59.0, 0.4, False)],
)
def test_dc_boundary(cm_max: float, diff: float, warned: bool) -> None:
    # Common practice: 60 V DC; the input peak is |Vcm ± Vd/2| (59.9 + 0.2 = 60.1 V warns).
    spec = make_spec(cm=(0.0, cm_max), diff=(-diff, diff))
    assert bool(safety_cautions(spec)) is warned


@pytest.mark.parametrize(("peak", "warned"), [(30.0 * math.sqrt(2.0), False), (43.0, True)])
def test_ac_boundary(peak: float, warned: bool) -> None:
    # Common practice: 30 V rms; an AC signal's range is in peak volts, rms = peak/√2.
    spec = make_spec(cm=(-peak, peak), diff=(0.0, 0.0), ac=True)
    assert bool(safety_cautions(spec)) is warned
