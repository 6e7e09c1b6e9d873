"""Necessary conditions on the ratio pairs of four discrete parts on the yield basis, with no
source or REF impedance (``optimizer.solve.classquads``): the nominal gain window, the
linearised yield conditions for many pairs at once, and an upper bound of the builds that can
pass, on the Monte Carlo's own draws. Pure functions on arrays; dimensionless unless stated."""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..analysis.balance import differential_gain_from_terms
from ..spec import Spec
from . import yieldbox

__all__ = [
    "GAIN_SLACK_PER_SIGMA",
    "deviation_bounds",
    "gain_conditions",
    "gain_pass_counts",
    "gain_spread_fits",
    "gain_spread_floor",
    "gain_window",
    "pair_ranges",
    "passing_counts",
    "screen_pairs",
]

Array = NDArray[np.float64]


def gain_window(spec: Spec, sigma_max: float) -> tuple[float, float]:
    """``(low, high)`` bounds of the nominal differential gain ``Adm = (a + c)/(2(1 − c))``
    (ideal amplifier, dimensionless) that a yield above one half allows: the spec's window
    ``G(1 ± acc)`` widened by ``yieldbox.first_order_slack(σ_max)`` times the accuracy (the
    gain's spread is symmetric to first order about its nominal, so a nominal outside the
    window leaves at most about half the builds inside it)."""
    req = spec.requirements
    widen = yieldbox.first_order_slack(sigma_max) * req.gain_accuracy + 1e-9
    return req.gain * (1.0 - req.gain_accuracy - widen), req.gain * (
        1.0 + req.gain_accuracy + widen
    )


def screen_pairs(
    c: Array, a: Array, sigma: Array, balance: float, z: float, z_two: float
) -> NDArray[np.bool_]:
    """``yieldbox.balance_conditions`` for many designs at once with no source or REF
    impedance (one vertex): per design, ``c = R2/(R1 + R2)`` and ``a = R4/(R3 + R4)`` at the
    mean resistances, ``m = ln(c/a)``, the sensitivities ``(1 − c)`` of R1, R2 and ``(1 − a)``
    of R3, R4, ``σ_X² = (1 − c)²(σ₁² + σ₂²) + (1 − a)²(σ₃² + σ₄²)`` from the four positions'
    spreads ``sigma``; True where ``|m| + z·σ_X ≤ Λ`` and ``z₂·σ_X ≤ Λ`` (the swing across
    vertices is zero), ``z`` and ``z₂`` narrowed by ``yieldbox.first_order_slack`` of the widest
    part as ``DesignScreen`` does. Dimensionless; ``balance`` = ``Λ`` (log units)."""
    narrow = 1.0 - yieldbox.first_order_slack(float(np.max(sigma)))
    m = np.log(c / a)
    spread = np.sqrt(
        (1.0 - c) ** 2 * (sigma[0] ** 2 + sigma[1] ** 2)
        + (1.0 - a) ** 2 * (sigma[2] ** 2 + sigma[3] ** 2)
    )
    ok: NDArray[np.bool_] = (np.abs(m) + z * narrow * spread <= balance) & (
        z_two * narrow * spread <= balance
    )
    return ok


def deviation_bounds(r_low: Array, r_high: Array, rho: tuple[float, float]) -> tuple[Array, Array]:
    """Bounds of ``ε = ln(ρ·r_high/(r_low + ρ·r_high)) − ln(ρ/(1 + ρ))`` over ``ρ`` in
    ``[ρ₀, ρ₁]`` (``rho``), elementwise for the builds' factors ``r_low`` (R1 or R3) and
    ``r_high`` (R2 or R4), ``(N, J)`` at J temperatures: the log deviation of one half's divider
    ratio ``c = R2'/(R1' + R2')`` (or ``a``) from its nominal. ``dε/dρ = (r_low − r_high)/((1 +
    ρ)(r_low + ρ·r_high))`` keeps its sign, so the two ends bound it. Dimensionless."""
    ends = []
    for value in rho:
        ends.append(
            np.log(value * r_high)
            - np.log(r_low + value * r_high)
            - math.log(value / (1.0 + value))
        )
    return np.minimum(ends[0], ends[1]), np.maximum(ends[0], ends[1])


def passing_counts(
    first: tuple[Array, Array], second: tuple[Array, Array], mismatch: Array, balance: float
) -> NDArray[np.int64]:
    """For each nominal mismatch ``m = ln(c₀/a₀)`` in ``mismatch``, how many builds can meet
    ``|ln(c/a)| ≤ Λ`` at every temperature: ``ln(c/a) = m + ε_c − ε_a`` with ``ε_c``, ``ε_a``
    in their bounds (:func:`deviation_bounds`, ``(N, J)`` each for the first and second half),
    so a build can pass only if ``−Λ − min_j(ε_c,max − ε_a,min) ≤ m ≤ Λ − max_j(ε_c,min −
    ε_a,max)``. An upper bound of the builds that pass the Monte Carlo's CMRR floor (the
    Monte Carlo judges ``|ln x| ≤ Λ`` at its worst corner: ``yieldbox``), so of its yield."""
    low_c, high_c = first
    low_a, high_a = second
    room = balance * (1.0 + 1e-9) + 1e-12
    start = -room - (high_c - low_a).min(axis=1)
    end = room - (low_c - high_a).max(axis=1)
    possible = start <= end  # a build whose interval is empty never passes
    start, end = np.sort(start[possible]), np.sort(end[possible])
    # Of the non-empty intervals, those that start at or below m less those that end below it.
    counts: NDArray[np.int64] = np.searchsorted(start, mismatch, side="right") - np.searchsorted(
        end, mismatch, side="left"
    )
    return counts


#: Relative narrowing of the gain conditions' quantiles per unit of the widest part's spread:
#: the second derivatives of ``ln Adm`` in the parts' log deviations reach 1/2 (``ln c`` and
#: ``−ln(1 − c)`` are log-logistic in ``ln R2 − ln R1``), twice those of ``ln x`` behind
#: ``yieldbox.first_order_slack``.
GAIN_SLACK_PER_SIGMA = 4.0


def _log_gain_and_spread(
    c: Array, a: Array, sigma: Array, eps: float, inv_a: float
) -> tuple[Array, Array]:
    """``ln Adm`` at the mean (``Adm = (a(1+ε) + c(1−ε))/(2(1/A + (1−c)(1−ε)))``,
    ``analysis.balance.differential_gain_from_terms``) and its first-order spread
    ``σ_g² = (q(1−c))²(σ₁² + σ₂²) + (p(1−a))²(σ₃² + σ₄²)``: ``p = ∂ln Adm/∂ln a =
    a(1+ε)/N``, ``q = ∂ln Adm/∂ln c = c(1−ε)/N + c(1−ε)/D`` (``N``, ``D``: numerator and
    bracket of the denominator), and ``∂ln c/∂ln R2 = −∂ln c/∂ln R1 = 1 − c`` (likewise ``a``
    with R4, R3). Dimensionless."""
    num = a * (1.0 + eps) + c * (1.0 - eps)
    den = inv_a + (1.0 - c) * (1.0 - eps)
    p = a * (1.0 + eps) / num
    q = c * (1.0 - eps) / num + c * (1.0 - eps) / den
    spread = np.sqrt(
        (q * (1.0 - c)) ** 2 * (sigma[0] ** 2 + sigma[1] ** 2)
        + (p * (1.0 - a)) ** 2 * (sigma[2] ** 2 + sigma[3] ** 2)
    )
    return np.log(differential_gain_from_terms(a, c, eps, inv_a)), spread


def gain_conditions(
    c: Array,
    a: Array,
    sigma: Array,
    window: tuple[float, float],
    amplifier: tuple[float, tuple[float, ...], float],
    z: float,
    z_two: float,
) -> NDArray[np.bool_]:
    """The linearised gain conditions of a yield for many designs at once, with no source or
    REF impedance: the Monte Carlo passes a build only if its highest gain (``A = ∞``,
    ``ε = +eps_abs``) is at most ``G_hi`` and its lowest (``1/A = inv_a``, ``ε`` in
    ``eps_low``) at least ``G_lo`` (``analysis.montecarlo``, ``window = (G_lo, G_hi)``,
    ``amplifier = (eps_abs, eps_low, inv_a)`` of ``judging_corners``). To first order each
    log gain is its mean value plus a symmetric unimodal sum of the four positions' own log
    deviations (``yieldbox``), spread ``σ_g`` (:func:`_log_gain_and_spread`), so a yield ``Y``
    needs ``m_hi + z·σ_hi ≤ ln G_hi`` and ``m_lo − z·σ_lo ≥ ln G_lo``, and, since the lowest
    gain of a passing build lies inside the whole window, for normal parts
    ``(ln G_hi − ln G_lo)/2 ≥ z₂·σ_lo`` (the two tails at once, as ``yieldbox``). ``z``, ``z₂``
    are narrowed by ``0.01 + GAIN_SLACK_PER_SIGMA·σ_max`` against the second-order terms.
    ``c``, ``a``: the bridge terms at the mean resistances; ``sigma``: R1..R4. True where all
    hold. Dimensionless."""
    g_lo, g_hi = window
    eps_abs, eps_low, inv_a = amplifier
    narrow = 1.0 - (0.01 + GAIN_SLACK_PER_SIGMA * float(np.max(sigma)))
    if narrow <= 0.0:
        return np.ones(np.shape(c), dtype=bool)
    zn, z2n = z * narrow, z_two * narrow
    m_hi, s_hi = _log_gain_and_spread(c, a, sigma, eps_abs, 0.0)
    ok = m_hi + zn * s_hi <= math.log(g_hi) * (1.0 + 1e-12) + 1e-12
    lows = [_log_gain_and_spread(c, a, sigma, eps, inv_a) for eps in eps_low]
    for m_lo, s_lo in lows:
        ok &= m_lo - zn * s_lo >= math.log(g_lo) - 1e-12 - 1e-12 * abs(math.log(g_lo))
    if z_two > 0.0:
        least = np.minimum.reduce([s for _, s in lows])
        ok &= z2n * least <= (math.log(g_hi) - math.log(g_lo)) / 2.0 + 1e-12
    result: NDArray[np.bool_] = np.asarray(ok, dtype=bool)
    return result


def gain_spread_floor(
    c_range: tuple[float, float], sigma: Array, amplifier: tuple[float, tuple[float, ...], float]
) -> float:
    """A lower bound of the lowest gain's spread ``σ_lo`` of :func:`gain_conditions` over
    every design whose ``c`` lies in ``c_range``: ``σ_lo ≥ q(1−c)·√(σ₁² + σ₂²)`` and
    ``q(1−c) ≥ f(c) = c(1−c)(1−ε)/(1/A + (1−c)(1−ε))`` (the first term of ``q`` dropped),
    which rises and then falls in ``c``, so its least over the range is at an end; the least
    over the signs ``ε`` of ``eps_low``. Dimensionless."""
    _, eps_low, inv_a = amplifier
    ends = np.array(c_range, dtype=float)
    least = math.inf
    for eps in eps_low:
        k = 1.0 - eps
        f = ends * (1.0 - ends) * k / (inv_a + (1.0 - ends) * k)
        least = min(least, float(f.min()))
    return least * math.sqrt(float(sigma[0] ** 2 + sigma[1] ** 2))


def gain_spread_fits(
    spread_floor: float, sigma: Array, window: tuple[float, float], z_two: float
) -> bool:
    """Whether a quadruple can pass the two-tailed condition of :func:`gain_conditions`,
    ``z₂·narrow·σ_lo ≤ (ln G_hi − ln G_lo)/2``, at the least spread its designs can have
    (:func:`gain_spread_floor`), with the same narrowing: False only when every ratio pair
    of it fails :func:`gain_conditions`."""
    narrow = 1.0 - (0.01 + GAIN_SLACK_PER_SIGMA * float(np.max(sigma)))
    if narrow <= 0.0 or z_two <= 0.0:
        return True
    g_lo, g_hi = window
    return z_two * narrow * spread_floor <= (math.log(g_hi) - math.log(g_lo)) / 2.0 + 1e-12


def gain_pass_counts(
    rho_first: float,
    first: tuple[Array, Array],
    rho_second: Array,
    second: tuple[Array, Array],
    window: tuple[float, float],
    amplifier: tuple[float, tuple[float, ...], float],
) -> NDArray[np.int64]:
    """For one first-half ratio ``ρ₁₂ = R2/R1`` and many second-half ratios ``ρ₃₄ = R4/R3``
    (``rho_second``), how many of the Monte Carlo's builds keep the gain inside ``window =
    (G_lo, G_hi)`` at every temperature: ``first = (r1, r2)`` and ``second = (r3, r4)`` are the
    builds' resistance factors ``(N, J)`` at the J temperatures, so a build has
    ``c = ρ₁₂r2/(r1 + ρ₁₂r2)`` and ``a = ρ₃₄r4/(r3 + ρ₃₄r4)``. Its highest gain (``A = ∞``,
    ``ε = +eps_abs``) and lowest (``1/A = inv_a``, each ``ε`` of ``eps_low``) rise with ``a``
    (``analysis.balance.differential_gain_from_terms``), so solved for ``a`` they give one
    interval of ``a`` per temperature, and ``a`` rises with ``ρ₃₄``: each build passes for the
    ``ρ₃₄`` of one interval, and a ratio's count is the number of intervals that hold it
    (widened by a relative 1e-9 against rounding). The Monte Carlo's gain pass count, so an
    upper bound of its yield's. Dimensionless."""
    r1, r2 = first
    r3, r4 = second
    eps_abs, eps_low, inv_a = amplifier
    g_lo, g_hi = window
    c = rho_first * r2 / (r1 + rho_first * r2)
    # a at which the highest gain reaches G_hi, and at which the lowest reaches G_lo.
    a_top = (2.0 * g_hi * (1.0 - c) * (1.0 - eps_abs) - c * (1.0 - eps_abs)) / (1.0 + eps_abs)
    a_bottom = np.full_like(c, -np.inf)
    for eps in eps_low:
        floor = (2.0 * g_lo * (inv_a + (1.0 - c) * (1.0 - eps)) - c * (1.0 - eps)) / (1.0 + eps)
        a_bottom = np.maximum(a_bottom, floor)

    def ratio_of(a: Array) -> Array:
        """``ρ₃₄`` of a build at ``a`` (0 below, ∞ above the open interval (0, 1))."""
        inside = np.clip(a, 1e-300, 1.0 - 1e-16)
        rho: Array = np.where(
            a <= 0.0, 0.0, np.where(a >= 1.0, np.inf, inside * r3 / ((1.0 - inside) * r4))
        )
        return rho

    low = ratio_of(a_bottom).max(axis=1) * (1.0 - 1e-9)
    high = ratio_of(a_top).min(axis=1) * (1.0 + 1e-9)
    live = low <= high
    starts, ends = np.sort(low[live]), np.sort(high[live])
    counts: NDArray[np.int64] = np.searchsorted(starts, rho_second, side="right") - np.searchsorted(
        ends, rho_second, side="left"
    )
    return counts


def pair_ranges(
    c: Array, a: Array, balance: float, window: tuple[float, float]
) -> tuple[NDArray[np.intp], NDArray[np.intp]]:
    """For each first-half divider ``c = R2/(R1 + R2)`` of ``c``, the index range
    ``[lo, hi)`` of the sorted second-half dividers ``a = R4/(R3 + R4)`` that can pair with it:
    a nominal mismatch ``|ln(c/a)| ≤ Λ`` (``balance``) and a nominal gain ``(a + c)/(2(1 − c))``
    inside ``window = (G_lo, G_hi)``, that is ``a`` in ``[c·e^−Λ, c·e^Λ]`` and in
    ``[2G_lo(1 − c) − c, 2G_hi(1 − c) − c]`` (``1 − c > 0``). Widened by a relative 1e-9
    against rounding: a superset of the pairs, the exact tests follow. Forming only these
    pairs instead of every balanced one matters at a high gain and a loose floor, where the
    balance admits a factor of e in ``a`` and the gain window a few percent (G = 100, 40 dB,
    −20…85 °C: 47 s -> 2.4 s)."""
    low, high = window
    a_low = np.maximum(c * math.exp(-balance), 2.0 * low * (1.0 - c) - c)
    a_high = np.minimum(c * math.exp(balance), 2.0 * high * (1.0 - c) - c)
    lo = np.searchsorted(a, a_low - 1e-9 * np.abs(a_low), side="left")
    hi = np.searchsorted(a, a_high + 1e-9 * np.abs(a_high), side="right")
    return lo, np.maximum(hi, lo)
