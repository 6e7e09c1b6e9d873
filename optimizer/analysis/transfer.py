"""Transfer of the four-resistor difference amplifier: exact closed forms on numpy arrays.

Circuit (labels used everywhere in Quartet)::

    V1 ──Rs1──R1──┬──────────┐            Rs1, Rs3: source impedance of each input leg
                  │          │            Rref: source impedance of the REF drive
                  ├──(−)     R2
                  │     \\    │
                  │      >───┴── Vout
                  │     /
    V2 ──Rs3──R3──┬──(+)
                  │
                  R4
                  │
    VREF ─Rref────┘

Amplifier model (the usual definition of open-loop gain and CMRR):
``Vout = A·[(V+ − V−) + s·(V+ + V−)/(2·CMRR)]`` with open-loop gain ``A`` and common-mode
rejection ``CMRR`` (ratios; ``inf`` for ideal) and ``s = ±1`` the unknown sign of the
amplifier's common-mode error.

Solving the two node equations (nodal analysis; checked symbolically with sympy and against
ngspice in the tests) gives ``Vout = k1·V1 + k2·V2 + kref·VREF`` with, writing
``R1' = R1 + Rs1``, ``R3' = R3 + Rs3``, ``R4' = R4 + Rref``, ``a = R4'/(R3' + R4')``,
``β = R1'/(R1' + R2)``, ``c = R2/(R1' + R2)``, ``ε = s/(2·CMRR)`` and ``D = 1/A + β·(1 − ε)``:

    k2   =  a·(1 + ε)/D
    kref = (1 − a)·(1 + ε)/D
    k1   = −c·(1 − ε)/D

For ``A → ∞`` and ``CMRR → ∞`` these reduce to the textbook form
``Vout = V2·R4/(R3+R4)·(1+R2/R1) − V1·R2/R1 + VREF·R3/(R3+R4)·(1+R2/R1)``, and with finite A
alone the closed-loop gain is the ideal one divided by ``1 + (1+G)/A``.

All functions take scalars or numpy arrays (broadcast together) in ohms and return arrays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

__all__ = [
    "Coefficients",
    "cmrr_db",
    "cmrr_ratio",
    "coefficients",
    "combine_cmrr_db",
    "common_mode_gain",
    "differential_gain",
    "divider_ratio",
    "feedback_factor",
    "ideal_gain",
    "loop_gain_factor",
]

Array = NDArray[np.float64]


@dataclass(frozen=True)
class Coefficients:
    """``Vout = k1·V1 + k2·V2 + kref·VREF`` (dimensionless arrays)."""

    k1: Array
    k2: Array
    kref: Array


def ideal_gain(r1: ArrayLike, r2: ArrayLike) -> Array:
    """G = R2/R1 (dimensionless), the nominal differential gain of the difference amplifier."""
    gain: Array = np.asarray(r2, dtype=float) / np.asarray(r1, dtype=float)
    return gain


def divider_ratio(r3_eff: ArrayLike, r4_eff: ArrayLike) -> Array:
    """a = R4'/(R3' + R4'): the fraction of V2 that reaches the non-inverting node
    (voltage divider; R3' and R4' include the source and REF impedances, ohms)."""
    r3 = np.asarray(r3_eff, dtype=float)
    r4 = np.asarray(r4_eff, dtype=float)
    ratio: Array = r4 / (r3 + r4)
    return ratio


def feedback_factor(r1_eff: ArrayLike, r2: ArrayLike) -> Array:
    """β = R1'/(R1' + R2): feedback factor; the noise gain is 1/β = 1 + R2/R1' (ohms in)."""
    r1 = np.asarray(r1_eff, dtype=float)
    return np.asarray(r1 / (r1 + np.asarray(r2, dtype=float)), dtype=float)


def loop_gain_factor(beta: ArrayLike, open_loop_gain: ArrayLike) -> Array:
    """1/(1 + 1/(A·β)): the factor by which finite open-loop gain A scales every closed-loop
    gain (standard feedback result; equals 1/(1 + (1+G)/A) for β = 1/(1+G))."""
    inv_a = 1.0 / np.asarray(open_loop_gain, dtype=float)
    return np.asarray(1.0 / (1.0 + inv_a / np.asarray(beta, dtype=float)), dtype=float)


def coefficients(
    r1: ArrayLike,
    r2: ArrayLike,
    r3: ArrayLike,
    r4: ArrayLike,
    rs1: ArrayLike = 0.0,
    rs3: ArrayLike = 0.0,
    rref: ArrayLike = 0.0,
    open_loop_gain: ArrayLike = np.inf,
    amp_cmrr: ArrayLike = np.inf,
    cmrr_sign: ArrayLike = 1.0,
) -> Coefficients:
    """Exact k1, k2, kref of ``Vout = k1·V1 + k2·V2 + kref·VREF`` (module docstring for the
    derivation). Resistances in ohms; ``open_loop_gain`` and ``amp_cmrr`` as ratios (``inf``
    for ideal); ``cmrr_sign`` ±1."""
    r1e = np.asarray(r1, dtype=float) + np.asarray(rs1, dtype=float)
    r2a = np.asarray(r2, dtype=float)
    r3e = np.asarray(r3, dtype=float) + np.asarray(rs3, dtype=float)
    r4e = np.asarray(r4, dtype=float) + np.asarray(rref, dtype=float)
    a = r4e / (r3e + r4e)
    beta = r1e / (r1e + r2a)
    c = r2a / (r1e + r2a)
    eps = np.asarray(cmrr_sign, dtype=float) / (2.0 * np.asarray(amp_cmrr, dtype=float))
    den = 1.0 / np.asarray(open_loop_gain, dtype=float) + beta * (1.0 - eps)
    plus = (1.0 + eps) / den
    # 1 − a written as R3'/(R3' + R4'): no cancellation when a is close to 1 (G = 10⁷ lost
    # nine digits of kref; found by tests/analysis/test_robustness.py).
    return Coefficients(k1=-c * (1.0 - eps) / den, k2=a * plus, kref=r3e / (r3e + r4e) * plus)


def differential_gain(k: Coefficients) -> Array:
    """Adm = (k2 − k1)/2: output per volt of V2 − V1 with V1 = Vcm − Vd/2, V2 = Vcm + Vd/2."""
    return (k.k2 - k.k1) / 2.0


def common_mode_gain(k: Coefficients) -> Array:
    """Acm = k1 + k2: output per volt applied to both inputs together."""
    return k.k1 + k.k2


def cmrr_ratio(k: Coefficients) -> Array:
    """CMRR = |Adm/Acm| as a ratio (``inf`` for a perfectly balanced bridge)."""
    acm = np.abs(common_mode_gain(k))
    adm = np.abs(differential_gain(k))
    with np.errstate(divide="ignore"):
        return np.where(acm > 0.0, adm / np.where(acm > 0.0, acm, 1.0), np.inf)


def cmrr_db(k: Coefficients) -> Array:
    """CMRR in dB = 20·log10|Adm/Acm|."""
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(cmrr_ratio(k))


def combine_cmrr_db(*levels_db: ArrayLike) -> Array:
    """Worst-case combination of CMRR contributions: 1/CMRR = Σ 1/CMRRᵢ (ratios), returned in
    dB. Each contribution is a common-mode error referred to the input; in the worst case they
    add in magnitude (standard error-budget practice for difference amplifiers)."""
    total = np.zeros(np.broadcast(*[np.asarray(v) for v in levels_db]).shape)
    for level in levels_db:
        total = total + 10.0 ** (-np.asarray(level, dtype=float) / 20.0)
    return -20.0 * np.log10(total)
