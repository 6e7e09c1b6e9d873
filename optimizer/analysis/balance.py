"""The bridge-balance formulas of the worst case and the Monte Carlo: the common-mode error
``|Acm/Adm|`` from the bridge terms ``a``, ``c`` or from the balance ``x = c/a``, CMRR in dB,
the nominal error of a value-unbalanced design, and the rounding floor of the error budget.
Each is one pure function whose docstring gives the equation (closed forms of
:mod:`~optimizer.analysis.transfer`; :mod:`~optimizer.analysis.worstcase` explains why the
extremes of ``x`` give the extremes of the error)."""

from __future__ import annotations

from fractions import Fraction

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .transfer import divider_ratio, feedback_factor

__all__ = [
    "ROUNDING_FLOOR",
    "above_rounding",
    "bridge_terms",
    "budget_shares",
    "common_mode_error",
    "common_mode_error_from_balance",
    "common_mode_error_from_terms",
    "common_mode_error_worst_sign",
    "differential_gain_from_terms",
    "exactly_balanced",
    "feedback_complement",
    "nominal_common_mode_error",
    "rejection_db",
]

Array = NDArray[np.float64]

#: Budget contributions below this (|Acm/Adm| or relative gain error, i.e. beyond 260 dB) are
#: float64 rounding noise of differences of order-one numbers and are reported as zero.
ROUNDING_FLOOR = 1e-13


# --------------------------------------------------------------------------------------------
# Formulas
# --------------------------------------------------------------------------------------------


def common_mode_error(k_cm: ArrayLike, k_dm: ArrayLike) -> Array:
    """``|Acm/Adm|``: the common-mode error referred to the input, the reciprocal of CMRR as a
    ratio (0 for a perfectly balanced bridge)."""
    ratio: Array = np.abs(np.asarray(k_cm, dtype=float) / np.asarray(k_dm, dtype=float))
    return ratio


def rejection_db(error: ArrayLike) -> Array:
    """CMRR in dB from the common-mode error ratio: ``−20·log10|Acm/Adm|`` (``inf`` at 0)."""
    with np.errstate(divide="ignore"):
        level: Array = -20.0 * np.log10(np.asarray(error, dtype=float))
    return level


def feedback_complement(r1_eff: ArrayLike, r2: ArrayLike) -> Array:
    """``c = R2/(R1'+R2) = 1 − β``, evaluated as ``1 − β`` with the feedback factor
    ``β = R1'/(R1'+R2)`` of :mod:`~optimizer.analysis.transfer` (ohms in; ``R1'`` includes
    the source impedance ``Rs1``; dimensionless out)."""
    c: Array = 1.0 - feedback_factor(r1_eff, r2)
    return c


def bridge_terms(
    r1_eff: ArrayLike, r2: ArrayLike, r3_eff: ArrayLike, r4_eff: ArrayLike
) -> tuple[Array, Array]:
    """``(a, c)``: the divider ratio ``a = R4'/(R3'+R4')`` and ``c = R2/(R1'+R2) = 1 − β`` of
    :mod:`~optimizer.analysis.transfer` (ohms in; primes include source and REF impedance)."""
    return divider_ratio(r3_eff, r4_eff), feedback_complement(r1_eff, r2)


def common_mode_error_from_terms(a: ArrayLike, c: ArrayLike, eps: ArrayLike) -> Array:
    """``|Acm/Adm| = 2·|a(1+ε) − c(1−ε)| / (a(1+ε) + c(1−ε))``, ``ε = s/(2·CMRR)``: the ratio of
    ``Acm = k1 + k2`` to ``Adm = (k2 − k1)/2`` with the closed forms of
    :mod:`~optimizer.analysis.transfer` (their common denominator, and with it the open-loop
    gain, cancels)."""
    e = np.asarray(eps, dtype=float)
    plus = np.asarray(a, dtype=float) * (1.0 + e)
    minus = np.asarray(c, dtype=float) * (1.0 - e)
    return 2.0 * np.abs(plus - minus) / (plus + minus)


def common_mode_error_worst_sign(x: ArrayLike, eps_abs: float) -> Array:
    """``max over ε = ±e`` of ``|Acm/Adm|`` at the balance ``x = c/a``:
    ``2·(|1 − x| + e·(1 + x)) / ((1 + x) + e·|1 − x|)``, ``e = |ε| = 1/(2·CMRR)`` (dimensionless
    in and out; ``x > 0``, ``0 ≤ e < 1``).

    Derivation: :func:`common_mode_error_from_balance` is ``2|y − 1|/(y + 1)`` with
    ``y = (1 + ε)/((1 − ε)·x)``; multiplying both parts by ``(1 − ε)·x > 0`` gives
    ``2·|u + ε·v| / (v + ε·u)`` with ``u = 1 − x`` and ``v = 1 + x > |u|``. Write
    ``w = |u|/v < 1``. The sign of ``ε`` that agrees with ``u`` gives ``(w + e)/(1 + e·w)``, the
    other ``|w − e|/(1 − e·w)``, and the first is never smaller: for ``w ≥ e``,
    ``(w+e)(1−ew) − (w−e)(1+ew) = 2e(1 − w²) ≥ 0``; for ``w < e``,
    ``(w+e)(1−ew) − (e−w)(1+ew) = 2w(1 − e²) ≥ 0`` (both denominators positive). Multiplying
    back by ``v`` gives the form above (``2|1 − x|/(1 + x)`` for an ideal amplifier). Each sign's
    error falls as ``x`` moves towards its zero ``y = 1`` and rises beyond it, so this maximum
    of the two is quasi-convex in ``x``: over any set of balances it is largest at the
    smallest or the largest ``x``."""
    x_ = np.asarray(x, dtype=float)
    u = np.abs(1.0 - x_)
    v = 1.0 + x_
    error: Array = 2.0 * (u + eps_abs * v) / (v + eps_abs * u)
    return error


def differential_gain_from_terms(
    a: ArrayLike, c: ArrayLike, eps: ArrayLike, inv_open_loop_gain: ArrayLike
) -> Array:
    """``Adm = (a(1+ε) + c(1−ε)) / (2·(1/A + (1−c)(1−ε)))``: ``(k2 − k1)/2`` from the closed
    forms of :mod:`~optimizer.analysis.transfer` (``β = 1 − c``); ``inv_open_loop_gain = 1/A``
    (0 for an ideal amplifier)."""
    e = np.asarray(eps, dtype=float)
    a_ = np.asarray(a, dtype=float)
    c_ = np.asarray(c, dtype=float)
    return (a_ * (1.0 + e) + c_ * (1.0 - e)) / (
        2.0 * (np.asarray(inv_open_loop_gain, dtype=float) + (1.0 - c_) * (1.0 - e))
    )


def common_mode_error_from_balance(x: ArrayLike, eps: ArrayLike) -> Array:
    """``|Acm/Adm| = 2|y − 1|/(y + 1)`` with ``y = (1 + ε)/((1 − ε)·x)`` and ``ε = s/(2·CMRR)``.

    From ``Acm = k1 + k2`` and ``Adm = (k2 − k1)/2`` with ``k2 ∝ a(1+ε)``, ``k1 ∝ −c(1−ε)``
    (:mod:`~optimizer.analysis.transfer`; the common denominator cancels, so the open-loop gain
    drops out)."""
    e = np.asarray(eps, dtype=float)
    y = (1.0 + e) / ((1.0 - e) * np.asarray(x, dtype=float))
    error: Array = 2.0 * np.abs(y - 1.0) / (y + 1.0)
    return error


def exactly_balanced(r1: float, r2: float, r3: float, r4: float) -> bool:
    """True when the bridge is balanced, ``R2/R1 = R4/R3``, decided exactly: ``R2·R3 = R1·R4``
    in rational arithmetic of the given float values (ohms), so no rounding enters. A balanced
    bridge with no source or REF impedance and an ideal amplifier has ``Acm = 0`` exactly
    (:mod:`~optimizer.analysis.transfer`: ``k1 + k2 = a − c = 0`` when ``R4/(R3+R4) =
    R2/(R1+R2)``), i.e. a nominal CMRR of ``∞``, where float arithmetic leaves about 1e-16
    (a spurious 313–319 dB)."""
    return Fraction(r2) * Fraction(r3) == Fraction(r1) * Fraction(r4)


def nominal_common_mode_error(r1: float, r2: float, r3: float, r4: float) -> float:
    """``|Acm/Adm| = 2·|R1·R4 − R2·R3| / (R4·(R1+R2) + R2·(R3+R4))`` (ohms in, ratio out) of the
    nominal bridge with no source or REF impedance and an ideal amplifier.

    From :func:`common_mode_error_from_terms` with ``ε = 0``: ``2|a − c|/(a + c)``,
    ``a = R4/(R3+R4)``, ``c = R2/(R1+R2)``; over the common denominator ``(R1+R2)(R3+R4)``,
    ``a − c = (R1·R4 − R2·R3)/((R1+R2)(R3+R4))``. The difference ``R1·R4 − R2·R3`` is taken in
    exact rational arithmetic of the float values, so a balanced bridge
    (:func:`exactly_balanced`) gives exactly 0 (CMRR ``∞``) and an unbalanced one its error to
    full float precision."""
    mismatch = float(abs(Fraction(r1) * Fraction(r4) - Fraction(r2) * Fraction(r3)))
    return 2.0 * mismatch / (r4 * (r1 + r2) + r2 * (r3 + r4))


def above_rounding(value: float) -> float:
    """``value`` itself, or 0 when it is below :data:`ROUNDING_FLOOR` (rounding noise)."""
    return value if value >= ROUNDING_FLOOR else 0.0


def budget_shares(errors: ArrayLike) -> Array:
    """Share of each contributor in the sum of the contributions (fractions summing to 1; all
    zero when every contribution is zero)."""
    e = np.asarray(errors, dtype=float)
    total = float(e.sum())
    return e / total if total > 0.0 else np.zeros_like(e)
