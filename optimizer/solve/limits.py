"""The right-hand sides of the pick's linear requirements (:class:`Limits`): the CMRR
mismatch budget, the gain window, the open-loop term, the yield quantiles, the noise budget and
the input-impedance floor of a spec, each on its optimistic side so that the model built on them
(``optimizer.solve.model``) stays a relaxation of the exact check. The equations are in the
model's docstring; this module needs no solver, so the exact enumerations read it without
loading CP-SAT.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..spec import CmrrBasis, Distribution, Spec
from .environment import LinearEnvironment
from .options import noise_bandwidth, noise_floor, yield_quantile, z_score

__all__ = ["COUPLING_BUDGET", "LOOSE_BUDGET", "SLACK", "Limits", "limits_for"]

# Relative widening of every bound: a margin for rounding (the bounds are optimistic already).
SLACK = 2e-4


@dataclass(frozen=True)
class Limits:
    """Right-hand sides of the linear requirements (natural-log units unless stated)."""

    cmrr_budget: float  # B for |δ|; negative: unreachable whatever the resistors
    gain_upper: float  # ln(1 + acc)
    gain_lower: float  # ln(1 − acc)
    open_loop_term: float  # ln(1 + (1+G)/A) ≥ 0
    z: float  # one-sided yield quantile (0 for worst-case basis)
    z_two_sided: float  # Φ⁻¹((1+Y)/2) for normal parts (0 when not used)
    noise_budget: float | None  # V²/Hz left for the resistors, None if no requirement
    min_impedance_ohm: float


#: A mismatch budget this large (natural-log units) no design can exceed: |δ| is at most
#: 2·ln(largest/smallest resistance) plus the source and REF terms, far below it.
LOOSE_BUDGET = 100.0
#: Above this budget (log units) the half coupling cannot tighten anything and is skipped.
COUPLING_BUDGET = 0.5


def _cmrr_budget(spec: Spec) -> float:
    req = spec.requirements
    floor = 10.0 ** (-req.cmrr_floor_db / 20.0)
    amp = 1.0 / spec.amplifier.cmrr_ratio
    x = floor - amp
    if x <= 0.0:
        return -1.0
    if x >= 1.0:
        return LOOSE_BUDGET  # a floor below 0 dB: any bridge meets it
    g_hi = req.gain * (1.0 + req.gain_accuracy) * math.exp(min((1.0 + req.gain) * x, 50.0))
    budget = 2.0 * math.atanh(min(x / 2.0, 0.999999)) * (1.0 + g_hi) * (1.0 + SLACK) + 1e-9
    return min(budget, LOOSE_BUDGET)


def limits_for(spec: Spec, env: LinearEnvironment) -> Limits:
    """The :class:`Limits` of ``spec`` (each on its optimistic side)."""
    req = spec.requirements
    g = req.gain
    a_ol = spec.amplifier.open_loop_gain
    open_loop = (
        0.0
        if math.isinf(a_ol)
        else math.log1p((1.0 + g * (1.0 - req.gain_accuracy)) / a_ol) * (1.0 - SLACK)
    )
    z = 0.0
    z_two = 0.0
    if req.cmrr_basis is CmrrBasis.YIELD and spec.preferences.distribution is Distribution.NORMAL:
        z_two = z_score((1.0 + req.yield_target) / 2.0) * (1.0 - 4 * SLACK)
    if req.cmrr_basis is CmrrBasis.YIELD:
        z = yield_quantile(req.yield_target, spec.preferences.distribution) * (1.0 - 4 * SLACK)
    noise_budget = None
    if req.max_output_noise_v_rms is not None:
        band = noise_bandwidth(spec)
        if band > 0.0:
            noise_budget = (req.max_output_noise_v_rms**2 / band) * (1.0 + 4 * SLACK) - noise_floor(
                spec, env
            )
    return Limits(
        cmrr_budget=_cmrr_budget(spec),
        gain_upper=math.log1p(req.gain_accuracy) * (1.0 + SLACK) + 1e-9,
        gain_lower=math.log1p(-req.gain_accuracy) * (1.0 + SLACK) - 1e-9,
        open_loop_term=open_loop,
        z=z,
        z_two_sided=z_two,
        noise_budget=noise_budget,
        min_impedance_ohm=req.min_input_impedance_ohm,
    )
