"""Discrete parts grouped by electrical class, and the half records the discrete search joins
(``solve.frontier``, steps 1 and 2 of its module docstring): per class pair, the values of one
side of the bridge, (R1, R2) or (R3, R4), whose terms can meet the gain and balance conditions,
first as windows, then written out, pruned by the least spread a partner half reaches (every
step a necessary condition of the exact check).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from ..analysis.drift import drift_factor_bounds
from ..analysis.formulas import derated_power
from ..catalog import Catalog
from ..spec import Preferences, Spec
from .discrete import allowed_rows
from .environment import LinearEnvironment, life_drift
from .screen import RATING_SCREEN, ScreenLimits, side_window, stress_floor, stress_share
from .yieldbox import box_factor, part_box, part_spread

__all__ = [
    "ClassParts",
    "HalfRecords",
    "HalfWindows",
    "discrete_parts",
    "gain_spread_ratio",
    "group_bounds",
    "group_spans",
    "half_windows",
    "key_groups",
    "line_charges",
    "materialise",
    "prune_halves",
    "value_lists",
    "value_window",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

# --------------------------------------------------------------------------------------------
# Discrete parts, grouped by electrical class
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ClassParts:
    """Usable discrete parts. ``values`` (K,) ascending; per electrical class (E,): ``lo``,
    ``hi`` factor bounds; per position ``best[i]`` (E, K): catalog row of the cheapest usable
    part (−1: none) and ``best_cost[i]`` its cost with the placement cost. ``rows[i]`` and
    ``costs[i]`` list the usable parts of position ``i`` sorted by (class, value, cost, id);
    ``span[i]`` (E, K, 2) is the slice of each (class, value) in them."""

    values: Array
    lo: Array
    hi: Array
    best: tuple[IntArray, ...]
    best_cost: tuple[Array, ...]
    rows: tuple[IntArray, ...]
    costs: tuple[Array, ...]
    span: tuple[IntArray, ...]
    spread: Array  # per class: the exact check's corner deviation δ (analysis.checks)
    power_w: Array  # per catalog row: power rating derated to the hottest temperature
    volts: Array  # per catalog row: limiting voltage
    top_w: tuple[Array, ...]  # per position (E, K): highest power_w among the usable parts
    top_v: tuple[Array, ...]  # per position (E, K): highest volts among the usable parts
    exact_spread: bool  # ``spread`` is every part's own δ (false with same-lot tracking)
    line_charge: Array  # (E, K): least per-line cost of a part id of that class and value
    class_charge: Array  # (E,): least line_charge over the class's values
    # Per position (E, K): the least cost of a usable part rated above the cheapest one (more
    # power or more voltage; inf: none): what a design pays at least where the cheapest part
    # cannot bear its stress.
    up_cost: tuple[Array, ...]

    def bears(self, rows: Sequence[int], power: Array, peak: Array) -> bool:
        """Whether the parts ``rows`` (catalog rows at R1..R4) bear ``power`` (W) and ``peak``
        (V) per position (relative slack 1e-9, as :func:`_rated_combinations`)."""
        return all(
            self.power_w[r] >= pw * (1.0 - 1e-9) and self.volts[r] >= pk * (1.0 - 1e-9)
            for r, pw, pk in zip(rows, power.tolist(), peak.tolist(), strict=True)
        )

    def lines_charge(self, electrical: Sequence[tuple[int, int]]) -> float:
        """Least per-line cost (line cost and stock penalty) of a design with these
        (class, value) positions: one line per distinct (class, value) at least, each at least
        its :func:`line_charges` figure."""
        return float(sum(self.line_charge[key] for key in set(electrical)))

    def variants(self, position: int, key: tuple[int, int]) -> list[tuple[float, int]]:
        """(cost, catalog row) of every usable part of class and value ``key``, cheapest first."""
        start, stop = self.span[position][key]
        rows = self.rows[position][start:stop].tolist()
        return list(zip(self.costs[position][start:stop].tolist(), rows, strict=True))


def _temperature_span(spec: Spec) -> float:
    """``max(|Tmin − 25 °C|, |Tmax − 25 °C|)`` in kelvin: the tempco term of
    ``analysis.checks.value_spread`` (δ = tolerance + tempco·span)."""
    req = spec.requirements
    return max(abs(req.temp_min_c - 25.0), abs(req.temp_max_c - 25.0))


def discrete_parts(
    catalog: Catalog, spec: Spec, env: LinearEnvironment, lim: ScreenLimits
) -> ClassParts | None:
    prefs = spec.preferences
    frame = catalog.discrete
    if frame.empty:
        return None
    rows = allowed_rows(frame, spec)
    if rows.size == 0:
        return None
    r = frame["resistance_ohm"].to_numpy(float)[rows]
    t = frame["tolerance"].to_numpy(float)[rows]
    tc = frame["tempco_per_k"].to_numpy(float)[rows]
    if prefs.same_lot_tracking:
        tc = np.zeros_like(tc)  # optimistic: see the module docstring
    d = life_drift(frame["drift_1000h"].to_numpy(float)[rows], env.life_h)
    classes, class_of = np.unique(np.column_stack([t, tc, d]), axis=0, return_inverse=True)
    class_of = class_of.reshape(-1).astype(np.int64)
    values, value_of = np.unique(r, return_inverse=True)
    value_of = value_of.reshape(-1).astype(np.int64)
    swing = classes[:, 1] * env.delta_t_k
    drift_low, drift_high = drift_factor_bounds(classes[:, 2], spec.requirements.drift_model)
    lo = (1.0 - classes[:, 0]) * (1.0 - swing) * drift_low
    hi = (1.0 + classes[:, 0]) * (1.0 + swing) * drift_high
    # The CMRR and gain conditions take the yield basis' part box (``optimizer.solve.yieldbox``,
    # for the one-dual search); the rating screen below keeps the true range.
    kappa = box_factor(spec)
    if kappa is None:
        box_lo, box_hi = lo, hi
    else:
        box_lo, box_hi = part_box(*part_spread(classes[:, 0], swing, classes[:, 2], spec), kappa)
    cost = frame["unit_cost"].to_numpy(float)[rows] + prefs.placement_cost
    rated_w = derated_power(frame["power_w"].to_numpy(float), spec.requirements.temp_max_c)
    power = rated_w[rows]
    volts = frame["max_voltage_v"].to_numpy(float)[rows]
    # Ties in cost go by part id: its rank in sorted order (integer codes, no string copies).
    id_rank, _ = pd.factorize(frame["part_id"].to_numpy()[rows], sort=True)
    order = np.lexsort((id_rank, cost, value_of, class_of))
    shape = (len(classes), values.size)
    best, best_cost, kept_rows, kept_costs, spans = [], [], [], [], []
    top_w: list[Array] = []
    top_v: list[Array] = []
    up_cost: list[Array] = []
    in_stock = frame["stock_qty"].to_numpy()[rows] > 0
    stocked = np.zeros(shape, dtype=bool)
    for position in range(4):
        stress = float(env.stress_v[position])
        usable = (volts >= RATING_SCREEN * stress) & (power * r >= RATING_SCREEN * stress**2)
        floor = stress_floor(spec, lim, position)
        if floor > 0.0:
            # The exact rating check takes the worst corner: the voltage is at least the floor
            # times the part's share, the power at least that squared over its highest value.
            least = floor * stress_share(lim, position, r * lo[class_of]) * (1.0 - 1e-9)
            usable &= (volts >= least) & (power * r * hi[class_of] >= least**2)
        sel = order[usable[order]]
        flat = class_of[sel] * values.size + value_of[sel]
        starts = np.flatnonzero(np.r_[True, flat[1:] != flat[:-1]]) if sel.size else sel
        stops = np.r_[starts[1:], sel.size].astype(np.int64)
        table = np.full(shape, -1, dtype=np.int64 if rows.size >= 2**31 else np.int32)
        table_cost = np.full(shape, np.inf)
        span = np.zeros((*shape, 2), dtype=np.int32 if sel.size < 2**31 else np.int64)
        heads = sel[starts]
        table[class_of[heads], value_of[heads]] = rows[heads]
        table_cost[class_of[heads], value_of[heads]] = cost[heads]
        span[class_of[heads], value_of[heads], 0] = starts
        span[class_of[heads], value_of[heads], 1] = stops
        held = sel[in_stock[sel]]  # (plain assignment: repeated indices all set True)
        stocked[class_of[held], value_of[held]] = True
        for tops, rating in ((top_w, power), (top_v, volts)):
            top = np.zeros(shape)
            if sel.size:
                top[class_of[heads], value_of[heads]] = np.maximum.reduceat(rating[sel], starts)
            tops.append(top)
        up_cost.append(_up_cost(sel, starts, stops, class_of, value_of, power, volts, cost, shape))
        best.append(table)
        best_cost.append(table_cost)
        kept_rows.append(rows[sel])
        kept_costs.append(cost[sel])
        spans.append(span)
    usable_any = np.any(np.stack([b >= 0 for b in best]), axis=0)
    charge = line_charges(usable_any, stocked, prefs)
    return ClassParts(
        values, box_lo, box_hi, tuple(best), tuple(best_cost), tuple(kept_rows), tuple(kept_costs),
        tuple(spans), classes[:, 0] + classes[:, 1] * _temperature_span(spec),
        rated_w, frame["max_voltage_v"].to_numpy(float), tuple(top_w), tuple(top_v),
        not prefs.same_lot_tracking, charge, np.min(np.where(usable_any, charge, np.inf), axis=1),
        tuple(up_cost),
    )  # fmt: skip


def _up_cost(
    sel: IntArray,
    starts: IntArray,
    stops: IntArray,
    class_of: IntArray,
    value_of: IntArray,
    power: Array,
    volts: Array,
    cost: Array,
    shape: tuple[int, int],
) -> Array:
    """Per (class, value) (``shape``): the least cost among its usable parts ``sel`` (sorted by
    class, value and cost; runs ``starts``..``stops``) rated above the run's first, cheapest
    part in power or in voltage; inf where none is."""
    out = np.full(shape, np.inf)
    if sel.size == 0:
        return out
    head = np.repeat(sel[starts], stops - starts)
    above = (power[sel] > power[head]) | (volts[sel] > volts[head])
    least = np.minimum.reduceat(np.where(above, cost[sel], np.inf), starts)
    out[class_of[sel[starts]], value_of[sel[starts]]] = least
    return out


def line_charges(
    usable: NDArray[np.bool_], stocked: NDArray[np.bool_], prefs: Preferences
) -> Array:
    """Per (class, value): the least per-line cost a part id of it adds (``optimizer.cost``):
    ``line_cost + stock_penalty·[no usable part of that class and value is stocked]`` under
    the stock policy "prefer", ``line_cost`` otherwise. A part id has one class and value, so a
    design pays at least this for every distinct (class, value) it places: a lower bound of
    its per-line cost. Entries with no usable part are ``inf``."""
    penalty = prefs.line_penalty
    charge = prefs.line_cost + np.where(stocked, 0.0, penalty)
    return np.where(usable, charge, np.inf)


# --------------------------------------------------------------------------------------------
# Half records
# --------------------------------------------------------------------------------------------


@dataclass
class HalfRecords:
    """Half records of one side: class and value index of each position, cost, and per vertex
    the bounds ``(low, high)`` of the side's bridge term (``c`` or ``a``) as logs (N, V)."""

    group: IntArray  # class-pair group index
    ca: IntArray
    ka: IntArray
    cb: IntArray
    kb: IntArray
    cost: Array
    low: Array
    high: Array


def value_lists(usable: NDArray[np.bool_]) -> tuple[IntArray, IntArray]:
    """Per class (rows of ``usable``, (E, K): which values a position can take in each class):
    ``count[c, j]``, how many of its usable values lie below global value index ``j`` (E, K+1),
    and ``index[c, i]``, the global index of its ``i``-th usable value (E, K). A search in a
    class's own value list is then a search in the global list read through ``count``."""
    n_classes, n_values = usable.shape
    count = np.zeros((n_classes, n_values + 1), dtype=np.int64)
    np.cumsum(usable, axis=1, out=count[:, 1:])
    index = np.zeros((n_classes, n_values), dtype=np.int64)
    cls, val = np.nonzero(usable)
    starts = np.cumsum(count[:, -1]) - count[:, -1]
    index[cls, np.arange(cls.size) - starts[cls]] = val
    return count, index


def value_window(
    fixed_low: Array | float,
    fixed_high: Array | float,
    free_is_bottom: bool,
    t_hi: float,
    t_lo: float,
    w: Array,
    u: Array,
) -> tuple[Array, Array]:
    """Bounds ``(m_lo, m_hi)`` of the free resistance times its factor bound (ohms) that let
    the side term ``(B + u)/(A + w + B + u)`` stay inside the window ``term_hi ≤ t_hi``,
    ``term_lo ≥ t_lo`` (:func:`side_window`) at some environment vertex (``w``, ``u``: (V,)),
    the other resistance of the side lying in ``[fixed_low, fixed_high]`` (one range or an
    array of them: the result has their shape). The term is linear in either resistance: free
    ``B``: ``B·hi ≤ t_hi(A_low + w)/(1 − t_hi) − u`` and ``B·lo ≥ t_lo(A_high + w)/(1 − t_lo)
    − u``; free ``A``: ``A·lo ≥ (B_high + u)(1 − t_hi)/t_hi − w`` and ``A·hi ≤ (B_low + u)(1 −
    t_lo)/t_lo − w``. ``m_hi`` bounds ``R·hi`` from above and ``m_lo`` bounds ``R·lo`` from
    below; the loosest vertex is taken, so the window is a necessary condition."""
    low = np.asarray(fixed_low, dtype=float)[..., None]
    high = np.asarray(fixed_high, dtype=float)[..., None]
    shape = low.shape[:-1]
    if free_is_bottom:
        upper = (
            np.max(t_hi * (low + w) / (1.0 - t_hi) - u, axis=-1)
            if t_hi < 1.0
            else np.full(shape, np.inf)
        )
        lower = (
            np.min(t_lo * (high + w) / (1.0 - t_lo) - u, axis=-1) if t_lo > 0.0 else np.zeros(shape)
        )
        return lower, upper
    if t_hi <= 0.0:
        return np.full(shape, np.inf), np.zeros(shape)  # no term reaches it
    lower = np.min((high + u) * (1.0 - t_hi) / t_hi - w, axis=-1) if t_hi < 1.0 else np.zeros(shape)
    upper = (
        np.max((low + u) * (1.0 - t_lo) / t_lo - w, axis=-1)
        if t_lo > 0.0
        else np.full(shape, np.inf)
    )
    return lower, upper


@dataclass
class HalfWindows:
    """The half records of one side before they are written out: per (class pair, value of
    the first position) a *window*, the run of the partner class's own usable values (its
    list ``index``, :func:`value_lists`) that the gain and balance window allows. Windows are
    ordered by group (class pair), the groups numbered in order; ``starts`` holds each group's
    first window (G + 1 entries). Records: ``count.sum()``."""

    group: IntArray
    ca: IntArray
    ka: IntArray
    cb: IntArray
    first: IntArray  # position of the window's first partner value in its class's own list
    count: IntArray  # partner values in the window (at least one)
    index: IntArray  # (E, K) global value index of each class's i-th usable partner value
    starts: IntArray

    @property
    def records(self) -> int:
        return int(self.count.sum())


def half_windows(parts: ClassParts, lim: ScreenLimits, side: int) -> HalfWindows:
    """The windows of one side (:class:`HalfWindows`): for each value of the first position
    (R1 or R3) and each class of the second (R2 or R4), the run of the second's values that
    keep the side's term inside :func:`side_window`, solved for the partner's resistance
    (:func:`value_window`)."""
    pa, pb = (0, 1) if side == 1 else (2, 3)
    t_hi, t_lo = side_window(lim, side)
    series_a, series_b = (lim.rs1, np.zeros_like(lim.rs1)) if side == 1 else (lim.rs3, lim.rref)
    values = parts.values
    n_classes = parts.lo.size
    count, index = value_lists(parts.best[pb] >= 0)
    classes_b = np.flatnonzero(count[:, -1] > 0)
    pieces: list[tuple[IntArray, ...]] = []
    group = 0
    for ca in range(n_classes):
        ka = np.flatnonzero(parts.best[pa][ca] >= 0)
        if ka.size == 0 or classes_b.size == 0:
            continue
        ra = values[ka]
        hi_b, lo_b = parts.hi[classes_b][:, None], parts.lo[classes_b][:, None]
        lower, upper = value_window(
            ra * parts.lo[ca], ra * parts.hi[ca], True, t_hi, t_lo, series_a, series_b
        )
        top = upper[None, :] / hi_b
        bottom = lower[None, :] / lo_b
        # (partner class, value of a): the partner's value window, as positions in its list
        # (rows: partner classes; columns: the values of a).
        g_first = np.searchsorted(values, (bottom * (1.0 - 1e-9)).ravel(), side="left")
        g_last = np.searchsorted(values, (top * (1.0 + 1e-9)).ravel(), side="right")
        rows_b = np.repeat(classes_b, ra.size)
        first = count[rows_b, g_first]
        n_pair = np.maximum(count[rows_b, g_last] - first, 0)
        per_class = n_pair.reshape(classes_b.size, ra.size).sum(axis=1)
        if not per_class.any():
            continue
        groups = np.cumsum(per_class > 0) - 1 + group
        group += int((per_class > 0).sum())
        keep = n_pair > 0
        pieces.append(
            (
                np.repeat(groups, ra.size)[keep],
                np.full(int(keep.sum()), ca, dtype=np.int64),
                np.tile(ka, classes_b.size)[keep],
                rows_b[keep],
                first[keep],
                n_pair[keep],
            )
        )
    if pieces:
        g, ca_, ka_, cb_, first_, n_ = (np.concatenate(p) for p in zip(*pieces, strict=True))
    else:
        g = ca_ = ka_ = cb_ = first_ = n_ = np.zeros(0, dtype=np.int64)
    starts = np.searchsorted(g, np.arange(group + 1), side="left")
    return HalfWindows(g, ca_, ka_, cb_, first_, n_, index, starts)


def _side_columns(lim: ScreenLimits, side: int) -> tuple[Array, Array, IntArray]:
    """The distinct impedances the side's term depends on (``Rs1``; or ``Rs3`` with ``Rref``)
    as ``(series, top, inverse)``: per distinct column the series and top impedance, and for
    every vertex its column (the term is the same at vertices that share them)."""
    if side == 1:
        keys = lim.rs1[:, None]
        top = np.zeros_like(lim.rs1)
    else:
        keys = np.column_stack([lim.rs3, lim.rref])
        top = lim.rref
    _, first, inverse = np.unique(keys, axis=0, return_index=True, return_inverse=True)
    series = lim.rs1 if side == 1 else lim.rs3
    return series[first], top[first], inverse.reshape(-1).astype(np.int64)


def _term_bounds(
    parts: ClassParts,
    lim: ScreenLimits,
    side: int,
    ca: IntArray,
    ka: IntArray,
    cb: IntArray,
    kb: IntArray,
) -> tuple[Array, Array, IntArray]:
    """``(term_lo, term_hi, inverse)``: ``c`` (side 1) or ``a`` (side 2) at the corners of the
    module docstring per record and distinct impedance column (N, U), and each vertex's column
    (:func:`_side_columns`)."""
    values = parts.values
    series, top, inverse = _side_columns(lim, side)
    ra = values[ka]
    rb = values[kb]
    bounds = []
    for a_end, b_end in ((parts.hi, parts.lo), (parts.lo, parts.hi)):  # term_lo, then term_hi
        b = (rb * b_end[cb])[:, None] + top[None, :] if top.any() else (rb * b_end[cb])[:, None]
        term = (ra * a_end[ca])[:, None] + series[None, :]
        term += b  # (in place: these arrays are the largest of the search)
        np.divide(b, term, out=term)
        bounds.append(term)
    return bounds[0], bounds[1], inverse


def _terms(
    parts: ClassParts,
    lim: ScreenLimits,
    side: int,
    ca: IntArray,
    ka: IntArray,
    cb: IntArray,
    kb: IntArray,
) -> tuple[Array, Array]:
    """``(ln term_lo, ln term_hi)`` per record and vertex (N, V) (:func:`_term_bounds`)."""
    t_lo, t_hi, inverse = _term_bounds(parts, lim, side, ca, ka, cb, kb)
    return np.log(t_lo)[:, inverse], np.log(t_hi)[:, inverse]


def gain_spread_ratio(c_lo: Array, c_hi: Array, lim: ScreenLimits) -> Array:
    """Per side-1 record and vertex (the shape of ``c_lo``, ``c_hi``): the least ratio
    ``Adm(a_hi, c_hi, ε, 0) / Adm(a_lo, c_lo, ε, 1/A)`` over every partner, the largest over
    the signs ``ε``; the gain conditions (``Adm(a_hi, c_hi) ≤ G_max``, ``Adm(a_lo, c_lo) ≥
    G_min``, module docstring) need it at most ``G_max/G_min``. ``Adm`` rises with ``a``
    (:func:`adm_from_terms`), so the ratio is at least its value with ``a_hi = a_lo = a``:
    ``(1/A + (1 − c_lo)(1 − ε)) / ((1 − c_hi)(1 − ε)) · (a(1+ε) + c_hi(1−ε)) /
    (a(1+ε) + c_lo(1−ε))``, whose second factor falls with ``a`` and is least at ``a = 1``.
    The first factor carries the ``1/(1 − c) ≈ 1 + G`` sensitivity of the gain to the
    inverting side: at high gain a loose class there cannot hold a tight gain accuracy,
    whatever the partner. Dimensionless. (On side 2 the same bound gains little: a partner
    ``c`` near 1 leaves only the ratio's spread in ``a``, about half as sensitive.)"""
    worst = np.zeros(np.shape(c_lo))
    for e in lim.eps:
        ratio = (lim.inv_a + (1.0 - c_lo) * (1.0 - e)) / ((1.0 - c_hi) * (1.0 - e))
        ratio *= (1.0 + e + c_hi * (1.0 - e)) / (1.0 + e + c_lo * (1.0 - e))
        worst = np.maximum(worst, ratio)
    return worst


def materialise(
    parts: ClassParts, lim: ScreenLimits, side: int, win: HalfWindows, sel: IntArray
) -> HalfRecords:
    """The half records of the windows ``sel`` (indices into ``win``, in order): one record per
    partner value of each window, less (side 1) those whose own spread already leaves no room
    for the gain accuracy at some vertex (:func:`gain_spread_ratio`)."""
    pa, pb = (0, 1) if side == 1 else (2, 3)
    n = win.count[sel]
    total = int(n.sum())
    w = np.repeat(sel, n)
    offsets = np.arange(total) - np.repeat(np.cumsum(n) - n, n)
    ca_, ka_, cb_ = win.ca[w], win.ka[w], win.cb[w]
    kb_ = win.index[cb_, win.first[w] + offsets]
    t_lo, t_hi, inverse = _term_bounds(parts, lim, side, ca_, ka_, cb_, kb_)
    cost = parts.best_cost[pa][ca_, ka_] + parts.best_cost[pb][cb_, kb_]
    g = win.group[w]
    room = lim.gain_max / lim.gain_min * (1.0 + 1e-12)
    ok = np.all(gain_spread_ratio(t_lo, t_hi, lim) <= room, axis=1) if side == 1 else None
    if ok is not None and not ok.all():
        g, ca_, ka_, cb_, kb_, cost = g[ok], ca_[ok], ka_[ok], cb_[ok], kb_[ok], cost[ok]
        t_lo, t_hi = t_lo[ok], t_hi[ok]
    low, high = np.log(t_lo)[:, inverse], np.log(t_hi)[:, inverse]
    return HalfRecords(g, ca_, ka_, cb_, kb_, cost, low, high)


def group_bounds(
    parts: ClassParts, lim: ScreenLimits, side: int, win: HalfWindows
) -> tuple[Array, Array]:
    """Per group of ``win``, without writing its records out: a lower bound of its least
    record cost (the first position's cost plus the partner class's cheapest usable value) and
    of its least spread ``ln term_hi − ln term_lo`` per vertex (G, V). The spread is exact on
    side 1: it falls as the partner R2 grows (``ln(hi₂/lo₂) + ln(R1·hi₁ + Rs1 + R2·lo₂) −
    ln(R1·lo₁ + Rs1 + R2·hi₂)``, derivative of the sign of ``lo₂·K₂ − hi₂·K₁ ≤ 0``), so each
    window's least is at its largest partner value. On side 2 the spread is
    ``ln((R4·hi₄ + Rref)/(R4·lo₄ + Rref))``, rising with R4, plus ``ln((K₁ + R4·lo₄)/(K₂ +
    R4·hi₄))``, falling: the first at the window's smallest R4 plus the second at its largest
    is a lower bound (exact without REF impedance)."""
    pa, pb = (0, 1) if side == 1 else (2, 3)
    if win.group.size == 0:
        return np.zeros(0), np.zeros((0, lim.rs1.size))
    cheapest_b = np.min(parts.best_cost[pb], axis=1)  # inf for a class with no usable value
    cost = parts.best_cost[pa][win.ca, win.ka] + cheapest_b[win.cb]
    k_last = win.index[win.cb, win.first + win.count - 1]
    low, high = _terms(parts, lim, side, win.ca, win.ka, win.cb, k_last)
    spread = high - low
    if side == 2 and np.any(lim.rref > 0.0):
        k_first = win.index[win.cb, win.first]
        rb = parts.values[k_first][:, None]
        hi_b, lo_b = parts.hi[win.cb][:, None], parts.lo[win.cb][:, None]
        rr = lim.rref[None, :]
        exact_rise = np.log((rb * hi_b + rr) / (rb * lo_b + rr))
        r_last = parts.values[k_last][:, None]
        rise_at_last = np.log((r_last * hi_b + rr) / (r_last * lo_b + rr))
        spread = spread - rise_at_last + exact_rise
    starts = win.starts[:-1]
    least_cost = np.minimum.reduceat(cost, starts)
    least_spread = np.minimum.reduceat(spread, starts, axis=0) - 1e-12
    return least_cost, np.maximum(least_spread, 0.0)


def _keep(half: HalfRecords, mask: NDArray[np.bool_]) -> HalfRecords:
    return HalfRecords(
        half.group[mask], half.ca[mask], half.ka[mask], half.cb[mask], half.kb[mask],
        half.cost[mask], half.low[mask], half.high[mask],
    )  # fmt: skip


def key_groups(keys: Array) -> list[IntArray]:
    """Vertices (indices) grouped by equal rows of ``keys`` (V, n)."""
    _, inverse = np.unique(keys, axis=0, return_inverse=True)
    inverse = inverse.reshape(-1)
    return [np.flatnonzero(inverse == g) for g in range(int(inverse.max()) + 1)]


def group_spans(half: HalfRecords, groups: list[IntArray]) -> Array:
    """Per record and vertex group: the width of the union of its intervals over the group,
    ``max high − min low`` (N, len(groups))."""
    return np.column_stack(
        [half.high[:, g].max(axis=1) - half.low[:, g].min(axis=1) for g in groups]
    )


def prune_halves(
    one: HalfRecords, two: HalfRecords, lim: ScreenLimits
) -> tuple[HalfRecords, HalfRecords]:
    """Drop records that no partner can fit, until nothing moves. The partner's interval must
    lie inside this record's window ``[high_v − Λ, low_v + Λ]`` at every vertex ``v``; the
    partner's term does not depend on this side's source impedance (``a`` on Rs3 and Rref
    only, ``c`` on Rs1 only), so over the vertices that share the partner's impedances its one
    interval must fit inside the intersection of the windows: the width of the union of this
    record's intervals there plus the partner's least spread must stay within ``2Λ``."""
    balance = lim.balance
    by_two = key_groups(np.column_stack([lim.rs3, lim.rref]))  # a is the same within
    by_one = key_groups(lim.rs1[:, None])  # c is the same within
    while one.cost.size and two.cost.size:
        least_two = np.array([np.min(two.high[:, g[0]] - two.low[:, g[0]]) for g in by_two])
        least_one = np.array([np.min(one.high[:, g[0]] - one.low[:, g[0]]) for g in by_one])
        keep_one = np.all(group_spans(one, by_two) + least_two <= 2.0 * balance, axis=1)
        keep_two = np.all(group_spans(two, by_one) + least_one <= 2.0 * balance, axis=1)
        if keep_one.all() and keep_two.all():
            break
        one, two = _keep(one, keep_one), _keep(two, keep_two)
    if not (one.cost.size and two.cost.size):
        one, two = (
            _keep(one, np.zeros(one.cost.size, bool)),
            _keep(two, np.zeros(two.cost.size, bool)),
        )
    return one, two
