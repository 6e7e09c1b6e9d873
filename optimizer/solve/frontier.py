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
   window that the gain and balance conditions allow (:func:`side_window`): first as windows
   (per value of the first position, a run of the partner class's values), then written out
   (less the (R1, R2) records too loose for the gain accuracy on their own,
   :func:`gain_spread_ratio`) and pruned by the least spread any partner half reaches (a
   necessary condition). When the records are many (:data:`LAZY_CELLS`: records times
   environment vertices; loose floors), only the groups the search reaches are written out,
   from bounds of each group's least cost and spread computed on the windows
   (:func:`group_bounds`).
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

The module holds the join and the stream (steps 3 and after); ``solve.screen`` holds the
spec's limits as the screen sees them and the conditions above, ``solve.halves`` the parts by
class and the half records (steps 1 and 2), ``solve.halfgroups`` their groups by class pair,
``solve.ratingscreen`` the rating screen of the joined combinations, ``solve.networks`` the
network designs.
"""

from __future__ import annotations

import heapq
import itertools
import math
from collections.abc import Callable, Iterator
from typing import cast

import numpy as np
from numpy.typing import NDArray

from ..analysis.checks import resistor_stress
from ..analysis.drift import drift_factor_bounds
from ..analysis.formulas import derated_power, value_spread
from ..analysis.operating import rating_corners
from ..catalog import Catalog
from ..cost import parts_cost
from ..design import Design, Placement
from ..parts import DiscretePart
from ..spec import Spec
from .environment import LinearEnvironment, life_drift
from .halfgroups import LAZY_CELLS, EagerGroups, LazyGroups, Shared, fits_exactly
from .halves import ClassParts, HalfRecords, key_groups, prune_halves
from .ratingscreen import RatingBlock
from .screen import ScreenLimits, adm_from_terms, corner_screen, screen_limits

__all__ = [
    "HEAP_BLOCK",
    "HEAP_BOUND",
    "HEAP_EXACT",
    "HEAP_PAIR",
    "JOIN_CHUNK",
    "cached_part",
    "discrete_frontier",
    "exact_key",
    "gain_room",
    "limits_and_parts",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]

# Heap entry kinds, in the order they are taken at equal keys: an exact cost first (it can be
# emitted), then a bound of one design, then a block of a group pair's combinations, then the
# rest of a group pair not joined yet.
HEAP_EXACT, HEAP_BOUND, HEAP_BLOCK, HEAP_PAIR = 0, 1, 2, 3


#: Side-1 records of a group pair joined at first; each later run doubles, up to the whole.
_FIRST_RUN = 64


#: Combinations joined at once (bounds the memory of one join step).
JOIN_CHUNK = 400_000


def gain_room(c_lo: Array, c_hi: Array, lim: ScreenLimits) -> tuple[Array, Array]:
    """Per record (rows of ``c_lo``, ``c_hi``: its ``c`` bounds at vertices that share one
    ``a``): ``(ln a_min, ln a_max)`` such that the gain conditions of the module docstring
    hold only if the partner's ``ln a_lo`` lies in between. ``Adm`` rises with ``a``
    (:func:`adm_from_terms`), so ``Adm(a_lo, c_lo, ε, 1/A) ≥ G_min`` gives
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
    one: HalfRecords,
    idx_one: IntArray,
    two: HalfRecords,
    idx_two: IntArray,
    lim: ScreenLimits,
    parts: ClassParts,
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
    # The gain conditions at those vertices bound the partner's a too (:func:`gain_room`).
    a_least, a_most = gain_room(np.exp(p_low), np.exp(p_high), lim)
    first = np.searchsorted(q_sorted, np.maximum(p_high.max(axis=1) - lam, a_least), side="left")
    last = np.searchsorted(q_sorted, np.minimum(p_low.min(axis=1) + lam, a_most), side="right")
    count = np.maximum(last - first, 0)
    out_a: list[IntArray] = []
    out_b: list[IntArray] = []
    start = 0
    cum = np.cumsum(count)
    while start < idx_one.size:
        stop = int(
            np.searchsorted(cum, (cum[start - 1] if start else 0) + JOIN_CHUNK, side="right")
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
                    fit &= adm_from_terms(a_hi, c_hi, e, 0.0) <= lim.gain_max
                    fit &= adm_from_terms(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min
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


def limits_and_parts(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, shared: Shared | None
) -> tuple[ScreenLimits, ClassParts, Shared] | None:
    """The screen's limits and the usable discrete parts (from ``shared`` when another search of
    the same spec built them), or None when no balance meets the floor or no part is usable:
    the start of every enumeration with discrete parts."""
    lim = screen_limits(spec, env)
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
    # as in ``prune_halves``), keyed by their least cost.
    fits = np.ones((one.spread.shape[0], two.spread.shape[0]), dtype=bool)
    for this, other, vertex_groups in (
        (one, two, key_groups(np.column_stack([lim.rs3, lim.rref]))),
        (two, one, key_groups(lim.rs1[:, None])),
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
    # The group pairs, in order of their bound, merged into one stream in exact cost order.
    merge = _Merge(spec, catalog, env, parts, lim, two)
    yield from merge.designs(one, g1[pair_order], g2[pair_order], bound[pair_order], should_stop)


def _sides(
    parts: ClassParts, lim: ScreenLimits, shared: Shared
) -> tuple[EagerGroups | LazyGroups, EagerGroups | LazyGroups] | None:
    """Both sides' groups: all records written out and pruned when they are few or another
    search keeps them anyway, else each group written out when the search reaches it; None
    when a side has none."""
    win1, win2 = shared.windows(parts, lim, 1), shared.windows(parts, lim, 2)
    if win1.group.size == 0 or win2.group.size == 0:
        return None
    if (win1.records + win2.records) * lim.rs1.size > LAZY_CELLS:
        by_a = key_groups(np.column_stack([lim.rs3, lim.rref]))
        by_c = key_groups(lim.rs1[:, None])
        return LazyGroups(parts, lim, 1, win1, by_a), LazyGroups(parts, lim, 2, win2, by_c)
    one, two = prune_halves(shared.half(parts, lim, 1), shared.half(parts, lim, 2), lim)
    if not (one.cost.size and two.cost.size):
        return None
    return EagerGroups(one), EagerGroups(two)


#: A bound or exact entry of the merge: the (class, value) pair at each position, and which of
#: the parts of that class and value (``ClassParts.variants``) each position takes.
_Entry = tuple[tuple[tuple[int, int], ...], tuple[int, ...]]


class _Merge:
    """The merge of the group pairs (taken in order of their bound) into one stream of
    designs in exact cost order: a heap of entries keyed by a lower bound that is replaced by
    the exact cost before an entry is emitted. Its state: entries ``(key, kind, tick,
    payload)`` of the kinds ``HEAP_*`` (an exact design, a bound of one design, a block of a
    group pair's combinations, the rest of a group pair), the parts looked up so far, the
    side-2 records sorted for the joins, each electrical design's stress at the rating
    screen's corners, and the successors already pushed."""

    def __init__(
        self,
        spec: Spec,
        catalog: Catalog,
        env: LinearEnvironment,
        parts: ClassParts,
        lim: ScreenLimits,
        two: EagerGroups | LazyGroups,
    ) -> None:
        self.spec, self.catalog, self.env, self.parts, self.lim = spec, catalog, env, parts, lim
        self.two = two
        self.part_cache: dict[int, DiscretePart] = {}
        self.sorted_cache: dict[int, tuple[IntArray, Array]] = {}
        # Per (class, value) quadruple: its stress at the screen's corners (``RatingBlock``).
        self.stress_of: dict[tuple[tuple[int, int], ...], tuple[Array, Array]] = {}
        self.heap: list[tuple[float, int, int, object]] = []
        self.tick = itertools.count()
        self.seen: set[tuple[object, ...]] = set()

    def push(self, key: float, kind: int, payload: object) -> None:
        heapq.heappush(self.heap, (key, kind, next(self.tick), payload))

    def designs(
        self,
        one: EagerGroups | LazyGroups,
        g1: IntArray,
        g2: IntArray,
        bound: Array,
        should_stop: Callable[[], bool],
    ) -> Iterator[Design]:
        """The designs in exact cost order: the next group pair joins whenever its bound is
        below the heap's least key (at a tie, before anything but an exact design)."""
        heap, two = self.heap, self.two
        next_pair = 0
        while not should_stop():
            top = heap[0][0] if heap else math.inf
            top_exact = bool(heap) and heap[0][1] == HEAP_EXACT
            if next_pair < bound.size and (
                bound[next_pair] < top or (bound[next_pair] == top and not top_exact)
            ):
                g_two = int(g2[next_pair])
                if isinstance(one, LazyGroups) and isinstance(two, LazyGroups):
                    if not fits_exactly(one, two, int(g1[next_pair]), g_two, self.lim.balance):
                        next_pair += 1
                        continue
                pair = _Pair(
                    int(g1[next_pair]), g_two, float(bound[next_pair]), one, float(two.cost[g_two])
                )
                next_pair += 1
                self.join_next(pair)
                continue
            if not heap:
                return
            key, kind, _, payload = heapq.heappop(heap)
            if kind == HEAP_PAIR:
                self.join_next(cast(_Pair, payload))
                continue
            if kind == HEAP_BLOCK:
                self.take_block(key, cast(tuple[RatingBlock, int], payload))
                continue
            electrical, choice = cast(_Entry, payload)
            lists = [self.parts.variants(i, electrical[i]) for i in range(4)]
            rows = tuple(lists[i][choice[i]][1] for i in range(4))
            if kind == HEAP_EXACT:
                yield _discrete_design(self.catalog, rows, self.part_cache)
                continue
            self.take_bound(key, electrical, choice, lists, rows)

    def join_next(self, pair: _Pair) -> None:
        """Join the pair's next run of side-1 records (cheapest first) with its side-2 group;
        the combinations enter the heap as a block, and the pair again at the least cost its
        records left can reach."""
        parts = self.parts
        h1, a_idx = pair.next_run()
        h2, b_idx = self.two.records(pair.g2)
        if not pair.done:
            self.push(pair.least_left(), HEAP_PAIR, pair)
        ja, jb = _join(h1, a_idx, h2, b_idx, self.lim, parts, self.sorted_cache, pair.g2)
        if ja.size == 0:
            return
        keys = np.column_stack([h1.ca[ja], h1.ka[ja], h1.cb[ja], h1.kb[ja],
                                h2.ca[jb], h2.ka[jb], h2.cb[jb], h2.kb[jb]])  # fmt: skip
        lb = h1.cost[ja] + h2.cost[jb] + _distinct_charge(keys, parts.line_charge)
        sort = np.lexsort((*(keys[:, i] for i in range(7, -1, -1)), lb))
        # The run's combinations, in bound order, enter the heap one at a time.
        block = RatingBlock(keys[sort], lb[sort], parts, self.spec)
        at = block.usable(0)
        if at is not None:
            self.push(float(block.lbs[at]), HEAP_BLOCK, (block, at))
        self.push_lifted(block)

    def push_lifted(self, block: RatingBlock) -> None:
        """Each entry the block's screen lifted enters the heap as a bound entry at its bound
        plus its lift: a lower bound of every design of it (``RatingBlock``)."""
        for j in block.lifted:
            k = [int(v) for v in block.keys[j]]
            first = tuple((k[2 * i], k[2 * i + 1]) for i in range(4))
            self.stress_of[first] = (block.power[j], block.peak[j])
            key = float(block.lbs[j] + block.lift[j])
            self.push(key, HEAP_BOUND, (first, (0, 0, 0, 0)))
        block.lifted.clear()

    def take_block(self, key: float, payload: tuple[RatingBlock, int]) -> None:
        """A block's entry reached the top: the block's next usable entry goes back into the
        heap, and the entry itself as a bound entry of its cheapest parts."""
        block, at = payload
        after = block.usable(at + 1)
        if after is not None:
            self.push(float(block.lbs[after]), HEAP_BLOCK, (block, after))
        self.push_lifted(block)
        k = [int(v) for v in block.keys[at]]
        first = tuple((k[2 * i], k[2 * i + 1]) for i in range(4))
        if block.screened:
            self.stress_of[first] = (block.power[at], block.peak[at])
        self.push(key, HEAP_BOUND, (first, (0, 0, 0, 0)))

    def take_bound(
        self,
        key: float,
        electrical: tuple[tuple[int, int], ...],
        choice: tuple[int, ...],
        lists: list[list[tuple[float, int]]],
        rows: tuple[int, ...],
    ) -> None:
        """A bound entry: its exact cost goes back into the heap, and so do the other parts of
        the same classes and values (other sizes, stock). Each successor's bound is its part
        cost plus one line per distinct (class, value): never above its exact cost, and never
        below this entry's bound, so taking successors now keeps the order exact (a successor
        can cost less than this design itself, when it shares a line)."""
        parts = self.parts
        known = self.stress_of.get(electrical)
        lots_ok = parts.exact_spread or self.lot_screen(rows)
        if lots_ok and (self.rated(rows) if known is None else parts.bears(rows, *known)):
            self.push(exact_key(self.cost_of(rows), key), HEAP_EXACT, (electrical, choice))
        lines = parts.lines_charge(electrical)
        for i in range(4):
            if choice[i] + 1 < len(lists[i]):
                nxt = tuple(c + (1 if j == i else 0) for j, c in enumerate(choice))
                if (electrical, nxt) in self.seen:
                    continue
                self.seen.add((electrical, nxt))
                bound_next = sum(lists[j][nxt[j]][0] for j in range(4)) + lines
                self.push(bound_next, HEAP_BOUND, (electrical, nxt))

    def picked(self, rows: tuple[int, ...]) -> list[DiscretePart]:
        return [cached_part(self.catalog, row, self.part_cache) for row in rows]

    def cost_of(self, rows: tuple[int, ...]) -> float:
        return parts_cost(self.picked(rows), self.spec.preferences).total

    def rated(self, rows: tuple[int, ...]) -> bool:
        """False when a part of ``rows`` fails the exact rating check for certain: its stress at
        a subset of the check's own corners (``analysis.operating.rating_corners``) already
        exceeds its derated power rating or its limiting voltage (relative slack 1e-9)."""
        spec = self.spec
        hot, tmin = spec.requirements.temp_max_c, spec.requirements.temp_min_c
        picked = self.picked(rows)
        nominal = np.array([p.resistance_ohm for p in picked])
        spreads = np.array([value_spread(p.tolerance, p.tempco_per_k, tmin, hot) for p in picked])
        power, peak = resistor_stress(rating_corners(nominal, spreads, spec), spec)
        for p, pw, pk in zip(picked, power, peak, strict=True):
            if pw * (1.0 - 1e-9) > float(derated_power(p.power_w, hot)):
                return False
            if pk * (1.0 - 1e-9) > p.max_voltage_v:
                return False
        return True

    def lot_screen(self, rows: tuple[int, ...]) -> bool:
        """With same-lot tracking: the corner screen of the design's own parts, each part whose
        id is placed once with its own tempco (independent, as without tracking), the others
        at a shared tempco of zero (a point of their shared range): necessary for the exact
        check, and much tighter than the class screen, which zeroes every tempco."""
        env = self.env
        picked = self.picked(rows)
        ids = [p.part_id for p in picked]
        tc = np.array([p.tempco_per_k if ids.count(p.part_id) == 1 else 0.0 for p in picked])
        t = np.array([p.tolerance for p in picked])
        d_lo, d_hi = drift_factor_bounds(
            life_drift(np.array([p.drift_1000h for p in picked]), env.life_h),
            self.spec.requirements.drift_model,
        )
        swing = tc * env.delta_t_k
        low = ((1.0 - t) * (1.0 - swing) * d_lo)[None, :]
        high = ((1.0 + t) * (1.0 + swing) * d_hi)[None, :]
        nominal = np.array([[p.resistance_ohm for p in picked]])
        return bool(corner_screen(nominal, low, high, self.lim)[0])


class _Pair:
    """A group pair being joined a run at a time: its side-1 records sorted by cost, the
    position reached, and the least per-line charge of any design of it (``lines``: the pair's
    bound less both groups' least costs)."""

    def __init__(
        self, g1: int, g2: int, bound: float, one: EagerGroups | LazyGroups, least_two: float
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

    def next_run(self) -> tuple[HalfRecords, IntArray]:
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


#: Relative difference below which a design's exact cost counts as equal to its bound: the two
#: are sums of the same figures in different orders (rounding differs in the last digits).
_SAME_COST = 1e-12


def exact_key(cost: float, bound: float) -> float:
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


def cached_part(catalog: Catalog, row: int, cache: dict[int, DiscretePart]) -> DiscretePart:
    part = cache.get(row)
    if part is None:
        part = cache[row] = catalog.discrete_part(row)
    return part


def _discrete_design(
    catalog: Catalog, rows: tuple[int, ...], cache: dict[int, DiscretePart]
) -> Design:
    placements = tuple(
        Placement(f"R{i + 1}", cached_part(catalog, row, cache)) for i, row in enumerate(rows)
    )
    return Design(placements)  # type: ignore[arg-type]
