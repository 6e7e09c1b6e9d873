"""Exact cost-ordered search for one dual network and two discrete parts (``pair_plus_discrete``).

Why this exists
---------------
The dual sits at one of the six position pairs, in either element order: a few hundred
*placements* in the built-in catalog. Once a placement is fixed, its two positions have known
values and factor ranges, and only the two discrete positions are free, so the conditions of
``optimizer.solve.frontier`` (balance ``|ln c − ln a| ≤ Λ`` and the gain limits at every
environment vertex) decide each pair of discrete (class, value) choices exactly:

* **Divider placements** (the dual at R1, R2 or at R3, R4): the discrete parts form the other
  side's half, whose records (``halfgroups.Shared.half``, their terms at vertex 0 only) are
  built once; the dual's own side
  term is one interval per vertex, so the partner's ``ln`` term at vertex 0 must lie within
  ``[high − Λ, low + Λ]`` of it: a slice of the records sorted by that term.
* **Crossed placements** (one dual element on each side): each side is one dual element and one
  discrete part. The side term ``(B + u)/(A + w + B + u)`` (``A``: R1 or R3 with its source
  impedance ``w``; ``B``: R2 or R4 with ``u`` = 0 or Rref) rises with ``B`` and falls with
  ``A``, so the window of :func:`screen.side_window` bounds each class's value from both
  sides (:func:`halves.value_window`); the two sides' candidates are paired and screened.

Both candidate lists keep only pairs whose side terms can balance at vertex 0 (a side's width
plus its partner's is at most ``2Λ``, the two balance conditions summed). Every candidate then
passes :func:`screen.corner_screen` with the dual's package factor at each of its two ends
(points of the exact check's range, as the network search does), which is exact for
independent parts and optimistic for the network, so nothing the exact check could accept is
dropped; a placement's candidates are ordered and screened a chunk at a time, as the merge
reaches them. A discrete class and value too wide to balance next to any dual
(:func:`least_sensitivity`) does not lower a placement's bound.

Before the merge, every placement that can have no candidate is dropped at once (worked out for
all placements together): a crossed placement with no usable part inside one side's window
(:func:`_crossed_open`), a divider placement whose key range holds no record
(:func:`_divider_keys`). On a board of four examples 15,552 of the 15,800 placements the merge
opened had none.

Placements are taken in the order of a lower bound of their cost (the network's cost with its
placement and line, plus the cheapest usable discrete part of each free position and one
line, or the cheapest record of the free side); their screened combinations enter a heap keyed
by a lower bound of their cost (cheapest part of each class and value, one line per distinct
class and value), which is replaced by the exact cost (``optimizer.cost``) before a design is
emitted. Designs come out in nondecreasing exact cost; the caller runs the full exact check on
each.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import cast

import numpy as np
from numpy.typing import NDArray

from ..catalog import Catalog
from ..cost import parts_cost
from ..design import Design, Placement
from ..parts import DiscretePart, NetworkPart
from ..spec import Spec
from .environment import LinearEnvironment
from .frontier import (
    HEAP_BLOCK,
    HEAP_BOUND,
    HEAP_EXACT,
    JOIN_CHUNK,
    cached_part,
    exact_key,
    gain_room,
    limits_and_parts,
)
from .halfgroups import Shared
from .halves import ClassParts, HalfRecords, value_lists, value_window
from .networks import element_bounds, element_ratings, package_extremes, usable_networks
from .options import ALL_SHAPES
from .screen import ScreenLimits, adm_from_terms, corner_screen, side_window, stress_floor
from .yieldbox import DesignScreen, box_factor

__all__ = ["c_gain_room", "least_sensitivity", "mixed_frontier", "side_term"]

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


def _least_costs(parts: ClassParts, lim: ScreenLimits) -> list[float]:
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
class _Dual:
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


def _duals(spec: Spec, catalog: Catalog, env: LinearEnvironment, lim: ScreenLimits) -> list[_Dual]:
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    found: list[_Dual] = []
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
                found.append(_Dual(network, shape, order, values, lo, hi, ends, cost))
    return found


# --------------------------------------------------------------------------------------------
# Candidates of one placement
# --------------------------------------------------------------------------------------------


class _Candidates:
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
class _SortedHalf:
    """A side's half records sorted by their ``ln`` term's low end at vertex 0 (``key``), with
    their keys (class, value, class, value) and cost bounds (the cheapest part of each class and
    value, one line per distinct class and value) in that order."""

    key: Array
    high: Array  # the ``ln`` term's high end at vertex 0
    keys: IntArray
    bound: Array


def _sorted_half(half: HalfRecords, parts: ClassParts, lim: ScreenLimits) -> _SortedHalf:
    if half.cost.size == 0:
        empty = np.zeros(0)
        return _SortedHalf(empty, empty, np.zeros((0, 4), dtype=np.int64), empty)
    # A record wider than 2Λ at vertex 0 balances nothing (the two balance conditions add up
    # to: width of c plus width of a at most 2Λ).
    fits = half.high[:, 0] - half.low[:, 0] <= 2.0 * lim.balance
    low0, high0 = half.low[fits, 0], half.high[fits, 0]
    order = np.argsort(low0, kind="stable")
    rec = np.flatnonzero(fits)[order]
    keys = np.column_stack([half.ca[rec], half.ka[rec], half.cb[rec], half.kb[rec]])
    return _SortedHalf(low0[order], high0[order], keys, half.cost[rec] + _lines(keys, parts))


def _lines(keys: IntArray, parts: ClassParts) -> Array:
    """Per key (class, value, class, value): one line charge per distinct class and value."""
    same = (keys[:, 0] == keys[:, 2]) & (keys[:, 1] == keys[:, 3])
    lines: Array = parts.line_charge[keys[:, 0], keys[:, 1]] + np.where(
        same, 0.0, parts.line_charge[keys[:, 2], keys[:, 3]]
    )
    return lines


def _divider_keys(duals: list[_Dual], lim: ScreenLimits) -> tuple[Array, Array]:
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


def _divider_slice(
    dual: _Dual, keys: tuple[float, float], halves: dict[int, _SortedHalf]
) -> tuple[_SortedHalf, int, int]:
    """The free side's sorted records and the slice of them whose key lies in ``keys``
    (:func:`_divider_keys`)."""
    sh = halves[2 if dual.positions == (0, 1) else 1]  # built for every side a dual leaves free
    first = int(np.searchsorted(sh.key, keys[0] - 1e-12, side="left"))
    last = max(int(np.searchsorted(sh.key, keys[1] + 1e-12, side="right")), first)
    return sh, first, last


def _divider_candidates(
    dual: _Dual, keys: tuple[float, float], halves: dict[int, _SortedHalf]
) -> tuple[IntArray, Array]:
    """Keys (class, value, class, value) and cost bounds of the discrete half records of the
    side the dual leaves free whose term can balance the dual's side at vertex 0 for both
    package ends (:func:`_divider_keys`; views into the side's sorted records)."""
    sh, first, last = _divider_slice(dual, keys, halves)
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


def _crossed_window(duals: list[_Dual], side: int, lim: ScreenLimits) -> tuple[Array, Array]:
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


def _crossed_open(duals: list[_Dual], cands: _Candidates, lim: ScreenLimits) -> NDArray[np.bool_]:
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


def _crossed_candidates(dual: _Dual, cands: _Candidates, lim: ScreenLimits) -> IntArray:
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


def _screen(dual: _Dual, keys: IntArray, parts: ClassParts, lim: ScreenLimits) -> NDArray[np.bool_]:
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


def _candidates(
    dual: _Dual,
    window: tuple[float, float],
    parts: ClassParts,
    lim: ScreenLimits,
    cands: _Candidates,
    halves: dict[int, _SortedHalf],
) -> tuple[IntArray, Array]:
    """The candidate keys of one placement (not yet screened, in no particular order) with the
    cost bound of each less the network's cost: the cheapest part of each class and value, one
    line per distinct class and value (``ClassParts.line_charge``). ``window``: the placement's
    :func:`_divider_keys`."""
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


class _Block:
    """The candidates of one placement, put in bound order and screened (:func:`_screen`) a
    chunk at a time as the merge reaches them (each chunk holds the smallest bounds left, ties
    by key; chunks double from 64, so a block of N candidates is partitioned about log2(N/64)
    times at most): most placements are left after their first few entries. ``bound(at)``
    includes the network."""

    def __init__(
        self, dual: _Dual, keys: IntArray, lbs: Array, parts: ClassParts, lim: ScreenLimits
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


# --------------------------------------------------------------------------------------------
# The search
# --------------------------------------------------------------------------------------------


def mixed_frontier(
    spec: Spec,
    catalog: Catalog,
    env: LinearEnvironment,
    should_stop: Callable[[], bool] = lambda: False,
    shared: Shared | None = None,
    ceiling: Callable[[], float] = lambda: math.inf,
    screen: DesignScreen | None = None,
) -> Iterator[Design]:
    """One-dual-two-discrete designs that meet the spec's worst-case CMRR and gain accuracy at
    the screen's points (module docstring), in nondecreasing exact cost (``optimizer.cost``);
    the other checks are left to the caller's exact check. Exhaustive: when it ends, no further
    design passes the screen, unless ``should_stop`` (asked between steps) ended it early.
    ``shared``: the parts and half records built by another enumeration of the same spec.
    ``ceiling`` (asked between steps): designs dearer than it are not wanted, so the stream
    ends once every design left costs more. ``screen`` (the yield basis): each electrical
    design (the dual and the two free classes and values) is left out, with every part variant
    of it, when it fails the linearised yield conditions (``optimizer.solve.yieldbox``)."""
    start = limits_and_parts(spec, catalog, env, shared)
    if start is None:
        return
    lim, parts, shared = start
    duals = _duals(spec, catalog, env, lim)
    least = _least_costs(parts, lim)
    one_line = float(np.min(parts.line_charge))
    halves: dict[int, _SortedHalf] = {}
    for side, positions in ((2, (0, 1)), (1, (2, 3))):
        if any(d.positions == positions for d in duals):
            # The candidates are chosen at vertex 0 (the screen decides the rest): the
            # records' terms there only.
            halves[side] = _sorted_half(shared.half(parts, lim, side, vertex=0), parts, lim)
    side_least = {side: float(h.bound.min()) if h.bound.size else math.inf
                  for side, h in halves.items()}  # fmt: skip

    def coarse(d: _Dual) -> float:
        if d.positions == (0, 1):
            return d.cost + side_least[2]
        if d.positions == (2, 3):
            return d.cost + side_least[1]
        return d.cost + least[d.free[0]] + least[d.free[1]] + one_line

    bounds = np.array([coarse(d) for d in duals])
    cands = _Candidates(parts)
    from_key, to_key = _divider_keys(duals, lim)
    usable = np.isfinite(bounds) & _crossed_open(duals, cands, lim)
    for k in np.flatnonzero(usable).tolist():  # a divider placement with no record in range
        if duals[k].positions in ((0, 1), (2, 3)):
            _, first, last = _divider_slice(duals[k], (from_key[k], to_key[k]), halves)
            usable[k] = last > first
    if not usable.any():
        return
    keep = np.flatnonzero(usable)
    by_bound = keep[np.argsort(bounds[keep], kind="stable")]
    windows = [(float(from_key[k]), float(to_key[k])) for k in by_bound.tolist()]
    yield from _emit(spec, catalog, parts, lim, cands, [duals[k] for k in by_bound], windows,
                     bounds[by_bound], halves, should_stop, ceiling, screen)  # fmt: skip


def _emit(
    spec: Spec,
    catalog: Catalog,
    parts: ClassParts,
    lim: ScreenLimits,
    cands: _Candidates,
    duals: list[_Dual],
    windows: list[tuple[float, float]],
    bounds: Array,
    halves: dict[int, _SortedHalf],
    should_stop: Callable[[], bool],
    ceiling: Callable[[], float],
    screen: DesignScreen | None = None,
) -> Iterator[Design]:
    """Merge the placements (taken in order of their bound) into one stream of designs in exact
    cost order (the scheme of ``frontier._emit``: bound entries, replaced by exact costs, with
    the other parts of the same class and value as successors); ``screen``: see
    :func:`mixed_frontier`."""
    part_cache: dict[int, DiscretePart] = {}
    kappa = box_factor(spec)

    def electrical_passes(dual: _Dual, free: tuple[tuple[int, int], tuple[int, int]]) -> bool:
        """The yield screen of one electrical design: the dual's elements as the screen takes
        them, each free part at its class's mean and spread, read back from the part box
        ``[μ·e^(−κσ), μ·e^(κσ)]``: ``μ = √(lo·hi)``, ``σ = ln(hi/lo)/(2κ)``."""
        if screen is None or kappa is None or kappa <= 0.0:
            return True
        r = np.zeros(4)
        sigma = np.zeros(4)
        for position, element in zip(dual.positions, dual.elements, strict=True):
            r[position], sigma[position] = screen.position(dual.network, element)
        for position, (cls, val) in zip(dual.free, free, strict=True):
            lo, hi = float(parts.lo[cls]), float(parts.hi[cls])
            r[position] = float(parts.values[val]) * math.sqrt(lo * hi)
            sigma[position] = math.log(hi / lo) / (2.0 * kappa)
        return screen.passes_values(r, sigma)

    heap: list[tuple[float, int, int, object]] = []
    tick = itertools.count()
    seen: set[tuple[object, ...]] = set()
    blocks: list[_Block] = []
    next_dual = 0
    while not should_stop():
        top = heap[0][0] if heap else math.inf
        top_exact = bool(heap) and heap[0][1] == HEAP_EXACT
        if min(top, bounds[next_dual] if next_dual < len(duals) else math.inf) > ceiling():
            return  # every design left is dearer than the caller wants
        if next_dual < len(duals) and (
            bounds[next_dual] < top or (bounds[next_dual] == top and not top_exact)
        ):
            keys, lbs = _candidates(duals[next_dual], windows[next_dual], parts, lim, cands, halves)
            block = _Block(duals[next_dual], keys, lbs, parts, lim)
            blocks.append(block)
            if keys.shape[0]:  # ordered and screened when the merge reaches it
                heapq.heappush(heap, (block.least(), HEAP_BLOCK, next(tick), (next_dual, -1)))
            next_dual += 1
            continue
        if not heap:
            return
        key, kind, _, payload = heapq.heappop(heap)
        if kind == HEAP_BLOCK:
            d, at = cast(tuple[int, int], payload)
            block = blocks[d]
            if at < 0:  # a fresh block: its first usable entry, at its own bound
                first = block.usable(0)
                if first is not None:
                    heapq.heappush(heap, (block.bound(first), HEAP_BLOCK, next(tick), (d, first)))
                continue
            after = block.usable(at + 1)
            if after is not None:
                heapq.heappush(heap, (block.bound(after), HEAP_BLOCK, next(tick), (d, after)))
            k = block.key(at)
            electrical = ((k[0], k[1]), (k[2], k[3]))
            if electrical_passes(duals[d], electrical):
                heapq.heappush(heap, (key, HEAP_BOUND, next(tick), (d, electrical, (0, 0))))
            continue
        d, electrical, choice = cast(
            tuple[int, tuple[tuple[int, int], tuple[int, int]], tuple[int, int]], payload
        )
        dual = duals[d]
        lists = [parts.variants(dual.free[n], electrical[n]) for n in range(2)]
        rows = (lists[0][choice[0]][1], lists[1][choice[1]][1])
        if kind == HEAP_EXACT:
            yield _design(dual, rows, catalog, part_cache)
            continue
        picked = [cached_part(catalog, row, part_cache) for row in rows]
        cost = parts_cost([dual.network, *picked], spec.preferences).total
        heapq.heappush(
            heap, (exact_key(cost, key), HEAP_EXACT, next(tick), (d, electrical, choice))
        )
        lines = parts.lines_charge(electrical)
        for n in range(2):
            if choice[n] + 1 < len(lists[n]):
                nxt = (choice[0] + (n == 0), choice[1] + (n == 1))
                if (d, electrical, nxt) in seen:
                    continue
                seen.add((d, electrical, nxt))
                bound_next = dual.cost + lists[0][nxt[0]][0] + lists[1][nxt[1]][0] + lines
                heapq.heappush(heap, (bound_next, HEAP_BOUND, next(tick), (d, electrical, nxt)))


def _design(
    dual: _Dual, rows: tuple[int, int], catalog: Catalog, cache: dict[int, DiscretePart]
) -> Design:
    placed: dict[int, Placement] = {}
    for position, element in zip(dual.positions, dual.elements, strict=True):
        placed[position] = Placement(f"R{position + 1}", dual.network, element, 0)
    for position, row in zip(dual.free, rows, strict=True):
        placed[position] = Placement(f"R{position + 1}", cached_part(catalog, row, cache))
    return Design((placed[0], placed[1], placed[2], placed[3]))
