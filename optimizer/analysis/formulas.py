"""The formulas of the other checks, each one small pure function (scalars or numpy arrays in,
arrays out), with the equation, its units and where it comes from in its docstring.

Circuit and labels as in :mod:`optimizer.analysis.transfer`; primed values include the source
and REF impedances (``R1' = R1 + Rs1``, ``R3' = R3 + Rs3``, ``R4' = R4 + Rref``). The checks
that evaluate them over the operating corners are in :mod:`optimizer.analysis.checks`.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ModelError
from ..spec import Spec
from .environment import REFERENCE_TEMPERATURE_C
from .transfer import divider_ratio, feedback_factor

__all__ = [
    "BOLTZMANN_J_PER_K",
    "DERATING_KNEE_C",
    "DERATING_ZERO_C",
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
    "output_noise_terms",
    "output_offset_bound",
    "parallel",
    "required_bandwidth",
    "resistor_power",
    "resistor_voltages",
    "rms_over_band",
    "rss",
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


def _arr(value: object) -> Array:
    """``value`` as a float64 numpy array (scalars become 0-d arrays)."""
    return np.asarray(value, dtype=np.float64)


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
    span_k = max(
        abs(temp_min_c - REFERENCE_TEMPERATURE_C), abs(temp_max_c - REFERENCE_TEMPERATURE_C)
    )
    return tolerance + tempco_per_k * span_k


def life_value_bounds(
    spread: ArrayLike, drift_low: ArrayLike, drift_high: ArrayLike
) -> tuple[Array, Array]:
    """Bounds ``(low, high)`` of ``r/R0`` over the whole required life:
    ``low = (1 − δ)·(1 + d_low)``, ``high = (1 + δ)·(1 + d_high)``, with ``δ`` the value spread
    of :func:`value_spread` (tolerance and tempco) and ``[d_low, d_high]`` the end-of-life
    drift interval (``operating.placement_life_drift``; ``[−D, D]`` symmetric, ``[0, D]``
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
