"""The worst case inside the range of shared groups' common scale, where corners alone may
miss it (:func:`needs_scale_search`): a golden-section search over each group's scale, nested
for two groups, at the environment corners that can hold each extreme.

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

:mod:`~optimizer.analysis.worstcase` merges what this finds with its corners.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..errors import ModelError
from .balance import (
    common_mode_error_from_balance,
    differential_gain_from_terms,
    feedback_complement,
)
from .environment import Environment, amplifier_corners, dominant_vertices
from .transfer import divider_ratio
from .variation import Variation

__all__ = ["Extremes", "needs_scale_search", "opposing_group", "refine"]

Array = NDArray[np.float64]

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


@dataclass(frozen=True)
class Extremes:
    """The extremes of one variation: the largest common-mode error ``|Acm/Adm|`` with the
    amplifier and with an ideal one, the range of ``|Adm|``, and the points evaluated."""

    cm_error: float
    cm_error_passive: float
    gain_min: float
    gain_max: float
    corners: int


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


def refine(variation: Variation, environment: Environment) -> Extremes | None:
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
    return Extremes(
        float(cm.max()),
        float(cm_passive.max()),
        float(-gains[gain_way < 0.0].max()),
        float(gains[gain_way > 0.0].max()),
        int(best.shape[0]),
    )
