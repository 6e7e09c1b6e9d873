"""The solver's view of the non-part variables of a spec: source and REF impedance vertices,
temperature excursion, life, the amplifier's limits, and the stress on each position.

All functions are pure and take the spec's frozen dataclasses.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..analysis.drift import drift_bound
from ..analysis.environment import source_vertices
from ..analysis.formulas import derated_power
from ..spec import Spec

__all__ = [
    "LinearEnvironment",
    "derating_factor",
    "life_drift",
    "linear_environment",
    "position_voltages",
    "series_impedance",
]


def derating_factor(temp_c: float) -> float:
    """Fraction of the 70 °C power rating usable at ``temp_c`` (the derating curve of
    :func:`optimizer.analysis.formulas.derated_power`)."""
    return float(derated_power(1.0, temp_c))


def _corner_values(low: float, high: float) -> tuple[float, ...]:
    return (low,) if low == high else (low, high)


def position_voltages(spec: Spec) -> NDArray[np.float64]:
    """Largest |voltage| (V) across R1, R2, R3, R4 over the input, common-mode and REF ranges,
    for the balanced circuit at the target gain with an ideal amplifier (V− = V+):

        V+ = V2·G/(1+G) + VREF/(1+G),  Vout = G·(V2 − V1) + VREF,
        V(R1) = V1 − V+,  V(R2) = V+ − Vout,  V(R3) = V2 − V+,  V(R4) = V+ − VREF,

    with V1 = Vcm − Vd/2 and V2 = Vcm + Vd/2. Every voltage is linear in (Vcm, Vd, VREF), so the
    extremes are at the corners of their ranges."""
    g = spec.requirements.gain
    sig, ref = spec.signal, spec.reference
    worst = np.zeros(4)
    for vcm in _corner_values(sig.common_mode_min_v, sig.common_mode_max_v):
        for vd in _corner_values(sig.differential_min_v, sig.differential_max_v):
            for vref in _corner_values(ref.voltage_min_v, ref.voltage_max_v):
                v1, v2 = vcm - vd / 2.0, vcm + vd / 2.0
                vplus = v2 * g / (1.0 + g) + vref / (1.0 + g)
                vout = g * (v2 - v1) + vref
                across = np.abs([v1 - vplus, vplus - vout, v2 - vplus, vplus - vref])
                worst = np.maximum(worst, across)
    return worst


@dataclass(frozen=True)
class LinearEnvironment:
    """Everything about a spec that the linear model needs besides the parts.

    ``vertices``: (V, 3) array of (Rs1, Rs3, Rref) in ohms; ``delta_t_k``: the largest
    |T − 25 °C|; ``life_h``: operating life in hours; ``stress_v``: voltage across each position
    (V); ``derating``: usable fraction of the 70 °C power rating at the hottest temperature."""

    vertices: NDArray[np.float64]
    delta_t_k: float
    life_h: float
    stress_v: NDArray[np.float64]
    derating: float
    hottest_k: float


def series_impedance(env: LinearEnvironment) -> NDArray[np.float64]:
    """(V, 4) impedance in series with each position at each vertex, in ohms: R1 ← Rs1,
    R2 ← nothing, R3 ← Rs3, R4 ← Rref."""
    vertices = env.vertices
    return np.stack(
        [vertices[:, 0], np.zeros(len(vertices)), vertices[:, 1], vertices[:, 2]], axis=1
    )


def linear_environment(spec: Spec) -> LinearEnvironment:
    """Build the :class:`LinearEnvironment` of ``spec``."""
    req = spec.requirements
    src = spec.signal.source
    legs = source_vertices(src.min_ohm, src.max_ohm, src.imbalance_ohm)
    refs = _corner_values(spec.reference.impedance_min_ohm, spec.reference.impedance_max_ohm)
    vertices = np.array([(rs1, rs3, rref) for rs1, rs3 in legs for rref in refs], dtype=float)
    delta_t = max(abs(req.temp_min_c - 25.0), abs(req.temp_max_c - 25.0))
    return LinearEnvironment(
        vertices=vertices,
        delta_t_k=delta_t,
        life_h=req.life_s / 3600.0,
        stress_v=position_voltages(spec),
        derating=derating_factor(req.temp_max_c),
        hottest_k=req.temp_max_c + 273.15,
    )


def life_drift(drift_1000h: NDArray[np.float64] | float, life_h: float) -> NDArray[np.float64]:
    """Drift bound over ``life_h`` hours from the 1000-hour figure (the square-root law of
    :func:`optimizer.analysis.drift.drift_bound`, applied to an array)."""
    scale = drift_bound(1.0, max(life_h, 0.0) * 3600.0)
    return np.asarray(drift_1000h, dtype=float) * scale
