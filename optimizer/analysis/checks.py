"""The other checks of a design: input impedance, noise, ranges, bandwidth, ratings, offset, safety.

Circuit and labels as in :mod:`optimizer.analysis.transfer`: R1 from input 1 (source V1 with
impedance Rs1) to the inverting node N, R2 from N to the output, R3 from input 2 (source V2 with
impedance Rs3) to the non-inverting node P, R4 from P to REF (drive VREF with impedance Rref).
Primed values include the source and REF impedances: ``R1' = R1 + Rs1``, ``R3' = R3 + Rs3``,
``R4' = R4 + Rref``. The signal is split as ``V1 = Vcm - Vd/2``, ``V2 = Vcm + Vd/2``.

Every formula sits in one small pure function below (scalars or numpy arrays in, arrays out).
:func:`run_checks` evaluates them over the *operating corners* (:func:`operating_corners`):
every combination of the ends of the common-mode, differential and REF voltage ranges, of the
source and REF impedance ranges, of each resistor's value spread (initial tolerance plus
tempco over the temperature range; drift is left to the worst-case module, except for the
input-impedance and noise checks, which are also evaluated at the end of the required life,
drift applied: :func:`life_value_bounds`), of the sign of
the amplifier's common-mode error and of its open-loop gain ``A`` (a datasheet gives a minimum,
so ``A ∈ {A_min, ∞}``: every closed-loop coefficient is the ideal one times the same factor
``β(1 − ε)/(1/A + β(1 − ε))``, which rises with ``A``, so an output at the two ends bounds the
output at every ``A ≥ A_min``). The quantities checked are linear in the voltages, so the
voltage corners give their extremes exactly; in the resistor values they are smooth and, over
spreads of a few percent, nearly linear, so the resistor corners give the extremes to within
second-order terms (corner enumeration, the usual practice of tolerance analysis).

Margin convention of :class:`CheckResult`: ``margin`` is in the check's own unit (the same as
``value`` and ``limit``) and positive means passing; ``passed`` is ``margin >= 0``. For a
floor, ``margin = value - limit``; for a ceiling, ``margin = limit - value``; for a voltage
window, the distance from the worst point to the nearer edge of the window (negative: outside
by that much). A figure with no requirement to meet is reported with ``passed=True`` and
``limit = margin = nan`` (the detail says so).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design, Placement
from ..errors import ModelError
from ..parts import NetworkPart
from ..spec import DriftModel, Spec
from ..units import format_quantity
from .transfer import coefficients, differential_gain, divider_ratio, feedback_factor
from .variation import drift_bound, drift_interval

__all__ = [
    "BOLTZMANN_J_PER_K",
    "DERATING_KNEE_C",
    "DERATING_ZERO_C",
    "DROOP_SHARE",
    "ELV_AC_RMS_V",
    "ELV_DC_V",
    "CheckResult",
    "OperatingCorners",
    "check_bandwidth",
    "check_full_power_bandwidth",
    "check_input_impedance",
    "check_input_range",
    "check_output_noise",
    "check_output_offset",
    "check_output_swing",
    "check_resistor_ratings",
    "closed_loop_bandwidth",
    "common_mode_input_resistance",
    "derated_power",
    "differential_input_resistance",
    "full_power_bandwidth",
    "input_peak_v",
    "johnson_noise_density",
    "life_value_bounds",
    "noise_band_hz",
    "noise_gain",
    "noninverting_node_voltage",
    "operating_corners",
    "output_noise_terms",
    "output_offset_bound",
    "parallel",
    "placement_life_drift",
    "required_bandwidth",
    "resistor_power",
    "resistor_voltages",
    "rms_over_band",
    "rss",
    "run_checks",
    "safety_cautions",
    "single_pole_magnitude",
    "value_spread",
]

Array = NDArray[np.float64]

#: Boltzmann constant in J/K; exact by definition in the 2019 SI (CODATA 2018).
BOLTZMANN_J_PER_K = 1.380649e-23
#: 0 °C in kelvin (exact by definition).
ZERO_CELSIUS_K = 273.15
#: Chip resistors keep their full power rating up to this ambient (°C) (common practice) ...
DERATING_KNEE_C = 70.0
#: ... and derate linearly to zero at this ambient (°C) (common practice).
DERATING_ZERO_C = 155.0
#: Share of the gain-accuracy budget allowed for the single-pole gain droop at the highest
#: signal frequency (the rest is left for the resistors; see :func:`check_bandwidth`).
DROOP_SHARE = 0.1
#: Commonly used extra-low-voltage limits: 60 V ripple-free DC and 30 V AC rms.
ELV_DC_V = 60.0
ELV_AC_RMS_V = 30.0

_TEMP_REF_C = 25.0  # temperature at which tolerances are specified


def _arr(value: object) -> Array:
    """``value`` as a float64 numpy array (scalars become 0-d arrays)."""
    return np.asarray(value, dtype=np.float64)


@dataclass(frozen=True)
class CheckResult:
    """One check's outcome. ``value``, ``limit`` and ``margin`` are in ``unit``; ``margin`` is
    positive when passing (module docstring); ``limit`` and ``margin`` are ``nan`` when the
    spec sets no requirement for the figure."""

    name: str
    passed: bool
    value: float
    limit: float
    margin: float
    unit: str
    detail: str


# --------------------------------------------------------------------------------------------
# Formulas (pure; scalars or arrays)
# --------------------------------------------------------------------------------------------


def parallel(r_a: ArrayLike, r_b: ArrayLike) -> Array:
    """R_a ∥ R_b = R_a·R_b/(R_a + R_b) in ohms (two resistors in parallel)."""
    a = np.asarray(r_a, dtype=float)
    b = np.asarray(r_b, dtype=float)
    return _arr(a * b / (a + b))


def value_spread(
    tolerance: float, tempco_per_k: float, temp_min_c: float, temp_max_c: float
) -> float:
    """δ = tolerance + tempco·max(|Tmin - 25 °C|, |Tmax - 25 °C|): the largest relative
    deviation of a resistor from its nominal value over the temperature range (fractions,
    per kelvin, °C; tolerances are specified at 25 °C, tempco bounds are linear)."""
    span_k = max(abs(temp_min_c - _TEMP_REF_C), abs(temp_max_c - _TEMP_REF_C))
    return tolerance + tempco_per_k * span_k


def life_value_bounds(
    spread: ArrayLike, drift_low: ArrayLike, drift_high: ArrayLike
) -> tuple[Array, Array]:
    """Bounds ``(low, high)`` of ``r/R0`` over the whole required life:
    ``low = (1 − δ)·(1 + d_low)``, ``high = (1 + δ)·(1 + d_high)``, with ``δ`` the value spread
    of :func:`value_spread` (tolerance and tempco) and ``[d_low, d_high]`` the end-of-life
    drift interval (:func:`placement_life_drift`; ``[−D, D]`` symmetric, ``[0, D]``
    one-sided). Drift grows with time (``D·√(t/life)``) and every interval holds 0, so the
    drift at any earlier time lies inside the end-of-life interval: these bounds hold from the
    start to the end of life (fractions in, fractions out)."""
    d = np.asarray(spread, dtype=float)
    return (
        _arr((1.0 - d) * (1.0 + np.asarray(drift_low, dtype=float))),
        _arr((1.0 + d) * (1.0 + np.asarray(drift_high, dtype=float))),
    )


def differential_input_resistance(r1: ArrayLike, r3: ArrayLike) -> Array:
    """R_diff = R1 + R3 (ohms): resistance seen by a floating differential source.

    Derivation (ideal op-amp: no input current, virtual short V- = V+ = Vp). A floating source
    pushes a current I into input 2 and takes the same I back out of input 1. No current
    enters the amplifier, so I flows through R3 and on through R4: ``V2 = Vp + I·R3``. Out of
    input 1 the current I flows from N through R1: ``V1 = Vn - I·R1``. With ``Vn = Vp``,
    ``V2 - V1 = I·(R1 + R3)``, whatever R2, R4 and VREF are. Balanced case R1 = R3 gives the
    textbook 2·R1 (common practice). Checked against a sympy nodal solve in the tests.
    """
    return _arr(np.asarray(r1, dtype=float) + np.asarray(r3, dtype=float))


def common_mode_input_resistance(r1: ArrayLike, r3: ArrayLike, r4_eff: ArrayLike) -> Array:
    """Z_cm = R1·(R3 + R4')/(R1 + R3) (ohms): both inputs tied together, against REF.

    Derivation (ideal op-amp). Input 2 sees R3 + R4' to REF. With both inputs at Vcm (REF as
    reference), ``Vp = Vcm·R4'/(R3 + R4')`` and the loop holds ``Vn = Vp``, so input 1 draws
    ``(Vcm - Vn)/R1 = Vcm·R3/(R1·(R3 + R4'))``: it looks like R1·(R3 + R4')/R3. In parallel,
    ``Z_cm = 1/(R3/(R1(R3+R4')) + 1/(R3+R4')) = R1·(R3+R4')/(R1+R3)``. For a balanced bridge
    (R2/R1 = R4'/R3) this equals the textbook (R1 + R2) ∥ (R3 + R4') (common practice); the
    exact form holds for any values. Checked against a sympy nodal solve in the tests.
    """
    a1 = np.asarray(r1, dtype=float)
    a3 = np.asarray(r3, dtype=float)
    return _arr(a1 * (a3 + np.asarray(r4_eff, dtype=float)) / (a1 + a3))


def johnson_noise_density(resistance_ohm: ArrayLike, temperature_c: ArrayLike) -> Array:
    """e = sqrt(4·k·T·R) in V/√Hz: open-circuit thermal (Johnson-Nyquist) noise density of a
    resistor R (ohms) at T = temperature_c + 273.15 K; k = 1.380649e-23 J/K (exact, 2019 SI)."""
    t_k = np.asarray(temperature_c, dtype=float) + ZERO_CELSIUS_K
    return _arr(np.sqrt(4.0 * BOLTZMANN_J_PER_K * t_k * np.asarray(resistance_ohm, dtype=float)))


def noise_gain(r1_eff: ArrayLike, r2: ArrayLike) -> Array:
    """NG = 1/β = 1 + R2/R1' (dimensionless): gain from a source at the non-inverting input
    (amplifier voltage noise, V+ node) to the output; β from :func:`transfer.feedback_factor`."""
    return 1.0 / feedback_factor(r1_eff, r2)


def output_noise_terms(
    r1: ArrayLike,
    r2: ArrayLike,
    r3: ArrayLike,
    r4: ArrayLike,
    rs1: ArrayLike,
    rs3: ArrayLike,
    rref: ArrayLike,
    voltage_noise_v_rthz: ArrayLike,
    current_noise_a_rthz: ArrayLike,
    temperature_c: ArrayLike,
) -> dict[str, Array]:
    """Output-referred white-noise densities (V/√Hz) of each uncorrelated source, by superposition
    with an ideal (infinite-gain) amplifier. With ``NG = 1 + R2/R1'``, ``a = R4'/(R3' + R4')``
    and ``e(R) = sqrt(4kTR)``:

    - R1 and Rs1: ``e·R2/R1'`` (inverting gain);  R2: ``e·1`` (in series with the output);
    - R3 and Rs3: ``e·a·NG``;  R4 and Rref: ``e·(1 - a)·NG`` (divided to P, then non-inverting);
    - amplifier voltage noise en: ``en·NG``;
    - current noise in at the inverting input: ``in·R2`` (all of it flows through R2);
    - current noise in at the non-inverting input: ``in·(R3' ∥ R4')·NG``.

    Resistances in ohms, temperature in °C (the source and REF impedances are taken as
    resistors at the same temperature). Textbook op-amp noise analysis; the tests compare it
    with an independent sympy nodal superposition and with ngspice.
    """
    r1e = np.asarray(r1, dtype=float) + np.asarray(rs1, dtype=float)
    r3e = np.asarray(r3, dtype=float) + np.asarray(rs3, dtype=float)
    r4e = np.asarray(r4, dtype=float) + np.asarray(rref, dtype=float)
    r2a = np.asarray(r2, dtype=float)
    ng = noise_gain(r1e, r2a)
    a = divider_ratio(r3e, r4e)
    inv = r2a / r1e
    en = np.asarray(voltage_noise_v_rthz, dtype=float)
    i_n = np.asarray(current_noise_a_rthz, dtype=float)

    def e(r: ArrayLike) -> Array:
        return johnson_noise_density(r, temperature_c)

    return {
        "R1": e(r1) * inv,
        "R2": e(r2a),
        "R3": e(r3) * a * ng,
        "R4": e(r4) * (1.0 - a) * ng,
        "source 1": e(rs1) * inv,
        "source 2": e(rs3) * a * ng,
        "REF drive": e(rref) * (1.0 - a) * ng,
        "amplifier en": en * ng,
        "amplifier in(-)": i_n * r2a,
        "amplifier in(+)": i_n * parallel(r3e, r4e) * ng,
    }


def rss(terms: dict[str, Array]) -> Array:
    """sqrt(Σ eᵢ²): total density of uncorrelated noise sources (same unit as the terms)."""
    total = np.zeros(np.broadcast(*terms.values()).shape)
    for value in terms.values():
        total = total + value**2
    return np.sqrt(total)


def rms_over_band(density_v_rthz: ArrayLike, f_low_hz: float, f_high_hz: float) -> Array:
    """V_rms = e·sqrt(f_high - f_low): RMS of white noise of density e (V/√Hz) through an ideal
    (brick-wall) band [f_low, f_high] in Hz (integral of e² over the band)."""
    return np.asarray(density_v_rthz, dtype=float) * math.sqrt(f_high_hz - f_low_hz)


def noninverting_node_voltage(v2: ArrayLike, vref: ArrayLike, a: ArrayLike) -> Array:
    """V+ = a·V2 + (1 - a)·VREF (volts): the divider R3'/R4' between input 2 and REF, with
    a = R4'/(R3' + R4') from :func:`transfer.divider_ratio` (no amplifier input current)."""
    ratio = np.asarray(a, dtype=float)
    return _arr(ratio * np.asarray(v2, dtype=float) + (1.0 - ratio) * np.asarray(vref, dtype=float))


def closed_loop_bandwidth(gbw_hz: ArrayLike, noise_gain_: ArrayLike) -> Array:
    """f_3dB = GBW/NG (Hz): closed-loop -3 dB bandwidth of a single-pole (dominant-pole)
    amplifier at noise gain NG = 1 + R2/R1' (textbook gain-bandwidth product relation)."""
    return _arr(np.asarray(gbw_hz, dtype=float) / np.asarray(noise_gain_, dtype=float))


def single_pole_magnitude(f_hz: ArrayLike, f3db_hz: ArrayLike) -> Array:
    """|H(f)| = 1/sqrt(1 + (f/f_3dB)²): relative gain of a single-pole low-pass response."""
    ratio = np.asarray(f_hz, dtype=float) / np.asarray(f3db_hz, dtype=float)
    return _arr(1.0 / np.sqrt(1.0 + ratio**2))


def required_bandwidth(f_max_hz: ArrayLike, droop: ArrayLike) -> Array:
    """f_3dB,min = f_max/sqrt((1 - ε)⁻² - 1) (Hz): the smallest single-pole bandwidth whose gain
    at f_max has fallen by no more than the fraction ε (solve |H(f_max)| = 1 - ε)."""
    eps = np.asarray(droop, dtype=float)
    return np.asarray(f_max_hz, dtype=float) / np.sqrt((1.0 - eps) ** -2 - 1.0)


def full_power_bandwidth(slew_v_per_s: ArrayLike, peak_v: ArrayLike) -> Array:
    """f_FP = SR/(2π·Vpk) (Hz): highest frequency of a sine of peak Vpk (volts) whose largest
    slope 2π·f·Vpk stays within the slew rate SR (V/s) (textbook full-power bandwidth)."""
    peak = np.asarray(peak_v, dtype=float)
    with np.errstate(divide="ignore"):
        return np.asarray(slew_v_per_s, dtype=float) / (2.0 * math.pi * peak)


def derated_power(power_at_knee_w: ArrayLike, temperature_c: ArrayLike) -> Array:
    """P(T) = P70·clip((155 - T)/(155 - 70), 0, 1) (W): chip-resistor power rating, full up to
    70 °C ambient and falling linearly to zero at 155 °C (common practice derating curve)."""
    t = np.asarray(temperature_c, dtype=float)
    factor = np.clip((DERATING_ZERO_C - t) / (DERATING_ZERO_C - DERATING_KNEE_C), 0.0, 1.0)
    return np.asarray(power_at_knee_w, dtype=float) * factor


def resistor_power(voltage_v: ArrayLike, resistance_ohm: ArrayLike) -> Array:
    """P = V²/R (W) dissipated by a resistor R (ohms) with V (volts) across it (Joule's law)."""
    return _arr(np.asarray(voltage_v, dtype=float) ** 2 / np.asarray(resistance_ohm, dtype=float))


def resistor_voltages(
    r1: ArrayLike,
    r2: ArrayLike,
    r3: ArrayLike,
    r4: ArrayLike,
    rs1: ArrayLike,
    rs3: ArrayLike,
    rref: ArrayLike,
    v1: ArrayLike,
    v2: ArrayLike,
    vref: ArrayLike,
    vout: ArrayLike,
) -> tuple[Array, Array, Array, Array]:
    """Voltages across R1, R2, R3, R4 (volts, signed) for the linear solution ``vout``.

    Node N is the divider between V1 and Vout: ``Vn = (V1·R2 + Vout·R1')/(R1' + R2)`` (no
    amplifier input current), so ``V_R1 = (V1 - Vn)·R1/R1'`` and ``V_R2 = Vn - Vout``. The
    R3-R4 leg carries ``I = (V2 - VREF)/(R3' + R4')``: ``V_R3 = I·R3``, ``V_R4 = I·R4``
    (Ohm's and Kirchhoff's laws)."""
    a1, a2, a3, a4 = (np.asarray(x, dtype=float) for x in (r1, r2, r3, r4))
    r1e = a1 + np.asarray(rs1, dtype=float)
    out = np.asarray(vout, dtype=float)
    in1 = np.asarray(v1, dtype=float)
    vn = (in1 * a2 + out * r1e) / (r1e + a2)
    leg = (np.asarray(v2, dtype=float) - np.asarray(vref, dtype=float)) / (
        a3 + np.asarray(rs3, dtype=float) + a4 + np.asarray(rref, dtype=float)
    )
    return (in1 - vn) * a1 / r1e, vn - out, leg * a3, leg * a4


def output_offset_bound(
    offset_v: float,
    bias_a: float,
    offset_current_a: float | None,
    r2: ArrayLike,
    r1_eff: ArrayLike,
    r_plus: ArrayLike,
) -> Array:
    """Worst |output offset| (volts) from the amplifier's input offset and bias currents.

    With Ib- into the inverting and Ib+ into the non-inverting input, superposition gives
    ``Vout = Vos·NG + Ib-·R2 - Ib+·Rp·NG`` with ``NG = 1 + R2/R1'`` and ``Rp = R3' ∥ R4'``
    (textbook bias-current analysis). Bounds: |Vos| ≤ offset_v; with an offset-current bound,
    ``Ib± = Ib ∓/± Ios/2`` with |Ib| ≤ bias_a and |Ios| ≤ offset_current_a, so the worst case
    is ``|Vos|·NG + Ib·|R2 - Rp·NG| + (Ios/2)·(R2 + Rp·NG)``; without one the two currents are
    independent within ±bias_a: ``|Vos|·NG + Ib·(R2 + Rp·NG)``. Amps and ohms in.
    """
    r2a = np.asarray(r2, dtype=float)
    rp = np.asarray(r_plus, dtype=float)
    ng = noise_gain(r1_eff, r2a)
    vos_term = abs(offset_v) * ng
    if offset_current_a is None:
        return vos_term + abs(bias_a) * (r2a + rp * ng)
    return (
        vos_term
        + abs(bias_a) * np.abs(r2a - rp * ng)
        + abs(offset_current_a) / 2.0 * (r2a + rp * ng)
    )


def noise_band_hz(spec: Spec) -> tuple[float, float]:
    """The noise band [low, high] in Hz: ``noise_band_low_hz`` to ``noise_band_high_hz``, or to
    the signal's ``max_frequency_hz`` when no upper edge is given. Raises
    :class:`ModelError` when the band is empty."""
    req = spec.requirements
    high = (
        req.noise_band_high_hz
        if req.noise_band_high_hz is not None
        else spec.signal.max_frequency_hz
    )
    if high <= req.noise_band_low_hz:
        raise ModelError(
            "requirements",
            "noise band low",
            f"{req.noise_band_low_hz:g} Hz is not below the band's upper edge {high:g} Hz "
            "(noise band high, or the signal's max_frequency when that is not given)",
        )
    return req.noise_band_low_hz, high


def input_peak_v(spec: Spec) -> float:
    """Largest |V1| or |V2| in volts: max |Vcm ± Vd/2| over the ends of both ranges."""
    s = spec.signal
    return max(
        abs(cm + sign * d / 2.0)
        for cm in (s.common_mode_min_v, s.common_mode_max_v)
        for d in (s.differential_min_v, s.differential_max_v)
        for sign in (-1.0, 1.0)
    )


# --------------------------------------------------------------------------------------------
# Operating corners
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class OperatingCorners:
    """Flat arrays (one entry per corner) of every quantity the checks vary: resistor values
    (ohms), source and REF impedances (ohms), Vcm, Vd, VREF (volts), the sign of the
    amplifier's common-mode error (±1) and its open-loop gain (ratio: the minimum, and ``inf``;
    only ``inf`` for an ideal amplifier)."""

    r1: Array
    r2: Array
    r3: Array
    r4: Array
    rs1: Array
    rs3: Array
    rref: Array
    vcm: Array
    vd: Array
    vref: Array
    sign: Array
    open_loop_gain: Array

    @property
    def v1(self) -> Array:
        return self.vcm - self.vd / 2.0

    @property
    def v2(self) -> Array:
        return self.vcm + self.vd / 2.0

    @property
    def r1_eff(self) -> Array:
        return self.r1 + self.rs1

    @property
    def r3_eff(self) -> Array:
        return self.r3 + self.rs3

    @property
    def r4_eff(self) -> Array:
        return self.r4 + self.rref


def _placement_spread(placement: Placement, spec: Spec) -> float:
    """δ of :func:`value_spread` for one placement; a network element's deviation is the
    shared absolute error plus half the ratio tolerance (see :class:`NetworkPart`)."""
    req = spec.requirements
    part = placement.part
    if isinstance(part, NetworkPart):
        tol = part.abs_tolerance + part.ratio_tolerance / 2.0
        tc = part.abs_tempco_per_k + part.tracking_tempco_per_k / 2.0
    else:
        tol, tc = part.tolerance, part.tempco_per_k
    return value_spread(tol, tc, req.temp_min_c, req.temp_max_c)


def placement_life_drift(
    placement: Placement, life_s: float, model: DriftModel = DriftModel.SYMMETRIC
) -> tuple[float, float]:
    """End-of-life drift interval ``(d_low, d_high)`` (fractions) of one placement after
    ``life_s`` seconds. A discrete part: :func:`~optimizer.analysis.variation.drift_interval`
    of its drift bound ``D`` (``[−D, D]``, or ``[0, D]`` one-sided). A network element, the same
    convention as :func:`_placement_spread`: the package's shared drift interval plus half
    the ratio drift either way (a mismatch, symmetric in both models)."""
    part = placement.part
    if isinstance(part, NetworkPart):
        low, high = drift_interval(drift_bound(part.drift_1000h, life_s), model)
        half_ratio = drift_bound(part.ratio_drift_1000h, life_s) / 2.0
        return low - half_ratio, high + half_ratio
    return drift_interval(drift_bound(part.drift_1000h, life_s), model)


def _ends(low: float, high: float) -> Array:
    return np.unique(np.array([low, high], dtype=float))


def _source_pairs(spec: Spec) -> tuple[Array, Array]:
    """Vertices of the allowed (Rs1, Rs3) region: each in [min, max], |Rs1 - Rs3| ≤ imbalance."""
    src = spec.signal.source
    lo, hi, imb = src.min_ohm, src.max_ohm, src.imbalance_ohm
    cand = np.unique(np.clip(np.array([lo, hi, lo + imb, hi - imb]), lo, hi))
    g1, g3 = np.meshgrid(cand, cand, indexing="ij")
    keep = np.abs(g1 - g3) <= imb * (1.0 + 1e-12) + 1e-12
    return g1[keep], g3[keep]


def operating_corners(design: Design, spec: Spec, end_of_life: bool = False) -> OperatingCorners:
    """Every combination of the range ends listed in the module docstring, as flat arrays.
    ``end_of_life``: the resistor ranges include the drift over the required life
    (:func:`life_value_bounds`), so they hold for the whole life."""
    nominal = design.resistances_ohm
    req = spec.requirements
    values = []
    for r, placement in zip(nominal, design.placements, strict=True):
        d = _placement_spread(placement, spec)
        if end_of_life:
            low, high = life_value_bounds(
                d, *placement_life_drift(placement, req.life_s, req.drift_model)
            )
            values.append(_ends(r * float(low), r * float(high)))
        else:
            values.append(_ends(r * (1.0 - d), r * (1.0 + d)))
    rs1, rs3 = _source_pairs(spec)
    ref = spec.reference
    sig = spec.signal
    signs = np.array([1.0]) if math.isinf(spec.amplifier.cmrr_db) else np.array([-1.0, 1.0])
    gains = np.unique(np.array([spec.amplifier.open_loop_gain, math.inf]))
    axes = [
        *values,
        np.arange(rs1.size, dtype=float),
        _ends(ref.impedance_min_ohm, ref.impedance_max_ohm),
        _ends(sig.common_mode_min_v, sig.common_mode_max_v),
        _ends(sig.differential_min_v, sig.differential_max_v),
        _ends(ref.voltage_min_v, ref.voltage_max_v),
        signs,
        gains,
    ]
    grid = [g.ravel() for g in np.meshgrid(*axes, indexing="ij")]
    pair = grid[4].astype(int)
    return OperatingCorners(
        r1=grid[0], r2=grid[1], r3=grid[2], r4=grid[3],
        rs1=rs1[pair], rs3=rs3[pair], rref=grid[5],
        vcm=grid[6], vd=grid[7], vref=grid[8], sign=grid[9], open_loop_gain=grid[10],
    )  # fmt: skip


def _vout(c: OperatingCorners, spec: Spec) -> Array:
    amp = spec.amplifier
    k = coefficients(
        c.r1, c.r2, c.r3, c.r4, c.rs1, c.rs3, c.rref, c.open_loop_gain, amp.cmrr_ratio, c.sign
    )
    return np.asarray(k.k1 * c.v1 + k.k2 * c.v2 + k.kref * c.vref, dtype=float)


def _offset(c: OperatingCorners, spec: Spec) -> Array:
    amp = spec.amplifier
    return output_offset_bound(
        amp.offset_v, amp.bias_a, amp.offset_current_a, c.r2, c.r1_eff, parallel(c.r3_eff, c.r4_eff)
    )


def _q(value: float, unit: str) -> str:
    return format_quantity(value, unit, 4)


def _no_requirement(name: str, value: float, unit: str, detail: str) -> CheckResult:
    return CheckResult(name, True, value, math.nan, math.nan, unit, f"no requirement set; {detail}")


def _window(
    name: str, low: Array, high: Array, window: tuple[float, float], what: str
) -> CheckResult:
    lo_lim, hi_lim = window
    vmin, vmax = float(np.min(low)), float(np.max(high))
    m_hi, m_lo = hi_lim - vmax, vmin - lo_lim
    value, limit, margin = (vmax, hi_lim, m_hi) if m_hi <= m_lo else (vmin, lo_lim, m_lo)
    detail = (
        f"{what} spans {_q(vmin, 'V')} to {_q(vmax, 'V')}; allowed "
        f"{_q(lo_lim, 'V')} to {_q(hi_lim, 'V')}"
    )
    return CheckResult(name, margin >= 0.0, value, limit, margin, "V", detail)


# --------------------------------------------------------------------------------------------
# Checks
# --------------------------------------------------------------------------------------------


def _life_stages(design: Design, spec: Spec) -> tuple[tuple[str, OperatingCorners], ...]:
    """The operating corners at the start of life and, when the spec asks for a life, over
    the whole life (drift applied), each with the words that say so."""
    start = operating_corners(design, spec)
    if spec.requirements.life_s <= 0.0:
        return (("", start),)
    return (
        (" at the start of life", start),
        (
            " at the end of life with drift applied",
            operating_corners(design, spec, end_of_life=True),
        ),
    )


def check_input_impedance(design: Design, spec: Spec) -> tuple[CheckResult, CheckResult]:
    """Differential (floating source) and common-mode input impedance, lowest over the
    operating corners at the start and at the end of the required life (drift applied, so the
    floor holds for the whole life), against ``min_input_impedance_ohm`` (floor; 0 = not
    required).

    At the end of life the lowest differential resistance ``R1 + R3`` has R1 and R3 at the low
    end of their drift (``−D``; ``0`` one-sided); the common-mode resistance rises with R1 and
    R4 (low end of their drift) and with R3 when ``R1 > R4'`` (falls otherwise), so R3 sits at
    the matching end. Both are taken over every corner."""
    stages = _life_stages(design, spec)
    floor = spec.requirements.min_input_impedance_ohm
    results = []

    def differential(c: OperatingCorners) -> Array:
        return differential_input_resistance(c.r1, c.r3)

    def common_mode(c: OperatingCorners) -> Array:
        return common_mode_input_resistance(c.r1, c.r3, c.r4_eff)

    for name, label, formula in (
        ("input_impedance_differential", "differential input resistance R1 + R3", differential),
        ("input_impedance_common_mode", "common-mode input resistance R1·(R3 + R4')/(R1 + R3)",
         common_mode),
    ):  # fmt: skip
        lows = [(float(np.min(formula(c))), when) for when, c in stages]
        value, when = min(lows, key=lambda pair: pair[0])
        detail = f"lowest {label} {_q(value, 'Ω')}{when}"
        if floor <= 0.0:
            results.append(_no_requirement(name, value, "Ω", detail))
        else:
            margin = value - floor
            results.append(
                CheckResult(
                    name,
                    margin >= 0.0,
                    value,
                    floor,
                    margin,
                    "Ω",
                    f"{detail}; floor {_q(floor, 'Ω')}",
                )
            )
    return results[0], results[1]


def check_output_noise(design: Design, spec: Spec) -> CheckResult:
    """Output noise RMS over the noise band (brick-wall), worst over the operating corners at
    the start and at the end of the required life (drift applied: the ceiling holds for the
    whole life), at the hottest temperature, white noise only (1/f noise is not modelled),
    against ``max_output_noise_v_rms`` (ceiling; none = informational).

    The noise is not monotone in every resistor (R1's own noise rises with R1, its gain
    ``R2/R1'`` falls), so every corner of the end-of-life ranges is evaluated; the largest
    terms usually rise with R2 (its noise, the noise gain ``1 + R2/R1'``, ``in·R2``) and fall
    with R1, i.e. R2 at the high end of its drift and R1 at the low end."""
    amp = spec.amplifier
    hot = spec.requirements.temp_max_c
    best: tuple[float, str, dict[str, Array], int] | None = None
    for when, c in _life_stages(design, spec):
        stage_terms = output_noise_terms(
            c.r1, c.r2, c.r3, c.r4, c.rs1, c.rs3, c.rref,
            amp.voltage_noise_v_rthz, amp.current_noise_a_rthz, hot,
        )  # fmt: skip
        stage_terms = {k: np.broadcast_to(v, c.r1.shape) for k, v in stage_terms.items()}
        stage_density = rss(stage_terms)
        index = int(np.argmax(stage_density))
        if best is None or float(stage_density[index]) > best[0]:
            best = (float(stage_density[index]), when, stage_terms, index)
    assert best is not None
    peak, when, terms, worst = best
    f_low, f_high = noise_band_hz(spec)
    rms = float(rms_over_band(peak, f_low, f_high))
    top = max(terms, key=lambda name: float(terms[name][worst]))
    detail = (
        f"{_q(peak, 'V/√Hz')} white noise at the output at {hot:g} °C"
        f"{when} (largest part: {top}, {_q(float(terms[top][worst]), 'V/√Hz')}) over "
        f"{_q(f_low, 'Hz')} to {_q(f_high, 'Hz')} (brick-wall band, 1/f noise not modelled) "
        f"gives {_q(rms, 'V')} rms"
    )
    ceiling = spec.requirements.max_output_noise_v_rms
    if ceiling is None:
        return _no_requirement("output_noise", rms, "V", detail)
    margin = ceiling - rms
    return CheckResult(
        "output_noise",
        margin >= 0.0,
        rms,
        ceiling,
        margin,
        "V",
        f"{detail}; ceiling {_q(ceiling, 'V')} rms",
    )


def check_input_range(design: Design, spec: Spec) -> CheckResult:
    """Non-inverting node voltage V+ = a·V2 + (1 - a)·VREF, shifted by ±Ib·(R3' ∥ R4'), over
    the operating corners, inside the amplifier's input common-mode range (volts)."""
    c = operating_corners(design, spec)
    vp = noninverting_node_voltage(c.v2, c.vref, divider_ratio(c.r3_eff, c.r4_eff))
    shift = abs(spec.amplifier.bias_a) * parallel(c.r3_eff, c.r4_eff)
    window = spec.amplifier.input_span.resolve(spec.rails.negative_v, spec.rails.positive_v)
    return _window("amp_input_range", vp - shift, vp + shift, window, "amplifier input voltage V+")


def check_output_swing(design: Design, spec: Spec) -> CheckResult:
    """Vout = k1·V1 + k2·V2 + kref·VREF (exact coefficients with the amplifier's CMRR and its
    open-loop gain at both ends, ``A_min`` and ``∞``) plus the output offset bound, over the
    operating corners, inside the output swing."""
    c = operating_corners(design, spec)
    vout = _vout(c, spec)
    off = _offset(c, spec)
    window = spec.amplifier.output_span.resolve(spec.rails.negative_v, spec.rails.positive_v)
    return _window("output_swing", vout - off, vout + off, window, "output (with offset)")


def check_bandwidth(design: Design, spec: Spec) -> CheckResult:
    """Small-signal bandwidth f_3dB = GBW/(1 + R2/R1') (lowest over the corners) against the
    bandwidth needed for a flat response up to the signal's ``max_frequency_hz``.

    Criterion (our choice, stated): with a single-pole response the gain at f_max falls by
    ``1 - 1/sqrt(1 + (f_max/f_3dB)²)``; that droop may use at most ``DROOP_SHARE`` (10 %) of the
    gain-accuracy budget, the rest being left for the resistors, i.e.
    ``f_3dB ≥ f_max/sqrt((1 - ε)⁻² - 1)`` with ``ε = 0.1·gain_accuracy``. Allotting a small
    fixed share of an error budget to the amplifier's frequency response is common practice in
    precision error budgets; it ties flatness to the accuracy the user asked for, where a fixed
    "f_3dB ≥ 10·f_max" rule would allow a 0.5 % droop whatever the accuracy. Margin in Hz.
    """
    c = operating_corners(design, spec)
    f3 = float(np.min(closed_loop_bandwidth(spec.amplifier.gbw_hz, noise_gain(c.r1_eff, c.r2))))
    f_max = spec.signal.max_frequency_hz
    eps = DROOP_SHARE * spec.requirements.gain_accuracy
    need = float(required_bandwidth(f_max, eps))
    droop = 1.0 - float(single_pole_magnitude(f_max, f3))
    detail = (
        f"closed-loop bandwidth {_q(f3, 'Hz')}: gain at {_q(f_max, 'Hz')} is "
        f"{droop * 100:.3g} % low; allowed {eps * 100:.3g} % ({DROOP_SHARE:g} of the gain "
        f"accuracy) needs at least {_q(need, 'Hz')}"
    )
    margin = f3 - need
    return CheckResult("small_signal_bandwidth", margin >= 0.0, f3, need, margin, "Hz", detail)


def check_full_power_bandwidth(design: Design, spec: Spec) -> CheckResult:
    """Slew-limited full-power bandwidth SR/(2π·Vpk), Vpk = largest |Adm·Vd| over the corners
    (the signal part of the output; the DC part from REF and common mode does not slew), against
    the signal's ``max_frequency_hz`` (floor, Hz).

    The open-loop gain may be anything at or above its minimum, and ``|Adm|`` rises with it
    (``Adm = (a(1+ε) + c(1−ε))/(2(1/A + β(1−ε)))``), so the largest peak, and with it the
    conservative bandwidth that holds for every allowed ``A``, is at ``A = ∞``: for a balanced
    bridge ``Vpk = G·|Vd|``, where ``A_min`` would give the smaller ``G·|Vd|/(1 + (1+G)/A_min)``.
    """
    c = operating_corners(design, spec)
    amp = spec.amplifier
    k = coefficients(
        c.r1, c.r2, c.r3, c.r4, c.rs1, c.rs3, c.rref, c.open_loop_gain, amp.cmrr_ratio, c.sign
    )
    peak = float(np.max(np.abs(differential_gain(k) * c.vd)))
    fp = float(full_power_bandwidth(amp.slew_v_per_s, peak))
    f_max = spec.signal.max_frequency_hz
    margin = fp - f_max
    detail = (
        f"output signal peak {_q(peak, 'V')} at slew rate {_q(amp.slew_v_per_s * 1e-6, 'V/µs')} "
        f"gives {_q(fp, 'Hz')}; signal reaches {_q(f_max, 'Hz')}"
    )
    return CheckResult("full_power_bandwidth", margin >= 0.0, fp, f_max, margin, "Hz", detail)


def check_resistor_ratings(design: Design, spec: Spec) -> tuple[CheckResult, ...]:
    """Power and voltage of each resistor at the worst corner (linear solution; the output is not
    assumed to clip) against its power rating derated to ``temp_max_c`` and its limiting
    voltage. Network elements use ``power_per_element_w`` (package totals are not checked)."""
    c = operating_corners(design, spec)
    vout = _vout(c, spec)
    volts = resistor_voltages(
        c.r1, c.r2, c.r3, c.r4, c.rs1, c.rs3, c.rref, c.v1, c.v2, c.vref, vout
    )
    hot = spec.requirements.temp_max_c
    power_results: list[CheckResult] = []
    voltage_results: list[CheckResult] = []
    for placement, v, r in zip(design.placements, volts, (c.r1, c.r2, c.r3, c.r4), strict=True):
        part = placement.part
        name = placement.position
        rating = part.power_per_element_w if isinstance(part, NetworkPart) else part.power_w
        allowed = float(derated_power(rating, hot))
        power = float(np.max(resistor_power(v, r)))
        margin = allowed - power
        power_results.append(
            CheckResult(
                f"power_{name}", margin >= 0.0, power, allowed, margin, "W",
                f"{name} dissipates up to {_q(power, 'W')}; rating {_q(rating, 'W')} at 70 °C "
                f"derated to {_q(allowed, 'W')} at {hot:g} °C",
            )
        )  # fmt: skip
        peak = float(np.max(np.abs(v)))
        margin_v = part.max_voltage_v - peak
        voltage_results.append(
            CheckResult(
                f"voltage_{name}", margin_v >= 0.0, peak, part.max_voltage_v, margin_v, "V",
                f"{name} sees up to {_q(peak, 'V')}; "
                f"limiting voltage {_q(part.max_voltage_v, 'V')}",
            )
        )  # fmt: skip
    return (*power_results, *voltage_results)


def check_output_offset(design: Design, spec: Spec) -> CheckResult:
    """Worst output offset from Vos and bias currents (:func:`output_offset_bound`) over the
    corners. Informational: the spec states no offset requirement (the figure is, however, part
    of the output-swing check), so ``passed=True`` and ``limit = margin = nan``."""
    c = operating_corners(design, spec)
    off = float(np.max(_offset(c, spec)))
    amp = spec.amplifier
    ios = (
        "not given: currents independent"
        if amp.offset_current_a is None
        else _q(abs(amp.offset_current_a), "A")
    )
    return _no_requirement(
        "output_offset", off, "V",
        f"worst output offset ±{_q(off, 'V')} from Vos {_q(abs(amp.offset_v), 'V')}, bias "
        f"{_q(abs(amp.bias_a), 'A')}, offset current {ios}",
    )  # fmt: skip


def run_checks(design: Design, spec: Spec) -> tuple[CheckResult, ...]:
    """All checks of this module, in a fixed order: input impedance (differential, common mode),
    output noise, amplifier input range, output swing, small-signal bandwidth, full-power
    bandwidth, resistor power (R1 to R4), resistor voltage (R1 to R4), output offset."""
    return (
        *check_input_impedance(design, spec),
        check_output_noise(design, spec),
        check_input_range(design, spec),
        check_output_swing(design, spec),
        check_bandwidth(design, spec),
        check_full_power_bandwidth(design, spec),
        *check_resistor_ratings(design, spec),
        check_output_offset(design, spec),
    )


def safety_cautions(spec: Spec) -> tuple[str, ...]:
    """Cautions when an input can exceed the commonly used extra-low-voltage limits: 60 V DC, or
    for an AC (mains-derived, ranges in peak volts) signal 30 V rms, compared as peak/√2. Empty
    when the inputs stay within them (at the limit counts as within)."""
    peak = input_peak_v(spec)
    if spec.signal.ac:
        level, limit = peak / math.sqrt(2.0), ELV_AC_RMS_V
        what = f"{peak:.4g} V peak ({level:.4g} V rms for a sine)"
        kind = "AC rms"
    else:
        level, limit, what, kind = peak, ELV_DC_V, f"{peak:.4g} V", "DC"
    if level <= limit:
        return ()
    return (
        f"Hazardous voltage: an input can reach {what}, above the {limit:g} V {kind} usually "
        "treated as the ceiling of extra-low voltage. Treat the input network as part of a "
        "hazardous-voltage circuit.",
        "No isolation: the four resistors are the only thing between the source and the "
        "low-voltage side (amplifier, REF drive, ground). A resistor that fails short or arcs "
        "over brings the source voltage onto that side; choose parts, or series strings of "
        "parts, whose voltage and surge ratings suit the working voltage.",
        "Creepage and clearance: keep the input resistors, their pads, traces and connectors "
        "far enough from low-voltage copper, mounting holes and the enclosure for this working "
        "voltage, pollution degree and altitude; the distances come from the safety standard "
        "that applies to your product, not from Quartet.",
        "Insulation: decide which barriers need basic, supplementary or reinforced insulation "
        "and how they are tested; anything a person can touch must stay separated from the input "
        "side.",
        "Quartet checks none of these points. Follow the local electrical codes and the product "
        "safety standards that apply, and have the design reviewed by a qualified, licensed "
        "person before it is connected to such a source.",
    )
