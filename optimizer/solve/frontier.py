"""Exact cost-ordered search for four discrete parts and for quad networks and pairs of duals
(one dual with two discrete parts: ``optimizer.solve.mixed``).

Why this exists
---------------
With independent parts the exact worst case of CMRR and gain has a closed form at one corner
per extreme (``analysis.worstcase``): ``x = c/a`` is largest with R1 low, R2 high, R3 high and
R4 low, and the differential gain is largest with R1 low, R2 high, R3 low, R4 high. Write, for
one environment vertex ``(Rs1, Rs3, Rref)`` and each position's factor bounds
``[lo, hi] = [(1 − t)(1 − TC·|ΔT|)·d_lo, (1 + t)(1 + TC·|ΔT|)·d_hi]`` with the drift factor
``[d_lo, d_hi] = [1 − D, 1 + D]`` (symmetric drift model) or ``[1, 1 + D]`` (one-sided)::

    c_hi = R2·hi2 / (R1·lo1 + Rs1 + R2·hi2)         c_lo = R2·lo2 / (R1·hi1 + Rs1 + R2·lo2)
    a_hi = (R4·hi4 + Rref) / (R3·lo3 + Rs3 + R4·hi4 + Rref)
    a_lo = (R4·lo4 + Rref) / (R3·hi3 + Rs3 + R4·lo4 + Rref)

Then (``optimizer.analysis.worstcase``, module docstring) a design meets a CMRR floor with an
amplifier whose CMRR gives ``e = 1/(2·CMRR)`` exactly when, at every vertex,

    ln c_hi − ln a_lo ≤ Λ   and   ln c_lo − ln a_hi ≥ −Λ,      Λ = 2·atanh(w*),
    w* = (X/2 − e)/(1 − e·X/2),  X = 10^(−floor/20)

(:func:`log_balance_limit`: the worst-sign error ``2(w + e)/(1 + e·w)``, ``w = tanh(|ln x|/2)``,
rises with ``|ln x|``), and meets the gain accuracy exactly when ``Adm(a_hi, c_hi)`` (ideal
open-loop gain) stays at most ``G(1 + acc)`` and ``Adm(a_lo, c_lo)`` (minimum open-loop gain)
at least ``G(1 − acc)`` for both signs of the amplifier's CMRR. Both sides of the bridge enter
only through their own pair ``(c_lo, c_hi)`` or ``(a_lo, a_hi)``: the search works on *halves*
(R1, R2) and (R3, R4), joined by interval containment.

The search
----------
1. Parts are grouped by their electrical class ``(t, TC, D)``; the cheapest usable part of each
   class and value at each position carries the cost (other parts of the same class and value,
   e.g. other sizes, are emitted later as variants of the same electrical design).
2. Half records ``(class, value, class, value)`` are generated per class pair inside the value
   window that the gain and balance conditions allow (:func:`_side_window`): first as windows
   (per value of the first position, a run of the partner class's values), then written out
   (less the (R1, R2) records too loose for the gain accuracy on their own,
   :func:`gain_spread_ratio`) and pruned by the least spread any partner half reaches (a
   necessary condition). When the records are many (:data:`LAZY_CELLS`: records times
   environment vertices; loose floors), only the groups the search reaches are written out,
   from bounds of each group's least cost and spread computed on the windows
   (:func:`_group_bounds`).
3. Pairs of half groups (class pairs) are taken in the order of their lowest possible cost; a
   group pair whose least spreads already exceed ``2Λ`` at some vertex is skipped; the others
   are joined exactly, a run of side-1 records at a time (cheapest first, runs doubling; the
   rest waits in the heap at the least cost it can reach), and every feasible combination
   enters a heap keyed by a lower bound of its cost, which is replaced by the exact cost
   (``optimizer.cost``) before it is emitted. A combination whose cheapest part at some
   position cannot bear the stress at the rating screen's corners enters at its bound plus the
   least extra a higher-rated part of that class and value costs (its *lift*).

Designs come out in nondecreasing exact cost; the stream that consumes them runs the full exact
check (``optimizer.verify``) on each, so every check besides CMRR and gain (noise, ranges,
ratings, bandwidth) is decided exactly there. Nothing the exact check could accept is dropped:
every pruning step is a necessary condition, ratings are pre-filtered at half the estimated
stress, and with same-lot tracking the screen drops the tempco (a shared tempco's worst case is
at least the worst case with every tempco at zero), which keeps it optimistic.

Quad networks are few (hundreds of options): each element order is a candidate; they are sorted
by exact cost and screened at their nominal values (a point of every variable's range, so the
nominal error never exceeds the worst case) before the exact check.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, replace
from typing import cast

import numpy as np
import pandas as pd
from numpy.typing import NDArray

from ..analysis.checks import rating_corners, resistor_stress
from ..analysis.drift import drift_factor_bounds
from ..analysis.formulas import derated_power, value_spread
from ..catalog import Catalog
from ..cost import design_cost, parts_cost
from ..design import Design, Placement, Topology
from ..parts import DiscretePart, NetworkPart
from ..spec import Preferences, Spec, StockPolicy
from .discrete import allowed_rows
from .environment import LinearEnvironment, life_drift
from .yieldbox import box_factor, element_box, package_centre, part_box, part_spread

__all__ = [
    "RATING_SCREEN",
    "Shared",
    "corner_screen",
    "discrete_frontier",
    "gain_threshold",
    "limits_and_parts",
    "log_balance_limit",
    "network_frontier",
    "value_lists",
    "value_window",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

#: A part is left out at a position only if its rating covers less than this fraction of the
#: estimated stress (voltage) or of its square (power): a loose screen; the exact check decides.
RATING_SCREEN = 0.5
#: Relative widening of the screen's limits against rounding (keeps the screen optimistic).
_SLACK = 1e-9
# Heap entry kinds, in the order they are taken at equal keys: an exact cost first (it can be
# emitted), then a bound of one design, then a block of a group pair's combinations, then the
# rest of a group pair not joined yet.
_EXACT, _BOUND, _BLOCK, _PAIR = 0, 1, 2, 3
#: Side-1 records of a group pair joined at first; each later run doubles, up to the whole.
_FIRST_RUN = 64
#: Combinations joined at once (bounds the memory of one join step).
_JOIN_CHUNK = 400_000


# --------------------------------------------------------------------------------------------
# Formulas
# --------------------------------------------------------------------------------------------


def log_balance_limit(floor_db: float, amp_cmrr_ratio: float) -> float:
    """Largest ``|ln x|`` (``x = c/a``, the bridge balance) that meets a CMRR floor of
    ``floor_db`` with an amplifier of CMRR ``amp_cmrr_ratio`` (a ratio; ``inf`` when ideal):
    ``Λ = 2·atanh(w*)``, ``w* = (X/2 − e)/(1 − e·X/2)``, ``X = 10^(−floor/20)``,
    ``e = 1/(2·CMRR)``. From the worst-sign error ``2(w + e)/(1 + e·w)`` with
    ``w = |1 − x|/(1 + x) = tanh(|ln x|/2)`` (``analysis.balance.
    common_mode_error_worst_sign``), which rises with ``w``. Negative: no balance meets it."""
    x_max = 10.0 ** (-floor_db / 20.0)
    e = 0.0 if math.isinf(amp_cmrr_ratio) else 1.0 / (2.0 * amp_cmrr_ratio)
    w = (x_max / 2.0 - e) / (1.0 - e * x_max / 2.0)
    if w <= 0.0:
        return -1.0
    if w >= 1.0:
        return math.inf
    return 2.0 * math.atanh(w)


def gain_threshold(gain: float, k: float, eps: float, inv_a: float, side: int) -> float:
    """The bridge term at which the differential gain reaches ``gain`` when the other term is
    ``k`` times it: for side 1 (``c``, with ``a = k·c``) and side 2 (``a``, with ``c = k·a``).

    From ``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` (``analysis.balance.
    differential_gain_from_terms``), linear in the term once the other is ``k`` times it:
    side 1: ``c* = 2G(1/A + 1 − ε) / (k(1+ε) + (1−ε) + 2G(1−ε))``;
    side 2: ``a* = 2G(1/A + 1 − ε) / ((1+ε) + k(1−ε) + 2Gk(1−ε))``. ``Adm`` rises with the term,
    so ``Adm ≤ G`` exactly below it (dimensionless)."""
    top = 2.0 * gain * (inv_a + 1.0 - eps)
    if side == 1:
        return top / (k * (1.0 + eps) + (1.0 - eps) + 2.0 * gain * (1.0 - eps))
    return top / ((1.0 + eps) + k * (1.0 - eps) + 2.0 * gain * k * (1.0 - eps))


def _adm(a: Array, c: Array, eps: float, inv_a: float) -> Array:
    """``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` (``analysis.balance.
    differential_gain_from_terms``, repeated here on plain arrays for the join's speed)."""
    return (a * (1.0 + eps) + c * (1.0 - eps)) / (2.0 * (inv_a + (1.0 - c) * (1.0 - eps)))


# --------------------------------------------------------------------------------------------
# The spec's limits as the screen sees them
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Limits:
    balance: float  # Λ
    gain_max: float
    gain_min: float
    eps: tuple[float, ...]  # amplifier CMRR signs: ±e, or 0
    inv_a: float  # 1/A_min (0 when ideal)
    rs1: Array  # (V,)
    rs3: Array
    rref: Array
    min_impedance: float


def _limits(spec: Spec, env: LinearEnvironment) -> _Limits:
    req = spec.requirements
    amp = spec.amplifier
    balance = log_balance_limit(req.cmrr_floor_db, amp.cmrr_ratio)
    e = 0.0 if math.isinf(amp.cmrr_ratio) else 1.0 / (2.0 * amp.cmrr_ratio)
    eps = (e, -e) if e > 0.0 else (0.0,)
    a_ol = amp.open_loop_gain
    return _Limits(
        balance=balance * (1.0 + _SLACK) + _SLACK if math.isfinite(balance) else balance,
        gain_max=req.gain * (1.0 + req.gain_accuracy) * (1.0 + _SLACK),
        gain_min=req.gain * (1.0 - req.gain_accuracy) * (1.0 - _SLACK),
        eps=eps,
        inv_a=0.0 if math.isinf(a_ol) else 1.0 / a_ol,
        rs1=env.vertices[:, 0].copy(),
        rs3=env.vertices[:, 1].copy(),
        rref=env.vertices[:, 2].copy(),
        min_impedance=req.min_input_impedance_ohm * (1.0 - _SLACK),
    )


def at_vertex(lim: _Limits, vertex: int) -> _Limits:
    """``lim`` with one environment vertex of impedances kept: the conditions at that vertex
    alone, a subset of those at every vertex (so whatever fails them fails the screen)."""
    cut = slice(vertex, vertex + 1)
    return replace(lim, rs1=lim.rs1[cut], rs3=lim.rs3[cut], rref=lim.rref[cut])


# --------------------------------------------------------------------------------------------
# Least voltage across each position
# --------------------------------------------------------------------------------------------


def _min_abs_linear(u0: Array, u1: Array) -> Array:
    """Least ``|u|`` of a function linear in a parameter over an interval, given its values at
    the two ends (0 where it changes sign)."""
    same = np.sign(u0) == np.sign(u1)
    return np.where(same, np.minimum(np.abs(u0), np.abs(u1)), 0.0)


def stress_floor(spec: Spec, lim: _Limits, position: int) -> float:
    """A lower bound (volts) of the largest voltage across the resistor at ``position`` (0-based)
    over the signal corners, for any design that meets the gain accuracy and the CMRR floor,
    before the part's own share ``R/(R + Rs)`` (:func:`stress_share`). From
    ``resistor_voltages`` (``analysis.checks``, Ohm's and Kirchhoff's laws): one current flows
    through R1' and R2, so ``V_R1 = (V1 − V−)·R1/R1'`` and ``V_R2 = (V1 − V−)·R2/R1'`` with
    ``R2/R1' = c/(1 − c)``; the R3–R4 leg gives ``V_R3 = (V2 − VREF)(1 − a)·R3/R3'`` and
    ``V_R4 = (V2 − VREF)·a·R4/R4'``; ``V− = a·V2 + (1 − a)·VREF − Vout/A``. The terms ``a`` and
    ``c`` lie inside the windows the gain and balance conditions leave (:func:`_side_window`)."""
    sig, ref = spec.signal, spec.reference
    a_top, a_bottom = _side_window(lim, 2)
    a_hi, a_lo = min(a_top, 1.0), max(a_bottom, 0.0)
    c_lo = max(_side_window(lim, 1)[1], 0.0)
    if a_lo > a_hi:
        return 0.0
    vcm = np.array([sig.common_mode_min_v, sig.common_mode_max_v])
    vd = np.array([sig.differential_min_v, sig.differential_max_v])
    vref = np.array([ref.voltage_min_v, ref.voltage_max_v])
    cm, d, rf = (g.ravel() for g in np.meshgrid(vcm, vd, vref, indexing="ij"))
    v2 = cm + d / 2.0
    if position in (0, 1):
        across = inverting_floor(spec, lim, a_lo, a_hi)
        if position == 0:
            return across
        return across * c_lo / (1.0 - c_lo) if c_lo < 1.0 else across
    leg = np.abs(v2 - rf)
    share = (1.0 - a_hi) if position == 2 else a_lo
    return max(float(np.max(leg)) * share, 0.0)


def inverting_floor(spec: Spec, lim: _Limits, a_lo: float, a_hi: float) -> float:
    """Least over ``a ∈ [a_lo, a_hi]`` of ``|V1 − V−|``, largest over the signal corners (volts),
    with ``V− = a·V2 + (1 − a)·VREF − Vout/A`` and ``|Vout| ≤ G_max·|Vd| + |VREF| + |Vcm|`` (the
    amplifier's input difference ``Vout/A`` taken against the bound)."""
    sig, ref = spec.signal, spec.reference
    vcm = np.array([sig.common_mode_min_v, sig.common_mode_max_v])
    vd = np.array([sig.differential_min_v, sig.differential_max_v])
    vref = np.array([ref.voltage_min_v, ref.voltage_max_v])
    cm, d, rf = (g.ravel() for g in np.meshgrid(vcm, vd, vref, indexing="ij"))
    v1, v2 = cm - d / 2.0, cm + d / 2.0
    out = lim.gain_max * float(np.max(np.abs(vd))) + float(np.max(np.abs(vref)))
    out += float(np.max(np.abs(vcm)))
    u0 = v1 - a_lo * v2 - (1.0 - a_lo) * rf
    u1 = v1 - a_hi * v2 - (1.0 - a_hi) * rf
    return max(float(np.max(_min_abs_linear(u0, u1))) - out * lim.inv_a, 0.0)


def stress_share(lim: _Limits, position: int, r_low: Array) -> Array:
    """The part's least share ``R/(R + Rs)`` of the voltage at ``position`` (Rs: the largest
    source or REF impedance in series with it) for resistances at their low ends ``r_low``."""
    series = {0: lim.rs1.max(), 1: 0.0, 2: lim.rs3.max(), 3: lim.rref.max()}[position]
    share: Array = r_low / (r_low + series)
    return share


# --------------------------------------------------------------------------------------------
# Discrete parts, grouped by electrical class
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Parts:
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


def _discrete_parts(
    catalog: Catalog, spec: Spec, env: LinearEnvironment, lim: _Limits
) -> _Parts | None:
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
    return _Parts(
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
    penalty = prefs.stock_penalty if prefs.stock is StockPolicy.PREFER else 0.0
    charge = prefs.line_cost + np.where(stocked, 0.0, penalty)
    return np.where(usable, charge, np.inf)


# --------------------------------------------------------------------------------------------
# Half records
# --------------------------------------------------------------------------------------------


@dataclass
class _Half:
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


def _side_window(lim: _Limits, side: int) -> tuple[float, float]:
    """``(t_hi, t_lo)``: the side's bridge term must satisfy ``term_hi ≤ t_hi`` and
    ``term_lo ≥ t_lo`` for a partner to exist (gain and balance together, see
    :func:`gain_threshold`): the partner term lies within ``e^{±Λ}`` of this one. The window is
    the same at every environment vertex (the impedances enter the terms, not the window)."""
    k_down = math.exp(-lim.balance) if math.isfinite(lim.balance) else 0.0
    k_up = math.exp(lim.balance) if math.isfinite(lim.balance) else math.inf
    upper = min(gain_threshold(lim.gain_max, k_down, e, 0.0, side) for e in lim.eps)
    if math.isinf(k_up):
        lower = 0.0
    else:
        lower = max(gain_threshold(lim.gain_min, k_up, e, lim.inv_a, side) for e in lim.eps)
    return upper, lower


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
    ``term_lo ≥ t_lo`` (:func:`_side_window`) at some environment vertex (``w``, ``u``: (V,)),
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
class _Windows:
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


def _windows(parts: _Parts, lim: _Limits, side: int) -> _Windows:
    """The windows of one side (:class:`_Windows`): for each value of the first position
    (R1 or R3) and each class of the second (R2 or R4), the run of the second's values that
    keep the side's term inside :func:`_side_window`, solved for the partner's resistance
    (:func:`value_window`)."""
    pa, pb = (0, 1) if side == 1 else (2, 3)
    t_hi, t_lo = _side_window(lim, side)
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
    return _Windows(g, ca_, ka_, cb_, first_, n_, index, starts)


def _side_columns(lim: _Limits, side: int) -> tuple[Array, Array, IntArray]:
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
    parts: _Parts, lim: _Limits, side: int, ca: IntArray, ka: IntArray, cb: IntArray, kb: IntArray
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
    parts: _Parts, lim: _Limits, side: int, ca: IntArray, ka: IntArray, cb: IntArray, kb: IntArray
) -> tuple[Array, Array]:
    """``(ln term_lo, ln term_hi)`` per record and vertex (N, V) (:func:`_term_bounds`)."""
    t_lo, t_hi, inverse = _term_bounds(parts, lim, side, ca, ka, cb, kb)
    return np.log(t_lo)[:, inverse], np.log(t_hi)[:, inverse]


def gain_spread_ratio(c_lo: Array, c_hi: Array, lim: _Limits) -> Array:
    """Per side-1 record and vertex (the shape of ``c_lo``, ``c_hi``): the least ratio
    ``Adm(a_hi, c_hi, ε, 0) / Adm(a_lo, c_lo, ε, 1/A)`` over every partner, the largest over
    the signs ``ε``; the gain conditions (``Adm(a_hi, c_hi) ≤ G_max``, ``Adm(a_lo, c_lo) ≥
    G_min``, module docstring) need it at most ``G_max/G_min``. ``Adm`` rises with ``a``
    (:func:`_adm`), so the ratio is at least its value with ``a_hi = a_lo = a``:
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


def _materialise(parts: _Parts, lim: _Limits, side: int, win: _Windows, sel: IntArray) -> _Half:
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
    return _Half(g, ca_, ka_, cb_, kb_, cost, low, high)


def _group_bounds(parts: _Parts, lim: _Limits, side: int, win: _Windows) -> tuple[Array, Array]:
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


def _keep(half: _Half, mask: NDArray[np.bool_]) -> _Half:
    return _Half(
        half.group[mask], half.ca[mask], half.ka[mask], half.cb[mask], half.kb[mask],
        half.cost[mask], half.low[mask], half.high[mask],
    )  # fmt: skip


def _vertex_groups(keys: Array) -> list[IntArray]:
    """Vertices (indices) grouped by equal rows of ``keys`` (V, n)."""
    _, inverse = np.unique(keys, axis=0, return_inverse=True)
    inverse = inverse.reshape(-1)
    return [np.flatnonzero(inverse == g) for g in range(int(inverse.max()) + 1)]


def _spans(half: _Half, groups: list[IntArray]) -> Array:
    """Per record and vertex group: the width of the union of its intervals over the group,
    ``max high − min low`` (N, len(groups))."""
    return np.column_stack(
        [half.high[:, g].max(axis=1) - half.low[:, g].min(axis=1) for g in groups]
    )


def _prune(one: _Half, two: _Half, lim: _Limits) -> tuple[_Half, _Half]:
    """Drop records that no partner can fit, until nothing moves. The partner's interval must
    lie inside this record's window ``[high_v − Λ, low_v + Λ]`` at every vertex ``v``; the
    partner's term does not depend on this side's source impedance (``a`` on Rs3 and Rref
    only, ``c`` on Rs1 only), so over the vertices that share the partner's impedances its one
    interval must fit inside the intersection of the windows: the width of the union of this
    record's intervals there plus the partner's least spread must stay within ``2Λ``."""
    balance = lim.balance
    by_two = _vertex_groups(np.column_stack([lim.rs3, lim.rref]))  # a is the same within
    by_one = _vertex_groups(lim.rs1[:, None])  # c is the same within
    while one.cost.size and two.cost.size:
        least_two = np.array([np.min(two.high[:, g[0]] - two.low[:, g[0]]) for g in by_two])
        least_one = np.array([np.min(one.high[:, g[0]] - one.low[:, g[0]]) for g in by_one])
        keep_one = np.all(_spans(one, by_two) + least_two <= 2.0 * balance, axis=1)
        keep_two = np.all(_spans(two, by_one) + least_one <= 2.0 * balance, axis=1)
        if keep_one.all() and keep_two.all():
            break
        one, two = _keep(one, keep_one), _keep(two, keep_two)
    if not (one.cost.size and two.cost.size):
        one, two = (
            _keep(one, np.zeros(one.cost.size, bool)),
            _keep(two, np.zeros(two.cost.size, bool)),
        )
    return one, two


# --------------------------------------------------------------------------------------------
# The discrete search
# --------------------------------------------------------------------------------------------


def _group_table(half: _Half) -> tuple[IntArray, IntArray, Array, Array, IntArray, IntArray]:
    """Per distinct group: its record indices (sorted by group), start/stop offsets, least
    cost, least spread per vertex, and its two classes."""
    order = np.argsort(half.group, kind="stable")
    groups, starts = np.unique(half.group[order], return_index=True)
    stops = np.r_[starts[1:], order.size]
    least_cost = np.minimum.reduceat(half.cost[order], starts) if order.size else np.zeros(0)
    spread = half.high - half.low
    least_spread = (
        np.minimum.reduceat(spread[order], starts, axis=0) if order.size else np.zeros((0, 0))
    )
    first = order[starts]
    classes = (
        np.column_stack([half.ca[first], half.cb[first]])
        if order.size
        else np.zeros((0, 2), np.int64)
    )
    return order, np.column_stack([starts, stops]), least_cost, least_spread, classes, groups


def _gain_room(c_lo: Array, c_hi: Array, lim: _Limits) -> tuple[Array, Array]:
    """Per record (rows of ``c_lo``, ``c_hi``: its ``c`` bounds at vertices that share one
    ``a``): ``(ln a_min, ln a_max)`` such that the gain conditions of the module docstring
    hold only if the partner's ``ln a_lo`` lies in between. ``Adm`` rises with ``a``
    (:func:`_adm`), so ``Adm(a_lo, c_lo, ε, 1/A) ≥ G_min`` gives
    ``a_lo ≥ (2·G_min·(1/A + (1 − c_lo)(1 − ε)) − c_lo(1 − ε))/(1 + ε)`` and
    ``Adm(a_hi, c_hi, ε, 0) ≤ G_max`` gives ``a_lo ≤ a_hi ≤ (2·G_max(1 − c_hi)(1 − ε) −
    c_hi(1 − ε))/(1 + ε)``, for every sign of ``ε``; widened by 1e-12 against rounding."""
    least = np.full(c_lo.shape[0], 0.0)
    most = np.full(c_lo.shape[0], np.inf)
    for e in lim.eps:
        low_a = 2.0 * lim.gain_min * (lim.inv_a + (1.0 - c_lo) * (1.0 - e)) - c_lo * (1.0 - e)
        high_a = 2.0 * lim.gain_max * (1.0 - c_hi) * (1.0 - e) - c_hi * (1.0 - e)
        least = np.maximum(least, low_a.max(axis=1) / (1.0 + e))
        most = np.minimum(most, high_a.min(axis=1) / (1.0 + e))
    with np.errstate(divide="ignore", invalid="ignore"):
        a_least = np.where(least > 0.0, np.log(least * (1.0 - 1e-12)), -np.inf)
        a_most = np.where(most > 0.0, np.log(most * (1.0 + 1e-12)), -np.inf)
    return a_least, a_most


def _join(
    one: _Half,
    idx_one: IntArray,
    two: _Half,
    idx_two: IntArray,
    lim: _Limits,
    parts: _Parts,
    sorted_cache: dict[int, tuple[IntArray, Array]] | None = None,
    key: int = -1,
) -> tuple[IntArray, IntArray]:
    """Exact join of side-1 records ``idx_one`` with side-2 records ``idx_two``: the pairs that
    meet balance and gain at every vertex (and the input impedance floor at nominal values).
    ``sorted_cache`` keeps each side-2 group (its number ``key``) sorted by its ``ln a_lo`` at
    vertex 0 (a group is joined with many side-1 groups)."""
    lam = lim.balance
    cached = sorted_cache.get(key) if sorted_cache is not None else None
    if cached is None:
        q0 = two.low[idx_two, 0]
        order = np.argsort(q0, kind="stable")
        cached = (idx_two[order], q0[order])
        if sorted_cache is not None:
            sorted_cache[key] = cached
    sorted_two, q_sorted = cached
    # The vertices where a is the same as at vertex 0 (same Rs3 and Rref): there the partner's
    # one interval [q, Q] must satisfy q ≥ high_v − Λ and Q ≤ low_v + Λ at each of them.
    same = np.flatnonzero((lim.rs3 == lim.rs3[0]) & (lim.rref == lim.rref[0]))
    p_low, p_high = one.low[idx_one][:, same], one.high[idx_one][:, same]
    # The gain conditions at those vertices bound the partner's a too (:func:`_gain_room`).
    a_least, a_most = _gain_room(np.exp(p_low), np.exp(p_high), lim)
    first = np.searchsorted(q_sorted, np.maximum(p_high.max(axis=1) - lam, a_least), side="left")
    last = np.searchsorted(q_sorted, np.minimum(p_low.min(axis=1) + lam, a_most), side="right")
    count = np.maximum(last - first, 0)
    out_a: list[IntArray] = []
    out_b: list[IntArray] = []
    start = 0
    cum = np.cumsum(count)
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
            # Vertex by vertex, each on the pairs the vertices before it kept.
            alive = np.arange(total)
            for v in range(lim.rs1.size):
                ra, rb = a_rec[alive], ib[alive]
                p_hi, p_lo = one.high[ra, v], one.low[ra, v]
                q_hi, q_lo = two.high[rb, v], two.low[rb, v]
                fit = (p_hi - q_lo <= lam) & (p_lo - q_hi >= -lam)
                c_hi, c_lo, a_hi, a_lo = np.exp(p_hi), np.exp(p_lo), np.exp(q_hi), np.exp(q_lo)
                for e in lim.eps:
                    fit &= _adm(a_hi, c_hi, e, 0.0) <= lim.gain_max
                    fit &= _adm(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min
                alive = alive[fit]
                if alive.size == 0:
                    break
            ok = np.zeros(total, dtype=bool)
            ok[alive] = True
            if lim.min_impedance > 0.0:
                r1 = parts.values[one.ka[a_rec]]
                r2 = parts.values[one.kb[a_rec]]
                r3 = parts.values[two.ka[ib]]
                r4 = parts.values[two.kb[ib]]
                # Nominal values lie inside every corner range and both impedances are
                # monotone in each resistance, so the nominal value is never below the lowest.
                ok &= r1 + r3 >= lim.min_impedance
                ok &= r1 * (r3 + r4 + lim.rref.min()) / (r1 + r3) >= lim.min_impedance
                del r2
            out_a.append(a_rec[ok])
            out_b.append(ib[ok])
        start = stop
    if not out_a:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    return np.concatenate(out_a), np.concatenate(out_b)


class Shared:
    """What the enumerations of one pick build alike (the usable discrete parts and the windows
    of each side), built on first use and kept for the others: the four-discrete search and the
    one-dual-two-discrete search (``optimizer.solve.mixed``) of one spec. The half records
    themselves are written out by each search as it needs them (they are large on loose
    specs, and the two searches need different columns of them)."""

    def __init__(self) -> None:
        self._parts: list[_Parts | None] = []
        self._windows: dict[int, _Windows] = {}

    def parts(
        self, catalog: Catalog, spec: Spec, env: LinearEnvironment, lim: _Limits
    ) -> _Parts | None:
        if not self._parts:
            self._parts.append(_discrete_parts(catalog, spec, env, lim))
        return self._parts[0]

    def windows(self, parts: _Parts, lim: _Limits, side: int) -> _Windows:
        if side not in self._windows:
            self._windows[side] = _windows(parts, lim, side)
        return self._windows[side]

    def half(self, parts: _Parts, lim: _Limits, side: int, vertex: int | None = None) -> _Half:
        """Every half record of ``side``, its terms at every vertex, or at ``vertex`` only
        (:func:`at_vertex`: one column, and only that vertex's conditions drop records)."""
        win = self.windows(parts, lim, side)
        at = lim if vertex is None else at_vertex(lim, vertex)
        return _materialise(parts, at, side, win, np.arange(win.group.size))


#: Records of both sides times environment vertices (the size of their term bounds) above which
#: the four-discrete search writes out only the groups it reaches (:class:`_LazyGroups`)
#: instead of all of them, pruned (:class:`_EagerGroups`). Measured on the canonical battery
#: and a sweep of floors: below it, pruning everything first is faster.
LAZY_CELLS = 2_000_000


class _EagerGroups:
    """Every record of one side written out and pruned; a group's records are a slice."""

    def __init__(self, half: _Half) -> None:
        self.half = half
        self.order, self.span, self.cost, self.spread, self.classes, _ = _group_table(half)

    def least_span(self, vertex_groups: list[IntArray]) -> Array:
        """Per group and vertex group: the least width of a record's union of intervals there
        (:func:`_spans`)."""
        spans = _spans(self.half, vertex_groups)[self.order]
        return np.minimum.reduceat(spans, self.span[:, 0], axis=0)

    def records(self, g: int) -> tuple[_Half, IntArray]:
        return self.half, self.order[self.span[g, 0] : self.span[g, 1]]


class _LazyGroups:
    """One side's groups by their windows: bounds from :func:`_group_bounds`, and a group's
    records written out the first time the search reaches it."""

    def __init__(
        self, parts: _Parts, lim: _Limits, side: int, win: _Windows, span_groups: list[IntArray]
    ) -> None:
        self.parts, self.lim, self.side, self.win = parts, lim, side, win
        self.cost, self.spread = _group_bounds(parts, lim, side, win)
        heads = win.starts[:-1]
        self.classes = np.column_stack([win.ca[heads], win.cb[heads]])
        self.span_groups = span_groups  # the vertices that share the partner's term
        self._made: dict[int, _Half] = {}
        self._exact: dict[int, tuple[Array, Array]] = {}

    def exact(self, g: int) -> tuple[Array, Array]:
        """The group's least span over each of ``span_groups`` and least spread per vertex,
        from its records (what :class:`_EagerGroups` holds, before pruning)."""
        if g not in self._exact:
            half, _ = self.records(g)
            self._exact[g] = (
                _spans(half, self.span_groups).min(axis=0),
                (half.high - half.low).min(axis=0),
            )
        return self._exact[g]

    def least_span(self, vertex_groups: list[IntArray]) -> Array:
        """A lower bound of :meth:`_EagerGroups.least_span`: a record's union over a vertex
        group is at least as wide as its interval at each vertex of it."""
        return np.column_stack([self.spread[:, g].max(axis=1) for g in vertex_groups])

    def records(self, g: int) -> tuple[_Half, IntArray]:
        half = self._made.get(g)
        if half is None:
            window = np.arange(self.win.starts[g], self.win.starts[g + 1])
            half = _materialise(self.parts, self.lim, self.side, self.win, window)
            self._made[g] = half
        return half, np.arange(half.cost.size)


def limits_and_parts(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, shared: Shared | None
) -> tuple[_Limits, _Parts, Shared] | None:
    """The screen's limits and the usable discrete parts (from ``shared`` when another search of
    the same spec built them), or None when no balance meets the floor or no part is usable:
    the start of every enumeration with discrete parts."""
    lim = _limits(spec, env)
    if lim.balance < 0.0:
        return None
    shared = shared if shared is not None else Shared()
    parts = shared.parts(catalog, spec, env, lim)
    return None if parts is None else (lim, parts, shared)


def discrete_frontier(
    spec: Spec,
    catalog: Catalog,
    env: LinearEnvironment,
    should_stop: Callable[[], bool] = lambda: False,
    shared: Shared | None = None,
) -> Iterator[Design]:
    """Four-discrete designs that meet the spec's worst-case CMRR and gain accuracy, in
    nondecreasing exact cost (``optimizer.cost``); the other checks are left to the caller's
    exact check. Exhaustive: when it ends, no further design passes those two — unless
    ``should_stop`` (asked between steps: a clock, an interrupt) ended it early. ``shared``:
    the parts and half records built by another enumeration of the same spec."""
    start = limits_and_parts(spec, catalog, env, shared)
    if start is None:
        return
    lim, parts, shared = start
    groups = _sides(parts, lim, shared)
    if groups is None:
        return
    one, two = groups
    # Group pairs: feasible by least spreads (over the vertices that share the partner's term,
    # as in ``_prune``), keyed by their least cost.
    fits = np.ones((one.spread.shape[0], two.spread.shape[0]), dtype=bool)
    for this, other, vertex_groups in (
        (one, two, _vertex_groups(np.column_stack([lim.rs3, lim.rref]))),
        (two, one, _vertex_groups(lim.rs1[:, None])),
    ):
        least = this.least_span(vertex_groups)  # (groups of this side, vertex groups)
        partner = other.spread[:, [g[0] for g in vertex_groups]]
        pair = np.all(least[:, None, :] + partner[None, :, :] <= 2.0 * lim.balance, axis=2)
        fits &= pair if this is one else pair.T
    g1, g2 = np.nonzero(fits)
    if g1.size == 0:
        return
    classes = np.column_stack([one.classes[g1], two.classes[g2]])
    # Lines: one per distinct electrical class at least (a part id has one class), each at
    # least the class's least per-line charge (line cost and stock penalty).
    distinct = np.array(
        [sum(parts.class_charge[c] for c in set(row)) for row in classes.tolist()], dtype=float
    )
    bound = one.cost[g1] + two.cost[g2] + distinct
    pair_order = np.argsort(bound, kind="stable")
    yield from _emit(spec, catalog, env, parts, lim, one, two, g1[pair_order], g2[pair_order],
                     bound[pair_order], should_stop)  # fmt: skip


def _sides(
    parts: _Parts, lim: _Limits, shared: Shared
) -> tuple[_EagerGroups | _LazyGroups, _EagerGroups | _LazyGroups] | None:
    """Both sides' groups: all records written out and pruned when they are few or another
    search keeps them anyway, else each group written out when the search reaches it; None
    when a side has none."""
    win1, win2 = shared.windows(parts, lim, 1), shared.windows(parts, lim, 2)
    if win1.group.size == 0 or win2.group.size == 0:
        return None
    if (win1.records + win2.records) * lim.rs1.size > LAZY_CELLS:
        by_a = _vertex_groups(np.column_stack([lim.rs3, lim.rref]))
        by_c = _vertex_groups(lim.rs1[:, None])
        return _LazyGroups(parts, lim, 1, win1, by_a), _LazyGroups(parts, lim, 2, win2, by_c)
    one, two = _prune(shared.half(parts, lim, 1), shared.half(parts, lim, 2), lim)
    if not (one.cost.size and two.cost.size):
        return None
    return _EagerGroups(one), _EagerGroups(two)


def _emit(
    spec: Spec,
    catalog: Catalog,
    env: LinearEnvironment,
    parts: _Parts,
    lim: _Limits,
    one: _EagerGroups | _LazyGroups,
    two: _EagerGroups | _LazyGroups,
    g1: IntArray,
    g2: IntArray,
    bound: Array,
    should_stop: Callable[[], bool],
) -> Iterator[Design]:
    """Merge the group pairs (taken in order of their bound) into one stream of designs in
    exact cost order: a heap of entries keyed by a lower bound that is replaced by the exact
    cost before an entry is emitted."""
    part_cache: dict[int, DiscretePart] = {}

    def cost_of(rows: tuple[int, ...]) -> float:
        picked = [_cached_part(catalog, row, part_cache) for row in rows]
        return parts_cost(picked, spec.preferences).total

    hot = spec.requirements.temp_max_c
    tmin = spec.requirements.temp_min_c

    def rated(rows: tuple[int, ...]) -> bool:
        """False when a part of ``rows`` fails the exact rating check for certain: its stress at
        a subset of the check's own corners (``analysis.checks.rating_corners``) already
        exceeds its derated power rating or its limiting voltage (relative slack 1e-9)."""
        picked = [_cached_part(catalog, row, part_cache) for row in rows]
        nominal = np.array([p.resistance_ohm for p in picked])
        spreads = np.array([value_spread(p.tolerance, p.tempco_per_k, tmin, hot) for p in picked])
        power, peak = resistor_stress(rating_corners(nominal, spreads, spec), spec)
        for p, pw, pk in zip(picked, power, peak, strict=True):
            if pw * (1.0 - 1e-9) > float(derated_power(p.power_w, hot)):
                return False
            if pk * (1.0 - 1e-9) > p.max_voltage_v:
                return False
        return True

    def lot_screen(rows: tuple[int, ...]) -> bool:
        """With same-lot tracking: the corner screen of the design's own parts, each part whose
        id is placed once with its own tempco (independent, as without tracking), the others
        at a shared tempco of zero (a point of their shared range): necessary for the exact
        check, and much tighter than the class screen, which zeroes every tempco."""
        picked = [_cached_part(catalog, row, part_cache) for row in rows]
        ids = [p.part_id for p in picked]
        tc = np.array([p.tempco_per_k if ids.count(p.part_id) == 1 else 0.0 for p in picked])
        t = np.array([p.tolerance for p in picked])
        d_lo, d_hi = drift_factor_bounds(
            life_drift(np.array([p.drift_1000h for p in picked]), env.life_h),
            spec.requirements.drift_model,
        )
        swing = tc * env.delta_t_k
        low = ((1.0 - t) * (1.0 - swing) * d_lo)[None, :]
        high = ((1.0 + t) * (1.0 + swing) * d_hi)[None, :]
        nominal = np.array([[p.resistance_ohm for p in picked]])
        return bool(corner_screen(nominal, low, high, lim)[0])

    sorted_cache: dict[int, tuple[IntArray, Array]] = {}
    # Per (class, value) quadruple: its stress at the screen's corners (``_rated_combinations``).
    stress_of: dict[tuple[tuple[int, int], ...], tuple[Array, Array]] = {}
    heap: list[tuple[float, int, int, object]] = []
    tick = itertools.count()

    def join_next(pair: _Pair) -> None:
        """Join the pair's next run of side-1 records (cheapest first) with its side-2 group;
        the combinations enter the heap as a block, and the pair again at the least cost its
        records left can reach."""
        h1, a_idx = pair.next_run()
        h2, b_idx = two.records(pair.g2)
        if not pair.done:
            heapq.heappush(heap, (pair.least_left(), _PAIR, next(tick), pair))
        ja, jb = _join(h1, a_idx, h2, b_idx, lim, parts, sorted_cache, pair.g2)
        if ja.size == 0:
            return
        keys = np.column_stack([h1.ca[ja], h1.ka[ja], h1.cb[ja], h1.kb[ja],
                                h2.ca[jb], h2.ka[jb], h2.cb[jb], h2.kb[jb]])  # fmt: skip
        lb = h1.cost[ja] + h2.cost[jb] + _distinct_charge(keys, parts.line_charge)
        sort = np.lexsort((*(keys[:, i] for i in range(7, -1, -1)), lb))
        # The run's combinations, in bound order, enter the heap one at a time.
        block = _Block(keys[sort], lb[sort], parts, spec)
        at = block.usable(0)
        if at is not None:
            heapq.heappush(heap, (float(block.lbs[at]), _BLOCK, next(tick), (block, at)))
        push_lifted(block)

    def push_lifted(block: _Block) -> None:
        """Each entry the block's screen lifted enters the heap as a bound entry at its bound
        plus its lift: a lower bound of every design of it (``_rated_combinations``)."""
        for j in block.lifted:
            k = [int(v) for v in block.keys[j]]
            first = tuple((k[2 * i], k[2 * i + 1]) for i in range(4))
            stress_of[first] = (block.power[j], block.peak[j])
            key = float(block.lbs[j] + block.lift[j])
            heapq.heappush(heap, (key, _BOUND, next(tick), (first, (0, 0, 0, 0))))
        block.lifted.clear()

    next_pair = 0
    seen: set[tuple[object, ...]] = set()
    while not should_stop():
        top = heap[0][0] if heap else math.inf
        top_exact = bool(heap) and heap[0][1] == _EXACT
        if next_pair < bound.size and (
            bound[next_pair] < top or (bound[next_pair] == top and not top_exact)
        ):
            g_two = int(g2[next_pair])
            if isinstance(one, _LazyGroups) and isinstance(two, _LazyGroups):
                if not _fits_exactly(one, two, int(g1[next_pair]), g_two, lim.balance):
                    next_pair += 1
                    continue
            pair = _Pair(
                int(g1[next_pair]), g_two, float(bound[next_pair]), one, float(two.cost[g_two])
            )
            next_pair += 1
            join_next(pair)
            continue
        if not heap:
            return
        key, kind, _, payload = heapq.heappop(heap)
        if kind == _PAIR:
            join_next(cast(_Pair, payload))
            continue
        if kind == _BLOCK:
            block, at = cast(tuple[_Block, int], payload)
            after = block.usable(at + 1)
            if after is not None:
                heapq.heappush(heap, (float(block.lbs[after]), _BLOCK, next(tick), (block, after)))
            push_lifted(block)
            k = [int(v) for v in block.keys[at]]
            first = tuple((k[2 * i], k[2 * i + 1]) for i in range(4))
            if block.screened:
                stress_of[first] = (block.power[at], block.peak[at])
            heapq.heappush(heap, (key, _BOUND, next(tick), (first, (0, 0, 0, 0))))
            continue
        electrical, choice = cast(tuple[tuple[tuple[int, int], ...], tuple[int, ...]], payload)
        lists = [parts.variants(i, electrical[i]) for i in range(4)]
        rows = tuple(lists[i][choice[i]][1] for i in range(4))
        if kind == _EXACT:
            yield _discrete_design(catalog, rows, part_cache)
            continue
        # A bound entry: its exact cost goes back into the heap, and so do the other parts of
        # the same classes and values (other sizes, stock). Each successor's bound is its part
        # cost plus one line per distinct (class, value): never above its exact cost, and never
        # below this entry's bound, so taking successors now keeps the order exact (a
        # successor can cost less than this design itself, when it shares a line).
        known = stress_of.get(electrical)
        lots_ok = parts.exact_spread or lot_screen(rows)
        if lots_ok and (rated(rows) if known is None else parts.bears(rows, *known)):
            heapq.heappush(
                heap, (_exact_key(cost_of(rows), key), _EXACT, next(tick), (electrical, choice))
            )
        lines = parts.lines_charge(electrical)
        for i in range(4):
            if choice[i] + 1 < len(lists[i]):
                nxt = tuple(c + (1 if j == i else 0) for j, c in enumerate(choice))
                if (electrical, nxt) in seen:
                    continue
                seen.add((electrical, nxt))
                bound_next = sum(lists[j][nxt[j]][0] for j in range(4)) + lines
                heapq.heappush(heap, (bound_next, _BOUND, next(tick), (electrical, nxt)))


def _fits_exactly(one: _LazyGroups, two: _LazyGroups, g1: int, g2: int, balance: float) -> bool:
    """The group pair test of ``discrete_frontier`` on the two groups' own records: over the
    vertices that share one side's partner term, the side's least span plus the partner's
    least spread there stays within ``2Λ``."""
    if one.records(g1)[0].cost.size == 0 or two.records(g2)[0].cost.size == 0:
        return False
    span1, spread1 = one.exact(g1)
    span2, spread2 = two.exact(g2)
    heads_a = [g[0] for g in one.span_groups]
    heads_c = [g[0] for g in two.span_groups]
    return bool(
        np.all(span1 + spread2[heads_a] <= 2.0 * balance)
        and np.all(span2 + spread1[heads_c] <= 2.0 * balance)
    )


class _Pair:
    """A group pair being joined a run at a time: its side-1 records sorted by cost, the
    position reached, and the least per-line charge of any design of it (``lines``: the pair's
    bound less both groups' least costs)."""

    def __init__(
        self, g1: int, g2: int, bound: float, one: _EagerGroups | _LazyGroups, least_two: float
    ) -> None:
        self.g1, self.g2 = g1, g2
        self.half, idx = one.records(g1)
        self.order = idx[np.argsort(self.half.cost[idx], kind="stable")]
        self.least_two = least_two  # least cost of a record of the side-2 group
        self.lines = bound - float(one.cost[g1]) - least_two
        self.at = 0
        self.run = _FIRST_RUN

    @property
    def done(self) -> bool:
        return self.at >= self.order.size

    def next_run(self) -> tuple[_Half, IntArray]:
        """The next run of side-1 records (the run after it is twice as long)."""
        run = self.order[self.at : self.at + self.run]
        self.at += run.size
        self.run *= 2
        return self.half, run

    def least_left(self) -> float:
        """A lower bound of every design of the records not joined yet: the least cost of a
        side-1 record left (they are sorted by cost), the side-2 group's least cost and the
        pair's least line charge, less a relative 1e-12 (the sums' rounding)."""
        rest = float(self.half.cost[self.order[self.at]]) + self.least_two + self.lines
        return rest - 1e-12 * abs(rest)


#: Resistor ends of the block-level rating screen (``analysis.checks.rating_corners``): R1 low
#: and R2 high (the largest current through both), R3 and R4 at every end.
_SCREEN_ENDS = ((0, 1, 0, 0), (0, 1, 0, 1), (0, 1, 1, 0), (0, 1, 1, 1))
#: Designs whose rating stress is computed at once (bounds the screen's memory).
_STRESS_CHUNK = 8192


class _Block:
    """The combinations of one group pair, sorted by their bound ``lbs``, screened against the
    ratings (:func:`_rated_combinations`) a chunk at a time as the merge reaches them (most
    blocks are left after their first few entries)."""

    def __init__(self, keys: IntArray, lbs: Array, parts: _Parts, spec: Spec) -> None:
        self.keys, self.lbs, self.parts, self.spec = keys, lbs, parts, spec
        self.screened = parts.exact_spread
        n = keys.shape[0]
        self.ok = np.ones(n, dtype=bool)
        self.power = np.zeros((n, 4))
        self.peak = np.zeros((n, 4))
        self.lift = np.zeros(n)
        self.done = 0  # entries screened so far (a prefix)
        # Screened entries that pass only with a dearer part somewhere (lift > 0): taken out of
        # the block's order, to enter the merge at their bound plus lift (see ``_emit``).
        self.lifted: list[int] = []

    def usable(self, at: int) -> int | None:
        """The first entry from ``at`` on that passes the screen with its cheapest parts, or
        None (entries that pass only with dearer parts are listed in ``lifted``)."""
        n = self.keys.shape[0]
        if not self.screened:  # (every entry passes)
            return at if at < n else None
        while at < n:
            while self.screened and at >= self.done:
                # Chunks double from 64 up to _STRESS_CHUNK: most blocks need only a few.
                step = min(_STRESS_CHUNK, max(64, self.done))
                part = slice(self.done, min(self.done + step, n))
                ok, power, peak, lift = _rated_combinations(self.keys[part], self.parts, self.spec)
                lifted = ok & (lift > 0.0)
                self.ok[part], self.power[part], self.peak[part] = ok & ~lifted, power, peak
                self.lift[part] = lift
                self.lifted.extend((np.flatnonzero(lifted) + part.start).tolist())
                self.done = part.stop
            ahead = np.flatnonzero(self.ok[at : self.done if self.screened else n])
            if ahead.size:
                return at + int(ahead[0])
            at = self.done if self.screened else n
        return None


def _rated_combinations(
    keys: IntArray, parts: _Parts, spec: Spec
) -> tuple[NDArray[np.bool_], Array, Array, Array]:
    """For combinations ``keys`` (columns: class, value for R1..R4): the mask of those whose
    best-rated part at every position (``_Parts.top_w``, ``top_v``) bears its stress at the
    corners :data:`_SCREEN_ENDS` of ``analysis.checks.rating_corners``, that stress
    ``(power, peak)`` (N, 4), and the *lift* of each: the sum over the positions where the
    cheapest part does not bear its stress of ``up_cost − cost`` (a part that bears it is rated
    above the cheapest one, so it costs at least ``_Parts.up_cost``). Those corners are points
    of the exact rating check (every part of a class has the class's δ when
    ``parts.exact_spread``), so a combination left out fails it with every part of its classes
    and values, and every design of a combination costs at least its bound plus its lift
    (relative slack 1e-9)."""
    n = keys.shape[0]
    power = np.empty((n, 4))
    peak = np.empty((n, 4))
    cls, val = keys[:, 0::2], keys[:, 1::2]
    for start in range(0, n, _STRESS_CHUNK):
        part = slice(start, start + _STRESS_CHUNK)
        corners = rating_corners(
            parts.values[val[part]], parts.spread[cls[part]], spec, _SCREEN_ENDS
        )
        power[part], peak[part] = resistor_stress(corners, spec)
    ok = np.ones(n, dtype=bool)
    lift = np.zeros(n)
    for i in range(4):
        c, v = cls[:, i], val[:, i]
        ok &= power[:, i] * (1.0 - 1e-9) <= parts.top_w[i][c, v]
        ok &= peak[:, i] * (1.0 - 1e-9) <= parts.top_v[i][c, v]
        head = parts.best[i][c, v]
        head_bears = (parts.power_w[head] >= power[:, i] * (1.0 - 1e-9)) & (
            parts.volts[head] >= peak[:, i] * (1.0 - 1e-9)
        )
        lift += np.where(head_bears, 0.0, parts.up_cost[i][c, v] - parts.best_cost[i][c, v])
    return ok, power, peak, lift


#: Relative difference below which a design's exact cost counts as equal to its bound: the two
#: are sums of the same figures in different orders (rounding differs in the last digits).
_SAME_COST = 1e-12


def _exact_key(cost: float, bound: float) -> float:
    """The heap key of a design of exact ``cost`` found from an entry of key ``bound``: the
    bound itself when the two agree to :data:`_SAME_COST` (so the design is taken before every
    other entry of that cost, not after a tie group that differs only in rounding), else the
    larger (the key never falls)."""
    return bound if cost <= bound + _SAME_COST * abs(bound) else max(cost, bound)


def _distinct_charge(keys: IntArray, charge: Array) -> Array:
    """Per row of ``keys`` (columns: class, value for R1..R4): the sum of ``charge`` over its
    distinct (class, value) pairs, the least per-line cost a design needs (a part id has one
    class and value, so the design places at least one line per distinct pair)."""
    pairs = keys[:, 0::2] * charge.shape[1] + keys[:, 1::2]
    s = np.sort(pairs, axis=1)
    first = np.ones_like(s, dtype=bool)
    first[:, 1:] = s[:, 1:] != s[:, :-1]
    total: Array = np.sum(np.where(first, charge.reshape(-1)[s], 0.0), axis=1)
    return total


def _cached_part(catalog: Catalog, row: int, cache: dict[int, DiscretePart]) -> DiscretePart:
    part = cache.get(row)
    if part is None:
        part = cache[row] = catalog.discrete_part(row)
    return part


def _discrete_design(
    catalog: Catalog, rows: tuple[int, ...], cache: dict[int, DiscretePart]
) -> Design:
    placements = tuple(
        Placement(f"R{i + 1}", _cached_part(catalog, row, cache)) for i, row in enumerate(rows)
    )
    return Design(placements)  # type: ignore[arg-type]


# --------------------------------------------------------------------------------------------
# Network designs: quads and pairs of duals
# --------------------------------------------------------------------------------------------


def corner_screen(nominal: Array, low: Array, high: Array, lim: _Limits) -> NDArray[np.bool_]:
    """Designs (N, 4) whose positions vary independently in ``[R·low, R·high]`` and that meet
    the balance and gain conditions of the module docstring at every environment vertex: the
    exact worst case for independent parts. For network elements ``low``/``high`` hold the
    element's own range only (the package's shared error at zero): a subset of the exact
    check's variables, so the screen never rejects a design the exact check accepts."""
    alive = np.arange(nominal.shape[0])
    if lim.min_impedance > 0.0:
        alive = alive[nominal[:, 0] + nominal[:, 2] >= lim.min_impedance]
    lo = nominal[alive] * low[alive]
    hi = nominal[alive] * high[alive]
    lam = lim.balance
    # Vertex by vertex, each on the designs the ones before it kept (most fail at the first).
    for v in range(lim.rs1.size):
        if alive.size == 0:
            break
        rs1, rs3, rref = lim.rs1[v], lim.rs3[v], lim.rref[v]
        c_hi = hi[:, 1] / (lo[:, 0] + rs1 + hi[:, 1])
        c_lo = lo[:, 1] / (hi[:, 0] + rs1 + lo[:, 1])
        a_hi = (hi[:, 3] + rref) / (lo[:, 2] + rs3 + hi[:, 3] + rref)
        a_lo = (lo[:, 3] + rref) / (hi[:, 2] + rs3 + lo[:, 3] + rref)
        ok = np.log(c_hi / a_lo) <= lam
        ok &= np.log(c_lo / a_hi) >= -lam
        for e in lim.eps:
            ok &= _adm(a_hi, c_hi, e, 0.0) <= lim.gain_max
            ok &= _adm(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min
        if not ok.all():
            alive, lo, hi = alive[ok], lo[ok], hi[ok]
    passed = np.zeros(nominal.shape[0], dtype=bool)
    passed[alive] = True
    return passed


def _element_bounds(
    network: NetworkPart, spec: Spec, env: LinearEnvironment
) -> tuple[float, float]:
    """``(low, high)`` factors of one element's own variables as the CMRR and gain conditions
    take them: :func:`_element_range`, or on the yield basis the box of
    ``optimizer.solve.yieldbox``."""
    kappa = box_factor(spec)
    if kappa is None:
        return _element_range(network, env)
    return element_box(network, spec, env, kappa)


def _element_range(network: NetworkPart, env: LinearEnvironment) -> tuple[float, float]:
    """``(low, high)`` factors of one element's own variables (ratio tolerance, tracking tempco
    and ratio drift, each half the pair figure: ``analysis.variation``), the package at 0."""
    t = network.ratio_tolerance / 2.0
    tc = network.tracking_tempco_per_k / 2.0 * env.delta_t_k
    d = float(life_drift(network.ratio_drift_1000h, env.life_h)) / 2.0
    return (1.0 - t) * (1.0 - tc) * (1.0 - d), (1.0 + t) * (1.0 + tc) * (1.0 + d)


def _package_extremes(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> tuple[
    float, float
]:  # fmt: skip
    """The package's shared factor ``(1 + e_abs)(1 + α_abs·ΔT)(1 + d_abs)`` at its two ends
    (``analysis.variation``): points of the exact check's range, so a design must pass the
    screen at each. On the yield basis both are its mean (``optimizer.solve.yieldbox``)."""
    if box_factor(spec) is not None:
        centre = package_centre(network, spec, env)
        return centre, centre
    swing = network.abs_tempco_per_k * env.delta_t_k
    d_lo, d_hi = drift_factor_bounds(
        float(life_drift(network.drift_1000h, env.life_h)), spec.requirements.drift_model
    )
    t = network.abs_tolerance
    return (1.0 - t) * (1.0 - swing) * float(d_lo), (1.0 + t) * (1.0 + swing) * float(d_hi)


def _usable_networks(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, elements: int
) -> list[NetworkPart]:
    prefs = spec.preferences
    low = prefs.resistance_min_ohm * (1 - 1e-9)
    high = prefs.resistance_max_ohm * (1 + 1e-9)
    stress = float(np.max(env.stress_v))
    found = []
    for network in catalog.networks:
        if network.elements != elements:
            continue
        if prefs.stock is StockPolicy.ONLY and not network.in_stock:
            continue
        values = network.values_ohm
        if min(values) < low or max(values) > high:
            continue
        if network.max_voltage_v < RATING_SCREEN * stress:
            continue
        found.append(network)
    return found


def network_frontier(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, topology: Topology
) -> Iterator[Design]:
    """Every design of ``topology`` (a quad in each distinct element order, or two duals each in
    either order for equal or divider pairs; the same dual twice is two packages) that passes
    :func:`corner_screen`, in nondecreasing exact cost (ties by part ids and element order). On
    the yield basis the screen takes the box of ``optimizer.solve.yieldbox`` (element ranges
    and package factor), which every design meeting the yield passes."""
    lim = _limits(spec, env)
    if lim.balance < 0.0:
        return
    if topology is not Topology.QUAD:
        yield from _pair_frontier(spec, catalog, env, topology, lim)
        return
    layouts = _quad_layouts(spec, catalog, env, lim)
    if not layouts:
        return
    nominal = np.array([layout[1] for layout in layouts])
    low = np.array([layout[2] for layout in layouts])
    high = np.array([layout[3] for layout in layouts])
    ends = np.array([_package_extremes(_network_of(layout[0]), spec, env) for layout in layouts])
    ok = corner_screen(nominal * ends[:, :1], low, high, lim)
    ok &= corner_screen(nominal * ends[:, 1:], low, high, lim)
    kept: list[tuple[float, tuple[str, ...], tuple[int, ...], Design]] = []
    for layout, good in zip(layouts, ok.tolist(), strict=True):
        if good:
            design = layout[0]
            ids = tuple(p.part.part_id for p in design.placements)
            order = tuple(p.element if p.element is not None else -1 for p in design.placements)
            kept.append((design_cost(design, spec.preferences).total, ids, order, design))
    kept.sort(key=lambda item: (item[0], item[1], item[2]))
    for item in kept:
        yield item[3]


def _network_of(design: Design) -> NetworkPart:
    part = design.placements[0].part
    assert isinstance(part, NetworkPart)
    return part


_Layout = tuple[Design, tuple[float, ...], tuple[float, ...], tuple[float, ...]]


def element_ratings(
    network: NetworkPart, env: LinearEnvironment, floors: Sequence[float], lim: _Limits
) -> dict[tuple[float, int], bool]:
    """Per (element value, position): whether an element of ``network`` with that value can
    take that position, its ratings against the estimated stress (loosely,
    :data:`RATING_SCREEN`) and against the least voltage any passing design puts across the
    position (:func:`stress_floor` times the element's share at its lowest resistance,
    :func:`stress_share`). Each element is judged alone, so a placement is rated when each of
    its elements is."""
    power = network.power_per_element_w * env.derating
    lo, hi = _element_range(network, env)
    shared = (1.0 - network.abs_tolerance) * (1.0 - network.abs_tempco_per_k * env.delta_t_k)
    shared *= 1.0 - float(life_drift(network.drift_1000h, env.life_h))
    series = (float(lim.rs1.max()), 0.0, float(lim.rs3.max()), float(lim.rref.max()))
    stresses = [float(v) for v in env.stress_v]
    table: dict[tuple[float, int], bool] = {}
    for r in set(network.values_ohm):
        for p in range(4):
            stress = stresses[p]
            r_low = r * lo * shared
            least = floors[p] * (r_low / (r_low + series[p])) * (1.0 - 1e-9)
            top = r * hi * (2.0 - shared)
            table[r, p] = not (
                power * r < RATING_SCREEN * stress**2
                or network.max_voltage_v < least
                or power * top < least**2
            )
    return table


def _quad_layouts(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, lim: _Limits
) -> list[_Layout]:
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    layouts: list[_Layout] = []
    for network in _usable_networks(spec, catalog, env, 4):
        lo, hi = _element_bounds(network, spec, env)
        rated = element_ratings(network, env, floors, lim)
        seen: set[tuple[float, ...]] = set()
        for order in itertools.permutations(range(4)):
            values = tuple(network.values_ohm[e] for e in order)
            if values in seen or not all(rated[v, p] for p, v in enumerate(values)):
                continue
            seen.add(values)
            placements = tuple(Placement(f"R{i + 1}", network, order[i]) for i in range(4))
            layouts.append((Design(placements), values, (lo,) * 4, (hi,) * 4))  # type: ignore[arg-type]
    return layouts


def _pair_frontier(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, topology: Topology, lim: _Limits
) -> Iterator[Design]:
    """Two duals: (R1, R3) and (R2, R4) for equal pairs, (R1, R2) and (R3, R4) for divider
    pairs; each dual in either element order (an order that repeats values is kept once). Every
    combination is screened at once (:func:`corner_screen`, in chunks); the survivors are sorted
    by exact cost (``optimizer.cost``, one evaluation per pair of part ids), then ids and orders."""
    first, second = ((0, 2), (1, 3)) if topology is Topology.EQUAL_PAIRS else ((0, 1), (2, 3))
    duals = _usable_networks(spec, catalog, env, 2)
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    slots: list[list[tuple[NetworkPart, tuple[int, int], float, float]]] = [[], []]
    ratings: dict[str, dict[tuple[float, int], bool]] = {}
    for slot, positions in enumerate((first, second)):
        for network in duals:
            lo, hi = _element_bounds(network, spec, env)
            if network.part_id not in ratings:
                ratings[network.part_id] = element_ratings(network, env, floors, lim)
            rated = ratings[network.part_id]
            seen: set[tuple[float, ...]] = set()
            for order in ((0, 1), (1, 0)):
                values = tuple(network.values_ohm[e] for e in order)
                if values in seen or not all(
                    rated[v, p] for v, p in zip(values, positions, strict=True)
                ):
                    continue
                seen.add(values)
                slots[slot].append((network, (order[0], order[1]), lo, hi))
    if not (slots[0] and slots[1]):
        return

    def arrays(options: list[tuple[NetworkPart, tuple[int, int], float, float]]) -> tuple[
        Array, Array, Array
    ]:  # fmt: skip
        values = np.array([[n.values_ohm[o[0]], n.values_ohm[o[1]]] for n, o, _, _ in options])
        return values, np.array([lo for *_, lo, _ in options]), np.array([h for *_, h in options])

    va, la, ha = arrays(slots[0])
    vb, lb, hb = arrays(slots[1])
    sa = np.array([_package_extremes(n, spec, env) for n, *_ in slots[0]])
    sb = np.array([_package_extremes(n, spec, env) for n, *_ in slots[1]])
    nb = len(slots[1])
    survivors: list[IntArray] = []
    total = len(slots[0]) * nb
    step = max(1, _JOIN_CHUNK)
    for start in range(0, total, step):
        flat = np.arange(start, min(total, start + step))
        ia, ib = flat // nb, flat % nb
        nominal = np.empty((flat.size, 4))
        low = np.empty((flat.size, 4))
        high = np.empty((flat.size, 4))
        for k, p in enumerate(first):
            nominal[:, p], low[:, p], high[:, p] = va[ia, k], la[ia], ha[ia]
        for k, p in enumerate(second):
            nominal[:, p], low[:, p], high[:, p] = vb[ib, k], lb[ib], hb[ib]
        alive = np.arange(flat.size)
        # Each package's shared factor at either end: four sets of points of the exact range
        # (each set screens only what the sets before it kept).
        for end_a in (0, 1):
            for end_b in (0, 1):
                scaled = nominal[alive].copy()
                scaled[:, list(first)] *= sa[ia[alive], end_a][:, None]
                scaled[:, list(second)] *= sb[ib[alive], end_b][:, None]
                alive = alive[corner_screen(scaled, low[alive], high[alive], lim)]
        survivors.append(flat[alive])
    kept = np.concatenate(survivors)
    costs: dict[tuple[str, str], float] = {}
    keyed: list[tuple[float, str, str, tuple[int, int], tuple[int, int], int, int]] = []
    for flat_index in kept.tolist():
        a, b = divmod(flat_index, nb)
        net_a, order_a, _, _ = slots[0][a]
        net_b, order_b, _, _ = slots[1][b]
        pair = (net_a.part_id, net_b.part_id)
        if pair not in costs:
            costs[pair] = parts_cost([net_a, net_b], spec.preferences).total
        keyed.append((costs[pair], pair[0], pair[1], order_a, order_b, a, b))
    keyed.sort()
    for *_, a, b in keyed:
        net_a, order_a, _, _ = slots[0][a]
        net_b, order_b, _, _ = slots[1][b]
        package_b = 1 if net_b.part_id == net_a.part_id else 0
        placed: dict[int, Placement] = {}
        for positions, net, order, package in (
            (first, net_a, order_a, 0),
            (second, net_b, order_b, package_b),
        ):
            for p, e in zip(positions, order, strict=True):
                placed[p] = Placement(f"R{p + 1}", net, e, package)
        yield Design((placed[0], placed[1], placed[2], placed[3]))
