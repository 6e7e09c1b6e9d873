"""Worst case of the difference amplifier: the exact extremes of CMRR and gain over every
bounded variable, and the error budget.

What is bounded (see :mod:`optimizer.analysis.variation` for the model): each part's initial
error, tempco and life drift, the shared variables of network packages (and same-lot reels),
the temperature range, the source impedances ``(Rs1, Rs3)`` inside their polygon, the REF
impedance, the sign of the amplifier's (minimum) CMRR and its open-loop gain ``A ≥ A_min``.

Why corners give the exact extreme
----------------------------------
With ``a = R4'/(R3'+R4')``, ``c = R2/(R1'+R2)`` (primes include ``Rs1``, ``Rs3``, ``Rref``) and
``ε = s/(2·CMRR)`` the closed forms of :mod:`~optimizer.analysis.transfer` give::

    Acm/Adm = 2·(y − 1)/(y + 1),   y = (1 + ε)/((1 − ε)·x),   x = c/a = (R3'+R4')/R4' · R2/(R1'+R2)

so ``|Acm/Adm|`` is a function of ``x`` (and ``ε``) that falls towards ``y = 1`` and rises
beyond it: its maximum over any set lies where ``x`` is smallest or largest. ``x`` rises with
R2 and R3 and falls with R1 and R4, whatever the other values (monotone in each resistance);
it does not depend on ``A``; it is monotone in ``ε`` through ``y``; it falls with ``Rref``; and
in ``(Rs1, Rs3)`` it is a ratio of two affine functions, so it is monotone along every line and
its extremes over the source polygon are at vertices. The differential gain
``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` rises with R2, R4, Rref and A, falls with
R1, R3, Rs1, Rs3, and is a ratio of affine functions of ``ε``. Hence:

* for independent parts the reachable resistances at one temperature form a box and the
  extremes are at its vertices; each part's own variables ``(e, α·ΔT, d)`` move its resistance
  the same way, so one sign per part suffices;
* the reachable set at any temperature inside the range is contained in the set at the end
  with the larger ``|ΔT|`` (the tempco terms are ``α·ΔT`` with ``α`` in a symmetric box), so
  the two ends of the temperature range suffice;
* the environment extremes are at the polygon vertices, the ends of the REF range, ``±`` the
  minimum amplifier CMRR and ``A ∈ {A_min, ∞}``.

Shared variables (network packages, same-lot reels) enter every element of their group.
Write ``Σ = (1+e_abs)(1+d_abs)(1+α_abs·ΔT)`` for the common scale of a group. With no source
and no REF impedance ``x`` and ``Adm`` depend only on ratios of the effective resistances:
a group of all four elements, or of one whole side (R1 and R2, or R3 and R4), acts only
through ratios inside the group, whose range is widest with ``α_abs`` at an end, so the
corners are exact; a group that is a pure common scale of its members makes ``x`` a ratio of
affine functions of ``Σ`` (monotone) and, since ``Adm`` rises with both ``a`` and ``c``, leaves
``Adm`` monotone unless it moves them in opposite directions (R1 with R4, or R2 with R3:
:func:`opposing_group`). In every other case (a source or REF impedance, an opposing group,
or a partial group whose elements carry a tracking tempco, which makes the scale act slightly
differently on each element) the extreme can lie *inside* the range of ``Σ``
(:func:`needs_scale_search`). The excess over the corners is second order in the span of
``Σ``: about 2.5·10⁻⁴ of the common-mode error for a ±2 % package with a large source
imbalance, but up to about 2.5·10⁻² (0.2 dB) for an extreme quad (20 % absolute tolerance,
source and REF impedance of hundreds of ohms against 1 kΩ elements), in the probes behind the
tests. For every objective (largest and smallest ``x``,
largest and smallest ``Adm``) the own variables still sit at the corner that pushes each
resistance the right way, and for a given ``Σ`` the most harmful split puts ``α_abs`` as low
as the range allows (that widens the element tracking box); what remains is the maximum of a smooth
function of one ``Σ`` per group (at most two groups) over an interval, found by golden-section
search (nested for two groups) and merged with the corners. Every value reported is that of a
feasible point, so the result never overstates the worst case.

Public entry points: :func:`worst_case` (a design and a spec), :func:`worst_case_from_variation`
(a :class:`~optimizer.analysis.variation.Variation` and an environment) and
:func:`worst_case_from_bounds` (independent parts given as per-resistor bounds, vectorised over
many designs: a plain 16-corner box enumeration, which the tests hold :func:`worst_case` to; no
search uses it).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from fractions import Fraction
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..spec import Spec
from .corners import passive_corners
from .environment import (
    IDEAL_ENVIRONMENT,
    Environment,
    amplifier_corners,
    dominant_vertices,
    environment_from_spec,
)
from .transfer import (
    coefficients,
    common_mode_gain,
    differential_gain,
    divider_ratio,
    feedback_factor,
)
from .variation import Variation, variation_from_design

__all__ = [
    "BUDGET_NAMES",
    "ROUNDING_FLOOR",
    "BoundsWorstCase",
    "BudgetItem",
    "WorstCase",
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
    "needs_scale_search",
    "nominal_common_mode_error",
    "opposing_group",
    "rejection_db",
    "worst_case",
    "worst_case_from_bounds",
    "worst_case_from_variation",
]

Array = NDArray[np.float64]

#: Error-budget contributors, in report order.
BUDGET_NAMES = (
    "value_quantisation",
    "tolerance",
    "tempco",
    "life_drift",
    "source_imbalance",
    "ref_impedance",
    "amplifier_cmrr",
    "open_loop_gain",
)

#: Budget contributions below this (|Acm/Adm| or relative gain error, i.e. beyond 260 dB) are
#: float64 rounding noise of differences of order-one numbers and are reported as zero.
ROUNDING_FLOOR = 1e-13

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0
_ITERATIONS_1D = 48
_ITERATIONS_2D = 24
#: Golden-section steps evaluated per call of the objective (:func:`_golden_max`): a single
#: search or the inner level of a nested one, and the outer level (whose every call is a whole
#: inner search). Measured on the bundled examples; the results do not depend on them.
_LOOKAHEAD = 3
_LOOKAHEAD_OUTER = 4

_X_UP = np.array([-1.0, 1.0, 1.0, -1.0])  # R1 low, R2 high, R3 high, R4 low: x largest
_GAIN_UP = np.array([-1.0, 1.0, -1.0, 1.0])  # R1 low, R2 high, R3 low, R4 high: Adm largest


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


def _relative_gain_error(gain: ArrayLike, target_gain: float) -> Array:
    """Signed relative gain error ``Adm/G_target − 1``."""
    return np.asarray(gain, dtype=float) / target_gain - 1.0


# --------------------------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class BudgetItem:
    """One contributor of the error budget, evaluated with only it active.

    ``cmrr_error``: worst ``|Acm/Adm|`` (ratio) from this contributor alone; ``gain_error``:
    worst ``|Adm/G − 1|`` from it alone; the shares are fractions of the sums over all items."""

    name: str
    cmrr_error: float
    gain_error: float
    cmrr_share: float
    gain_share: float

    @property
    def cmrr_db(self) -> float:
        """This contributor's CMRR in dB (``inf`` when it adds nothing)."""
        return float(rejection_db(self.cmrr_error))


@dataclass(frozen=True)
class WorstCase:
    """Exact worst case of a design over every bounded variable.

    ``cmrr_db``: worst CMRR including the amplifier; ``cmrr_resistors_db``: worst CMRR with an
    ideal amplifier (resistors, source and REF impedance); ``gain_min``/``gain_max``: range of
    the differential gain ``|Adm|``; ``gain_error_min``/``gain_error_max``: the same as signed
    errors relative to ``target_gain``; ``nominal_gain``/``nominal_cmrr_db``: nominal values,
    no source or REF impedance, ideal amplifier; ``budget``: one :class:`BudgetItem` per entry
    of :data:`BUDGET_NAMES`, worked out on first use (the search's exact checks of designs it
    rejects never read it); ``corner_count``: corners evaluated."""

    cmrr_db: float
    cmrr_resistors_db: float
    gain_min: float
    gain_max: float
    gain_error_min: float
    gain_error_max: float
    nominal_gain: float
    nominal_cmrr_db: float
    target_gain: float
    corner_count: int
    #: What :attr:`budget` is worked out from: the variation, the environment, the target gain.
    budget_inputs: tuple[Variation, Environment, float] = field(repr=False, compare=False)

    @cached_property
    def budget(self) -> tuple[BudgetItem, ...]:
        """Each contributor alone (:func:`_budget`), computed once, on first use."""
        return _budget(*self.budget_inputs)

    @property
    def gain_error_worst(self) -> float:
        """Largest magnitude of the relative gain error."""
        return max(abs(self.gain_error_min), abs(self.gain_error_max))

    def budget_item(self, name: str) -> BudgetItem:
        for item in self.budget:
            if item.name == name:
                return item
        raise ModelError(
            "worst case",
            "budget",
            f"no contributor {name!r}; expected one of {', '.join(BUDGET_NAMES)}",
        )


@dataclass(frozen=True)
class BoundsWorstCase:
    """Worst case of a batch of designs with independent parts (arrays of the batch shape)."""

    cmrr_db: Array
    cmrr_resistors_db: Array
    gain_min: Array
    gain_max: Array


@dataclass(frozen=True)
class _Extremes:
    cm_error: float
    cm_error_passive: float
    gain_min: float
    gain_max: float
    corners: int


# --------------------------------------------------------------------------------------------
# Corner enumeration
# --------------------------------------------------------------------------------------------


def _enumerate(variation: Variation, environment: Environment) -> _Extremes:
    """Evaluate every corner at once (one call of ``coefficients`` with the amplifier corners
    broadcast against the passive corners) and return the extremes."""
    pc = passive_corners(variation, environment)
    ac = amplifier_corners(environment)
    r = pc.r
    passive = coefficients(r[:, 0], r[:, 1], r[:, 2], r[:, 3], pc.rs1, pc.rs3, pc.rref)
    cm_passive = float(
        np.max(common_mode_error(common_mode_gain(passive), differential_gain(passive)))
    )
    col = (slice(None), None)
    k = coefficients(
        r[:, 0][col],
        r[:, 1][col],
        r[:, 2][col],
        r[:, 3][col],
        pc.rs1[col],
        pc.rs3[col],
        pc.rref[col],
        ac.open_loop_gain[None, :],
        ac.cmrr[None, :],
        ac.sign[None, :],
    )
    adm = differential_gain(k)
    cm = float(np.max(common_mode_error(common_mode_gain(k), adm)))
    gain = np.abs(adm)
    return _Extremes(cm, cm_passive, float(gain.min()), float(gain.max()), pc.count * ac.count)


# --------------------------------------------------------------------------------------------
# Refinement over the common scale of shared groups
# --------------------------------------------------------------------------------------------


def _golden_split(a: Array, b: Array, c: Array, d: Array) -> tuple[Array, Array]:
    """The new point of a golden-section step on ``a < c < d < b`` for either outcome:
    ``d − φ⁻¹·(d − a)`` when the step keeps ``[a, d]`` (its better interior point is ``c``),
    ``c + φ⁻¹·(b − c)`` when it keeps ``[c, b]`` (``φ⁻¹ = (√5 − 1)/2``); the kept interior
    point stays, so each kept interval again holds two points at its golden sections."""
    return d - _GOLDEN * (d - a), c + _GOLDEN * (b - c)


def _golden_max(
    f: Callable[[Array], Array],
    lo: Array,
    hi: Array,
    iterations: int,
    lookahead: int = _LOOKAHEAD,
) -> Array:
    """Largest value of ``f`` found by golden-section search on ``[lo, hi]`` (one interval per
    problem, any array shape, vectorised), including both ends. Exact for functions that are
    unimodal or monotone on the interval; every returned value is ``f`` at a point of the
    interval.

    ``f`` takes points of shape ``(m, *lo.shape)`` and returns values of that shape. The
    search is the sequential one (each step keeps the part of the bracket around the better
    interior point and evaluates one new point: :func:`_golden_split`), run ``lookahead``
    steps per call of ``f``: where a step puts its new point depends only on which part the
    earlier steps kept, so the ``2**k − 1`` points that the next ``k`` steps could need are
    known before any of them is evaluated. They are evaluated in one call, and the steps are
    then replayed with their values, taking exactly the decisions, points and maximum of the
    step-by-step search. The extra evaluations cost little where a call of ``f`` costs mostly
    its fixed overhead (small arrays, and above all the outer level of a nested search, whose
    every call is a whole inner search)."""
    shape, n = lo.shape, lo.size

    def values_at(points: Array) -> Array:
        return f(points.reshape((-1, *shape))).reshape(points.shape[0], n)

    a, b = lo.reshape(n), hi.reshape(n)
    c = b - _GOLDEN * (b - a)
    d = a + _GOLDEN * (b - a)
    start = values_at(np.concatenate((a, b, c, d)).reshape(4, n))
    best = np.maximum(np.maximum(start[0], start[1]), np.maximum(start[2], start[3]))
    fc, fd = start[2], start[3]
    columns = np.arange(n)
    done = 0
    while done < iterations:
        steps = min(lookahead, iterations - done)
        # Step 0: its decision is known.
        left = fc >= fd
        new_left, new_right = _golden_split(a, b, c, d)
        a, b, c, d = (
            np.where(left, a, c),
            np.where(left, d, b),
            np.where(left, new_left, d),
            np.where(left, c, new_right),
        )
        points = [np.where(left, new_left, new_right)[None]]
        # Steps 1..k−1: both outcomes of every step. Level j holds the 2**j brackets after
        # step j, the outcomes "keep [a, d]" of level j − 1 first, then "keep [c, b]": branch
        # p of level j − 1 becomes branches p and p + 2**(j−1).
        level = np.concatenate((a, b, c, d)).reshape(4, 1, n)
        for _ in range(1, steps):
            a_, b_, c_, d_ = level
            new_left, new_right = _golden_split(a_, b_, c_, d_)
            points += [new_left, new_right]
            level = np.concatenate((a_, c_, d_, b_, new_left, d_, c_, new_right)).reshape(4, -1, n)
        values = values_at(np.concatenate(points)).reshape(-1)
        # Replay: ``at`` indexes the value of the point the current step evaluates (row
        # 2**j − 1 + branch of the flattened values).
        at = columns
        for j in range(steps):
            f_new = values[at]
            best = np.maximum(best, f_new)
            fc, fd = np.where(left, f_new, fd), np.where(left, fc, f_new)
            if j + 1 < steps:
                left = fc >= fd
                at = at + np.where(left, 2**j * n, 2 ** (j + 1) * n)
        if steps > 1:
            branch = at - (2 ** (steps - 1) - 1) * n  # branch·n + column
            a, b, c, d = level.reshape(4, -1)[:, branch]
        done += steps
    result: Array = best.reshape(shape)
    return result


@dataclass(frozen=True)
class _Problems:
    """Search problems: ``sigma`` (P, 4) corner of the own variables, ``abs_dt`` (P,) |ΔT|,
    passive environment, amplifier corner, objective kind (0: x, 1: Adm) and direction ±1."""

    sigma: Array
    abs_dt: Array
    rs1: Array
    rs3: Array
    rref: Array
    cmrr: Array
    sign: Array
    open_loop_gain: Array
    kind: Array
    direction: Array


def _scale_bounds(variation: Variation, abs_dt: Array) -> tuple[Array, Array]:
    """Range of each group's common scale ``Σ = S·(1+u)``, ``S = (1+e_abs)(1+d_abs)``,
    ``u = α_abs·ΔT``: ``[S−(1−U), S+(1+U)]`` with ``U = abs_tc·|ΔT|``,
    ``S− = (1 − abs_tol)(1 + d_low)``, ``S+ = (1 + abs_tol)(1 + d_high)`` (``d_low = −D``, or 0
    for one-sided drift). Shapes (P, G)."""
    tol = np.array([g.tolerance for g in variation.groups])
    drift = np.array([g.drift for g in variation.groups])
    drift_low = np.array([g.drift_min for g in variation.groups])
    u = np.outer(abs_dt, np.array([g.tempco_per_k for g in variation.groups]))
    return (1.0 - tol) * (1.0 + drift_low) * (1.0 - u), (1.0 + tol) * (1.0 + drift) * (1.0 + u)


class _ScaleObjective:
    """Objective of the scale search, with everything that does not depend on the scales
    computed once. For own variables at ``sigma`` and group scales ``Σ`` (P, G):
    ``u = max(−U, Σ/S+ − 1)``, ``S = Σ/(1+u)``,
    ``r_i = R0_i(1+σt_i)(1+d_i(σ))·S·(1 + u + σ·TC_i|ΔT|)``, ``d_i(±1)`` the ends of the own
    drift interval (ungrouped positions: ``S = 1``,
    ``u = 0``); value ``direction × log x`` for the first ``x_rows`` problems and
    ``direction × Adm`` for the others.

    A group's resistances depend on its own scale only (:meth:`group_resistances`), ``a`` on
    R3 and R4 only (:meth:`a_term`) and ``c`` on R1 and R2 only (:meth:`c_term`), so a nested
    search computes what its outer scale fixes once for its whole inner search. Scales may
    carry leading axes (``(..., P)`` per group); values have the broadcast shape."""

    def __init__(self, variation: Variation, problems: _Problems, x_rows: int) -> None:
        sigma = problems.sigma
        own = variation.nominal * (1.0 + sigma * np.array(variation.tolerance))
        # Own drift at the corner of sigma: d_high for +1, d_low (−D, or 0 one-sided) for −1.
        own *= 1.0 + np.where(
            sigma > 0.0, np.array(variation.drift), np.array(variation.own_drift_low)
        )
        tc = 1.0 + sigma * np.outer(problems.abs_dt, np.array(variation.tempco_per_k))
        ungrouped = np.array([g < 0 for g in variation.group_of])
        own[:, ungrouped] *= tc[:, ungrouped]  # own tempco of parts that share nothing
        self.own, self.tc = own, tc
        self.fixed = {i: own[:, i] for i in range(4) if ungrouped[i]}
        self.positions = [group.positions for group in variation.groups]
        self.s_high = [(1.0 + g.tolerance) * (1.0 + g.drift) for g in variation.groups]
        self.neg_u_bound = -np.outer(
            problems.abs_dt, np.array([g.tempco_per_k for g in variation.groups])
        )
        self.rs1, self.rs3, self.rref = problems.rs1, problems.rs3, problems.rref
        self.x_rows = x_rows
        self.eps = (problems.sign / (2.0 * problems.cmrr))[x_rows:]
        self.inv_gain = (1.0 / problems.open_loop_gain)[x_rows:]
        self.direction = problems.direction

    def group_resistances(self, group: int, scale: Array) -> dict[int, Array]:
        """Resistances (ohms) of the group's positions at its common scale ``Σ``."""
        u = np.maximum(self.neg_u_bound[:, group], scale / self.s_high[group] - 1.0)
        s = scale / (1.0 + u)
        return {i: self.own[:, i] * s * (u + self.tc[:, i]) for i in self.positions[group]}

    def a_term(self, r: dict[int, Array]) -> Array:
        """``a`` of :func:`bridge_terms` from the resistances by position (ohms; source and REF
        impedance added here)."""
        return divider_ratio(r[2] + self.rs3, r[3] + self.rref)

    def c_term(self, r: dict[int, Array]) -> Array:
        """``c`` of :func:`bridge_terms` from the resistances by position (ohms; source
        impedance added here)."""
        return feedback_complement(r[0] + self.rs1, r[1])

    def value(self, a: Array, c: Array) -> Array:
        """``direction × log x`` (x rows) and ``direction × Adm`` (Adm rows) from ``a``, ``c``."""
        n = self.x_rows
        log_x = np.log(c[..., :n] / a[..., :n])
        adm = differential_gain_from_terms(a[..., n:], c[..., n:], self.eps, self.inv_gain)
        value: Array = self.direction * np.concatenate((log_x, adm), axis=-1)
        return value


def _maximise_scales(variation: Variation, problems: _Problems, x_rows: int) -> Array:
    """Largest objective value over the box of group scales (one or two groups); the first
    ``x_rows`` problems are of kind x, the rest of kind Adm. With two groups the search is
    nested: the outer search over the first group's scale takes, at each of its points, the
    largest value that an inner search over the second group's scale finds there."""
    lo, hi = _scale_bounds(variation, problems.abs_dt)
    objective = _ScaleObjective(variation, problems, x_rows)
    groups = len(variation.groups)
    if groups == 1:

        def single(z: Array) -> Array:
            r = objective.fixed | objective.group_resistances(0, z)
            return objective.value(objective.a_term(r), objective.c_term(r))

        return _golden_max(single, lo[:, 0], hi[:, 0], _ITERATIONS_1D)
    if groups == 2:
        inner_moves = set(objective.positions[1])

        def outer(z0: Array) -> Array:
            r0 = objective.fixed | objective.group_resistances(0, z0)
            # a or c that the inner scale does not move: computed once per inner search.
            a0 = None if inner_moves & {2, 3} else objective.a_term(r0)
            c0 = None if inner_moves & {0, 1} else objective.c_term(r0)

            def inner(z1: Array) -> Array:
                r = r0 | objective.group_resistances(1, z1)
                a = objective.a_term(r) if a0 is None else a0
                c = objective.c_term(r) if c0 is None else c0
                return objective.value(a, c)

            lo1 = np.broadcast_to(lo[:, 1], z0.shape)
            hi1 = np.broadcast_to(hi[:, 1], z0.shape)
            return _golden_max(inner, lo1, hi1, _ITERATIONS_2D, _LOOKAHEAD)

        return _golden_max(outer, lo[:, 0], hi[:, 0], _ITERATIONS_2D, _LOOKAHEAD_OUTER)
    raise ModelError("worst case", "groups", f"expected at most two shared groups, got {groups}")


def opposing_group(positions: tuple[int, ...]) -> bool:
    """True when scaling the resistors at ``positions`` (0-based R1..R4) together moves
    ``c = R2/(R1+R2)`` and ``a = R4/(R3+R4)`` in opposite directions (the group holds R1 and
    R4 but neither R2 nor R3, or R2 and R3 but neither R1 nor R4). The gain rises with both
    ``a`` and ``c``, so only for such a group can it peak inside the range of the group's
    common scale when there is no source or REF impedance; ``x = c/a`` is then a ratio of
    affine functions of the scale and stays monotone for every group."""
    held = set(positions)
    c_way = (1 in held) - (0 in held) if len(held & {0, 1}) == 1 else 0
    a_way = (3 in held) - (2 in held) if len(held & {2, 3}) == 1 else 0
    return c_way * a_way < 0


def needs_scale_search(variation: Variation, environment: Environment) -> bool:
    """Whether the corners alone may miss an extreme (module docstring). They are exact when
    nothing is shared, or when there is no source or REF impedance and every group either
    holds all four resistors or one whole side (R1 and R2, or R3 and R4: only ratios inside the
    group matter), or is a pure common scale of its members (no element tracking tempco) that
    does not oppose ``a`` and ``c`` (:func:`opposing_group`)."""
    if not variation.groups:
        return False
    if environment.has_impedance:
        return True
    for group in variation.groups:
        held = set(group.positions)
        if held in ({0, 1, 2, 3}, {0, 1}, {2, 3}):
            continue
        pure_scale = all(variation.tempco_per_k[i] == 0.0 for i in held)
        if pure_scale and not opposing_group(group.positions):
            continue
        return True
    return False


def _refine(variation: Variation, environment: Environment) -> _Extremes | None:
    """Extremes over the interior of the shared groups' common scale (module docstring);
    ``None`` when the corners are already exact (:func:`needs_scale_search`).

    The search runs only at the environment corners that can hold each extreme: for every
    resistance value ``x = c/a`` rises with ``Rs3`` and falls with ``Rs1`` and ``Rref``, and
    ``Adm`` rises with ``Rref`` and falls with ``Rs1`` and ``Rs3``, so at every scale a
    source vertex that another one beats in both coordinates
    (:func:`~optimizer.analysis.environment.dominant_vertices`), or the other end of the REF
    range, gives a value no better."""
    if not needs_scale_search(variation, environment):
        return None
    ac = amplifier_corners(environment)
    ref_low, ref_high = min(environment.ref_ohm), max(environment.ref_ohm)

    def corners(rs1_way: float, rs3_way: float, rref: float) -> list[tuple[float, float, float]]:
        vertices = dominant_vertices(environment.source_ohm, rs1_way, rs3_way)
        return [(rs1, rs3, rref) for rs1, rs3 in vertices]

    cmrr, a_min = environment.amp_cmrr, environment.open_loop_gain
    rows: list[tuple[float, float, float, float, float, float, float, float, float]] = []
    for dt in environment.delta_t_k:
        for env in corners(-1.0, 1.0, ref_low):  # x largest
            rows.append((abs(dt), *env, math.inf, 1.0, math.inf, 0.0, 1.0))
        for env in corners(1.0, -1.0, ref_high):  # x smallest
            rows.append((abs(dt), *env, math.inf, 1.0, math.inf, 0.0, -1.0))
    x_count = len(rows)
    # Adm rises with A: its largest value needs A = inf, its smallest A = A_min.
    signs = sorted({float(s) for s in ac.sign})
    for dt in environment.delta_t_k:
        for env in corners(-1.0, -1.0, ref_high):  # Adm largest
            for sign in signs:
                rows.append((abs(dt), *env, cmrr, sign, math.inf, 1.0, 1.0))
        for env in corners(1.0, 1.0, ref_low):  # Adm smallest
            for sign in signs:
                rows.append((abs(dt), *env, cmrr, sign, a_min, 1.0, -1.0))
    table = np.array(rows, dtype=float)
    kind, direction = table[:, 7], table[:, 8]
    sigma = np.where((kind == 0.0)[:, None], _X_UP, _GAIN_UP) * direction[:, None]
    problems = _Problems(
        sigma,
        table[:, 0],
        table[:, 1],
        table[:, 2],
        table[:, 3],
        table[:, 4],
        table[:, 5],
        table[:, 6],
        kind,
        direction,
    )
    best = _maximise_scales(variation, problems, x_count)
    x_extremes = np.exp(direction[:x_count] * best[:x_count])  # largest and smallest x
    eps = ac.sign / (2.0 * ac.cmrr)
    cm = common_mode_error_from_balance(x_extremes[:, None], eps[None, :])
    cm_passive = common_mode_error_from_balance(x_extremes, 0.0)
    gains, gain_way = best[x_count:], direction[x_count:]
    return _Extremes(
        float(cm.max()),
        float(cm_passive.max()),
        float(-gains[gain_way < 0.0].max()),
        float(gains[gain_way > 0.0].max()),
        int(best.shape[0]),
    )


def _extremes(variation: Variation, environment: Environment) -> _Extremes:
    corners = _enumerate(variation, environment)
    refined = _refine(variation, environment)
    if refined is None:
        return corners
    return _Extremes(
        max(corners.cm_error, refined.cm_error),
        max(corners.cm_error_passive, refined.cm_error_passive),
        min(corners.gain_min, refined.gain_min),
        max(corners.gain_max, refined.gain_max),
        corners.corners,
    )


# --------------------------------------------------------------------------------------------
# Budget
# --------------------------------------------------------------------------------------------


def _nominal_common_mode_error(variation: Variation) -> float:
    """:func:`nominal_common_mode_error` of the nominal values (0 for a balanced bridge)."""
    return nominal_common_mode_error(*variation.nominal_ohm)


def _budget(
    variation: Variation, environment: Environment, target_gain: float
) -> tuple[BudgetItem, ...]:
    """Each contributor alone. Value quantisation compares the nominal values with the target
    gain (nominal values, ideal environment); every other contributor is evaluated on the
    *balanced* version of the design (R2 = G·R1, R4 = G·R3 exactly) with everything else ideal,
    so that each figure is that contributor's effect alone."""
    r1, r2, r3, r4 = variation.nominal_ohm
    k = coefficients(r1, r2, r3, r4)
    adm = differential_gain(k)
    errors: dict[str, tuple[float, float]] = {
        "value_quantisation": (
            above_rounding(_nominal_common_mode_error(variation)),
            above_rounding(float(abs(_relative_gain_error(adm, target_gain)))),
        )
    }
    balanced = variation.with_nominal((r1, target_gain * r1, r3, target_gain * r3))
    still = balanced.only()
    cases: dict[str, tuple[Variation, Environment]] = {
        "tolerance": (balanced.only(tolerance=True), IDEAL_ENVIRONMENT),
        "tempco": (
            balanced.only(tempco=True),
            Environment(temperatures_c=environment.temperatures_c),
        ),
        "life_drift": (balanced.only(drift=True), IDEAL_ENVIRONMENT),
        "source_imbalance": (still, Environment(source_ohm=environment.source_ohm)),
        "ref_impedance": (still, Environment(ref_ohm=environment.ref_ohm)),
        "amplifier_cmrr": (still, Environment(amp_cmrr=environment.amp_cmrr)),
        "open_loop_gain": (still, Environment(open_loop_gain=environment.open_loop_gain)),
    }
    for name, (var, env) in cases.items():
        ext = _enumerate(var, env)
        gain_error = max(
            abs(ext.gain_min / target_gain - 1.0), abs(ext.gain_max / target_gain - 1.0)
        )
        errors[name] = (above_rounding(ext.cm_error), above_rounding(gain_error))
    cm_shares = budget_shares([errors[n][0] for n in BUDGET_NAMES])
    gain_shares = budget_shares([errors[n][1] for n in BUDGET_NAMES])
    return tuple(
        BudgetItem(
            name, errors[name][0], errors[name][1], float(cm_shares[i]), float(gain_shares[i])
        )
        for i, name in enumerate(BUDGET_NAMES)
    )


# --------------------------------------------------------------------------------------------
# Entry points
# --------------------------------------------------------------------------------------------


def worst_case_from_variation(
    variation: Variation, environment: Environment, target_gain: float
) -> WorstCase:
    """Exact worst case of a :class:`Variation` in an :class:`Environment` against the target
    differential gain ``target_gain`` (module docstring for the method)."""
    if not math.isfinite(target_gain) or target_gain <= 0.0:
        raise ModelError(
            "worst case", "gain", f"expected a target gain above zero, got {target_gain!r}"
        )
    ext = _extremes(variation, environment)
    r1, r2, r3, r4 = variation.nominal_ohm
    adm = differential_gain(coefficients(r1, r2, r3, r4))
    return WorstCase(
        cmrr_db=float(rejection_db(ext.cm_error)),
        cmrr_resistors_db=float(rejection_db(ext.cm_error_passive)),
        gain_min=ext.gain_min,
        gain_max=ext.gain_max,
        gain_error_min=float(_relative_gain_error(ext.gain_min, target_gain)),
        gain_error_max=float(_relative_gain_error(ext.gain_max, target_gain)),
        nominal_gain=float(abs(adm)),
        nominal_cmrr_db=float(rejection_db(_nominal_common_mode_error(variation))),
        target_gain=float(target_gain),
        corner_count=ext.corners,
        budget_inputs=(variation, environment, float(target_gain)),
    )


def worst_case(design: Design, spec: Spec) -> WorstCase:
    """Exact worst case of ``design`` under ``spec``: temperature range, life, source and REF
    impedance, the amplifier's minimum CMRR and open-loop gain, target gain
    ``spec.requirements.gain``, drift model ``spec.requirements.drift_model``; same-lot
    tracking from ``spec.preferences``."""
    req = spec.requirements
    variation = variation_from_design(
        design, req.life_s, spec.preferences.same_lot_tracking, req.drift_model
    )
    return worst_case_from_variation(variation, environment_from_spec(spec), req.gain)


def worst_case_from_bounds(
    nominal_ohm: ArrayLike,
    low_factor: ArrayLike,
    high_factor: ArrayLike,
    environment: Environment = IDEAL_ENVIRONMENT,
) -> BoundsWorstCase:
    """Worst case of designs whose four resistors vary independently within
    ``[R0·low, R0·high]`` (temperature and drift already folded in, e.g. by
    :func:`~optimizer.analysis.variation.discrete_factor_bounds`; ``environment.temperatures_c``
    is not used). ``nominal_ohm``, ``low_factor`` and ``high_factor`` have shape ``(..., 4)``;
    the results have the batch shape ``...``. All 16 resistor corners are combined with every
    source, REF and amplifier corner of ``environment``."""
    nominal = np.asarray(nominal_ohm, dtype=float)
    low = np.broadcast_to(np.asarray(low_factor, dtype=float), nominal.shape)
    high = np.broadcast_to(np.asarray(high_factor, dtype=float), nominal.shape)
    if nominal.shape[-1:] != (4,):
        raise ModelError(
            "worst case",
            "nominal",
            f"expected a last axis of 4 (R1..R4), got shape {nominal.shape}",
        )
    if np.any(nominal <= 0.0) or np.any(low <= 0.0) or np.any(high < low):
        raise ModelError("worst case", "bounds", "expected positive nominals and 0 < low ≤ high")
    signs = np.array([[(j >> i) & 1 for i in range(4)] for j in range(16)], dtype=bool)
    r = nominal[..., None, :] * np.where(
        signs, high[..., None, :], low[..., None, :]
    )  # (..., 16, 4)
    source = np.array(environment.source_ohm, dtype=float)
    ref = np.array(environment.ref_ohm, dtype=float)
    rs1 = np.repeat(source[:, 0], ref.size)
    rs3 = np.repeat(source[:, 1], ref.size)
    rref = np.tile(ref, source.shape[0])
    ac = amplifier_corners(environment)
    rr = [r[..., i][..., None, None] for i in range(4)]  # (..., 16, 1, 1)
    env = (rs1[:, None], rs3[:, None], rref[:, None])  # (E, 1)
    passive = coefficients(
        rr[0][..., 0], rr[1][..., 0], rr[2][..., 0], rr[3][..., 0], *(e[:, 0] for e in env)
    )
    cm_passive = common_mode_error(common_mode_gain(passive), differential_gain(passive)).max(
        axis=(-2, -1)
    )
    k = coefficients(
        rr[0], rr[1], rr[2], rr[3], env[0], env[1], env[2],
        ac.open_loop_gain[None, :], ac.cmrr[None, :], ac.sign[None, :],
    )  # fmt: skip
    adm = differential_gain(k)
    cm = common_mode_error(common_mode_gain(k), adm).max(axis=(-3, -2, -1))
    gain = np.abs(adm)
    return BoundsWorstCase(
        cmrr_db=rejection_db(cm),
        cmrr_resistors_db=rejection_db(cm_passive),
        gain_min=gain.min(axis=(-3, -2, -1)),
        gain_max=gain.max(axis=(-3, -2, -1)),
    )
