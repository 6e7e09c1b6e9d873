"""One side's half records grouped by class pair, as the discrete search joins them
(``solve.frontier``, step 3 of its module docstring): written out and pruned at once
(:class:`EagerGroups`) or, when the records are many, by their windows' bounds and written out
the first time the search reaches a group (:class:`LazyGroups`); and what the enumerations of
one pick share (:class:`Shared`).
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray

from ..catalog import Catalog
from ..spec import Spec
from .environment import LinearEnvironment
from .halves import (
    ClassParts,
    HalfRecords,
    HalfWindows,
    discrete_parts,
    group_bounds,
    group_spans,
    half_windows,
    materialise,
)
from .screen import ScreenLimits, at_vertex

__all__ = [
    "LAZY_CELLS",
    "EagerGroups",
    "LazyGroups",
    "Shared",
    "fits_exactly",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

# --------------------------------------------------------------------------------------------
# The discrete search
# --------------------------------------------------------------------------------------------


def _group_table(half: HalfRecords) -> tuple[IntArray, IntArray, Array, Array, IntArray, IntArray]:
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


class Shared:
    """What the enumerations of one pick build alike (the usable discrete parts and the windows
    of each side), built on first use and kept for the others: the four-discrete search and the
    one-dual-two-discrete search (``optimizer.solve.mixed``) of one spec. The half records
    themselves are written out by each search as it needs them (they are large on loose
    specs, and the two searches need different columns of them)."""

    def __init__(self) -> None:
        self._parts: list[ClassParts | None] = []
        self._windows: dict[int, HalfWindows] = {}

    def parts(
        self, catalog: Catalog, spec: Spec, env: LinearEnvironment, lim: ScreenLimits
    ) -> ClassParts | None:
        if not self._parts:
            self._parts.append(discrete_parts(catalog, spec, env, lim))
        return self._parts[0]

    def windows(self, parts: ClassParts, lim: ScreenLimits, side: int) -> HalfWindows:
        if side not in self._windows:
            self._windows[side] = half_windows(parts, lim, side)
        return self._windows[side]

    def half(
        self, parts: ClassParts, lim: ScreenLimits, side: int, vertex: int | None = None
    ) -> HalfRecords:
        """Every half record of ``side``, its terms at every vertex, or at ``vertex`` only
        (:func:`at_vertex`: one column, and only that vertex's conditions drop records)."""
        win = self.windows(parts, lim, side)
        at = lim if vertex is None else at_vertex(lim, vertex)
        return materialise(parts, at, side, win, np.arange(win.group.size))


#: Records of both sides times environment vertices (the size of their term bounds) above which
#: the four-discrete search writes out only the groups it reaches (:class:`LazyGroups`)
#: instead of all of them, pruned (:class:`EagerGroups`). Measured on the canonical battery
#: and a sweep of floors: below it, pruning everything first is faster.
LAZY_CELLS = 2_000_000


class EagerGroups:
    """Every record of one side written out and pruned; a group's records are a slice."""

    def __init__(self, half: HalfRecords) -> None:
        self.half = half
        self.order, self.span, self.cost, self.spread, self.classes, _ = _group_table(half)

    def least_span(self, vertex_groups: list[IntArray]) -> Array:
        """Per group and vertex group: the least width of a record's union of intervals there
        (:func:`group_spans`)."""
        spans = group_spans(self.half, vertex_groups)[self.order]
        return np.minimum.reduceat(spans, self.span[:, 0], axis=0)

    def records(self, g: int) -> tuple[HalfRecords, IntArray]:
        return self.half, self.order[self.span[g, 0] : self.span[g, 1]]


class LazyGroups:
    """One side's groups by their windows: bounds from :func:`group_bounds`, and a group's
    records written out the first time the search reaches it."""

    def __init__(
        self,
        parts: ClassParts,
        lim: ScreenLimits,
        side: int,
        win: HalfWindows,
        span_groups: list[IntArray],
    ) -> None:
        self.parts, self.lim, self.side, self.win = parts, lim, side, win
        self.cost, self.spread = group_bounds(parts, lim, side, win)
        heads = win.starts[:-1]
        self.classes = np.column_stack([win.ca[heads], win.cb[heads]])
        self.span_groups = span_groups  # the vertices that share the partner's term
        self._made: dict[int, HalfRecords] = {}
        self._exact: dict[int, tuple[Array, Array]] = {}

    def exact(self, g: int) -> tuple[Array, Array]:
        """The group's least span over each of ``span_groups`` and least spread per vertex,
        from its records (what :class:`EagerGroups` holds, before pruning)."""
        if g not in self._exact:
            half, _ = self.records(g)
            self._exact[g] = (
                group_spans(half, self.span_groups).min(axis=0),
                (half.high - half.low).min(axis=0),
            )
        return self._exact[g]

    def least_span(self, vertex_groups: list[IntArray]) -> Array:
        """A lower bound of :meth:`EagerGroups.least_span`: a record's union over a vertex
        group is at least as wide as its interval at each vertex of it."""
        return np.column_stack([self.spread[:, g].max(axis=1) for g in vertex_groups])

    def records(self, g: int) -> tuple[HalfRecords, IntArray]:
        half = self._made.get(g)
        if half is None:
            window = np.arange(self.win.starts[g], self.win.starts[g + 1])
            half = materialise(self.parts, self.lim, self.side, self.win, window)
            self._made[g] = half
        return half, np.arange(half.cost.size)


def fits_exactly(one: LazyGroups, two: LazyGroups, g1: int, g2: int, balance: float) -> bool:
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
