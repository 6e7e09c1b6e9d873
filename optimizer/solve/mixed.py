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
(``placements.least_sensitivity``) does not lower a placement's bound.

Before the merge, every placement that can have no candidate is dropped at once (worked out for
all placements together): a crossed placement with no usable part inside one side's window
(``placements.crossed_open``), a divider placement whose key range holds no record
(``placements.divider_keys``). On a board of four examples 15,552 of the 15,800 placements the merge
opened had none.

Placements are taken in the order of a lower bound of their cost (the network's cost with its
placement and line, plus the cheapest usable discrete part of each free position and one
line, or the cheapest record of the free side); their screened combinations enter a heap keyed
by a lower bound of their cost (cheapest part of each class and value, one line per distinct
class and value), which is replaced by the exact cost (``optimizer.cost``) before a design is
emitted. Designs come out in nondecreasing exact cost; the caller runs the full exact check on
each.

The placements, their candidates and the formulas they rest on are in ``solve.placements``; this
module holds the merge.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections.abc import Callable, Iterator
from typing import cast

import numpy as np
from numpy.typing import NDArray

from ..catalog import Catalog
from ..cost import parts_cost
from ..design import Design, Placement
from ..parts import DiscretePart
from ..spec import Spec
from .environment import LinearEnvironment
from .frontier import (
    HEAP_BLOCK,
    HEAP_BOUND,
    HEAP_EXACT,
    cached_part,
    exact_key,
    limits_and_parts,
)
from .halfgroups import Shared
from .halves import ClassParts
from .placements import (
    DualPlacement,
    PlacementBlock,
    PlacementCandidates,
    SortedHalf,
    crossed_open,
    divider_keys,
    divider_slice,
    dual_placements,
    least_costs,
    placement_candidates,
    sorted_half,
)
from .screen import ScreenLimits
from .yieldbox import DesignScreen, box_factor

__all__ = [
    "mixed_frontier",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

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
    duals = dual_placements(spec, catalog, env, lim)
    least = least_costs(parts, lim)
    one_line = float(np.min(parts.line_charge))
    halves: dict[int, SortedHalf] = {}
    for side, positions in ((2, (0, 1)), (1, (2, 3))):
        if any(d.positions == positions for d in duals):
            # The candidates are chosen at vertex 0 (the screen decides the rest): the
            # records' terms there only.
            halves[side] = sorted_half(shared.half(parts, lim, side, vertex=0), parts, lim)
    side_least = {side: float(h.bound.min()) if h.bound.size else math.inf
                  for side, h in halves.items()}  # fmt: skip

    def coarse(d: DualPlacement) -> float:
        if d.positions == (0, 1):
            return d.cost + side_least[2]
        if d.positions == (2, 3):
            return d.cost + side_least[1]
        return d.cost + least[d.free[0]] + least[d.free[1]] + one_line

    bounds = np.array([coarse(d) for d in duals])
    cands = PlacementCandidates(parts)
    from_key, to_key = divider_keys(duals, lim)
    usable = np.isfinite(bounds) & crossed_open(duals, cands, lim)
    for k in np.flatnonzero(usable).tolist():  # a divider placement with no record in range
        if duals[k].positions in ((0, 1), (2, 3)):
            _, first, last = divider_slice(duals[k], (from_key[k], to_key[k]), halves)
            usable[k] = last > first
    if not usable.any():
        return
    keep = np.flatnonzero(usable)
    by_bound = keep[np.argsort(bounds[keep], kind="stable")]
    windows = [(float(from_key[k]), float(to_key[k])) for k in by_bound.tolist()]
    # The placements, in order of their bound, merged into one stream in exact cost order.
    merge = _Merge(spec, catalog, parts, lim, cands, [duals[k] for k in by_bound], windows,
                   halves, screen)  # fmt: skip
    yield from merge.designs(bounds[by_bound], should_stop, ceiling)


#: A bound or exact entry's payload: the placement's index, the free positions' (class, value)
#: pairs, and which part of each (``ClassParts.variants``) they take.
_Entry = tuple[int, tuple[tuple[int, int], tuple[int, int]], tuple[int, int]]


class _Merge:
    """The merge of the placements (taken in order of their bound) into one stream of designs
    in exact cost order (the scheme of ``frontier._Merge``: bound entries, replaced by exact
    costs, with the other parts of the same class and value as successors). Its state: entries
    ``(key, kind, tick,
    payload)`` of the kinds ``HEAP_*`` (an exact design, a bound of one design, a placement's
    block of candidates), the placements' blocks opened so far, the parts looked up and the
    successors already pushed."""

    def __init__(
        self,
        spec: Spec,
        catalog: Catalog,
        parts: ClassParts,
        lim: ScreenLimits,
        cands: PlacementCandidates,
        duals: list[DualPlacement],
        windows: list[tuple[float, float]],
        halves: dict[int, SortedHalf],
        screen: DesignScreen | None,
    ) -> None:
        self.spec, self.catalog, self.parts, self.lim = spec, catalog, parts, lim
        self.cands, self.duals, self.windows, self.halves = cands, duals, windows, halves
        self.screen = screen
        self.kappa = box_factor(spec)
        self.part_cache: dict[int, DiscretePart] = {}
        self.heap: list[tuple[float, int, int, object]] = []
        self.tick = itertools.count()
        self.seen: set[tuple[object, ...]] = set()
        self.blocks: list[PlacementBlock] = []

    def push(self, key: float, kind: int, payload: object) -> None:
        heapq.heappush(self.heap, (key, kind, next(self.tick), payload))

    def designs(
        self, bounds: Array, should_stop: Callable[[], bool], ceiling: Callable[[], float]
    ) -> Iterator[Design]:
        """The designs in exact cost order, none dearer than ``ceiling()``: the next placement
        opens whenever its bound is below the heap's least key (at a tie, before anything but
        an exact design)."""
        heap, duals = self.heap, self.duals
        next_dual = 0
        while not should_stop():
            top = heap[0][0] if heap else math.inf
            top_exact = bool(heap) and heap[0][1] == HEAP_EXACT
            if min(top, bounds[next_dual] if next_dual < len(duals) else math.inf) > ceiling():
                return  # every design left is dearer than the caller wants
            if next_dual < len(duals) and (
                bounds[next_dual] < top or (bounds[next_dual] == top and not top_exact)
            ):
                self.open(next_dual)
                next_dual += 1
                continue
            if not heap:
                return
            key, kind, _, payload = heapq.heappop(heap)
            if kind == HEAP_BLOCK:
                self.take_block(key, cast(tuple[int, int], payload))
                continue
            d, electrical, choice = cast(_Entry, payload)
            dual = duals[d]
            lists = [self.parts.variants(dual.free[n], electrical[n]) for n in range(2)]
            rows = (lists[0][choice[0]][1], lists[1][choice[1]][1])
            if kind == HEAP_EXACT:
                yield _design(dual, rows, self.catalog, self.part_cache)
                continue
            self.take_bound(key, (d, electrical, choice), lists, rows)

    def open(self, d: int) -> None:
        """A placement's candidates become a block, ordered and screened when the merge
        reaches it."""
        keys, lbs = placement_candidates(
            self.duals[d], self.windows[d], self.parts, self.lim, self.cands, self.halves
        )
        block = PlacementBlock(self.duals[d], keys, lbs, self.parts, self.lim)
        self.blocks.append(block)
        if keys.shape[0]:
            self.push(block.least(), HEAP_BLOCK, (d, -1))

    def take_block(self, key: float, payload: tuple[int, int]) -> None:
        """A block's entry reached the top: a fresh block puts its first usable entry in at its
        own bound; an entry puts the block's next one back and enters as a bound entry if its
        electrical design passes the yield screen."""
        d, at = payload
        block = self.blocks[d]
        if at < 0:  # a fresh block: its first usable entry, at its own bound
            first = block.usable(0)
            if first is not None:
                self.push(block.bound(first), HEAP_BLOCK, (d, first))
            return
        after = block.usable(at + 1)
        if after is not None:
            self.push(block.bound(after), HEAP_BLOCK, (d, after))
        k = block.key(at)
        electrical = ((k[0], k[1]), (k[2], k[3]))
        if self.electrical_passes(self.duals[d], electrical):
            self.push(key, HEAP_BOUND, (d, electrical, (0, 0)))

    def take_bound(
        self,
        key: float,
        entry: _Entry,
        lists: list[list[tuple[float, int]]],
        rows: tuple[int, int],
    ) -> None:
        """A bound entry: its exact cost goes back into the heap, and so do the other parts of
        the same classes and values as successors (at their part costs plus the lines)."""
        d, electrical, choice = entry
        dual = self.duals[d]
        picked = [cached_part(self.catalog, row, self.part_cache) for row in rows]
        cost = parts_cost([dual.network, *picked], self.spec.preferences).total
        self.push(exact_key(cost, key), HEAP_EXACT, (d, electrical, choice))
        lines = self.parts.lines_charge(electrical)
        for n in range(2):
            if choice[n] + 1 < len(lists[n]):
                nxt = (choice[0] + (n == 0), choice[1] + (n == 1))
                if (d, electrical, nxt) in self.seen:
                    continue
                self.seen.add((d, electrical, nxt))
                bound_next = dual.cost + lists[0][nxt[0]][0] + lists[1][nxt[1]][0] + lines
                self.push(bound_next, HEAP_BOUND, (d, electrical, nxt))

    def electrical_passes(
        self, dual: DualPlacement, free: tuple[tuple[int, int], tuple[int, int]]
    ) -> bool:
        """The yield screen of one electrical design: the dual's elements as the screen takes
        them, each free part at its class's mean and spread, read back from the part box
        ``[μ·e^(−κσ), μ·e^(κσ)]``: ``μ = √(lo·hi)``, ``σ = ln(hi/lo)/(2κ)``."""
        screen, kappa, parts = self.screen, self.kappa, self.parts
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


def _design(
    dual: DualPlacement, rows: tuple[int, int], catalog: Catalog, cache: dict[int, DiscretePart]
) -> Design:
    placed: dict[int, Placement] = {}
    for position, element in zip(dual.positions, dual.elements, strict=True):
        placed[position] = Placement(f"R{position + 1}", dual.network, element, 0)
    for position, row in zip(dual.free, rows, strict=True):
        placed[position] = Placement(f"R{position + 1}", cached_part(catalog, row, cache))
    return Design((placed[0], placed[1], placed[2], placed[3]))
