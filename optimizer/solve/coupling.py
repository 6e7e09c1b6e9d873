"""The half coupling of the CP-SAT model: what each half of the bridge, (R1, R2) against
(R3, R4), or a network pair against the two discrete parts beside it, can reach given the best
partner in the other half (:func:`half_pairs`, an analysis on arrays), and the constraints that
bound each chosen half's spread by its own best case (:func:`couple_halves`). Every bound is a
necessary condition, so the model stays a relaxation of the exact check.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

from ..spec import CmrrBasis, Spec
from .cpterms import LOG_SCALE, QUAD_SCALE, ExtremeVertices, total
from .discrete import DiscreteBlock
from .limits import Limits
from .options import (
    C_DELTA,
    PAIR,
    OptionTable,
    gain_coefficients,
)

__all__ = [
    "FLOOR_TOLERANCE",
    "JOIN_CHUNK",
    "MAX_HALF_PAIRS",
    "HalfPairs",
    "LeastSpread",
    "couple_halves",
    "half_pairs",
]


#: Most value pairs the half coupling keeps per half; beyond it the coupling (a tightening
#: only) is skipped so that model building stays bounded.
MAX_HALF_PAIRS = 300_000


#: Most (a, b) pairs the half coupling's join evaluates at once (bounds its memory).
JOIN_CHUNK = 500_000


#: Absolute allowance (natural-log units) when comparing a pair's need plus its least spread
#: with the budget: keeps rounding from removing a pair that sits exactly at the limit.
FLOOR_TOLERANCE = 1e-9


class LeastSpread:
    """The least spread a choice of one half can bring, whatever grades are picked.

    For a discrete part of value k at position p the worst-case deviation of a linear form
    Σ cᵢ·φᵢ is |c_p|·f·own_c (variance: c_p²·f²·var_c), with f = R/(R + rs) at the vertex
    (``options``: own = Σ ln(1 + xₖ), var = Σ (xₖ/k)² or xₖ²/3). Its least value over the
    classes c the model keeps at p for value k, and over the vertices ``vs`` (f is smallest
    there), is a lower bound on that part's term in ``spread`` at any of those vertices. For a
    network option it is the option's own least spread over ``vs`` (its w or s constants)."""

    def __init__(
        self,
        block: DiscreteBlock,
        grade: Sequence[Mapping[int, object]],
        fraction: NDArray[np.float64],
        of_variance: bool,
    ) -> None:
        self.fraction = fraction
        self.of_variance = of_variance
        per_class = block.var if of_variance else block.own
        self.least: list[NDArray[np.float64]] = []
        for position in range(4):
            least = np.full(block.values.size, np.inf)
            for c in grade[position]:
                ks = block.avail[position][c]
                np.minimum.at(least, ks, per_class[c])
            self.least.append(least)

    def pairs(
        self,
        keys: NDArray[np.int64],
        positions: tuple[int, int],
        coef: NDArray[np.float64],
        vs: tuple[int, ...],
    ) -> NDArray[np.float64]:
        """Per value pair (k_i, k_j) (rows of ``keys``) at ``positions``: the least spread of
        the two parts."""
        index = keys.reshape(-1, 2)
        total = np.zeros(index.shape[0])
        if not vs:
            return total
        for column, position in enumerate(positions):
            f = self.fraction[:, list(vs), position].min(axis=1)
            if self.of_variance:
                term = coef[position] ** 2 * f**2 * self.least[position]
            else:
                term = abs(coef[position]) * f * self.least[position]
            total += term[index[:, column]]
        return total

    def options(
        self, options: OptionTable, members: NDArray[np.int64], delta: bool, vs: tuple[int, ...]
    ) -> NDArray[np.float64]:
        """Per network option in ``members``: its least spread over the vertices ``vs``."""
        if not vs:
            return np.zeros(members.size)
        if self.of_variance:
            table = options.s_delta if delta else options.s_gain
        else:
            table = options.w_delta if delta else options.w_gain
        least: NDArray[np.float64] = table[np.ix_(members, np.asarray(vs, dtype=np.int64))].min(
            axis=1
        )
        return least


@dataclass(frozen=True)
class HalfPairs:
    """The half coupling's analysis (:func:`half_pairs`): the choices of each half ((n, 2) value
    index pairs; for a network half, option indices in ``a_members`` with −1 beside them), each
    choice's least needed mismatch ``m`` and largest gain room ``r`` (inf / −inf: reaches no
    partner), the vertices the spreads are taken over, and the budget and yield factor z."""

    first: object
    second: tuple[int, int]
    a_keys: NDArray[np.int64]
    b_keys: NDArray[np.int64]
    a_members: NDArray[np.int64] | None
    m_a: NDArray[np.float64]
    r_a: NDArray[np.float64]
    m_b: NDArray[np.float64]
    r_b: NDArray[np.float64]
    vertices: tuple[int, ...]
    gain_vertices: tuple[int, ...]
    z: float
    budget: float
    yield_basis: bool

    @property
    def infeasible(self) -> bool:
        """No choice of one of the halves reaches a partner."""
        return not (np.isfinite(self.m_a).any() and np.isfinite(self.m_b).any())

    @staticmethod
    def none_reachable() -> HalfPairs:
        empty = np.zeros(0)
        keys = np.zeros((0, 2), dtype=np.int64)
        return HalfPairs(
            (0, 1), (2, 3), keys, keys, None, empty, empty, empty, empty, (), (), 1.0, 0.0, False
        )


Keep = Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]]


@dataclass(frozen=True)
class _Setting:
    """What every step of :func:`half_pairs` reads: the value sets, the φ table, the gain
    coefficients, the binding vertices, the gain window's ends in logs (``upper``, ``lower``,
    the open-loop term included), the budget B, the reference (high) vertex of the sorted joins
    and ``h = 1/(2(1 + G))`` (the weight of δ in the gain of the (R1, R2) half)."""

    value: Sequence[Mapping[int, object]]
    phi: NDArray[np.float64]
    cg: NDArray[np.float64]
    high: list[int]
    low: list[int]
    gain_high: list[int]
    gain_low: list[int]
    upper: float
    lower: float
    budget: float
    ref: int
    h: float

    @property
    def n_vertices(self) -> int:
        return int(self.phi.shape[1])


@dataclass(frozen=True)
class _Choices:
    """Both halves' choices (keys as in :class:`HalfPairs`) with their δ and γ contributions at
    every vertex ((n, V) arrays), and the second half's largest vertex-to-vertex swing."""

    a_keys: NDArray[np.int64]
    a_delta: NDArray[np.float64]
    a_gain: NDArray[np.float64]
    a_members: NDArray[np.int64] | None
    b_keys: NDArray[np.int64]
    b_delta: NDArray[np.float64]
    b_gain: NDArray[np.float64]
    swing_b: float


def _spread_of(contributions: NDArray[np.float64]) -> NDArray[np.float64]:
    """Per row: the largest less the smallest contribution over the vertices."""
    return np.asarray(contributions.max(axis=1) - contributions.min(axis=1), dtype=float)


def half_pairs(
    halves: tuple[object, tuple[int, int]],
    value: Sequence[Mapping[int, object]],
    options: OptionTable,
    phi: NDArray[np.float64],
    least: LeastSpread,
    spec: Spec,
    limits: Limits,
    sides: ExtremeVertices,
    usable: NDArray[np.bool_],
) -> HalfPairs | None:
    """What each half can reach given the best partner in the other half (the analysis behind
    :func:`couple_halves`, which turns it into constraints; nothing is added to a model here).

    For a choice a of one half, m_a = min over partners b of the mismatch the pair needs,
    need(a, b) = max(δ_v(a, b) over the high vertices, −δ_v(a, b) over the low ones), and
    r_a = max over b of the gain room min(U − γ(a, b), γ(a, b) − A − L). Then, exactly for the
    chosen a (a necessary condition, so the model stays a relaxation):
    worst case: spread ≤ B − Σ m_a·[a]  and  gain spread ≤ Σ r_a·[a];
    yield:      variance ≤ Σ ((B − m_a)/z)²·[a]  and  gain variance ≤ Σ (r_a/z)²·[a];
    and likewise for the other half. Unlike the sum constraint |Σ δ| + spread ≤ B, whose LP
    relaxation can average mismatches of opposite sign to zero, these bound the spread by the
    chosen choice's own best case, which keeps the LP bound close to the integer optimum.
    Value pairs that reach no partner within the budget are removed. Returns None when a half
    has too many choices to couple (MAX_HALF_PAIRS); ``infeasible`` is set when no choice of a
    half reaches a partner (the stream has no solution).

    A pair (a, b) only counts as reachable when its mismatch leaves room for the least spread
    its own values allow (``LeastSpread``): need(a, b) + W_a + W_b ≤ B and W'_a + W'_b ≤ room
    (worst case), or z²·(S_a + S_b) ≤ (B − need)² and z²·(S'_a + S'_b) ≤ room² (yield), with W
    (S) the least worst-case deviation (variance) of the pair's parts over the model's vertices.
    The model's own spread constraints imply these, so the model stays a relaxation; checking
    them here removes pairs (and often whole streams) before CP-SAT sees them."""
    req = spec.requirements
    high = list(sides.delta_high)
    setting = _Setting(
        value=value,
        phi=phi,
        cg=gain_coefficients(req.gain),
        high=high,
        low=list(sides.delta_low),
        gain_high=list(sides.gain_high),
        gain_low=list(sides.gain_low),
        upper=math.log(req.gain) + limits.gain_upper,
        lower=math.log(req.gain) + limits.gain_lower + limits.open_loop_term,
        budget=limits.cmrr_budget,
        ref=high[0] if high else 0,
        h=1.0 / (2.0 * (1.0 + req.gain)),
    )
    first, second = halves
    choices = _choices(setting, halves, options, usable)
    if not isinstance(choices, _Choices):
        return choices
    yield_basis = req.cmrr_basis is CmrrBasis.YIELD
    z = limits.z if yield_basis else 1.0
    vertices = tuple(sorted(set(setting.high + setting.low)))
    gain_vertices = tuple(sorted(set(setting.gain_high + setting.gain_low)))
    cg = setting.cg
    if choices.a_members is None:
        floor_a = least.pairs(choices.a_keys, first, C_DELTA, vertices)  # type: ignore[arg-type]
        gain_floor_a = least.pairs(choices.a_keys, first, cg, gain_vertices)  # type: ignore[arg-type]
    else:
        floor_a = least.options(options, choices.a_members, True, vertices)
        gain_floor_a = least.options(options, choices.a_members, False, gain_vertices)
    floor_b = least.pairs(choices.b_keys, second, C_DELTA, vertices)
    gain_floor_b = least.pairs(choices.b_keys, second, cg, gain_vertices)
    m_a, r_a, m_b, r_b = _join(
        setting, choices, (floor_a, floor_b), (gain_floor_a, gain_floor_b), yield_basis, z
    )
    return HalfPairs(
        first=first,
        second=second,
        a_keys=choices.a_keys,
        b_keys=choices.b_keys,
        a_members=choices.a_members,
        m_a=m_a,
        r_a=r_a,
        m_b=m_b,
        r_b=r_b,
        vertices=vertices,
        gain_vertices=gain_vertices,
        z=z,
        budget=setting.budget,
        yield_basis=yield_basis,
    )


def _choices(
    setting: _Setting,
    halves: tuple[object, tuple[int, int]],
    options: OptionTable,
    usable: NDArray[np.bool_],
) -> _Choices | HalfPairs | None:
    """Both halves' choices: the first half's (discrete pairs that :func:`_a_keep` accepts, or
    the usable network options of its shape), then the second half's pairs that some first
    choice can meet (:func:`_b_keep`). For a discrete first half the swing the first half's
    screen allows for the second is refined from the second half found, up to three rounds
    (while it shrinks by more than a tenth). None when a half has more than
    ``MAX_HALF_PAIRS`` choices; :meth:`HalfPairs.none_reachable` when a half has none."""
    first, second = halves
    phi = setting.phi
    a_members: NDArray[np.int64] | None = None
    i2, j2 = second
    # Largest vertex-to-vertex swing of the second half's δ contribution (refined below).
    swing_b = (
        float(_spread_of(phi[:, :, i2]).max() + _spread_of(phi[:, :, j2]).max())
        if phi.size
        else 0.0
    )
    for _ in range(3):
        if isinstance(first, tuple):
            a_keys, a_delta, a_gain = _discrete_side(setting, first, _a_keep(setting, swing_b))
            if len(a_keys) > MAX_HALF_PAIRS:
                return None
        else:
            members = np.flatnonzero(
                usable & (options.positions == PAIR) & (options.shape == first)
            )
            a_keys = np.column_stack([members, np.full(members.size, -1)])
            a_delta, a_gain = options.delta[members], options.gain[members]
            a_members = members
        if len(a_keys) == 0:
            return HalfPairs.none_reachable()
        b_keys, b_delta, b_gain = _discrete_side(setting, second, *_b_keep(setting, a_delta))
        if len(b_keys) > MAX_HALF_PAIRS:
            return None
        if len(b_keys) == 0:
            return HalfPairs.none_reachable()
        new_swing = float(_spread_of(b_delta).max())
        if not isinstance(first, tuple) or new_swing >= 0.9 * swing_b:
            break
        swing_b = new_swing
    # The final second half's largest swing, taken in the loop.
    return _Choices(a_keys, a_delta, a_gain, a_members, b_keys, b_delta, b_gain, new_swing)


def _a_keep(setting: _Setting, swing_b: float) -> Keep:
    """The screen of the (R1, R2) half: the gain at a vertex is γ = −q_a + h·δ with
    |δ| ≤ B + the design's swing, so −q_a at the gain vertices must lie within the gain window
    widened by h·(B + swing)."""

    def keep(dl: NDArray[np.float64], gm: NDArray[np.float64]) -> NDArray[np.bool_]:
        widen = setting.h * (setting.budget + _spread_of(dl) + swing_b) + 1e-12
        mask = np.ones(dl.shape[0], dtype=bool)
        for v in setting.gain_high:
            mask &= -dl[:, v] <= setting.upper + widen
        for v in setting.gain_low:
            mask &= -dl[:, v] >= setting.lower - widen
        return mask

    return keep


def _b_keep(setting: _Setting, a_delta: NDArray[np.float64]) -> tuple[Keep, Keep]:
    """Second half: some a must satisfy need(a, b) ≤ B, which requires δ_ref = q_a + q_b in
    [−B − swing_a − swing_b, B] at the reference (high) vertex (see :func:`_join`). Returns the
    full screen and its coarse form (δ at the reference vertex and a swing bound)."""
    ref, budget = setting.ref, setting.budget
    centres = np.sort(a_delta[:, ref])
    swing_a_max = float(_spread_of(a_delta).max())

    def window(q: NDArray[np.float64], swing: NDArray[np.float64]) -> NDArray[np.bool_]:
        lo = np.searchsorted(centres, -q - budget - swing_a_max - swing - 1e-12, side="left")
        hi = np.searchsorted(centres, -q + budget + 1e-12, side="right")
        return np.asarray(hi > lo)

    def keep(dl: NDArray[np.float64], gm: NDArray[np.float64]) -> NDArray[np.bool_]:
        return window(dl[:, ref], _spread_of(dl))

    return keep, window


def _discrete_side(
    setting: _Setting,
    positions: tuple[int, int],
    keep: Keep,
    coarse: Keep | None = None,
) -> tuple[NDArray[np.int64], NDArray[np.float64], NDArray[np.float64]]:
    """Value pairs (ki, kj) that ``keep`` accepts, given their δ and γ contributions at every
    vertex (arrays (n, V)); returns the pairs ((n, 2) value indices) and those contributions.
    ``coarse``, when given, sees only each pair's δ at the reference vertex and an upper bound
    on its vertex-to-vertex swing (the sum of the two parts' swings, which bounds the swing of
    their sum) and must accept every pair ``keep`` accepts; the full contributions are then
    computed for its survivors only."""
    phi, cg, ref, n_vertices = setting.phi, setting.cg, setting.ref, setting.n_vertices
    i, j = positions
    ki = np.array(sorted(setting.value[i]), dtype=np.int64)
    kj = np.array(sorted(setting.value[j]), dtype=np.int64)
    empty = np.zeros((0, n_vertices))
    if ki.size == 0 or kj.size == 0:
        return np.zeros((0, 2), dtype=np.int64), empty, empty
    phi_i, phi_j = phi[ki, :, i], phi[kj, :, j]
    swing_i = abs(C_DELTA[i]) * _spread_of(phi_i)
    swing_j = abs(C_DELTA[j]) * _spread_of(phi_j)
    width = kj.size * (1 if coarse is not None else n_vertices)
    rows = max(1, int(2_000_000 // width))
    firsts: list[NDArray[np.int64]] = []
    seconds: list[NDArray[np.int64]] = []
    deltas: list[NDArray[np.float64]] = []
    gains: list[NDArray[np.float64]] = []
    for start in range(0, ki.size, rows):
        block_i = phi_i[start : start + rows]
        if coarse is not None:
            q = (C_DELTA[i] * block_i[:, None, ref] + C_DELTA[j] * phi_j[None, :, ref]).reshape(-1)
            bound = (swing_i[start : start + rows, None] + swing_j[None, :]).reshape(-1)
            flat = np.flatnonzero(coarse(q, bound))
            if flat.size == 0:
                continue
            first_at, second_at = start + flat // kj.size, flat % kj.size
            dl = C_DELTA[i] * phi_i[first_at] + C_DELTA[j] * phi_j[second_at]
            gm = cg[i] * phi_i[first_at] + cg[j] * phi_j[second_at]
        else:
            dl = (C_DELTA[i] * block_i[:, None, :] + C_DELTA[j] * phi_j[None, :, :]).reshape(
                -1, n_vertices
            )
            gm = (cg[i] * block_i[:, None, :] + cg[j] * phi_j[None, :, :]).reshape(-1, n_vertices)
            flat = np.arange(dl.shape[0])
            first_at, second_at = start + flat // kj.size, flat % kj.size
        mask = keep(dl, gm)
        if not mask.any():
            continue
        firsts.append(ki[first_at[mask]])
        seconds.append(kj[second_at[mask]])
        deltas.append(dl[mask])
        gains.append(gm[mask])
    if not firsts:
        return np.zeros((0, 2), dtype=np.int64), empty, empty
    keys = np.column_stack([np.concatenate(firsts), np.concatenate(seconds)])
    return keys, np.concatenate(deltas), np.concatenate(gains)


def _join(
    setting: _Setting,
    choices: _Choices,
    floors: tuple[NDArray[np.float64], NDArray[np.float64]],
    gain_floors: tuple[NDArray[np.float64], NDArray[np.float64]],
    yield_basis: bool,
    z: float,
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Sorted-window join of the two halves' choices: a choice can only pair with choices of
    the other half whose δ contribution at the reference vertex lies within the budget (plus
    vertex slack). Over every such pair that leaves room for its least spreads (``floors``,
    ``gain_floors``: per choice of each half), each choice's least need and largest gain room
    (``m_a, r_a, m_b, r_b``; inf / −inf for a choice that reaches no partner)."""
    ref, budget = setting.ref, setting.budget
    upper, lower = setting.upper, setting.lower
    a_delta, b_delta = choices.a_delta, choices.b_delta
    n_a, n_b = len(choices.a_keys), len(choices.b_keys)
    swing_a = _spread_of(a_delta)
    m_a = np.full(n_a, np.inf)
    r_a = np.full(n_a, -np.inf)
    m_b = np.full(n_b, np.inf)
    r_b = np.full(n_b, -np.inf)
    order = np.argsort(b_delta[:, ref], kind="stable")
    sorted_q = b_delta[order, ref]
    # need ≥ δ_ref (ref is a high vertex) and need ≥ −δ_ref − swing: δ_ref ∈ [−B − swing, B].
    centre = -a_delta[:, ref]
    window_lo = np.searchsorted(
        sorted_q, centre - budget - swing_a - choices.swing_b - 1e-12, side="left"
    )
    window_hi = np.searchsorted(sorted_q, centre + budget + 1e-12, side="right")
    counts = np.maximum(window_hi - window_lo, 0)

    # Each side's contribution at each vertex that matters as its own contiguous column (the
    # per-pair gathers below read one column at a time).
    def columns(
        a: NDArray[np.float64], b: NDArray[np.float64], vs: list[int]
    ) -> list[tuple[NDArray[np.float64], NDArray[np.float64]]]:
        return [(np.ascontiguousarray(a[:, v]), np.ascontiguousarray(b[:, v])) for v in vs]

    high_cols = columns(a_delta, b_delta, setting.high)
    low_cols = columns(a_delta, b_delta, setting.low)
    up_cols = columns(choices.a_gain, choices.b_gain, setting.gain_high)
    down_cols = columns(choices.a_gain, choices.b_gain, setting.gain_low)
    floor_a, floor_b = floors
    gain_floor_a, gain_floor_b = gain_floors
    # Every (a, b) pair inside a's window, a few hundred thousand pairs at a time.
    ends = np.cumsum(counts)
    start = 0
    while start < n_a:
        stop = int(np.searchsorted(ends, ends[start] - counts[start] + JOIN_CHUNK, side="right"))
        stop = max(stop, start + 1)
        block = np.arange(start, stop)
        start = stop
        sizes = counts[block]
        if not sizes.any():
            continue
        a_at = np.repeat(block, sizes)
        within = np.arange(a_at.size) - np.repeat(np.cumsum(sizes) - sizes, sizes)
        b_at = order[np.repeat(window_lo[block], sizes) + within]
        need = np.full(a_at.size, -np.inf)
        for a_col, b_col in high_cols:
            np.maximum(need, a_col[a_at] + b_col[b_at], out=need)
        for a_col, b_col in low_cols:
            np.maximum(need, -(a_col[a_at] + b_col[b_at]), out=need)
        room = np.full(a_at.size, np.inf)
        for a_col, b_col in up_cols:
            np.minimum(room, upper - (a_col[a_at] + b_col[b_at]), out=room)
        for a_col, b_col in down_cols:
            np.minimum(room, (a_col[a_at] + b_col[b_at]) - lower, out=room)
        floor = floor_a[a_at] + floor_b[b_at]
        gain_floor = gain_floor_a[a_at] + gain_floor_b[b_at]
        if yield_basis:
            ok = (
                (need <= budget)
                & (room >= 0.0)
                & (z * np.sqrt(floor) <= budget - need + FLOOR_TOLERANCE)
                & (z * np.sqrt(gain_floor) <= room + FLOOR_TOLERANCE)
            )
        else:
            ok = (need + floor <= budget + FLOOR_TOLERANCE) & (
                room - gain_floor >= -FLOOR_TOLERANCE
            )
        if not ok.any():
            continue
        need_ok = np.where(ok, need, np.inf)
        room_ok = np.where(ok, room, -np.inf)
        np.minimum.at(m_a, a_at, need_ok)
        np.maximum.at(r_a, a_at, room_ok)
        np.minimum.at(m_b, b_at, need_ok)
        np.maximum.at(r_b, b_at, room_ok)
    return m_a, r_a, m_b, r_b


def couple_halves(
    model: cp_model.CpModel,
    pairs: HalfPairs,
    x: list[cp_model.IntVar],
    value: list[dict[int, cp_model.IntVar]],
    spread_delta: Callable[[tuple[int, ...]], cp_model.LinearExpr],
    spread_gain: Callable[[tuple[int, ...]], cp_model.LinearExpr],
) -> None:
    """Tighten the model with the analysis of :func:`half_pairs`: one literal per live value
    pair of a discrete half (linked to its two value literals), dead network options fixed to
    false, and per half: spread ≤ Σ cap(choice)·[choice] (worst case: cap = B − m; yield:
    ((B − m)/z)²; gain: r or (r/z)²)."""
    first, second = pairs.first, pairs.second
    a_keys, b_keys = pairs.a_keys, pairs.b_keys
    m_a, r_a, m_b, r_b = pairs.m_a, pairs.r_a, pairs.m_b, pairs.r_b
    budget, z, yield_basis = pairs.budget, pairs.z, pairs.yield_basis
    vertices, gain_vertices = pairs.vertices, pairs.gain_vertices
    a_lits = None if pairs.a_members is None else [x[i] for i in pairs.a_members.tolist()]

    def side_literals(
        keys: NDArray[np.int64], positions: tuple[int, int], alive: NDArray[np.bool_]
    ) -> list[cp_model.IntVar | None]:
        """One literal per live value pair, linked to the value literals of its two positions;
        value literals with no live pair are fixed to false."""
        i, j = positions
        lits: list[cp_model.IntVar | None] = [None] * len(keys)
        live_at = np.flatnonzero(alive)
        made = [model.new_bool_var(f"h{i}{j}_{ki}_{kj}") for ki, kj in keys[live_at].tolist()]
        for at, lit in zip(live_at.tolist(), made, strict=True):
            lits[at] = lit
        for column, position in enumerate(positions):
            owner = keys[live_at, column]
            order = np.argsort(owner, kind="stable")  # pairs keep their order within a value
            owners, starts = np.unique(owner[order], return_index=True)
            groups = (
                dict(zip(owners.tolist(), np.split(order, starts[1:]), strict=True))
                if owner.size
                else {}
            )
            for k, var in value[position].items():
                members = groups.get(k)
                chosen = [] if members is None else [made[m] for m in members.tolist()]
                model.add(var == total(chosen))
        return lits

    alive_a = np.isfinite(m_a)
    alive_b = np.isfinite(m_b)
    if a_lits is None:
        a_side = side_literals(a_keys, first, alive_a)  # type: ignore[arg-type]
    else:
        a_side = [lit if live else None for lit, live in zip(a_lits, alive_a, strict=False)]
        for lit, live in zip(a_lits, alive_a, strict=False):
            if not live:
                model.add(lit == 0)
    b_side = side_literals(b_keys, second, alive_b)
    for lits, m, r in ((a_side, m_a, r_a), (b_side, m_b, r_b)):
        live = [(lit, mi, ri) for lit, mi, ri in zip(lits, m, r, strict=False) if lit is not None]
        if not live:  # half_pairs reports this case as infeasible before any build
            model.add_bool_or([])
            return
        literals = [lit for lit, _, _ in live]
        if yield_basis:
            delta_cap = [((budget - mi) / z) ** 2 * QUAD_SCALE**2 for _, mi, _ in live]
            gain_cap = [(ri / z) ** 2 * QUAD_SCALE**2 for _, _, ri in live]
        else:
            delta_cap = [(budget - mi) * LOG_SCALE for _, mi, _ in live]
            gain_cap = [ri * LOG_SCALE for _, _, ri in live]
        model.add(
            spread_delta(vertices)
            <= cp_model.LinearExpr.weighted_sum(literals, [math.ceil(c) for c in delta_cap])
        )
        model.add(
            spread_gain(gain_vertices)
            <= cp_model.LinearExpr.weighted_sum(literals, [math.ceil(c) for c in gain_cap])
        )
