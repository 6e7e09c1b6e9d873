"""The spec's limits as the worst-case screens see them, and the conditions on them: the
balance limit ``Λ`` of a CMRR floor, the gain thresholds, the windows the gain and balance
conditions leave each side's bridge term, the least voltage across each position (for the
rating screen) and the corner screen of nominal designs. The conditions and why they are exact
or necessary: ``solve.frontier``, module docstring.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import NDArray

from ..spec import Spec
from .environment import LinearEnvironment

__all__ = [
    "RATING_SCREEN",
    "SLACK",
    "ScreenLimits",
    "adm_from_terms",
    "at_vertex",
    "corner_screen",
    "gain_threshold",
    "inverting_floor",
    "log_balance_limit",
    "screen_limits",
    "side_window",
    "stress_floor",
    "stress_share",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

#: A part is left out at a position only if its rating covers less than this fraction of the
#: estimated stress (voltage) or of its square (power): a loose screen; the exact check decides.
RATING_SCREEN = 0.5


#: Relative widening of the screen's limits against rounding (keeps the screen optimistic).
SLACK = 1e-9


# --------------------------------------------------------------------------------------------
# Formulas
# --------------------------------------------------------------------------------------------


def log_balance_limit(floor_db: float, amp_cmrr_ratio: float) -> float:
    """Largest ``|ln x|`` (``x = c/a``, the bridge balance) that meets a CMRR floor of
    ``floor_db`` with an amplifier of CMRR ``amp_cmrr_ratio`` (a ratio; ``inf`` when ideal):
    ``Λ = 2·atanh(w*)``, ``w* = (X/2 − e)/(1 − e·X/2)``, ``X = 10^(−floor/20)``,
    ``e = 1/(2·CMRR)``. From the worst-sign error ``2(w + e)/(1 + e·w)`` with
    ``w = |1 − x|/(1 + x) = tanh(|ln x|/2)`` (``analysis.balance.
    common_mode_error_worst_sign``), which rises with ``w``. Negative: no balance meets it."""
    x_max = 10.0 ** (-floor_db / 20.0)
    e = 0.0 if math.isinf(amp_cmrr_ratio) else 1.0 / (2.0 * amp_cmrr_ratio)
    w = (x_max / 2.0 - e) / (1.0 - e * x_max / 2.0)
    if w <= 0.0:
        return -1.0
    if w >= 1.0:
        return math.inf
    return 2.0 * math.atanh(w)


def gain_threshold(gain: float, k: float, eps: float, inv_a: float, side: int) -> float:
    """The bridge term at which the differential gain reaches ``gain`` when the other term is
    ``k`` times it: for side 1 (``c``, with ``a = k·c``) and side 2 (``a``, with ``c = k·a``).

    From ``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` (``analysis.balance.
    differential_gain_from_terms``), linear in the term once the other is ``k`` times it:
    side 1: ``c* = 2G(1/A + 1 − ε) / (k(1+ε) + (1−ε) + 2G(1−ε))``;
    side 2: ``a* = 2G(1/A + 1 − ε) / ((1+ε) + k(1−ε) + 2Gk(1−ε))``. ``Adm`` rises with the term,
    so ``Adm ≤ G`` exactly below it (dimensionless)."""
    top = 2.0 * gain * (inv_a + 1.0 - eps)
    if side == 1:
        return top / (k * (1.0 + eps) + (1.0 - eps) + 2.0 * gain * (1.0 - eps))
    return top / ((1.0 + eps) + k * (1.0 - eps) + 2.0 * gain * k * (1.0 - eps))


def adm_from_terms(a: Array, c: Array, eps: float, inv_a: float) -> Array:
    """``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` (``analysis.balance.
    differential_gain_from_terms``, repeated here on plain arrays for the join's speed)."""
    return (a * (1.0 + eps) + c * (1.0 - eps)) / (2.0 * (inv_a + (1.0 - c) * (1.0 - eps)))


# --------------------------------------------------------------------------------------------
# The spec's limits as the screen sees them
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ScreenLimits:
    balance: float  # Λ
    gain_max: float
    gain_min: float
    eps: tuple[float, ...]  # amplifier CMRR signs: ±e, or 0
    inv_a: float  # 1/A_min (0 when ideal)
    rs1: Array  # (V,)
    rs3: Array
    rref: Array
    min_impedance: float


def screen_limits(spec: Spec, env: LinearEnvironment) -> ScreenLimits:
    req = spec.requirements
    amp = spec.amplifier
    balance = log_balance_limit(req.cmrr_floor_db, amp.cmrr_ratio)
    e = 0.0 if math.isinf(amp.cmrr_ratio) else 1.0 / (2.0 * amp.cmrr_ratio)
    eps = (e, -e) if e > 0.0 else (0.0,)
    a_ol = amp.open_loop_gain
    return ScreenLimits(
        balance=balance * (1.0 + SLACK) + SLACK if math.isfinite(balance) else balance,
        gain_max=req.gain * (1.0 + req.gain_accuracy) * (1.0 + SLACK),
        gain_min=req.gain * (1.0 - req.gain_accuracy) * (1.0 - SLACK),
        eps=eps,
        inv_a=0.0 if math.isinf(a_ol) else 1.0 / a_ol,
        rs1=env.vertices[:, 0].copy(),
        rs3=env.vertices[:, 1].copy(),
        rref=env.vertices[:, 2].copy(),
        min_impedance=req.min_input_impedance_ohm * (1.0 - SLACK),
    )


def at_vertex(lim: ScreenLimits, vertex: int) -> ScreenLimits:
    """``lim`` with one environment vertex of impedances kept: the conditions at that vertex
    alone, a subset of those at every vertex (so whatever fails them fails the screen)."""
    cut = slice(vertex, vertex + 1)
    return replace(lim, rs1=lim.rs1[cut], rs3=lim.rs3[cut], rref=lim.rref[cut])


# --------------------------------------------------------------------------------------------
# Least voltage across each position
# --------------------------------------------------------------------------------------------


def _min_abs_linear(u0: Array, u1: Array) -> Array:
    """Least ``|u|`` of a function linear in a parameter over an interval, given its values at
    the two ends (0 where it changes sign)."""
    same = np.sign(u0) == np.sign(u1)
    return np.where(same, np.minimum(np.abs(u0), np.abs(u1)), 0.0)


def stress_floor(spec: Spec, lim: ScreenLimits, position: int) -> float:
    """A lower bound (volts) of the largest voltage across the resistor at ``position`` (0-based)
    over the signal corners, for any design that meets the gain accuracy and the CMRR floor,
    before the part's own share ``R/(R + Rs)`` (:func:`stress_share`). From
    ``resistor_voltages`` (``analysis.checks``, Ohm's and Kirchhoff's laws): one current flows
    through R1' and R2, so ``V_R1 = (V1 − V−)·R1/R1'`` and ``V_R2 = (V1 − V−)·R2/R1'`` with
    ``R2/R1' = c/(1 − c)``; the R3–R4 leg gives ``V_R3 = (V2 − VREF)(1 − a)·R3/R3'`` and
    ``V_R4 = (V2 − VREF)·a·R4/R4'``; ``V− = a·V2 + (1 − a)·VREF − Vout/A``. The terms ``a`` and
    ``c`` lie inside the windows the gain and balance conditions leave (:func:`side_window`)."""
    sig, ref = spec.signal, spec.reference
    a_top, a_bottom = side_window(lim, 2)
    a_hi, a_lo = min(a_top, 1.0), max(a_bottom, 0.0)
    c_lo = max(side_window(lim, 1)[1], 0.0)
    if a_lo > a_hi:
        return 0.0
    vcm = np.array([sig.common_mode_min_v, sig.common_mode_max_v])
    vd = np.array([sig.differential_min_v, sig.differential_max_v])
    vref = np.array([ref.voltage_min_v, ref.voltage_max_v])
    cm, d, rf = (g.ravel() for g in np.meshgrid(vcm, vd, vref, indexing="ij"))
    v2 = cm + d / 2.0
    if position in (0, 1):
        across = inverting_floor(spec, lim, a_lo, a_hi)
        if position == 0:
            return across
        return across * c_lo / (1.0 - c_lo) if c_lo < 1.0 else across
    leg = np.abs(v2 - rf)
    share = (1.0 - a_hi) if position == 2 else a_lo
    return max(float(np.max(leg)) * share, 0.0)


def inverting_floor(spec: Spec, lim: ScreenLimits, a_lo: float, a_hi: float) -> float:
    """Least over ``a ∈ [a_lo, a_hi]`` of ``|V1 − V−|``, largest over the signal corners (volts),
    with ``V− = a·V2 + (1 − a)·VREF − Vout/A`` and ``|Vout| ≤ G_max·|Vd| + |VREF| + |Vcm|`` (the
    amplifier's input difference ``Vout/A`` taken against the bound)."""
    sig, ref = spec.signal, spec.reference
    vcm = np.array([sig.common_mode_min_v, sig.common_mode_max_v])
    vd = np.array([sig.differential_min_v, sig.differential_max_v])
    vref = np.array([ref.voltage_min_v, ref.voltage_max_v])
    cm, d, rf = (g.ravel() for g in np.meshgrid(vcm, vd, vref, indexing="ij"))
    v1, v2 = cm - d / 2.0, cm + d / 2.0
    out = lim.gain_max * float(np.max(np.abs(vd))) + float(np.max(np.abs(vref)))
    out += float(np.max(np.abs(vcm)))
    u0 = v1 - a_lo * v2 - (1.0 - a_lo) * rf
    u1 = v1 - a_hi * v2 - (1.0 - a_hi) * rf
    return max(float(np.max(_min_abs_linear(u0, u1))) - out * lim.inv_a, 0.0)


def stress_share(lim: ScreenLimits, position: int, r_low: Array) -> Array:
    """The part's least share ``R/(R + Rs)`` of the voltage at ``position`` (Rs: the largest
    source or REF impedance in series with it) for resistances at their low ends ``r_low``."""
    series = {0: lim.rs1.max(), 1: 0.0, 2: lim.rs3.max(), 3: lim.rref.max()}[position]
    share: Array = r_low / (r_low + series)
    return share


def side_window(lim: ScreenLimits, side: int) -> tuple[float, float]:
    """``(t_hi, t_lo)``: the side's bridge term must satisfy ``term_hi ≤ t_hi`` and
    ``term_lo ≥ t_lo`` for a partner to exist (gain and balance together, see
    :func:`gain_threshold`): the partner term lies within ``e^{±Λ}`` of this one. The window is
    the same at every environment vertex (the impedances enter the terms, not the window)."""
    k_down = math.exp(-lim.balance) if math.isfinite(lim.balance) else 0.0
    k_up = math.exp(lim.balance) if math.isfinite(lim.balance) else math.inf
    upper = min(gain_threshold(lim.gain_max, k_down, e, 0.0, side) for e in lim.eps)
    if math.isinf(k_up):
        lower = 0.0
    else:
        lower = max(gain_threshold(lim.gain_min, k_up, e, lim.inv_a, side) for e in lim.eps)
    return upper, lower


# --------------------------------------------------------------------------------------------
# Network designs: quads and pairs of duals
# --------------------------------------------------------------------------------------------


def corner_screen(nominal: Array, low: Array, high: Array, lim: ScreenLimits) -> NDArray[np.bool_]:
    """Designs (N, 4) whose positions vary independently in ``[R·low, R·high]`` and that meet
    the balance and gain conditions of the module docstring at every environment vertex: the
    exact worst case for independent parts. For network elements ``low``/``high`` hold the
    element's own range only (the package's shared error at zero): a subset of the exact
    check's variables, so the screen never rejects a design the exact check accepts."""
    alive = np.arange(nominal.shape[0])
    if lim.min_impedance > 0.0:
        alive = alive[nominal[:, 0] + nominal[:, 2] >= lim.min_impedance]
    lo = nominal[alive] * low[alive]
    hi = nominal[alive] * high[alive]
    lam = lim.balance
    # Vertex by vertex, each on the designs the ones before it kept (most fail at the first).
    for v in range(lim.rs1.size):
        if alive.size == 0:
            break
        rs1, rs3, rref = lim.rs1[v], lim.rs3[v], lim.rref[v]
        c_hi = hi[:, 1] / (lo[:, 0] + rs1 + hi[:, 1])
        c_lo = lo[:, 1] / (hi[:, 0] + rs1 + lo[:, 1])
        a_hi = (hi[:, 3] + rref) / (lo[:, 2] + rs3 + hi[:, 3] + rref)
        a_lo = (lo[:, 3] + rref) / (hi[:, 2] + rs3 + lo[:, 3] + rref)
        ok = np.log(c_hi / a_lo) <= lam
        ok &= np.log(c_lo / a_hi) >= -lam
        for e in lim.eps:
            ok &= adm_from_terms(a_hi, c_hi, e, 0.0) <= lim.gain_max
            ok &= adm_from_terms(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min
        if not ok.all():
            alive, lo, hi = alive[ok], lo[ok], hi[ok]
    passed = np.zeros(nominal.shape[0], dtype=bool)
    passed[alive] = True
    return passed
