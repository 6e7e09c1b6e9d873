"""Four discrete parts on the yield basis, in exact cost order: grade classes first, then the
two ratios the values give.

Why this exists
---------------
On the yield basis the CP-SAT model of four discrete parts admits many designs its Monte Carlo
then rejects, and each solve is slow (G = 1, 46 dB, −40…125 °C, 99 % over the built-in
catalog: 60 s, 30 designs rejected, the best shown costing 124.4 while one at 19.7 passes).
Yet the structure is simple:

* A design's cost is the sum of its four parts' class costs (``solve.discrete``: a class is
  every attribute of a part but its value, the cost included, with the placement cost) plus
  the line cost once per distinct part (at least once per distinct class).
* With no source and no REF impedance the exact check's Monte Carlo reads the values only
  through the two ratios ``ρ₁₂ = R2/R1`` and ``ρ₃₄ = R4/R3``: ``c = R2/(R1 + R2)`` and
  ``a = R4/(R3 + R4)`` scale out, and every design is judged on the same random draws (one
  seed). Designs with the same classes and ratios (one *electrical design*) pass or fail the
  Monte Carlo together, to the last bit of rounding.

The search
----------
1. Class quadruples come out in nondecreasing part cost (a best-first merge of the two
   halves' class pairs, each sorted by cost), only those whose summed variance can meet the
   yield at all: ``z·s·√(Σσᵢ²) ≤ Λ`` with ``s`` the least sensitivity ``1/(1 + ρ_max)`` over
   the halves' ratios (the design screen's conditions at zero mismatch, necessary). One heap
   orders the work by the least cost it can give (a quadruple at its parts plus one line per
   distinct class), so designs leave it in exact cost order; work dearer than the ranking can
   use (``ceiling``) ends the search.
2. For a quadruple, every ratio pair its classes' values reach with a nominal gain inside the
   window (``pairbounds.gain_window``) and a nominal mismatch ``|m| = |ln(c₀/a₀)| ≤ Λ`` is
   screened by the linearised yield conditions (``pairbounds.screen_pairs``,
   ``yieldbox.balance_conditions`` at one vertex; necessary, as for the other enumerations)
   and by their gain counterpart (``pairbounds.gain_conditions``: the highest and lowest gain
   a build can have inside the accuracy window, for the yield). Without the latter a loose
   floor with a tight accuracy sent most pairs to the Monte Carlo (G = 10, 44 dB, −20…85 °C,
   1 %: none in 60 s; now 2 s).
3. The Monte Carlo's own draws bound each survivor's yield from above
   (``pairbounds.passing_counts``): a build passes the CMRR floor only if ``|m + ε_c − ε_a| ≤ Λ`` at
   every temperature, with the halves' log deviations ``ε`` bounded over the half's ratios
   (``pairbounds.deviation_bounds``); a pair whose count of such builds is below the yield cannot
   pass. Exact, not statistical: the same builds the check draws.
4. The rest get the Monte Carlo's yield itself on those draws (``analysis.montecarlo.
   yield_fractions``: equal to the check's yield for the pair's first value choice), best
   balanced first, a few pairs at a time. Each pair that meets the yield gives its value
   choices as designs, grouped by exact cost (``optimizer.cost``: the lines they place), each
   group's values nearest the middle of the resistance window first; the stream's exact check
   still decides each (the ratings read the values; ``solve.quaddesigns``). With an
   input-impedance floor a value choice whose nominal impedance is below it is dropped
   (``quaddesigns.nominal_impedance_reaches``), and with it or an output-noise ceiling each
   design meets those exact checks before it leaves the search.

What the ranking leaves out: designs with a part that another part dominates at its value
(no cheaper, no tighter, rated no better, stocked if it is: ``solve.discrete``). Swapping it
for its dominator at every position it fills gives a design that passes whenever it does and
costs no more (with a BOM line cost the dominance is judged alike at every position,
``same_everywhere``, so the swap never adds a line; without one, position by position, which
keeps fewer classes: G = 2, 56 dB, five years takes 3 s so, 20 s judged alike), so the
cheapest design is never lost; only such second-best
designs are (``tests/solve/test_classquads.py`` checks exactly this against the reference).
Keeping the dominated classes costs several times the search on the built-in catalog (G = 2,
56 dB, five years: 3 s -> over 60 s), so they are dropped. With a per-line stock penalty the
dominance is judged alike at every position too and on the part costs without the penalty (a
dominator is stocked if the part is): judged on the per-placement charge, the swap could cost
more (two placements of one unstocked part pay one penalty, the stocked dominator's higher
price is paid twice). The penalty is then charged per line of an unstocked class.

Every step is a necessary condition of the exact check, so the k-th design the stream's exact
check passes is the k-th cheapest (ties: any order; siblings of one ratio pair share its
yield up to the rounding of ``R2/R1`` in the last place). Served only where the premises hold
(:func:`serves`); elsewhere four discrete parts on the yield basis stay with CP-SAT.

Measured (G = 1, 46 dB, −40…125 °C, 99 % of 2,000 builds, the built-in catalog): CP-SAT ended
at 60 s with 124.4 unproven; this search proves 19.7 with ten designs in about 1 s (about
2,000 quadruples screened past their variance, a hundred Monte Carlo batches).
"""

from __future__ import annotations

import heapq
import math
from collections.abc import Callable, Iterator
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..analysis.environment import environment_from_spec
from ..analysis.montecarlo import build_factors, judging_corners, yield_fractions
from ..analysis.variation import (
    VariableValues,
    Variation,
    sample_values,
    variation_from_design,
)
from ..catalog import Catalog
from ..design import Design, Placement
from ..spec import DriftModel, Objective, Spec
from . import yieldbox
from .discrete import DiscreteBlock
from .environment import LinearEnvironment
from .pairbounds import (
    deviation_bounds,
    gain_conditions,
    gain_pass_counts,
    gain_spread_fits,
    gain_spread_floor,
    gain_window,
    pair_ranges,
    passing_counts,
    screen_pairs,
)
from .quaddesigns import ValueChoices, lines_cost
from .screen import log_balance_limit

__all__ = ["ClassQuadSearch", "serves"]

Array = NDArray[np.float64]

#: Relative rounding under which two ratios are the same (their Monte Carlo is the same).
SAME_RATIO = 1e-12
#: How far past the gain window's largest ratio the halves' tables reach, as a factor of it
#: (the second half's ratio may differ from the first's by ``(1 + ρ)·Λ`` in log units).
RATIO_MARGIN = 1.25
#: The bound the shared draws are made at (any value the variation accepts; they scale).
UNIT_BOUND = 0.25
#: At equal cost the search's work goes designs first, then pairs to expand, batches to judge,
#: quadruples to screen (so it stops as soon as the ranking has what it needs).
RANK = {"designs": 0, "pair": 1, "batch": 2, "quad": 3}
#: Ratio pairs judged together by one vectorised Monte Carlo (``yield_fractions``).
PAIR_BATCH = 16


def serves(spec: Spec, env: LinearEnvironment) -> bool:
    """Whether the premises of the module docstring hold: the yield box applies
    (``yieldbox.serves``), the lowest-cost objective, no source or REF impedance at any
    vertex, and no one-sided drift over a life (its draws are shared by parts of one id, so
    they depend on the values). A per-line stock penalty is served on a block whose dominance
    leaves the penalty out (``streams``: a stocked part is dominated only by stocked ones, so
    the swap adds no penalty), charged per line like the line cost. An output-noise
    ceiling or an input-impedance floor is served: the designs are screened by those exact
    checks themselves before they leave the search (``quaddesigns.ValueChoices``)."""
    prefs, req = spec.preferences, spec.requirements
    return (
        yieldbox.serves(spec)
        and (req.drift_model is DriftModel.SYMMETRIC or env.life_h <= 0.0)
        and prefs.objective is Objective.COST
        and not np.any(env.vertices)
    )


class _Half:
    """The ratios one class pair's values reach inside the gain window: sorted unique
    ``ln ρ`` (means included) and, per ratio, the value-index pairs that give it
    (``pairs[k]``: rows ``starts[k]`` to ``ends[k]`` of one array of them all)."""

    def __init__(
        self, logs: Array, stacked: NDArray[np.int64], starts: NDArray[np.int64],
        ends: NDArray[np.int64],
    ) -> None:  # fmt: skip
        self.logs = logs
        self.pairs = _Slices(stacked, starts, ends)
        #: Per ratio, the value indices of its first value pair (``pairs[k][0]``), as rows.
        self.heads = stacked[starts]


class _Slices:
    """Row ranges of one array, indexed like a list of arrays (each a view)."""

    def __init__(
        self, rows: NDArray[np.int64], starts: NDArray[np.int64], ends: NDArray[np.int64]
    ) -> None:
        self._rows, self._starts, self._ends = rows, starts.tolist(), ends.tolist()

    def __len__(self) -> int:
        return len(self._starts)

    def __getitem__(self, k: int) -> NDArray[np.int64]:
        return self._rows[self._starts[k] : self._ends[k]]


@dataclass(frozen=True)
class _Batch:
    """Ratio pairs of one quadruple still to be judged (from ``at``), with the quadruple's
    halves and, once drawn, the Monte Carlo's builds of its classes."""

    quad: tuple[int, int, int, int]
    first: _Half
    second: _Half
    pairs: list[tuple[int, int]]
    at: int
    factors: tuple[Array, Array] | None


#: A ratio pair that meets the yield: its quadruple and the value-index pairs of its halves.
_Pair = tuple[tuple[int, int, int, int], NDArray[np.int64], NDArray[np.int64]]


class ClassQuadSearch:
    """Designs of four discrete parts in nondecreasing cost (module docstring), none dearer
    than ``ceiling()`` (read as the search goes; ``stop()`` ends it early)."""

    def __init__(
        self,
        spec: Spec,
        catalog: Catalog,
        env: LinearEnvironment,
        block: DiscreteBlock,
        stop: Callable[[], bool],
        ceiling: Callable[[], float] = lambda: math.inf,
    ) -> None:
        self._spec, self._catalog, self._env, self._block = spec, catalog, env, block
        self._stop = stop
        self._ceiling = ceiling
        self._balance = log_balance_limit(
            spec.requirements.cmrr_floor_db, spec.amplifier.cmrr_ratio
        )
        self._screen = yieldbox.DesignScreen(spec, env, self._balance)
        self._usable = [np.array(block.usable(i), dtype=np.int64) for i in range(4)]
        n = block.cost.size
        self._centre = np.ones(n)
        self._sigma = np.full(n, np.inf)
        # Per class: the Monte Carlo's bounds of its own variables (tolerance, tempco per K,
        # life drift), read from one of its parts.
        self._own = np.zeros((n, 3))
        req, prefs = spec.requirements, spec.preferences
        # Per class: its part cost with placement (the block's per-placement stock penalty
        # taken out) and what each BOM line of it costs: the line cost, plus the stock
        # penalty when its parts are not stocked (``optimizer.cost``: charged per line).
        self._part_cost = block.cost - block.penalty
        penalty = prefs.line_penalty
        self._line_charge = np.full(n, prefs.line_cost)
        for c in range(n):
            present = block.part_row[c] >= 0
            if not present.any():
                continue
            part = self._catalog.discrete_part(int(block.part_row[c][present][0]))
            if part.stock_qty <= 0:  # stock is an attribute of the class
                self._line_charge[c] += penalty
            mean, sigma = self._screen.position(part, None)
            self._centre[c] = mean / part.resistance_ohm
            self._sigma[c] = sigma
            alone = variation_from_design(
                Design(tuple(Placement(f"R{i + 1}", part) for i in range(4))),  # type: ignore[arg-type]
                req.life_s,
                False,
                req.drift_model,
            )
            self._own[c] = (alone.tolerance[0], alone.tempco_per_k[0], alone.drift[0])
        self._halves: dict[tuple[int, int, int], _Half] = {}
        self._choices = ValueChoices(spec, catalog, block, stop, self._part_cost, self._line_charge)
        self._environment = environment_from_spec(spec)
        self._unit: dict[tuple[bool, ...], VariableValues] = {}
        self._bounds: dict[tuple[tuple[bool, ...], int, int, int], tuple[Array, Array]] = {}
        self._z = yieldbox.quantiles(spec) or 0.0
        self._z_two = yieldbox.two_sided_quantile(spec)
        # The Monte Carlo's gain window and amplifier corners (pairbounds.gain_conditions).
        self._gain_limits = (
            req.gain * (1.0 - req.gain_accuracy),
            req.gain * (1.0 + req.gain_accuracy),
        )
        judging = judging_corners(self._environment)
        self._amplifier = (judging.eps_abs, judging.eps_low, judging.inv_open_loop_gain)
        sigma_all = self._widest()
        self._window = gain_window(spec, sigma_all)
        # The least sensitivity 1 − c = 1/(1 + ρ) over every ratio the half tables hold.
        self._s_min = 1.0 / (1.0 + self._window[1] * math.exp(self._room(self._window[1])))
        self._stream = self._run()

    def _widest(self) -> float:
        """The largest spread σ of any class that has parts (0 when none has)."""
        finite = self._sigma[np.isfinite(self._sigma)]
        return float(finite.max()) if finite.size else 0.0

    def __iter__(self) -> Iterator[Design]:
        return self

    def __next__(self) -> Design:
        return next(self._stream)

    # -- the class quadruples ---------------------------------------------------------------

    def _pairs(self, i: int, j: int) -> tuple[Array, Array, NDArray[np.int64], NDArray[np.int64]]:
        """Class pairs of positions (i, j) by cost: cost, summed variance σ², and the classes."""
        a, b = self._usable[i], self._usable[j]
        ca = np.repeat(a, b.size)
        cb = np.tile(b, a.size)
        cost = self._part_cost[ca] + self._part_cost[cb]
        var = self._sigma[ca] ** 2 + self._sigma[cb] ** 2
        order = np.lexsort((var, cost))
        return cost[order], var[order], ca[order], cb[order]

    def _quads(self) -> Iterator[tuple[float, tuple[int, int, int, int]]]:
        """Class quadruples in nondecreasing cost whose variance can meet the yield."""
        z = max(self._z, self._z_two) * (1.0 - yieldbox.first_order_slack(self._widest()))
        budget = (self._balance / (z * self._s_min)) ** 2 * (1.0 + 1e-9) if z > 0.0 else math.inf
        cost_a, var_a, a1, a2 = self._pairs(0, 1)
        cost_b, var_b, b1, b2 = self._pairs(2, 3)
        if cost_a.size == 0 or cost_b.size == 0:
            return

        def next_valid(row: int, start: int) -> int:
            """The first half-B index from ``start`` whose variance fits with row ``row``."""
            room = budget - var_a[row]
            hits = np.flatnonzero(var_b[start:] <= room)
            return start + int(hits[0]) if hits.size else -1

        heap: list[tuple[float, int, int]] = []
        for row in range(cost_a.size):
            col = next_valid(row, 0)
            if col >= 0:
                heap.append((float(cost_a[row] + cost_b[col]), row, col))
        heapq.heapify(heap)
        while heap:
            cost, row, col = heapq.heappop(heap)
            yield cost, (int(a1[row]), int(a2[row]), int(b1[col]), int(b2[col]))
            col = next_valid(row, col + 1)
            if col >= 0:
                heapq.heappush(heap, (float(cost_a[row] + cost_b[col]), row, col))

    # -- the ratios -----------------------------------------------------------------------------

    def _room(self, high: float) -> float:
        """How far (log units) a half's ratio may lie outside the gain window: ``(1 + ρ)·Λ`` at
        ``ρ = RATIO_MARGIN·high`` (``|ln ρ₃₄ − ln ρ₁₂| ≤ (1 + ρ)·Λ`` when ``|ln(c/a)| ≤ Λ``)."""
        return (1.0 + RATIO_MARGIN * high) * self._balance

    def _half(self, i: int, ci: int, cj: int, low: float, high: float) -> _Half:
        """The ratios of classes ``ci`` at position ``i`` and ``cj`` at ``i + 1``."""
        key = (i, ci, cj)
        half = self._halves.get(key)
        if half is not None:
            return half
        block = self._block
        ki, kj = block.avail[i][ci], block.avail[i + 1][cj]
        shift = math.log(self._centre[cj] / self._centre[ci])
        logs = (np.log(block.values[kj])[None, :] - np.log(block.values[ki])[:, None]) + shift
        # Bound ρ by the gain window with room for the other half's ratio (|m| ≤ Λ).
        room = self._room(high)
        inside = (logs >= math.log(max(low, 1e-300)) - room) & (logs <= math.log(high) + room)
        rows, cols = np.nonzero(inside)
        values = logs[rows, cols]
        order = np.argsort(values, kind="stable")
        values, rows, cols = values[order], rows[order], cols[order]
        stacked = np.column_stack([ki[rows], kj[cols]]).astype(np.int64, copy=False)
        if not values.size:
            empty = np.zeros(0, dtype=np.int64)
            half = self._halves[key] = _Half(values, stacked.reshape(0, 2), empty, empty)
            return half
        starts = np.r_[0, np.flatnonzero(np.diff(values) > SAME_RATIO) + 1].astype(np.int64)
        ends = np.r_[starts[1:], values.size].astype(np.int64)
        half = self._halves[key] = _Half(values[starts], stacked, starts, ends)
        return half

    def _run(self) -> Iterator[Design]:
        """The designs, cheapest first: one heap of work keyed by the least cost it can give
        (a quadruple at its bound, its ratio pairs a batch at a time at the same bound, the
        designs of a pair that meets the yield at their exact cost), fed by the quadruples in
        order of their additive bound (never above their own bound)."""
        quads = self._quads()
        pending = next(quads, None)
        heap: list[tuple[float, int, int, str, object]] = []
        seq = 0
        while True:
            # Every quadruple whose additive bound is at most the heap's least key is in it.
            while pending is not None and (not heap or pending[0] <= heap[0][0]):
                _, quad = pending
                heapq.heappush(heap, (self._bound(quad), RANK["quad"], seq, "quad", quad))
                seq += 1
                pending = next(quads, None)
            if not heap or self._stop():
                return
            key, _, _, kind, payload = heapq.heappop(heap)
            if key > self._ceiling() * (1.0 + 1e-9) + 1e-9:
                return  # dearer than the ranking can use (all later work costs at least this)
            if kind == "designs":
                yield from self._choices.designs(payload)  # type: ignore[arg-type]
                continue
            if kind == "pair":  # a pair that meets the yield: its designs by exact cost
                for cost, group in self._choices.cost_groups(*payload):  # type: ignore[misc]
                    heapq.heappush(heap, (cost, RANK["designs"], seq, "designs", group))
                    seq += 1
                continue
            work = self._pairs_of(payload) if kind == "quad" else payload  # type: ignore[arg-type]
            if work is None:
                continue
            passing, more = self._judge_batch(work)  # type: ignore[arg-type]
            for pair in passing:  # expanded when reached: its designs cost at least the key
                heapq.heappush(heap, (key, RANK["pair"], seq, "pair", pair))
                seq += 1
            if more is not None:
                heapq.heappush(heap, (key, RANK["batch"], seq, "batch", more))
                seq += 1

    def _bound(self, quad: tuple[int, int, int, int]) -> float:
        """The least cost of a design of these classes: parts and placements, one BOM line per
        distinct class (each with its stock penalty when its parts are not stocked)."""
        parts = float(sum(self._part_cost[c] for c in quad))
        charges = [float(self._line_charge[c]) for c in set(quad)]
        return float(parts + lines_cost(charges, [1] * len(charges)))

    def _pairs_of(self, quad: tuple[int, int, int, int]) -> _Batch | None:
        """The ratio pairs of one quadruple that pass the screens (module docstring, steps 2 and
        3), best balanced first, or None."""
        spec, balance = self._spec, self._balance
        low, high = self._window
        c1, c2, c3, c4 = quad
        sigma = self._sigma[list(quad)]
        # The screen's variance term alone, at the least sensitivity and this quad's own
        # narrowing (the quads' filter takes the widest class of all).
        narrow = 1.0 - yieldbox.first_order_slack(float(sigma.max()))
        spread = math.sqrt(float(np.sum(sigma**2)))
        if max(self._z, self._z_two) * narrow * self._s_min * spread > balance * (1 + 1e-9):
            return None
        first = self._half(0, c1, c2, low, high)
        if first.logs.size == 0:
            return None
        ends = np.exp(first.logs[[0, -1]])
        c_ends = ends / (1.0 + ends)
        floor_g = gain_spread_floor((float(c_ends[0]), float(c_ends[1])), sigma, self._amplifier)
        if not gain_spread_fits(floor_g, sigma, self._gain_limits, self._z_two):
            return None  # no ratio pair of these classes meets the gain conditions
        second = self._half(2, c3, c4, low, high)
        if second.logs.size == 0:
            return None
        rho_a = np.exp(first.logs)
        cc = rho_a / (1.0 + rho_a)
        rho_b = np.exp(second.logs)
        aa = rho_b / (1.0 + rho_b)
        # Ratio pairs with |ln c − ln a| ≤ Λ (a within [c·e^−Λ, c·e^Λ]), nominal gain inside
        # the window, passing the linearised yield conditions.
        lo_b, hi_b = pair_ranges(cc, aa, balance, (low, high))
        counts = np.maximum(hi_b - lo_b, 0)
        ia_all = np.repeat(np.arange(cc.size), counts)
        ib_all = (
            np.arange(int(counts.sum())) - np.repeat(np.cumsum(counts) - counts, counts)
        ) + np.repeat(lo_b, counts)
        # The conditions one after another, each on the survivors of the one before (the
        # pairs of a high gain at a loose floor run to millions).
        c_all, a_all = cc[ia_all], aa[ib_all]
        adm = (a_all + c_all) / (2.0 * (1.0 - c_all))
        keep = np.flatnonzero((adm >= low) & (adm <= high))
        keep = keep[screen_pairs(c_all[keep], a_all[keep], sigma, balance, self._z, self._z_two)]
        c_all, a_all = c_all[keep], a_all[keep]
        ok = gain_conditions(
            c_all, a_all, sigma, self._gain_limits, self._amplifier, self._z, self._z_two
        )
        keep, c_all, a_all = keep[ok], c_all[ok], a_all[ok]
        if keep.size == 0:
            return None
        ia_all, ib_all = ia_all[keep], ib_all[keep]
        signed = np.log(c_all / a_all)
        # The builds' own draws: pairs that cannot reach the yield whatever their values.
        counts = passing_counts(
            self._half_bounds(quad, 0, first), self._half_bounds(quad, 2, second), signed, balance
        )
        reach = counts / float(spec.preferences.samples) >= spec.requirements.yield_target
        if not reach.any():
            return None
        ia_all, ib_all, signed = ia_all[reach], ib_all[reach], signed[reach]
        # The Monte Carlo's gain pass count of each pair on its own builds (exact).
        factors = self._factors(quad)
        gain_ok = self._gain_reaches(factors, first, second, ia_all, ib_all)
        if not gain_ok.any():
            return None
        ia_all, ib_all, signed = ia_all[gain_ok], ib_all[gain_ok], signed[gain_ok]
        order = np.argsort(np.abs(signed), kind="stable")
        pairs = [(int(a), int(b)) for a, b in zip(ia_all[order], ib_all[order], strict=True)]
        return _Batch(quad, first, second, pairs, 0, factors)

    def _gain_reaches(
        self,
        factors: tuple[Array, Array],
        first: _Half,
        second: _Half,
        ia: NDArray[np.int64],
        ib: NDArray[np.int64],
    ) -> NDArray[np.bool_]:
        """Per ratio pair ``(ia[k], ib[k])``: whether the Monte Carlo's gain pass count on the
        quadruple's builds (``pairbounds.gain_pass_counts``, at the ratios of each half's first
        value choice) reaches the yield; the yield needs at least that many builds."""
        spec, values = self._spec, self._block.values
        static, alpha = factors
        temps = np.array(self._environment.delta_t_k)
        r = static[:, :, None] * (1.0 + alpha[:, :, None] * temps[None, None, :])
        heads = second.heads[ib]
        rho_b = values[heads[:, 1]] / values[heads[:, 0]]
        need = spec.requirements.yield_target * float(spec.preferences.samples)
        ok = np.zeros(ia.size, dtype=bool)
        order = np.argsort(ia, kind="stable")
        heads = np.flatnonzero(np.r_[True, ia[order][1:] != ia[order][:-1]])
        for start, stop in zip(heads.tolist(), [*heads[1:].tolist(), ia.size], strict=True):
            at = order[start:stop]
            k1, k2 = first.pairs[int(ia[at[0]])][0]
            counts = gain_pass_counts(
                float(values[k2] / values[k1]), (r[:, 0], r[:, 1]), rho_b[at],
                (r[:, 2], r[:, 3]), self._gain_limits, self._amplifier,
            )  # fmt: skip
            ok[at] = counts >= need * (1.0 - 1e-12)
        return ok

    def _judge_batch(self, work: _Batch) -> tuple[list[_Pair], _Batch | None]:
        """The Monte Carlo's yield (on its shared draws) of the next :data:`PAIR_BATCH` pairs:
        each pair that meets it (its quadruple and the value-index pairs of its halves), and
        the rest of the work."""
        spec = self._spec
        quad, first, second = work.quad, work.first, work.second
        batch = work.pairs[work.at : work.at + PAIR_BATCH]
        factors = work.factors if work.factors is not None else self._factors(quad)
        nominals = np.array(
            [self._nominal(first.pairs[ia][0], second.pairs[ib][0]) for ia, ib in batch]
        )
        passed = yield_fractions(
            factors, nominals, self._environment, spec.requirements,
            target=spec.requirements.yield_target,
        )  # fmt: skip
        passing = [
            (quad, first.pairs[ia], second.pairs[ib])
            for (ia, ib), fraction in zip(batch, passed, strict=True)
            if fraction >= spec.requirements.yield_target
        ]
        at = work.at + PAIR_BATCH
        more = (
            _Batch(quad, first, second, work.pairs, at, factors) if at < len(work.pairs) else None
        )
        return passing, more

    def _half_bounds(
        self, quad: tuple[int, int, int, int], i: int, half: _Half
    ) -> tuple[Array, Array]:
        """``pairbounds.deviation_bounds`` of the quad's classes at positions ``i`` and
        ``i + 1`` on the Monte Carlo's draws (which depend on which variables of all four are
        non-zero), over the half's ratios, at the Monte Carlo's temperatures."""
        pattern = tuple(bool(x > 0.0) for c in quad for x in self._own[c])
        key = (pattern, i, quad[i], quad[i + 1])
        known = self._bounds.get(key)
        if known is not None:
            return known
        values = self._unit_values(pattern)
        temps = np.array(self._environment.delta_t_k)
        factors = []
        for position in (i, i + 1):
            t, tc, drift = (float(x) for x in self._own[quad[position]])
            f = (1.0 + values.own_error[:, position] * (t / UNIT_BOUND)) * (
                1.0 + values.own_drift[:, position] * (drift / UNIT_BOUND)
            )
            alpha = values.own_tempco[:, position] * (tc / UNIT_BOUND)
            factors.append(f[:, None] * (1.0 + alpha[:, None] * temps[None, :]))
        rho = (float(np.exp(half.logs[0])), float(np.exp(half.logs[-1])))
        known = self._bounds[key] = deviation_bounds(factors[0], factors[1], rho)
        return known

    def _unit_values(self, pattern: tuple[bool, ...]) -> VariableValues:
        """The Monte Carlo's draws (``analysis.variation.sample_values``, the spec's seed) for
        a bound of :data:`UNIT_BOUND` on every variable that ``pattern`` marks non-zero
        (tolerance, tempco, drift of R1..R4), 0 elsewhere: the variables of a class are these
        times its bounds over :data:`UNIT_BOUND` (the draws scale linearly with the bound)."""
        known = self._unit.get(pattern)
        if known is None:
            prefs = self._spec.preferences
            ones = [UNIT_BOUND if x else 0.0 for x in pattern]
            unit = Variation(
                (1.0, 1.0, 1.0, 1.0),
                (ones[0], ones[3], ones[6], ones[9]),
                (ones[1], ones[4], ones[7], ones[10]),
                (ones[2], ones[5], ones[8], ones[11]),
            )
            rng = np.random.Generator(np.random.PCG64(prefs.seed))
            known = self._unit[pattern] = sample_values(
                unit, rng, prefs.samples, prefs.distribution, prefs.sigma_k
            )
        return known

    def _factors(self, quad: tuple[int, int, int, int]) -> tuple[Array, Array]:
        """The Monte Carlo's builds for parts of these classes (``analysis.montecarlo``)."""
        spec, block = self._spec, self._block
        parts = []
        for position, c in enumerate(quad):
            k = int(block.avail[position][c][0])
            parts.append(self._catalog.discrete_part(int(block.part_row[c, k])))
        design = Design(tuple(Placement(f"R{i + 1}", p) for i, p in enumerate(parts)))  # type: ignore[arg-type]
        req, prefs = spec.requirements, spec.preferences
        variation = variation_from_design(design, req.life_s, False, req.drift_model)
        return build_factors(
            variation,
            samples=prefs.samples,
            seed=prefs.seed,
            distribution=prefs.distribution,
            sigma_k=prefs.sigma_k,
        )

    def _nominal(self, first: NDArray[np.int64], second: NDArray[np.int64]) -> list[float]:
        """The nominal values (ohms) of one value choice: the resistances of its parts."""
        values = self._block.values
        return [
            float(values[first[0]]),
            float(values[first[1]]),
            float(values[second[0]]),
            float(values[second[1]]),
        ]
