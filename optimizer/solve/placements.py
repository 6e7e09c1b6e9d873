"""The placements of one dual network beside two discrete parts (``solve.mixed``): where the dual
can sit, the formulas of a side's term and of the gain room the conditions leave, and each
placement's screened candidates (divider placements: a slice of the free side's half records;
crossed placements: the two sides' value windows paired), ordered and screened a chunk at a
time as the merge reaches them. Every screen is a necessary condition of the exact check.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..catalog import Catalog
from ..cost import parts_cost
from ..parts import NetworkPart
from ..spec import Spec
from .environment import LinearEnvironment
from .frontier import (
    JOIN_CHUNK,
    gain_room,
)
from .halves import ClassParts, HalfRecords, value_lists, value_window
from .networks import element_bounds, element_ratings, package_extremes, usable_networks
from .options import ALL_SHAPES
from .screen import ScreenLimits, adm_from_terms, corner_screen, side_window, stress_floor

__all__ = [
    "DualPlacement",
    "PlacementBlock",
    "PlacementCandidates",
    "SortedHalf",
    "c_gain_room",
    "crossed_open",
    "divider_keys",
    "divider_slice",
    "dual_placements",
    "least_costs",
    "least_sensitivity",
    "placement_candidates",
    "side_term",
    "sorted_half",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

# --------------------------------------------------------------------------------------------
# Formulas
# --------------------------------------------------------------------------------------------


def side_term(
    top: Array | float, bottom: Array | float, w: Array | float, u: Array | float
) -> Array:
    """The bridge term of one side, ``(B + u)/(A + w + B + u)`` (dimensionless): ``c =
    R2/(R1 + Rs1 + R2)`` with ``A = R1``, ``B = R2``, ``w = Rs1``, ``u = 0``, and ``a = (R4 +
    Rref)/(R3 + Rs3 + R4 + Rref)`` with ``A = R3``, ``B = R4``, ``w = Rs3``, ``u = Rref`` (ohms;
    voltage dividers, Ohm's law). It falls with ``A`` and rises with ``B``, so its upper bound
    takes ``A`` low and ``B`` high."""
    term: Array = np.asarray((bottom + u) / (top + w + bottom + u), dtype=float)
    return term


def least_sensitivity(position: int, r_low: Array, t_hi: float, lim: ScreenLimits) -> Array:
    """A lower bound of ``∂ln term/∂ln R`` (dimensionless) for a resistance at ``position``
    (0-based) no lower than ``r_low`` (ohms) while its side's term stays at most ``t_hi``. From
    :func:`side_term`: for ``A`` (R1, R3) ``S = A/(A + w + B + u) = (1 − term)·A/(A + w)``, for
    ``B`` (R2, R4) ``S = B/(B + u) − B/(A + w + B + u) = (1 − term)·B/(B + u)``;
    ``1 − term ≥ 1 − t_hi`` and ``R/(R + s)`` rises with ``R`` and falls with the series
    impedance ``s`` (its largest)."""
    series = {0: lim.rs1, 1: np.zeros(1), 2: lim.rs3, 3: lim.rref}[position]
    s_max = float(np.max(series))
    share: Array = max(1.0 - t_hi, 0.0) * r_low / (r_low + s_max)
    return share


def least_costs(parts: ClassParts, lim: ScreenLimits) -> list[float]:
    """Per position: the least cost (part and placement) of a discrete part that can take it
    next to any dual. A side's ``ln`` term spans at least ``S·ln(hi/lo)`` over the part's range
    (:func:`least_sensitivity`; the other resistance of the side at a point only narrows it),
    and the widths of both sides add up to at most ``2Λ`` (the two balance conditions summed),
    so a class and value wider than ``2Λ`` on its own is never placed."""
    least: list[float] = []
    width = np.log(parts.hi / parts.lo)[:, None]  # (E, 1)
    for position in range(4):
        t_hi = side_window(lim, 1 if position < 2 else 2)[0]
        r_low = parts.values[None, :] * parts.lo[:, None]  # (E, K)
        narrow = width * least_sensitivity(position, r_low, t_hi, lim) <= 2.0 * lim.balance
        cost = np.where(narrow, parts.best_cost[position], np.inf)
        least.append(float(cost.min()) if cost.size else math.inf)
    return least


def c_gain_room(a_lo: Array | float, a_hi: Array | float, lim: ScreenLimits) -> tuple[Array, Array]:
    """``(ln c_min, ln c_max)``: the gain conditions hold only if the partner's ``ln c_lo`` lies
    in between, for a side-2 term in ``[a_lo, a_hi]`` (dimensionless; numbers or arrays of one
    shape). ``Adm = (a(1+ε) + c(1−ε))/(2(1/A + (1−c)(1−ε)))``
    (``analysis.balance.differential_gain_from_terms``) rises with ``c``; solved for ``c``:
    ``Adm(a_lo, c_lo, ε, 1/A) ≥ G_min`` gives ``c_lo ≥ (2·G_min(1/A + 1 − ε) − a_lo(1 +
    ε))/((1 − ε)(1 + 2·G_min))`` and ``Adm(a_hi, c_hi, ε, 0) ≤ G_max`` gives ``c_lo ≤ c_hi ≤
    (2·G_max(1 − ε) − a_hi(1 + ε))/((1 − ε)(1 + 2·G_max))``, for every sign of ``ε``; widened
    by 1e-12 against rounding (the mirror of ``frontier.gain_room``)."""
    a_lo, a_hi = np.asarray(a_lo, dtype=float), np.asarray(a_hi, dtype=float)
    least = np.zeros(a_lo.shape)
    most = np.full(a_hi.shape, np.inf)
    for e in lim.eps:
        low_c = 2.0 * lim.gain_min * (lim.inv_a + 1.0 - e) - a_lo * (1.0 + e)
        high_c = 2.0 * lim.gain_max * (1.0 - e) - a_hi * (1.0 + e)
        least = np.maximum(least, low_c / ((1.0 - e) * (1.0 + 2.0 * lim.gain_min)))
        most = np.minimum(most, high_c / ((1.0 - e) * (1.0 + 2.0 * lim.gain_max)))
    with np.errstate(divide="ignore", invalid="ignore"):
        c_least = np.where(least > 0.0, np.log(least * (1.0 - 1e-12)), -np.inf)
        c_most = np.where(most > 0.0, np.log(most * (1.0 + 1e-12)), -np.inf)
    return c_least, c_most


# --------------------------------------------------------------------------------------------
# Dual placements
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class DualPlacement:
    """One dual network at two positions in one element order."""

    network: NetworkPart
    positions: tuple[int, int]  # the dual's positions (0-based, ascending)
    elements: tuple[int, int]  # element index at each of them
    values: tuple[float, float]  # ohms
    lo: float  # element factor bounds, the package at 0 (networks.element_bounds)
    hi: float
    ends: tuple[float, float]  # the package's shared factor at its two ends
    cost: float  # network, placement, line and stock penalty (optimizer.cost)

    @property
    def free(self) -> tuple[int, int]:
        """The two discrete positions."""
        rest = [p for p in range(4) if p not in self.positions]
        return rest[0], rest[1]


def dual_placements(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, lim: ScreenLimits
) -> list[DualPlacement]:
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    found: list[DualPlacement] = []
    for network in usable_networks(spec, catalog, env, 2):
        lo, hi = element_bounds(network, spec, env)
        ends = package_extremes(network, spec, env)
        cost = parts_cost([network], spec.preferences).total
        rated = element_ratings(network, env, floors, lim)
        for shape in ALL_SHAPES:
            seen: set[tuple[float, ...]] = set()
            for order in ((0, 1), (1, 0)):
                values = (network.values_ohm[order[0]], network.values_ohm[order[1]])
                if values in seen or not (
                    rated[values[0], shape[0]] and rated[values[1], shape[1]]
                ):
                    continue
                seen.add(values)
                found.append(DualPlacement(network, shape, order, values, lo, hi, ends, cost))
    return found


# --------------------------------------------------------------------------------------------
# Candidates of one placement
# --------------------------------------------------------------------------------------------


class PlacementCandidates:
    """Per discrete position: its usable (class, value) pairs, in a form that finds every pair
    whose value lies in a per-class range at once (``count``: usable values of each class
    below each global value index; ``index``: the value indices of each class in order)."""

    def __init__(self, parts: ClassParts) -> None:
        self.parts = parts
        lists = [value_lists(parts.best[position] >= 0) for position in range(4)]
        self.count = [count for count, _ in lists]
        self.index = [index for _, index in lists]

    def _runs(self, position: int, m_lo: Array, m_hi: Array) -> tuple[IntArray, IntArray]:
        """Per window (the shape of ``m_lo``) and class (a last axis): the run ``[begin, end)``
        of the class's own usable values at ``position`` with ``R·lo ≥ m_lo`` and ``R·hi ≤
        m_hi`` (relative slack 1e-9), as positions in its list (``value_lists``)."""
        parts = self.parts
        low = m_lo[..., None] * (1.0 - 1e-9) / parts.lo
        high = m_hi[..., None] * (1.0 + 1e-9) / parts.hi
        first = np.searchsorted(parts.values, low.ravel(), side="left").reshape(low.shape)
        last = np.searchsorted(parts.values, high.ravel(), side="right").reshape(high.shape)
        classes = np.arange(parts.lo.size)
        count = self.count[position]
        return count[classes, first], count[classes, last]

    def within(self, position: int, m_lo: float, m_hi: float) -> tuple[IntArray, IntArray]:
        """(class, value index) of every usable pair at ``position`` with ``R·lo ≥ m_lo`` and
        ``R·hi ≤ m_hi`` (relative slack 1e-9)."""
        if not m_lo <= m_hi:
            empty = np.zeros(0, dtype=np.int64)
            return empty, empty
        begin, end = self._runs(position, np.asarray(m_lo), np.asarray(m_hi))
        n = np.maximum(end - begin, 0)
        total = int(n.sum())
        cls = np.repeat(np.arange(self.parts.lo.size), n)
        offsets = np.arange(total) - np.repeat(np.cumsum(n) - n, n)
        return cls, self.index[position][cls, np.repeat(begin, n) + offsets]

    def any_within(self, position: int, m_lo: Array, m_hi: Array) -> NDArray[np.bool_]:
        """Per window ``(m_lo[i], m_hi[i])``: whether :meth:`within` finds any pair there."""
        begin, end = self._runs(position, m_lo, m_hi)
        found: NDArray[np.bool_] = np.any(end > begin, axis=1)
        return found & (m_lo <= m_hi)


@dataclass
class SortedHalf:
    """A side's half records sorted by their ``ln`` term's low end at vertex 0 (``key``), with
    their keys (class, value, class, value) and cost bounds (the cheapest part of each class and
    value, one line per distinct class and value) in that order."""

    key: Array
    high: Array  # the ``ln`` term's high end at vertex 0
    keys: IntArray
    bound: Array


def sorted_half(half: HalfRecords, parts: ClassParts, lim: ScreenLimits) -> SortedHalf:
    if half.cost.size == 0:
        empty = np.zeros(0)
        return SortedHalf(empty, empty, np.zeros((0, 4), dtype=np.int64), empty)
    # A record wider than 2Λ at vertex 0 balances nothing (the two balance conditions add up
    # to: width of c plus width of a at most 2Λ).
    fits = half.high[:, 0] - half.low[:, 0] <= 2.0 * lim.balance
    low0, high0 = half.low[fits, 0], half.high[fits, 0]
    order = np.argsort(low0, kind="stable")
    rec = np.flatnonzero(fits)[order]
    keys = np.column_stack([half.ca[rec], half.ka[rec], half.cb[rec], half.kb[rec]])
    return SortedHalf(low0[order], high0[order], keys, half.cost[rec] + _lines(keys, parts))


def _lines(keys: IntArray, parts: ClassParts) -> Array:
    """Per key (class, value, class, value): one line charge per distinct class and value."""
    same = (keys[:, 0] == keys[:, 2]) & (keys[:, 1] == keys[:, 3])
    lines: Array = parts.line_charge[keys[:, 0], keys[:, 1]] + np.where(
        same, 0.0, parts.line_charge[keys[:, 2], keys[:, 3]]
    )
    return lines


def divider_keys(duals: list[DualPlacement], lim: ScreenLimits) -> tuple[Array, Array]:
    """Per placement: the range ``[from, to]`` that a divider placement's free-side records
    must have their ``ln`` term's low end in at vertex 0 (and their high end at most ``to``):
    within ``Λ`` of the dual's own side term (``ln term_lo``, ``ln term_hi`` over its elements'
    range, :func:`side_term`) at each of its package's two ends, and inside the room the gain
    conditions leave there (``frontier.gain_room`` for a partner ``a``, :func:`c_gain_room`
    for a partner ``c``). Crossed placements get ``(−inf, inf)``."""
    n = len(duals)
    from_key, to_key = np.full(n, -np.inf), np.full(n, np.inf)
    at = np.array([d.positions in ((0, 1), (2, 3)) for d in duals], dtype=bool)
    if not at.any():
        return from_key, to_key
    group = [d for d, inside in zip(duals, at.tolist(), strict=True) if inside]
    first_side = np.array([d.positions == (0, 1) for d in group])
    values = np.array([d.values for d in group])
    lo, hi = np.array([d.lo for d in group]), np.array([d.hi for d in group])
    w = np.where(first_side, lim.rs1[0], lim.rs3[0])
    u = np.where(first_side, 0.0, lim.rref[0])
    low_key, high_key = np.full(len(group), -np.inf), np.full(len(group), np.inf)
    for end in np.array([d.ends for d in group]).T:
        r_top, r_bottom = values[:, 0] * end, values[:, 1] * end
        term_hi = side_term(r_top * lo, r_bottom * hi, w, u)
        term_lo = side_term(r_top * hi, r_bottom * lo, w, u)
        low_key = np.maximum(low_key, np.log(term_hi) - lim.balance)
        high_key = np.minimum(high_key, np.log(term_lo) + lim.balance)
        a_least, a_most = gain_room(term_lo[:, None], term_hi[:, None], lim)
        c_least, c_most = c_gain_room(term_lo, term_hi, lim)
        low_key = np.maximum(low_key, np.where(first_side, a_least, c_least))
        high_key = np.minimum(high_key, np.where(first_side, a_most, c_most))
    from_key[at], to_key[at] = low_key, high_key
    return from_key, to_key


def divider_slice(
    dual: DualPlacement, keys: tuple[float, float], halves: dict[int, SortedHalf]
) -> tuple[SortedHalf, int, int]:
    """The free side's sorted records and the slice of them whose key lies in ``keys``
    (:func:`divider_keys`)."""
    sh = halves[2 if dual.positions == (0, 1) else 1]  # built for every side a dual leaves free
    first = int(np.searchsorted(sh.key, keys[0] - 1e-12, side="left"))
    last = max(int(np.searchsorted(sh.key, keys[1] + 1e-12, side="right")), first)
    return sh, first, last


def _divider_candidates(
    dual: DualPlacement, keys: tuple[float, float], halves: dict[int, SortedHalf]
) -> tuple[IntArray, Array]:
    """Keys (class, value, class, value) and cost bounds of the discrete half records of the
    side the dual leaves free whose term can balance the dual's side at vertex 0 for both
    package ends (:func:`divider_keys`; views into the side's sorted records)."""
    sh, first, last = divider_slice(dual, keys, halves)
    fits = sh.high[first:last] <= keys[1] + 1e-12
    return sh.keys[first:last][fits], sh.bound[first:last][fits]


def _side_roles(side: int, positions: tuple[int, int]) -> tuple[int, int]:
    """For a crossed placement at ``positions``: the position of ``side`` the dual's element
    holds and the free one."""
    top, bottom = (0, 1) if side == 1 else (2, 3)
    return (top, bottom) if top in positions else (bottom, top)


def _side_impedances(side: int, lim: ScreenLimits) -> tuple[Array, Array]:
    """``(w, u)`` per vertex of :func:`side_term`: ``Rs1`` and 0 on side 1, ``Rs3`` and
    ``Rref`` on side 2."""
    return (lim.rs1, np.zeros_like(lim.rs1)) if side == 1 else (lim.rs3, lim.rref)


def _crossed_window(
    duals: list[DualPlacement], side: int, lim: ScreenLimits
) -> tuple[Array, Array]:
    """Per crossed placement (all with the dual's element of ``side`` at the same position):
    the window ``(m_lo, m_hi)`` of the free resistance of ``side`` next to that element
    (:func:`halves.value_window`, the element over its range and both package ends)."""
    t_hi, t_lo = side_window(lim, side)
    w, u = _side_impedances(side, lim)
    fixed_at, free = _side_roles(side, duals[0].positions)
    value = np.array([d.values[d.positions.index(fixed_at)] for d in duals])
    fixed_low = value * np.array([min(d.ends) * d.lo for d in duals])
    fixed_high = value * np.array([max(d.ends) * d.hi for d in duals])
    return value_window(fixed_low, fixed_high, free > fixed_at, t_hi, t_lo, w, u)


def crossed_open(
    duals: list[DualPlacement], cands: PlacementCandidates, lim: ScreenLimits
) -> NDArray[np.bool_]:
    """Per placement: False for a crossed one with no usable discrete part in the window of
    one of its sides (:func:`_crossed_window`; :func:`_crossed_candidates` would find none),
    True otherwise. Worked out for every placement at once, before the merge."""
    open_ = np.ones(len(duals), dtype=bool)
    for shape in ALL_SHAPES:
        if shape in ((0, 1), (2, 3)):
            continue
        at = [i for i, d in enumerate(duals) if d.positions == shape]
        if not at:
            continue
        group = [duals[i] for i in at]
        for side in (1, 2):
            _, free = _side_roles(side, shape)
            m_lo, m_hi = _crossed_window(group, side, lim)
            open_[at] &= cands.any_within(free, m_lo, m_hi)
    return open_


def _crossed_candidates(
    dual: DualPlacement, cands: PlacementCandidates, lim: ScreenLimits
) -> IntArray:
    """Keys of discrete pairs for a dual with one element on each side: per side, the classes
    and values :func:`halves.value_window` allows next to the dual's element, paired across
    sides."""
    parts = cands.parts
    picks: list[tuple[IntArray, IntArray, Array, Array]] = []
    for side in (1, 2):
        w, u = _side_impedances(side, lim)
        fixed_at, free = _side_roles(side, dual.positions)
        value = dual.values[dual.positions.index(fixed_at)]
        m_lo, m_hi = _crossed_window([dual], side, lim)
        cls, val = cands.within(free, float(m_lo[0]), float(m_hi[0]))
        if cls.size == 0:
            return np.zeros((0, 4), dtype=np.int64)
        # The side's term at vertex 0 with the package at its first end: a point of the range.
        fixed = value * dual.ends[0] * np.array([dual.lo, dual.hi])
        r = parts.values[val]
        free_lo, free_hi = r * parts.lo[cls], r * parts.hi[cls]
        if free > fixed_at:  # the free part is R2 or R4
            high = side_term(fixed[0], free_hi, w[0], u[0])
            low = side_term(fixed[1], free_lo, w[0], u[0])
        else:
            high = side_term(free_lo, fixed[1], w[0], u[0])
            low = side_term(free_hi, fixed[0], w[0], u[0])
        picks.append((cls, val, np.log(low), np.log(high)))
    (c1, k1, lo1, hi1), (c2, k2, lo2, hi2) = picks
    # Balance at that point: ln c_hi − ln a_lo ≤ Λ and ln a_hi − ln c_lo ≤ Λ.
    lam = lim.balance * (1.0 + 1e-9) + 1e-12
    i1, i2 = np.nonzero((hi1[:, None] - lo2[None, :] <= lam) & (hi2[None, :] - lo1[:, None] <= lam))
    # The gain conditions at the same point (widened by 1e-12 against the logs' rounding).
    c_hi, c_lo, a_hi, a_lo = np.exp(hi1[i1]), np.exp(lo1[i1]), np.exp(hi2[i2]), np.exp(lo2[i2])
    ok = np.ones(i1.size, dtype=bool)
    for e in lim.eps:
        ok &= adm_from_terms(a_hi, c_hi, e, 0.0) <= lim.gain_max * (1.0 + 1e-12)
        ok &= adm_from_terms(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min * (1.0 - 1e-12)
    i1, i2 = i1[ok], i2[ok]
    return np.column_stack([c1[i1], k1[i1], c2[i2], k2[i2]])


def _screen(
    dual: DualPlacement, keys: IntArray, parts: ClassParts, lim: ScreenLimits
) -> NDArray[np.bool_]:
    """The mask of the keys (class, value at the first free position, then the second) that
    pass :func:`screen.corner_screen` with the dual's package at either end."""
    i, j = dual.free
    p, q = dual.positions
    ok = np.zeros(keys.shape[0], dtype=bool)
    for start in range(0, keys.shape[0], JOIN_CHUNK):
        part = keys[start : start + JOIN_CHUNK]
        n = part.shape[0]
        nominal = np.empty((n, 4))
        low = np.empty((n, 4))
        high = np.empty((n, 4))
        for position, cls, val in ((i, part[:, 0], part[:, 1]), (j, part[:, 2], part[:, 3])):
            nominal[:, position] = parts.values[val]
            low[:, position] = parts.lo[cls]
            high[:, position] = parts.hi[cls]
        low[:, [p, q]] = dual.lo
        high[:, [p, q]] = dual.hi
        alive = np.arange(n)
        for end in dual.ends:
            scaled = nominal[alive]
            scaled[:, p] = dual.values[0] * end
            scaled[:, q] = dual.values[1] * end
            alive = alive[corner_screen(scaled, low[alive], high[alive], lim)]
            if alive.size == 0:
                break
        ok[start + alive] = True
    return ok


def placement_candidates(
    dual: DualPlacement,
    window: tuple[float, float],
    parts: ClassParts,
    lim: ScreenLimits,
    cands: PlacementCandidates,
    halves: dict[int, SortedHalf],
) -> tuple[IntArray, Array]:
    """The candidate keys of one placement (not yet screened, in no particular order) with the
    cost bound of each less the network's cost: the cheapest part of each class and value, one
    line per distinct class and value (``ClassParts.line_charge``). ``window``: the placement's
    :func:`divider_keys`."""
    if dual.positions in ((0, 1), (2, 3)):
        return _divider_candidates(dual, window, halves)
    keys = _crossed_candidates(dual, cands, lim)
    i, j = dual.free
    bound = (
        parts.best_cost[i][keys[:, 0], keys[:, 1]]
        + parts.best_cost[j][keys[:, 2], keys[:, 3]]
        + _lines(keys, parts)
    )
    return keys, bound


class PlacementBlock:
    """The candidates of one placement, put in bound order and screened (:func:`_screen`) a
    chunk at a time as the merge reaches them (each chunk holds the smallest bounds left, ties
    by key; chunks double from 64, so a block of N candidates is partitioned about log2(N/64)
    times at most): most placements are left after their first few entries. ``bound(at)``
    includes the network."""

    def __init__(
        self, dual: DualPlacement, keys: IntArray, lbs: Array, parts: ClassParts, lim: ScreenLimits
    ) -> None:
        self.dual, self.keys, self.lbs, self.parts, self.lim = dual, keys, lbs, parts, lim
        self.rest = np.arange(keys.shape[0])  # entries not yet ordered
        self.order = np.zeros(0, dtype=np.int64)  # ordered entries (a prefix)
        self.ok = np.zeros(0, dtype=bool)

    def least(self) -> float:
        """A lower bound of every entry's cost (inf when there is none)."""
        return self.dual.cost + float(self.lbs.min()) if self.lbs.size else math.inf

    def bound(self, at: int) -> float:
        return self.dual.cost + float(self.lbs[self.order[at]])

    def key(self, at: int) -> list[int]:
        return [int(v) for v in self.keys[self.order[at]]]

    def _extend(self) -> None:
        step = max(64, self.order.size)
        rest = self.rest
        if rest.size > step:
            split = np.argpartition(self.lbs[rest], step)
            take, self.rest = rest[split[:step]], rest[split[step:]]
        else:
            take, self.rest = rest, rest[:0]
        k = self.keys[take]
        take = take[np.lexsort((k[:, 3], k[:, 2], k[:, 1], k[:, 0], self.lbs[take]))]
        ok = _screen(self.dual, self.keys[take], self.parts, self.lim)
        self.order = np.concatenate([self.order, take])
        self.ok = np.concatenate([self.ok, ok])

    def usable(self, at: int) -> int | None:
        """The first entry from ``at`` on that passes the screen, or None."""
        while True:
            while at >= self.order.size:
                if self.rest.size == 0:
                    return None
                self._extend()
            ahead = np.flatnonzero(self.ok[at:])
            if ahead.size:
                return at + int(ahead[0])
            at = self.order.size
