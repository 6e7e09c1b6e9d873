"""Discrete parts for the CP-SAT model, factored into values and grade classes.

A catalog of tens of thousands (or a million) discrete parts is mostly a product: every grade
(tolerance, tempco, drift, rating, cost, stock) comes in every value of its series. The model
therefore picks, per position, one *value* and one *class* (the part's attributes other than
its value and id), linked by the class's availability at that value. This keeps the model
small (values + classes per position, not values × classes) without losing anything: every
(class, value) pair the model can choose is a real part, and every real part is such a pair.

Classes that can never be better than another class at a position (more expensive, no
tighter, no better rated, not stocked where the other is, and available at no more values) are
dropped; so are parts outside the resistance window, not rated for the position's stress, or
not in stock when only stock may be used.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from ..catalog import Catalog
from ..spec import CmrrBasis, DriftModel, Spec, StockPolicy
from .environment import LinearEnvironment, life_drift, series_impedance
from .options import RATING_RELAXATION, log_deviation, position_noise, variance

__all__ = ["DiscreteBlock", "allowed_rows", "build_discrete", "least_cost"]

#: Ratings this far above the estimated stress count as equally good when comparing classes.
SAFE_RATING = 1.5


#: Above this many classes at a position the dominance filter compares within each value's group
#: of parts instead of class against class (its cost grows with the square of the class count).
MANY_CLASSES = 1000


@dataclass(frozen=True)
class DiscreteBlock:
    """Values and classes of the discrete parts the pick may use.

    ``values``: (K,) distinct resistances in ohms, ascending; per class (C,): ``cost`` (with
    placement cost and stock penalty), ``own`` (log deviation, worst-case side), ``var``
    (variance), ``tolerance``, ``penalty`` (the stock penalty within ``cost``, per placement);
    ``avail[i][c]``: value indices where class c may sit at position
    i (empty: not usable there); ``part_row[c, k]``: the catalog row of that part (−1: none)."""

    values: NDArray[np.float64]
    cost: NDArray[np.float64]
    own: NDArray[np.float64]
    var: NDArray[np.float64]
    tolerance: NDArray[np.float64]
    swing: NDArray[np.float64]
    penalty: NDArray[np.float64]
    avail: tuple[tuple[NDArray[np.int64], ...], ...]
    part_row: NDArray[np.int64]

    def usable(self, position: int) -> list[int]:
        """Classes usable at ``position``."""
        return [c for c, ks in enumerate(self.avail[position]) if ks.size]

    def value_indices(self, position: int) -> NDArray[np.int64]:
        """Value indices usable at ``position`` (by at least one class)."""
        parts = [ks for ks in self.avail[position] if ks.size]
        return np.unique(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.int64)


def _empty() -> DiscreteBlock:
    none: tuple[tuple[NDArray[np.int64], ...], ...] = tuple(() for _ in range(4))
    return DiscreteBlock(
        np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0), np.zeros(0),
        np.zeros(0), none,
        np.zeros((0, 0), dtype=np.int64),
    )  # fmt: skip


def allowed_rows(frame: pd.DataFrame, spec: Spec) -> NDArray[np.int64]:
    """Rows of a catalog's discrete table that the spec allows: inside the resistance window
    (relative allowance 1e-9 for values written in engineering notation) and, with stock
    policy ``only``, in house stock."""
    prefs = spec.preferences
    r = frame["resistance_ohm"].to_numpy(float)
    keep = (r >= prefs.resistance_min_ohm * (1 - 1e-9)) & (
        r <= prefs.resistance_max_ohm * (1 + 1e-9)
    )
    if prefs.stock is StockPolicy.ONLY:
        keep &= frame["stock_qty"].to_numpy() > 0
    rows: NDArray[np.int64] = np.flatnonzero(keep)
    return rows


def build_discrete(
    catalog: Catalog, spec: Spec, env: LinearEnvironment, *, same_everywhere: bool = False
) -> DiscreteBlock:
    """Factor the catalog's discrete parts into values and classes for ``spec``.

    ``same_everywhere``: judge the dominance at every position at the largest stress of any
    position, so that a part dropped anywhere is dominated at every position it could fill by
    one part kept at all of them (a dominator is rated no worse, so it fits wherever the part
    fits): swapping it everywhere then never adds a BOM line."""
    prefs = spec.preferences
    frame = catalog.discrete
    if frame.empty:
        return _empty()
    r = frame["resistance_ohm"].to_numpy(float)
    stock = frame["stock_qty"].to_numpy() > 0
    rows = allowed_rows(frame, spec)
    if rows.size == 0:
        return _empty()
    penalty = prefs.line_penalty
    attrs = pd.DataFrame(
        {
            "cost": frame["unit_cost"].to_numpy(float)[rows]
            + prefs.placement_cost
            + np.where(stock[rows], 0.0, penalty),
            "t": frame["tolerance"].to_numpy(float)[rows],
            "tc": frame["tempco_per_k"].to_numpy(float)[rows],
            # One-sided drift (d in [0, D]) is taken as none here: a subset of its range, so the
            # model stays a relaxation of the exact check (which takes the whole range).
            "d": life_drift(frame["drift_1000h"].to_numpy(float)[rows], env.life_h)
            * (0.0 if spec.requirements.drift_model is DriftModel.ONE_SIDED else 1.0),
            "p": frame["power_w"].to_numpy(float)[rows] * env.derating,
            "v": frame["max_voltage_v"].to_numpy(float)[rows],
            "stock": stock[rows],
        }
    )
    class_of = attrs.groupby(list(attrs.columns), sort=False).ngroup().to_numpy()
    classes = attrs.drop_duplicates().reset_index(drop=True)
    values, value_of = np.unique(r[rows], return_inverse=True)
    ids = frame["part_id"].to_numpy()[rows].astype(str)
    # One part per (class, value): the first id in sort order.
    order = np.lexsort((ids, value_of, class_of))
    pair = class_of[order].astype(np.int64) * values.size + value_of[order]
    first = np.r_[True, pair[1:] != pair[:-1]]
    chosen = order[first]
    n_classes = len(classes)
    part_row = np.full((n_classes, values.size), -1, dtype=np.int64)
    part_row[class_of[chosen], value_of[chosen]] = rows[chosen]
    class_values = [np.flatnonzero(part_row[c] >= 0) for c in range(n_classes)]

    t = classes["t"].to_numpy(float)
    tc = classes["tc"].to_numpy(float) * env.delta_t_k
    d = classes["d"].to_numpy(float)
    power = classes["p"].to_numpy(float)
    volts = classes["v"].to_numpy(float)
    cost = classes["cost"].to_numpy(float)
    stocked = classes["stock"].to_numpy(bool)
    if spec.requirements.cmrr_basis is CmrrBasis.WORST_CASE:
        spread = np.column_stack(
            [
                np.log1p(t) + np.log1p(tc) + np.log1p(d),
                -(np.log1p(-t) + np.log1p(-tc) + np.log1p(-d)),
            ]
        )
    else:
        spread = np.column_stack([t, tc, d])
    avail: list[tuple[NDArray[np.int64], ...]] = []
    for position in range(4):
        stress = float(env.stress_v[position])
        usable: list[NDArray[np.int64]] = []
        for c in range(n_classes):
            ks = class_values[c]
            ok = (volts[c] >= RATING_RELAXATION * stress) & (
                power[c] * values[ks] >= RATING_RELAXATION * stress**2
            )
            usable.append(ks[ok])
        judged_at = float(np.max(env.stress_v)) if same_everywhere else stress
        avail.append(
            tuple(_drop_dominated(usable, cost, spread, power, volts, stocked, values, judged_at))
        )
    dist, sigma_k = prefs.distribution, prefs.sigma_k
    return DiscreteBlock(
        values=values,
        cost=cost,
        own=log_deviation(t, tc, d),
        var=variance(dist, sigma_k, t, tc, d),
        tolerance=t,
        swing=t + tc,
        penalty=np.where(stocked, 0.0, penalty),
        avail=tuple(avail),
        part_row=part_row,
    )


def _drop_dominated(
    usable: list[NDArray[np.int64]],
    cost: NDArray[np.float64],
    spread: NDArray[np.float64],
    power: NDArray[np.float64],
    volts: NDArray[np.float64],
    stocked: NDArray[np.bool_],
    values: NDArray[np.float64],
    stress: float,
) -> list[NDArray[np.int64]]:
    """Remove, value by value, every class that another class offering the same value
    dominates at this position: no more expensive, no wider spread, stocked if it is, and rated
    no worse (ratings above SAFE_RATING × the stress count as equal). Equal classes keep the
    first. Swapping a dominated part for its dominator at every position it fills keeps cost,
    lines and every check at least as good, so nothing better is lost.

    Only the power rating's comparison depends on the value (the stress needs ``V²/R``), so the
    other attributes are compared once per class pair and the power term per value, one
    dominated class at a time over all values at once: O(C²·K) vector work for C classes and K
    values. "Earlier" (which of two equal classes survives) is the lexicographic order of
    (cost, spread, power term, voltage term, stock term, class index)."""
    present = np.array([c for c, ks in enumerate(usable) if ks.size], dtype=np.int64)
    if present.size < 2:
        return usable
    if present.size > MANY_CLASSES:
        # Decided before the dense (values × classes) table below is built: with a class per
        # part that table alone would be large.
        return _drop_dominated_by_value(usable, cost, spread, power, volts, stocked, values, stress)
    avail = np.zeros((values.size, cost.size), dtype=bool)
    for c, ks in enumerate(usable):
        avail[ks, c] = True
    cap = SAFE_RATING * stress**2 / values
    power_term = -np.minimum(power[None, :], cap[:, None])  # (K, C); lower is better
    before = np.column_stack([cost, spread])  # compared before the power term
    after = np.column_stack(
        [-np.minimum(volts, SAFE_RATING * stress), -stocked.astype(float)]
    )  # compared after it (then the class index)
    static = np.column_stack([before, after])
    result = [ks.copy() for ks in usable]
    for b in present:
        a = present[present != b]
        a = a[np.all(static[a] <= static[b] + 1e-15, axis=1)]
        if a.size == 0:
            continue
        rows = np.flatnonzero(avail[:, b])
        lt_before, eq_before = _lex_less(before[a], before[b])
        lt_after, _ = _lex_less(np.column_stack([after[a], a]), np.r_[after[b], b])
        pa = power_term[np.ix_(rows, a)]
        pb = power_term[rows, b][:, None]
        earlier = lt_before | (eq_before & ((pa < pb) | ((pa == pb) & lt_after)))
        beaten = np.any(avail[np.ix_(rows, a)] & (pa <= pb + 1e-15) & earlier, axis=1)
        if beaten.any():
            keep = avail[:, b].copy()
            keep[rows[beaten]] = False
            result[b] = np.flatnonzero(keep)
    return result


def _drop_dominated_by_value(
    usable: list[NDArray[np.int64]],
    cost: NDArray[np.float64],
    spread: NDArray[np.float64],
    power: NDArray[np.float64],
    volts: NDArray[np.float64],
    stocked: NDArray[np.bool_],
    values: NDArray[np.float64],
    stress: float,
) -> list[NDArray[np.int64]]:
    """:func:`_drop_dominated` for many classes: one sort of all (class, value) parts, then the
    pairwise comparison inside each value's group only, O(n log n + Σ group²). With a class per
    part (a stockroom that prices every part on its own) the groups stay small while the class
    count is the part count."""
    classes = [np.full(ks.size, c, dtype=np.int64) for c, ks in enumerate(usable) if ks.size]
    if not classes:
        return usable
    cls = np.concatenate(classes)
    val = np.concatenate([ks for ks in usable if ks.size])
    need_p = stress**2 / values[val]
    attrs = np.column_stack(
        [
            cost[cls],
            spread[cls],
            -np.minimum(power[cls], SAFE_RATING * need_p),
            -np.minimum(volts[cls], SAFE_RATING * stress),
            -stocked[cls].astype(float),
            cls.astype(float),  # tie-break: the first class wins among equals
        ]
    )
    order = np.lexsort((*(attrs[:, i] for i in range(attrs.shape[1] - 1, -1, -1)), val))
    cls, val, attrs = cls[order], val[order], attrs[order]
    keep = np.ones(cls.size, dtype=bool)
    starts = np.flatnonzero(np.r_[True, val[1:] != val[:-1]])
    ends = np.r_[starts[1:], val.size]
    for start, end in zip(starts[ends - starts > 1], ends[ends - starts > 1], strict=True):
        group = attrs[start:end, :-1]
        # Rows are sorted by cost first: a row is dominated by an earlier one that is no worse.
        no_worse = np.all(group[None, :, :] <= group[:, None, :] + 1e-15, axis=2)
        earlier = np.tri(end - start, k=-1, dtype=bool)
        keep[start:end] = ~np.any(no_worse & earlier, axis=1)
    result: list[list[int]] = [[] for _ in usable]
    for c, k in zip(cls[keep].tolist(), val[keep].tolist(), strict=True):
        result[c].append(k)
    return [np.array(sorted(ks), dtype=np.int64) for ks in result]


def _lex_less(
    rows: NDArray[np.float64], key: NDArray[np.float64]
) -> tuple[NDArray[np.bool_], NDArray[np.bool_]]:
    """Per row of ``rows``: (row < key lexicographically, row == key)."""
    less = np.zeros(rows.shape[0], dtype=bool)
    equal = np.ones(rows.shape[0], dtype=bool)
    for j in range(rows.shape[1]):
        less |= equal & (rows[:, j] < key[j])
        equal &= rows[:, j] == key[j]
    return less, equal


def value_constants(
    block: DiscreteBlock, spec: Spec, env: LinearEnvironment
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """Per position i, value k and vertex v: φ = ln(R_k + rs_i,v) (K, V, 4), the fraction
    f = R_k/(R_k + rs_i,v) (K, V, 4), and the output noise power density (V²/Hz) of value k at
    position i (K, 4) (``options.position_noise``)."""
    series = series_impedance(env)
    r = block.values[:, None, None]
    effective = r + series[None, :, :]
    noise = position_noise(np.repeat(block.values[:, None], 4, axis=1), spec, env)
    return np.log(effective), r / effective, noise


def least_cost(
    cost: NDArray[np.float64],
    spread: NDArray[np.float64],
    usable: Sequence[Sequence[int]],
    weights: NDArray[np.float64],
    budget: float,
) -> float:
    """The least ``Σᵢ cost[cᵢ]`` over one class ``cᵢ ∈ usable[i]`` per position ``i`` (four)
    subject to ``Σᵢ weights[i]·spread[cᵢ] ≤ budget``; ``inf`` when no choice meets it.

    The model's spread requirements for four discrete parts (``optimizer.solve.model``: at an
    environment vertex, ``Wδ ≤ B − |δ_nom|`` on the worst-case basis, ``z²·Sδ ≤ (B − |δ_nom|)²``
    on the yield basis) imply ``Σᵢ wᵢ·spreadᵢ ≤ budget`` with ``wᵢ`` the least weight of
    position ``i`` (``|cᵢ|·f`` or its square; ``budget = B`` or ``(B/z)²``), whatever the
    values, so this is a lower bound on the cost of every design the model admits (a
    two-position knapsack solved exactly: the class pairs of each half sorted by spread with
    the running least cost, joined by binary search; O(C² log C) for C classes)."""

    def half(i: int, j: int) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        a, b = np.asarray(usable[i], dtype=np.int64), np.asarray(usable[j], dtype=np.int64)
        s = (weights[i] * spread[a][:, None] + weights[j] * spread[b][None, :]).ravel()
        c = (cost[a][:, None] + cost[b][None, :]).ravel()
        order = np.argsort(s, kind="stable")
        return s[order], np.minimum.accumulate(c[order]) if c.size else c

    if any(len(u) == 0 for u in usable):
        return math.inf
    s_low, c_low = half(0, 1)
    s_high, c_high = half(2, 3)
    at = np.searchsorted(s_high, budget - s_low, side="right") - 1
    ok = at >= 0
    if not ok.any():
        return math.inf
    return float((c_low[ok] + c_high[at[ok]]).min())
