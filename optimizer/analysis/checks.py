"""The other checks of a design: input impedance, noise, ranges, bandwidth, ratings, offset.

Circuit and labels as in :mod:`optimizer.analysis.transfer`: R1 from input 1 (source V1 with
impedance Rs1) to the inverting node N, R2 from N to the output, R3 from input 2 (source V2 with
impedance Rs3) to the non-inverting node P, R4 from P to REF (drive VREF with impedance Rref).
Primed values include the source and REF impedances: ``R1' = R1 + Rs1``, ``R3' = R3 + Rs3``,
``R4' = R4 + Rref``. The signal is split as ``V1 = Vcm - Vd/2``, ``V2 = Vcm + Vd/2``.

Every formula sits in one small pure function of :mod:`optimizer.analysis.formulas`; the
safety cautions are :mod:`optimizer.analysis.safety`.
:func:`run_checks` evaluates them over the *operating corners*
(:func:`~optimizer.analysis.operating.operating_corners`):
every combination of the ends of the common-mode, differential and REF voltage ranges, of the
source and REF impedance ranges, of each resistor's value spread (initial tolerance plus
tempco over the temperature range; drift is left to the worst-case module, except for the
input-impedance and noise checks, which are also evaluated at the end of the required life,
drift applied: ``operating.life_value_bounds``), of the sign of
the amplifier's common-mode error and of its open-loop gain ``A`` (a datasheet gives a minimum,
so ``A ∈ {A_min, ∞}``: every closed-loop coefficient is the ideal one times the same factor
``β(1 − ε)/(1/A + β(1 − ε))``, which rises with ``A``, so an output at the two ends bounds the
output at every ``A ≥ A_min``). The quantities checked are linear in the voltages, so the
voltage corners give their extremes exactly; in the resistor values they are smooth and, over
spreads of a few percent, nearly linear, so the resistor corners give the extremes to within
second-order terms (corner enumeration, the usual practice of tolerance analysis).

Margin convention of :class:`Outcome`: ``margin`` is in the check's own unit (the same as
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
from numpy.typing import NDArray

from ..design import Design
from ..parts import NetworkPart
from ..spec import Spec
from ..units import format_quantity
from .formulas import (
    closed_loop_bandwidth,
    common_mode_input_resistance,
    derated_power,
    differential_input_resistance,
    full_power_bandwidth,
    noise_band_hz,
    noise_gain,
    noninverting_node_voltage,
    output_noise_terms,
    output_offset_bound,
    parallel,
    required_bandwidth,
    resistor_power,
    resistor_voltages,
    rms_over_band,
    rss,
    single_pole_magnitude,
)
from .operating import OperatingCorners, Stages, life_stages, operating_corners
from .transfer import coefficients, differential_gain, divider_ratio

__all__ = [
    "DROOP_SHARE",
    "Outcome",
    "check_bandwidth",
    "check_full_power_bandwidth",
    "check_input_impedance",
    "check_input_range",
    "check_output_noise",
    "check_output_offset",
    "check_output_swing",
    "check_resistor_ratings",
    "resistor_stress",
    "run_checks",
]

Array = NDArray[np.float64]

#: Share of the gain-accuracy budget allowed for the single-pole gain droop at the highest
#: signal frequency (the rest is left for the resistors; see :func:`check_bandwidth`).
DROOP_SHARE = 0.1


@dataclass(frozen=True)
class Outcome:
    """One requirement's or check's outcome (the one word for it: a design's whole exact check
    is a ``verify.Verification``). ``value``, ``limit`` and ``margin`` are in ``unit``;
    ``margin`` is positive when passing (module docstring); ``limit`` and ``margin`` are ``nan``
    when the spec sets no requirement for the figure. ``detail``: the words that explain the
    figure (empty for the requirements a ``Verification`` lists, whose figures its worst case
    and Monte Carlo hold)."""

    name: str
    passed: bool
    value: float
    limit: float
    margin: float
    unit: str
    detail: str = ""


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


def _no_requirement(name: str, value: float, unit: str, detail: str) -> Outcome:
    return Outcome(name, True, value, math.nan, math.nan, unit, f"no requirement set; {detail}")


def _window(name: str, low: Array, high: Array, window: tuple[float, float], what: str) -> Outcome:
    lo_lim, hi_lim = window
    vmin, vmax = float(np.min(low)), float(np.max(high))
    m_hi, m_lo = hi_lim - vmax, vmin - lo_lim
    value, limit, margin = (vmax, hi_lim, m_hi) if m_hi <= m_lo else (vmin, lo_lim, m_lo)
    detail = (
        f"{what} spans {_q(vmin, 'V')} to {_q(vmax, 'V')}; allowed "
        f"{_q(lo_lim, 'V')} to {_q(hi_lim, 'V')}"
    )
    return Outcome(name, margin >= 0.0, value, limit, margin, "V", detail)


def check_input_impedance(
    design: Design, spec: Spec, stages: Stages | None = None
) -> tuple[Outcome, Outcome]:
    """Differential (floating source) and common-mode input impedance, lowest over the
    operating corners at the start and at the end of the required life (drift applied, so the
    floor holds for the whole life), against ``min_input_impedance_ohm`` (floor; 0 = not
    required).

    At the end of life the lowest differential resistance ``R1 + R3`` has R1 and R3 at the low
    end of their drift (``−D``; ``0`` one-sided); the common-mode resistance rises with R1 and
    R4 (low end of their drift) and with R3 when ``R1 > R4'`` (falls otherwise), so R3 sits at
    the matching end. Both are taken over every corner. ``stages``: the design's
    :func:`life_stages`, when the caller has them already."""
    stages = life_stages(design, spec) if stages is None else stages
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
                Outcome(
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


def check_output_noise(design: Design, spec: Spec, stages: Stages | None = None) -> Outcome:
    """Output noise RMS over the noise band (brick-wall), worst over the operating corners at
    the start and at the end of the required life (drift applied: the ceiling holds for the
    whole life), at the hottest temperature, white noise only (1/f noise is not modelled),
    against ``max_output_noise_v_rms`` (ceiling; none = informational).

    The noise is not monotone in every resistor (R1's own noise rises with R1, its gain
    ``R2/R1'`` falls), so every corner of the end-of-life ranges is evaluated; the largest
    terms usually rise with R2 (its noise, the noise gain ``1 + R2/R1'``, ``in·R2``) and fall
    with R1, i.e. R2 at the high end of its drift and R1 at the low end. ``stages``: the
    design's :func:`life_stages`, when the caller has them already."""
    amp = spec.amplifier
    hot = spec.requirements.temp_max_c
    best: tuple[float, str, dict[str, Array], int] | None = None
    for when, c in life_stages(design, spec) if stages is None else stages:
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
    return Outcome(
        "output_noise",
        margin >= 0.0,
        rms,
        ceiling,
        margin,
        "V",
        f"{detail}; ceiling {_q(ceiling, 'V')} rms",
    )


def check_input_range(
    design: Design, spec: Spec, corners: OperatingCorners | None = None
) -> Outcome:
    """Non-inverting node voltage V+ = a·V2 + (1 - a)·VREF, shifted by ±Ib·(R3' ∥ R4'), over
    the operating corners, inside the amplifier's input common-mode range (volts)."""
    c = operating_corners(design, spec) if corners is None else corners
    vp = noninverting_node_voltage(c.v2, c.vref, divider_ratio(c.r3_eff, c.r4_eff))
    shift = abs(spec.amplifier.bias_a) * parallel(c.r3_eff, c.r4_eff)
    window = spec.amplifier.input_span.resolve(spec.rails.negative_v, spec.rails.positive_v)
    return _window("amp_input_range", vp - shift, vp + shift, window, "amplifier input voltage V+")


def check_output_swing(
    design: Design, spec: Spec, corners: OperatingCorners | None = None
) -> Outcome:
    """Vout = k1·V1 + k2·V2 + kref·VREF (exact coefficients with the amplifier's CMRR and its
    open-loop gain at both ends, ``A_min`` and ``∞``) plus the output offset bound, over the
    operating corners, inside the output swing."""
    c = operating_corners(design, spec) if corners is None else corners
    vout = _vout(c, spec)
    off = _offset(c, spec)
    window = spec.amplifier.output_span.resolve(spec.rails.negative_v, spec.rails.positive_v)
    return _window("output_swing", vout - off, vout + off, window, "output (with offset)")


def check_bandwidth(design: Design, spec: Spec, corners: OperatingCorners | None = None) -> Outcome:
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
    c = operating_corners(design, spec) if corners is None else corners
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
    return Outcome("small_signal_bandwidth", margin >= 0.0, f3, need, margin, "Hz", detail)


def check_full_power_bandwidth(
    design: Design, spec: Spec, corners: OperatingCorners | None = None
) -> Outcome:
    """Slew-limited full-power bandwidth SR/(2π·Vpk), Vpk = largest |Adm·Vd| over the corners
    (the signal part of the output; the DC part from REF and common mode does not slew), against
    the signal's ``max_frequency_hz`` (floor, Hz).

    The open-loop gain may be anything at or above its minimum, and ``|Adm|`` rises with it
    (``Adm = (a(1+ε) + c(1−ε))/(2(1/A + β(1−ε)))``), so the largest peak, and with it the
    conservative bandwidth that holds for every allowed ``A``, is at ``A = ∞``: for a balanced
    bridge ``Vpk = G·|Vd|``, where ``A_min`` would give the smaller ``G·|Vd|/(1 + (1+G)/A_min)``.
    """
    c = operating_corners(design, spec) if corners is None else corners
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
    return Outcome("full_power_bandwidth", margin >= 0.0, fp, f_max, margin, "Hz", detail)


def resistor_stress(c: OperatingCorners, spec: Spec) -> tuple[Array, Array]:
    """``(power, voltage)``: the largest dissipation ``V²/R`` (W) and the largest ``|V|`` across
    each resistor (V) over the corners ``c`` (the last axis of its arrays), with R1..R4 along
    the last axis of the result: shape (4,) for one design, (N, 4) for many
    (:func:`resistor_voltages` at the linear solution; the output is not assumed to clip)."""
    vout = _vout(c, spec)
    volts = resistor_voltages(
        c.r1, c.r2, c.r3, c.r4, c.rs1, c.rs3, c.rref, c.v1, c.v2, c.vref, vout
    )
    rs = (c.r1, c.r2, c.r3, c.r4)
    power = np.stack(
        [np.max(resistor_power(v, r), axis=-1) for v, r in zip(volts, rs, strict=True)], axis=-1
    )
    peak = np.stack([np.max(np.abs(v), axis=-1) for v in volts], axis=-1)
    return power, peak


def check_resistor_ratings(
    design: Design, spec: Spec, corners: OperatingCorners | None = None
) -> tuple[Outcome, ...]:
    """Power and voltage of each resistor at the worst corner (linear solution; the output is not
    assumed to clip) against its power rating derated to ``temp_max_c`` and its limiting
    voltage. Network elements use ``power_per_element_w`` (package totals are not checked)."""
    powers, peaks = resistor_stress(
        operating_corners(design, spec) if corners is None else corners, spec
    )
    hot = spec.requirements.temp_max_c
    power_results: list[Outcome] = []
    voltage_results: list[Outcome] = []
    for placement, power_a, peak_a in zip(design.placements, powers, peaks, strict=True):
        part = placement.part
        name = placement.position
        rating = part.power_per_element_w if isinstance(part, NetworkPart) else part.power_w
        allowed = float(derated_power(rating, hot))
        power = float(power_a)
        margin = allowed - power
        power_results.append(
            Outcome(
                f"power_{name}", margin >= 0.0, power, allowed, margin, "W",
                f"{name} dissipates up to {_q(power, 'W')}; rating {_q(rating, 'W')} at 70 °C "
                f"derated to {_q(allowed, 'W')} at {hot:g} °C",
            )
        )  # fmt: skip
        peak = float(peak_a)
        margin_v = part.max_voltage_v - peak
        voltage_results.append(
            Outcome(
                f"voltage_{name}", margin_v >= 0.0, peak, part.max_voltage_v, margin_v, "V",
                f"{name} sees up to {_q(peak, 'V')}; "
                f"limiting voltage {_q(part.max_voltage_v, 'V')}",
            )
        )  # fmt: skip
    return (*power_results, *voltage_results)


def check_output_offset(
    design: Design, spec: Spec, corners: OperatingCorners | None = None
) -> Outcome:
    """Worst output offset from Vos and bias currents (:func:`output_offset_bound`) over the
    corners. Informational: the spec states no offset requirement (the figure is, however, part
    of the output-swing check), so ``passed=True`` and ``limit = margin = nan``."""
    c = operating_corners(design, spec) if corners is None else corners
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


def run_checks(design: Design, spec: Spec) -> tuple[Outcome, ...]:
    """All checks of this module, in a fixed order: input impedance (differential, common mode),
    output noise, amplifier input range, output swing, small-signal bandwidth, full-power
    bandwidth, resistor power (R1 to R4), resistor voltage (R1 to R4), output offset. The
    operating corners are worked out once and shared by the checks."""
    stages = life_stages(design, spec)
    start = stages[0][1]
    return (
        *check_input_impedance(design, spec, stages),
        check_output_noise(design, spec, stages),
        check_input_range(design, spec, start),
        check_output_swing(design, spec, start),
        check_bandwidth(design, spec, start),
        check_full_power_bandwidth(design, spec, start),
        *check_resistor_ratings(design, spec, start),
        check_output_offset(design, spec, start),
    )
