# ruff: noqa: RUF002  (Greek letters and symbols are the formulas' own notation)
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
imbalance, in the probes behind the tests. For every objective (largest and smallest ``x``,
largest and smallest ``Adm``) the own variables still sit at the corner that pushes each
resistance the right way, and for a given ``Σ`` the most harmful split puts ``α_abs`` as low
as the range allows (that widens the element tracking box); what remains is the maximum of a smooth
function of one ``Σ`` per group (at most two groups) over an interval, found by golden-section
search (nested for two groups) and merged with the corners. Every value reported is that of a
feasible point, so the result never overstates the worst case.

Public entry points: :func:`worst_case` (a design and a spec), :func:`worst_case_from_variation`
(a :class:`~optimizer.analysis.variation.Variation` and an environment) and
:func:`worst_case_from_bounds` (independent parts given as per-resistor bounds, vectorised over
many candidate designs, for the solver).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..spec import Spec
from .transfer import (
    coefficients,
    common_mode_gain,
    differential_gain,
    divider_ratio,
    feedback_factor,
)
from .variation import (
    IDEAL_ENVIRONMENT,
    Environment,
    Variation,
    amplifier_corners,
    environment_from_spec,
    passive_corners,
    variation_from_design,
)

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
    "differential_gain_from_terms",
    "needs_scale_search",
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


def bridge_terms(
    r1_eff: ArrayLike, r2: ArrayLike, r3_eff: ArrayLike, r4_eff: ArrayLike
) -> tuple[Array, Array]:
    """``(a, c)``: the divider ratio ``a = R4'/(R3'+R4')`` and ``c = R2/(R1'+R2) = 1 − β`` of
    :mod:`~optimizer.analysis.transfer` (ohms in; primes include source and REF impedance)."""
    return divider_ratio(r3_eff, r4_eff), 1.0 - feedback_factor(r1_eff, r2)


def common_mode_error_from_terms(a: ArrayLike, c: ArrayLike, eps: ArrayLike) -> Array:
    """``|Acm/Adm| = 2·|a(1+ε) − c(1−ε)| / (a(1+ε) + c(1−ε))``, ``ε = s/(2·CMRR)``: the ratio of
    ``Acm = k1 + k2`` to ``Adm = (k2 − k1)/2`` with the closed forms of
    :mod:`~optimizer.analysis.transfer` (their common denominator, and with it the open-loop
    gain, cancels)."""
    e = np.asarray(eps, dtype=float)
    plus = np.asarray(a, dtype=float) * (1.0 + e)
    minus = np.asarray(c, dtype=float) * (1.0 - e)
    return 2.0 * np.abs(plus - minus) / (plus + minus)


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
    of :data:`BUDGET_NAMES`; ``corner_count``: corners evaluated."""

    cmrr_db: float
    cmrr_resistors_db: float
    gain_min: float
    gain_max: float
    gain_error_min: float
    gain_error_max: float
    nominal_gain: float
    nominal_cmrr_db: float
    target_gain: float
    budget: tuple[BudgetItem, ...]
    corner_count: int

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


def _golden_max(f: Callable[[Array], Array], lo: Array, hi: Array, iterations: int) -> Array:
    """Largest value of ``f`` found by golden-section search on ``[lo, hi]`` (one interval per
    problem, vectorised), including both ends. Exact for functions that are unimodal or
    monotone on the interval; every returned value is ``f`` at a point of the interval."""
    a, b = lo.copy(), hi.copy()
    best = np.maximum(f(a), f(b))
    c = b - _GOLDEN * (b - a)
    d = a + _GOLDEN * (b - a)
    fc, fd = f(c), f(d)
    best = np.maximum(best, np.maximum(fc, fd))
    for _ in range(iterations):
        left = fc >= fd
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        kept, f_kept = np.where(left, c, d), np.where(left, fc, fd)
        new = np.where(left, b - _GOLDEN * (b - a), a + _GOLDEN * (b - a))
        f_new = f(new)
        best = np.maximum(best, f_new)
        c, d = np.where(left, new, kept), np.where(left, kept, new)
        fc, fd = np.where(left, f_new, f_kept), np.where(left, f_kept, f_new)
    return best


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
    ``u = α_abs·ΔT``: ``[S−(1−U), S+(1+U)]`` with ``U = abs_tc·|ΔT|``. Shapes (P, G)."""
    tol = np.array([g.tolerance for g in variation.groups])
    drift = np.array([g.drift for g in variation.groups])
    u = np.outer(abs_dt, np.array([g.tempco_per_k for g in variation.groups]))
    return (1.0 - tol) * (1.0 - drift) * (1.0 - u), (1.0 + tol) * (1.0 + drift) * (1.0 + u)


class _ScaleObjective:
    """Objective of the scale search, with everything that does not depend on the scales
    computed once. For own variables at ``sigma`` and group scales ``Σ`` (P, G):
    ``u = max(−U, Σ/S+ − 1)``, ``S = Σ/(1+u)``,
    ``r_i = R0_i(1+σt_i)(1+σD_i)·S·(1 + u + σ·TC_i|ΔT|)`` (ungrouped positions: ``S = 1``,
    ``u = 0``); value ``direction × log x`` for the first ``x_rows`` problems and
    ``direction × Adm`` for the others."""

    def __init__(self, variation: Variation, problems: _Problems, x_rows: int) -> None:
        sigma = problems.sigma
        count = len(variation.groups)
        own = variation.nominal * (1.0 + sigma * np.array(variation.tolerance))
        own *= 1.0 + sigma * np.array(variation.drift)
        tc = 1.0 + sigma * np.outer(problems.abs_dt, np.array(variation.tempco_per_k))
        group_of = np.array([g if g >= 0 else count for g in variation.group_of])
        ungrouped = group_of == count
        own[:, ungrouped] *= tc[:, ungrouped]  # own tempco of parts that share nothing
        tc[:, ungrouped] = 1.0
        self.own, self.tc, self.group_of = own, tc, group_of
        self.s_high = np.array([(1.0 + g.tolerance) * (1.0 + g.drift) for g in variation.groups])
        self.neg_u_bound = -np.outer(
            problems.abs_dt, np.array([g.tempco_per_k for g in variation.groups])
        )
        self.ones = np.ones((sigma.shape[0], 1))
        self.zeros = np.zeros((sigma.shape[0], 1))
        self.rs1, self.rs3, self.rref = problems.rs1, problems.rs3, problems.rref
        self.x_rows = x_rows
        self.eps = (problems.sign / (2.0 * problems.cmrr))[x_rows:]
        self.inv_gain = (1.0 / problems.open_loop_gain)[x_rows:]
        self.direction = problems.direction

    def __call__(self, scale: Array) -> Array:
        u = np.maximum(self.neg_u_bound, scale / self.s_high - 1.0)
        s = scale / (1.0 + u)
        s_full = np.concatenate((s, self.ones), axis=1)[:, self.group_of]
        u_full = np.concatenate((u, self.zeros), axis=1)[:, self.group_of]
        r = self.own * s_full * (u_full + self.tc)
        a, c = bridge_terms(r[:, 0] + self.rs1, r[:, 1], r[:, 2] + self.rs3, r[:, 3] + self.rref)
        n = self.x_rows
        log_x = np.log(c[:n] / a[:n])
        adm = differential_gain_from_terms(a[n:], c[n:], self.eps, self.inv_gain)
        value: Array = self.direction * np.concatenate((log_x, adm))
        return value


def _maximise_scales(variation: Variation, problems: _Problems, x_rows: int) -> Array:
    """Largest objective value over the box of group scales (one or two groups); the first
    ``x_rows`` problems are of kind x, the rest of kind Adm."""
    lo, hi = _scale_bounds(variation, problems.abs_dt)
    objective = _ScaleObjective(variation, problems, x_rows)
    groups = len(variation.groups)
    if groups == 1:
        return _golden_max(lambda z: objective(z[:, None]), lo[:, 0], hi[:, 0], _ITERATIONS_1D)
    if groups == 2:

        def outer(z0: Array) -> Array:
            def inner(z1: Array) -> Array:
                return objective(np.stack([z0, z1], axis=1))

            return _golden_max(inner, lo[:, 1], hi[:, 1], _ITERATIONS_2D)

        return _golden_max(outer, lo[:, 0], hi[:, 0], _ITERATIONS_2D)
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
    ``None`` when the corners are already exact (:func:`needs_scale_search`)."""
    if not needs_scale_search(variation, environment):
        return None
    source = np.array(environment.source_ohm, dtype=float)
    ref = np.array(environment.ref_ohm, dtype=float)
    ac = amplifier_corners(environment)
    rows: list[tuple[float, float, float, float, float, float, float, float, float]] = []
    passive_keys: list[tuple[float, float, float, float]] = []
    for dt in environment.delta_t_k:
        for rs1, rs3 in source:
            for rref in ref:
                passive_keys.append((abs(dt), rs1, rs3, rref))
    for key in passive_keys:
        for way in (1.0, -1.0):
            rows.append((*key, math.inf, 1.0, math.inf, 0.0, way))
    x_count = len(rows)
    # Adm rises with A: its largest value needs A = inf, its smallest A = A_min.
    signs = sorted({float(s) for s in ac.sign})
    for key in passive_keys:
        for sign in signs:
            rows.append((*key, environment.amp_cmrr, sign, math.inf, 1.0, 1.0))
            rows.append((*key, environment.amp_cmrr, sign, environment.open_loop_gain, 1.0, -1.0))
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
    x_high = np.exp(best[:x_count:2])
    x_low = np.exp(-best[1:x_count:2])
    eps = ac.sign / (2.0 * ac.cmrr)
    cm = np.maximum(
        common_mode_error_from_balance(x_high[:, None], eps[None, :]),
        common_mode_error_from_balance(x_low[:, None], eps[None, :]),
    )
    cm_passive = np.maximum(
        common_mode_error_from_balance(x_high, 0.0), common_mode_error_from_balance(x_low, 0.0)
    )
    gains = best[x_count:]
    return _Extremes(
        float(cm.max()),
        float(cm_passive.max()),
        float(-gains[1::2].max()),
        float(gains[0::2].max()),
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
            above_rounding(float(common_mode_error(common_mode_gain(k), adm))),
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
    k = coefficients(r1, r2, r3, r4)
    adm = differential_gain(k)
    return WorstCase(
        cmrr_db=float(rejection_db(ext.cm_error)),
        cmrr_resistors_db=float(rejection_db(ext.cm_error_passive)),
        gain_min=ext.gain_min,
        gain_max=ext.gain_max,
        gain_error_min=float(_relative_gain_error(ext.gain_min, target_gain)),
        gain_error_max=float(_relative_gain_error(ext.gain_max, target_gain)),
        nominal_gain=float(abs(adm)),
        nominal_cmrr_db=float(rejection_db(common_mode_error(common_mode_gain(k), adm))),
        target_gain=float(target_gain),
        budget=_budget(variation, environment, target_gain),
        corner_count=ext.corners,
    )


def worst_case(design: Design, spec: Spec) -> WorstCase:
    """Exact worst case of ``design`` under ``spec``: temperature range, life, source and REF
    impedance, the amplifier's minimum CMRR and open-loop gain, target gain
    ``spec.requirements.gain``; same-lot tracking from ``spec.preferences``."""
    req = spec.requirements
    variation = variation_from_design(design, req.life_s, spec.preferences.same_lot_tracking)
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
