"""The operating corners of a design (:func:`operating_corners`), over which
:mod:`optimizer.analysis.checks` evaluates its checks: every combination of the ends of the
common-mode, differential and REF voltage ranges, of the source and REF impedance ranges, of
each resistor's value spread (initial tolerance plus tempco over the temperature range; at the
end of the required life also the drift, :func:`life_value_bounds`), of the sign of the
amplifier's common-mode error and of its open-loop gain ``A ∈ {A_min, ∞}``; the stages of a
life (:func:`life_stages`) and the subset the rating screens use (:func:`rating_corners`).
Why corners give the extremes: :mod:`optimizer.analysis.checks`, module docstring.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..design import Design, Placement
from ..parts import NetworkPart
from ..spec import DriftModel, Spec
from .drift import drift_bound, drift_interval
from .formulas import (
    life_value_bounds,
    value_spread,
)

__all__ = [
    "ALL_ENDS",
    "OperatingCorners",
    "Stages",
    "life_stages",
    "operating_corners",
    "placement_life_drift",
    "rating_corners",
]

Array = NDArray[np.float64]

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
    ``life_s`` seconds. A discrete part: :func:`~optimizer.analysis.drift.drift_interval`
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


# --------------------------------------------------------------------------------------------
# Checks
# --------------------------------------------------------------------------------------------


#: The operating corners at the stages of a life, each with the words that name it.
Stages = tuple[tuple[str, OperatingCorners], ...]


def life_stages(design: Design, spec: Spec) -> Stages:
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


#: Resistor ends of :func:`rating_corners`, one row per corner: 0 for ``R(1 − δ)``, 1 for
#: ``R(1 + δ)`` at R1..R4 (every combination).
ALL_ENDS: tuple[tuple[int, int, int, int], ...] = tuple(
    (a, b, c, d) for a in (0, 1) for b in (0, 1) for c in (0, 1) for d in (0, 1)
)


def rating_corners(
    nominal: NDArray[np.float64],
    spreads: NDArray[np.float64],
    spec: Spec,
    ends: tuple[tuple[int, int, int, int], ...] = ALL_ENDS,
) -> OperatingCorners:
    """A subset of :func:`operating_corners` for a quick screen of the rating check, for one
    design (``nominal``, ``spreads``: shape (4,), ohms and δ per position, :func:`value_spread`)
    or many (shape (N, 4); every array of the result then has shape (N, M)): the resistor
    ends ``ends`` (default: all), every signal corner, and only the first source vertex, the
    lowest REF impedance, the first sign of the amplifier's common-mode error and the ideal
    open-loop gain. Each is a point the exact check evaluates (same values, same arithmetic),
    so :func:`resistor_stress` there never exceeds its value over :func:`operating_corners`."""
    sig, ref = spec.signal, spec.reference
    rs1, rs3 = _source_pairs(spec)
    signs = np.array([1.0]) if math.isinf(spec.amplifier.cmrr_db) else np.array([-1.0, 1.0])
    r = np.asarray(nominal, dtype=float)
    d = np.asarray(spreads, dtype=float)
    lo, hi = r * (1.0 - d), r * (1.0 + d)
    high_end = np.array(ends, dtype=bool)  # (E, 4)
    values = np.where(high_end, hi[..., None, :], lo[..., None, :])  # (..., E, 4)
    vcm, vd, vref = (
        g.ravel()
        for g in np.meshgrid(
            _ends(sig.common_mode_min_v, sig.common_mode_max_v),
            _ends(sig.differential_min_v, sig.differential_max_v),
            _ends(ref.voltage_min_v, ref.voltage_max_v),
            indexing="ij",
        )
    )
    count = vcm.size
    rr = [np.repeat(values[..., j], count, axis=-1) for j in range(4)]  # (..., E·S), E major
    one = np.ones_like(rr[0])
    return OperatingCorners(
        r1=rr[0], r2=rr[1], r3=rr[2], r4=rr[3], rs1=one * rs1[0], rs3=one * rs3[0],
        rref=one * ref.impedance_min_ohm, vcm=one * np.tile(vcm, len(ends)),
        vd=one * np.tile(vd, len(ends)), vref=one * np.tile(vref, len(ends)),
        sign=one * signs[0], open_loop_gain=one * math.inf,
    )  # fmt: skip
