"""The yield basis in the exact cost-ordered search: a relaxation of the Monte-Carlo check.

Why it is a relaxation
----------------------
The exact check on the yield basis (``analysis.montecarlo``) draws a fixed set of ``N``
builds from the spec's seed and counts those that meet the CMRR floor and the gain accuracy at
every corner; the design passes when at most ``f`` builds fail (:func:`failure_allowance`).
The draws do not depend on the design's values, only on which of its variables have a
non-zero bound (``analysis.variation.sample_values``), so the screen can look at the very
builds the check will judge. Two necessary conditions follow, each a count over those builds:

1. **Some build passes** (the target is above zero), and every drawn variable lies within
   ``box`` times its bound (``box = max|z|/k`` over the stream for a normal draw, ``1`` for a
   uniform one). So at every environment vertex some point of that box meets the balance and
   gain conditions of ``optimizer.solve.frontier`` (the *exists* screen: the box intervals of
   ``c`` and ``a`` come within ``Λ`` of each other and the gain can be met).
2. **At most f builds fail on the balance.** For four discrete parts with independent
   variables, write ``p_i = ln(R_i'/R_i)`` for build ``b`` at one temperature end (``R_i' =
   R_i(1 + e_i)(1 + d_i)(1 + α_i·ΔT)``, the check's own resistance) and ``n`` for the nominal
   ``ln(c/a)`` at one environment vertex. By the mean-value theorem, with
   ``c = R2'/(R1' + Rs1 + R2')`` and ``a = (R4' + Rref)/(R3' + Rs3 + R4' + Rref)``,

       ln x − n = −α·p1 + β·p2 + γ3·p3 − γ4·p4 + r,

   ``α = R1/D``, ``β = (R1 + Rs1)/D``, ``D = R1 + Rs1 + R2``, ``γ3 = R3/D'``,
   ``γ4 = R4(R3 + Rs3)/((R4 + Rref)·D')``, ``D' = R3 + Rs3 + R4 + Rref`` (the partial
   derivatives at nominal), and ``|r| ≤ (α|p1| + β|p2| + γ3|p3|)(e^{2P} − 1) +
   γ4|p4|(e^{4P} − 1)``, ``P = max|p_i|`` (each derivative is a ratio of sums of terms scaled
   by at most ``e^{±P}``). The build fails the floor when ``|ln x| > Λ``
   (``frontier.log_balance_limit``; ``x`` at any vertex is at most the largest ``x`` the check
   judges, and at least the smallest). With the weights bounded over a set of designs, each
   build gives a threshold ``A_b`` such that it certainly fails when ``n > A_b`` (and ``B_b``
   for ``n < B_b``); if ``n`` exceeds the ``(f + 1)``-th smallest ``A_b``, more than ``f``
   builds fail. So ``n`` must lie in ``[n_min, n_max]`` (:func:`balance_window`), a window that
   holds for every design of the same four classes whose weights lie in the bounds.

The gain accuracy is screened by condition 1 only, and the other checks (noise, ratings,
ranges) are left to the exact check, which every emitted design still passes through. Same-lot
tracking and the one-sided drift model couple the draws of different parts; those specs stay
on the CP-SAT model (``optimizer.solve.search``).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator
from dataclasses import replace

import numpy as np
from numpy.typing import NDArray

from ..analysis.variation import Variation, environment_from_spec, sample_values
from ..catalog import Catalog
from ..design import Design
from ..spec import DriftModel, Spec
from .environment import LinearEnvironment
from .discrete import allowed_rows
from .frontier import (
    _JOIN_CHUNK,
    _Parts,
    _adm,
    _discrete_parts,
    _emit,
    _group_table,
    _Half,
    _half_records,
    _Limits,
    _limits,
)

__all__ = [
    "BuildStream",
    "failure_allowance",
    "half_statistic",
    "pair_window",
    "yield_discrete_frontier",
    "yield_frontier_applies",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

#: The bound used to draw the unit variables (any value the variation accepts).
_UNIT = 0.25
#: Absolute widening of each window against rounding (keeps the screen optimistic).
_ROUND = 1e-12
#: Width of the weight bins the half records are grouped by.
_BIN = 0.05
#: Group pairs screened at once on the first builds of the stream.
_BATCH = 2048


def failure_allowance(samples: int, target: float) -> int:
    """The most failing builds out of ``samples`` with which the yield ``(samples − f)/samples``
    (as the check computes it, in floating point) still reaches ``target``; −1 if none."""
    f = max(int(math.floor(samples * (1.0 - target))), 0)
    while f + 1 <= samples and (samples - (f + 1)) / samples >= target:
        f += 1
    while f >= 0 and (samples - f) / samples < target:
        f -= 1
    return f


def _layout(catalog: Catalog, spec: Spec) -> tuple[bool, bool, bool] | None:
    """Which of (tolerance, tempco, drift) have a non-zero bound: the same for every usable
    part, or None (then the draws of one position depend on the other positions' parts)."""
    frame = catalog.discrete
    if frame.empty:
        return None
    rows = allowed_rows(frame, spec)
    if rows.size == 0:
        return None
    life = spec.requirements.life_s
    out = []
    for column in ("tolerance", "tempco_per_k", "drift_1000h"):
        nonzero = frame[column].to_numpy(float)[rows] > 0.0
        if column == "drift_1000h" and life <= 0.0:
            nonzero = np.zeros_like(nonzero)
        if nonzero.any() and not nonzero.all():
            return None
        out.append(bool(nonzero.all()))
    return out[0], out[1], out[2]


def yield_frontier_applies(spec: Spec, catalog: Catalog) -> bool:
    """The relaxation holds for four discrete parts with independent variables (no same-lot
    tracking, the symmetric drift model) whose variables are all zero or all non-zero alike
    (so every position draws the same columns of the stream whatever the other parts)."""
    return (
        not spec.preferences.same_lot_tracking
        and spec.requirements.drift_model is DriftModel.SYMMETRIC
        and _layout(catalog, spec) is not None
    )


class BuildStream:
    """The builds the Monte-Carlo check draws for four discrete parts of one layout.

    ``delta_t``: the temperature ends the check judges (K from 25 °C); ``allow``: the failure
    allowance (:func:`failure_allowance`); ``box``: every drawn variable lies within ``box``
    times its bound."""

    def __init__(self, spec: Spec, layout: tuple[bool, bool, bool]) -> None:
        prefs, req = spec.preferences, spec.requirements
        self.samples = prefs.samples
        self.delta_t = tuple(float(t) for t in environment_from_spec(spec).delta_t_k)
        self.allow = failure_allowance(self.samples, req.yield_target)

        def bounds(j: int) -> tuple[float, float, float, float]:
            b = _UNIT if layout[j] else 0.0
            return b, b, b, b

        variation = Variation((1.0, 1.0, 1.0, 1.0), bounds(0), bounds(1), bounds(2))
        rng = np.random.Generator(np.random.PCG64(prefs.seed))
        raw = sample_values(variation, rng, self.samples, prefs.distribution, prefs.sigma_k)
        # The check's own draws, divided by the bound they were drawn with.
        self.units = (raw.own_error / _UNIT, raw.own_tempco / _UNIT, raw.own_drift / _UNIT)
        self.box = max(float(np.max(np.abs(u))) for u in self.units) * (1.0 + 1e-9)
        self._logs: dict[tuple[int, bytes, int], Array] = {}

    def logs(self, position: int, cls: Array, count: int) -> Array:
        """``p = ln(R'/R)`` (T, count) of the first ``count`` builds at each temperature end
        for a part of class ``cls`` (tolerance, tempco per K, drift bound) at ``position``:
        ``R' = R(1 + e)(1 + d)(1 + α·ΔT)`` (``analysis.variation.static_and_tempco``); NaN
        where ``R'`` is not positive (the check counts such a build as failing)."""
        key = (position, cls.tobytes(), count)
        out = self._logs.get(key)
        if out is None:
            error = self.units[0][:count, position] * cls[0]
            tempco = self.units[1][:count, position] * cls[1]
            drift = self.units[2][:count, position] * cls[2]
            base = (1.0 + error) * (1.0 + drift)
            out = np.empty((len(self.delta_t), count))
            with np.errstate(invalid="ignore", divide="ignore"):
                for k, dt in enumerate(self.delta_t):
                    factor = base * (1.0 + tempco * dt)
                    out[k] = np.where(factor > 0.0, np.log(np.abs(factor)), np.nan)
            if len(self._logs) > 256:
                self._logs.clear()
            self._logs[key] = out
        return out


def half_statistic(
    p_in: Array, p_out: Array, side: int, w_low: Array, w_high: Array
) -> tuple[Array, Array]:
    """One side's share of ``ln x − n`` per vertex, temperature and build, made safe over the
    weight bounds ``[w_low, w_high]`` (V, 2) (module docstring): ``(up, down)`` (V, T, N),
    with ``ln x − n ≥ up1 + up2`` and ``≤ down1 + down2``. Side 1: ``−α·p1 + β·p2`` with the
    remainder ``(α|p1| + β|p2|)(e^{2P} − 1)``; side 2: ``γ3·p3 − γ4·p4`` with
    ``γ3|p3|(e^{2P} − 1) + γ4|p4|(e^{4P} − 1)``, ``P`` the larger ``|p|`` of the side. A
    non-physical build (NaN) gets ``up = +∞``, ``down = −∞``: it always fails."""
    signs = (-1.0, 1.0) if side == 1 else (1.0, -1.0)
    a, b = signs[0] * p_in, signs[1] * p_out  # (T, N)
    big = np.maximum(np.abs(p_in), np.abs(p_out))
    g2 = np.expm1(2.0 * big)
    g_out = g2 if side == 1 else np.expm1(4.0 * big)
    lo, hi = w_low[:, :, None, None], w_high[:, :, None, None]  # (V, 2, 1, 1)
    least = np.minimum(lo[:, 0] * a, hi[:, 0] * a) + np.minimum(lo[:, 1] * b, hi[:, 1] * b)
    most = np.maximum(lo[:, 0] * a, hi[:, 0] * a) + np.maximum(lo[:, 1] * b, hi[:, 1] * b)
    rest = hi[:, 0] * np.abs(p_in) * g2 + hi[:, 1] * np.abs(p_out) * g_out
    up = least - rest
    down = most + rest
    bad = np.isnan(up)
    if bad.any():
        up = np.where(bad, np.inf, up)
        down = np.where(bad, -np.inf, down)
    return up, down


def pair_window(
    up: Array, down: Array, balance: float, allow: int
) -> tuple[Array, Array]:
    """``(n_min, n_max)`` (..., V) from the summed statistics ``up``, ``down`` (..., V, T, N)
    of both sides: if the nominal ``n = ln(c/a)`` at a vertex exceeds ``n_max`` (or is below
    ``n_min``), more than ``allow`` builds fail the balance ``|ln x| ≤ balance``."""
    n = up.shape[-1]
    shape = up.shape[:-2]
    if allow >= n:
        return np.full(shape, -np.inf), np.full(shape, np.inf)
    a = balance - np.max(up, axis=-2)  # the build fails when n > a
    b = -balance - np.min(down, axis=-2)  # ... or when n < b
    n_max = np.partition(a, allow, axis=-1)[..., allow] + _ROUND
    n_min = -np.partition(-b, allow, axis=-1)[..., allow] - _ROUND
    return n_min, n_max


def _weights(r_in: Array, r_out: Array, rs: Array, rref: Array | None) -> Array:
    """Per record and vertex (N, V, 2): ``(α, β)`` of side 1 (``r_in`` = R1, ``r_out`` = R2)
    or ``(γ3, γ4)`` of side 2 (R3, R4, with ``rref``): the partial derivatives of ``ln c``
    and ``−ln a`` at nominal values (module docstring)."""
    a, b = r_in[:, None], r_out[:, None]
    if rref is None:
        d = a + rs[None, :] + b
        return np.stack([a / d, (a + rs[None, :]) / d], axis=2)
    d = a + rs[None, :] + b + rref[None, :]
    return np.stack([a / d, b * (a + rs[None, :]) / ((b + rref[None, :]) * d)], axis=2)


def _nominal_logs(r_in: Array, r_out: Array, rs: Array, rref: Array | None) -> Array:
    """``ln c`` (side 1) or ``ln a`` (side 2) at nominal values, per record and vertex."""
    a, b = r_in[:, None], r_out[:, None]
    if rref is None:
        out: Array = np.log(b / (a + rs[None, :] + b))
        return out
    top = b + rref[None, :]
    out = np.log(top / (a + rs[None, :] + top))
    return out


def _chosen_vertices(lim: _Limits) -> IntArray:
    """The vertices of the counted condition (any vertex keeps it a relaxation): the one where
    ``x`` tends to be largest (``Rs1`` low, ``Rs3`` high, ``Rref`` low) and the smallest."""
    up = int(np.argmax(lim.rs3 - lim.rs1 - lim.rref))
    down = int(np.argmax(lim.rs1 - lim.rs3 + lim.rref))
    return np.unique(np.array([up, down], dtype=np.int64))


def _binned(half: _Half, weights: Array) -> _Half:
    """``half`` with its records grouped by class pair and by bins of their weights at the
    first chosen vertex (width :data:`_BIN`), so each group's weight bounds are narrow."""
    keys = np.floor(weights[:, 0, :] / _BIN).astype(np.int64)
    _, group = np.unique(np.column_stack([half.group, keys]), axis=0, return_inverse=True)
    return _Half(group.reshape(-1).astype(np.int64), half.ca, half.ka, half.cb, half.kb,
                 half.cost, half.low, half.high)  # fmt: skip


class _Sides:
    """Per group of one side: classes, weight bounds and the statistics on the first builds."""

    def __init__(
        self, stream: BuildStream, parts: _Parts, half: _Half, weights: Array, side: int,
        order: IntArray, span: IntArray, prefix: int,
    ) -> None:  # fmt: skip
        self.stream, self.parts, self.side = stream, parts, side
        groups = span.shape[0]
        vertices = weights.shape[1]
        ordered = weights[order]
        self.w_low = np.minimum.reduceat(ordered, span[:, 0], axis=0)
        self.w_high = np.maximum.reduceat(ordered, span[:, 0], axis=0)
        first = order[span[:, 0]]
        self.classes = np.column_stack([half.ca[first], half.cb[first]])
        self.prefix = prefix
        shape = (groups, vertices, len(stream.delta_t), prefix)
        self.up = np.empty(shape)
        self.down = np.empty(shape)
        for g in range(groups):
            self.up[g], self.down[g] = self.statistic(g, prefix)

    def statistic(self, g: int, count: int) -> tuple[Array, Array]:
        pos = (0, 1) if self.side == 1 else (2, 3)
        ca, cb = self.classes[g]
        p_in = self.stream.logs(pos[0], self.parts.classes[ca], count)
        p_out = self.stream.logs(pos[1], self.parts.classes[cb], count)
        return half_statistic(p_in, p_out, self.side, self.w_low[g], self.w_high[g])


def yield_discrete_frontier(
    spec: Spec,
    catalog: Catalog,
    env: LinearEnvironment,
    should_stop: Callable[[], bool] = lambda: False,
    stats: dict[str, int] | None = None,
) -> Iterator[Design]:
    """Four-discrete designs that can meet the spec's yield (module docstring), in
    nondecreasing exact cost; exhaustive unless ``should_stop`` ended it. ``stats`` (if given)
    counts the group pairs screened, those joined and the designs emitted."""
    lim = _limits(spec, env)
    layout = _layout(catalog, spec)
    if lim.balance < 0.0 or layout is None or not yield_frontier_applies(spec, catalog):
        return
    stream = BuildStream(spec, layout)
    if stream.allow < 0:
        return
    parts = _discrete_parts(catalog, spec, env, lim, floors=False)
    if parts is None:
        return
    s = stream.box
    t, tc, d = parts.classes[:, 0], parts.classes[:, 1], parts.classes[:, 2]
    swing = s * tc * max(abs(x) for x in stream.delta_t)
    box_lo = np.maximum((1.0 - s * t) * (1.0 - swing) * (1.0 - s * d), 1e-6)
    box_hi = (1.0 + s * t) * (1.0 + swing) * (1.0 + s * d)
    # Swapped bounds turn the worst-case conditions of the half records into the exists
    # screen: each side's least term below the window's top, its largest above its bottom.
    wide = replace(parts, lo=box_hi, hi=box_lo)
    one = _half_records(wide, lim, 1)
    two = _half_records(wide, lim, 2)
    if not (one.cost.size and two.cost.size):
        return
    values = parts.values
    chosen = _chosen_vertices(lim)
    r1, r2 = values[one.ka], values[one.kb]
    r3, r4 = values[two.ka], values[two.kb]
    u0 = _nominal_logs(r1, r2, lim.rs1, None)
    w0 = _nominal_logs(r3, r4, lim.rs3, lim.rref)
    weights1 = _weights(r1, r2, lim.rs1[chosen], None)
    weights2 = _weights(r3, r4, lim.rs3[chosen], lim.rref[chosen])
    one, two = _binned(one, weights1), _binned(two, weights2)
    order1, span1, cost1, _, cls1, _ = _group_table(one)
    order2, span2, cost2, _, cls2, _ = _group_table(two)
    prefix = min(stream.samples, 2 * (stream.allow + 1) + 64)
    side1 = _Sides(stream, parts, one, weights1, 1, order1, span1, prefix)
    side2 = _Sides(stream, parts, two, weights2, 2, order2, span2, prefix)
    g1, g2 = (a.ravel() for a in np.meshgrid(np.arange(cost1.size), np.arange(cost2.size),
                                              indexing="ij"))  # fmt: skip
    classes = np.column_stack([cls1[g1], cls2[g2]])
    srt = np.sort(classes, axis=1)
    distinct = 1 + np.sum(srt[:, 1:] != srt[:, :-1], axis=1)
    bound = cost1[g1] + cost2[g2] + spec.preferences.line_cost * distinct
    pair_order = np.argsort(bound, kind="stable")
    g1, g2, bound = g1[pair_order], g2[pair_order], bound[pair_order]
    counts = stats if stats is not None else {}
    for name in ("screened", "joined", "emitted"):
        counts.setdefault(name, 0)
    alive = np.zeros(bound.size, dtype=bool)
    done = 0  # pairs [0, done) have been screened on the first builds

    def screen(upto: int) -> None:
        nonlocal done
        while done < upto:
            stop = min(bound.size, done + _BATCH)
            a, b = g1[done:stop], g2[done:stop]
            n_min, n_max = pair_window(side1.up[a] + side2.up[b], side1.down[a] + side2.down[b],
                                       lim.balance, stream.allow)  # fmt: skip
            alive[done:stop] = np.all(n_min <= n_max, axis=1)
            counts["screened"] += stop - done
            done = stop

    def join(pair: int, a_idx: IntArray, b_idx: IntArray) -> tuple[IntArray, IntArray]:
        screen(pair + 1)
        empty = np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
        if not alive[pair]:
            return empty
        counts["joined"] += 1
        up1, down1 = side1.statistic(int(g1[pair]), stream.samples)
        up2, down2 = side2.statistic(int(g2[pair]), stream.samples)
        n_min, n_max = pair_window(up1 + up2, down1 + down2, lim.balance, stream.allow)
        if np.any(n_min > n_max):
            return empty
        return _window_join(one, a_idx, two, b_idx, u0, w0, chosen, n_min, n_max, lim, values)

    for design in _emit(spec, catalog, parts, lim, one, two, order1, span1, order2, span2,
                        g1, g2, bound, should_stop, join=join, rated=False):  # fmt: skip
        counts["emitted"] += 1
        yield design


def _window_join(
    one: _Half,
    idx_one: IntArray,
    two: _Half,
    idx_two: IntArray,
    u0: Array,
    w0: Array,
    chosen: IntArray,
    n_min: Array,
    n_max: Array,
    lim: _Limits,
    values: Array,
) -> tuple[IntArray, IntArray]:
    """Record pairs whose nominal ``n = ln c − ln a`` lies in ``[n_min, n_max]`` at the chosen
    vertices and that pass the exists screen (module docstring, condition 1) at every vertex,
    and the input-impedance floor at nominal values."""
    v0 = int(chosen[0])
    key = w0[idx_two, v0]
    order = np.argsort(key, kind="stable")
    sorted_two = idx_two[order]
    key_sorted = key[order]
    first = np.searchsorted(key_sorted, u0[idx_one, v0] - n_max[0], side="left")
    last = np.searchsorted(key_sorted, u0[idx_one, v0] - n_min[0], side="right")
    count = np.maximum(last - first, 0)
    cum = np.cumsum(count)
    out_a: list[IntArray] = []
    out_b: list[IntArray] = []
    lam = lim.balance
    start = 0
    while start < idx_one.size:
        stop = int(
            np.searchsorted(cum, (cum[start - 1] if start else 0) + _JOIN_CHUNK, side="right")
        )
        stop = max(stop, start + 1)
        c = count[start:stop]
        total = int(c.sum())
        if total:
            ia = np.repeat(np.arange(start, stop), c)
            offsets = np.arange(total) - np.repeat(np.cumsum(c) - c, c)
            ib = sorted_two[np.repeat(first[start:stop], c) + offsets]
            a_rec = idx_one[ia]
            ok = np.ones(total, dtype=bool)
            for j in range(1, chosen.size):
                v = int(chosen[j])
                n = u0[a_rec, v] - w0[ib, v]
                ok &= (n >= n_min[j]) & (n <= n_max[j])
            # Exists screen: low/high hold the box's largest/least term (swapped bounds).
            c_max, c_min = one.low[a_rec], one.high[a_rec]
            a_max, a_min = two.low[ib], two.high[ib]
            ok &= np.all(c_min - a_max <= lam, axis=1) & np.all(c_max - a_min >= -lam, axis=1)
            ec_max, ec_min, ea_max, ea_min = np.exp(c_max), np.exp(c_min), np.exp(a_max), np.exp(a_min)
            for e in lim.eps:
                ok &= np.all(_adm(ea_max, ec_max, e, lim.inv_a) >= lim.gain_min, axis=1)
                ok &= np.all(_adm(ea_min, ec_min, e, 0.0) <= lim.gain_max, axis=1)
            if lim.min_impedance > 0.0:
                ra = values[one.ka[a_rec]]
                rc = values[two.ka[ib]]
                rd = values[two.kb[ib]]
                ok &= ra + rc >= lim.min_impedance
                ok &= ra * (rc + rd + lim.rref.min()) / (ra + rc) >= lim.min_impedance
            out_a.append(a_rec[ok])
            out_b.append(ib[ok])
        start = stop
    if not out_a:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    return np.concatenate(out_a), np.concatenate(out_b)
