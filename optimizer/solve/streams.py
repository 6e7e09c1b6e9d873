"""The streams of verified designs the pick merges, one per topology (or per position pair of
one dual and two discrete parts): a CP-SAT stream (:class:`ModelStream`: solve, verify, cut,
bounded by the ranking's cost) or an exact enumeration (:class:`FrontierStream`: the
cost-ordered designs of ``solve.frontier``, ``solve.networks``, ``solve.mixed`` or
``solve.classquads``, each verified), the clock they share, and which streams a spec gets
(:func:`make_streams`).
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

from .. import interrupt
from ..catalog import Catalog
from ..cost import design_cost
from ..design import Design, Topology
from ..spec import CmrrBasis, Objective, Spec
from . import classquads, yieldbox
from .classquads import ClassQuadSearch
from .discrete import DiscreteBlock, build_discrete
from .environment import LinearEnvironment
from .frontier import discrete_frontier
from .mixed import mixed_frontier
from .networks import network_frontier
from .options import (
    ALL_SHAPES,
    DIVIDER_SHAPES,
    EQUAL_SHAPES,
    PAIR,
    QUAD,
)
from .problem import Problem
from .results import PROGRESS_INTERVAL_S, Candidate, SearchProgress
from .screen import log_balance_limit
from .verdict import Verdict, Verifier

if TYPE_CHECKING:  # CP-SAT loads on first use: the exact enumerations never need it
    from ortools.sat.python import cp_model

    from .model import BuiltModel


__all__ = [
    "MAX_CUTS",
    "YIELD_ENUMERATED",
    "Clock",
    "FrontierStream",
    "ModelStream",
    "StreamProgress",
    "configured_solver",
    "frontier_applies",
    "make_streams",
]


MAX_CUTS = 400


def configured_solver(time_limit_s: float, workers: int = 1, seed: int = 0) -> cp_model.CpSolver:
    """A CP-SAT solver with fixed parameters: time limit, worker count, seed."""
    from ortools.sat.python import cp_model

    solver = cp_model.CpSolver()
    solver.parameters.max_time_in_seconds = max(time_limit_s, 0.001)
    solver.parameters.num_workers = workers
    solver.parameters.random_seed = seed
    solver.parameters.log_search_progress = False
    # Probing in presolve costs more than it saves on these models (measured on the examples).
    solver.parameters.cp_model_probing_level = 0
    interrupt.watch(solver)  # SIGINT/SIGTERM stop the solve (and CP-SAT leaves SIGINT alone)
    return solver


@dataclass
class Clock:
    deadline: float
    solve: float = 0.0
    verify: float = 0.0
    build: float = 0.0
    started: float = 0.0
    checked: int = 0
    passed: int = 0
    report: Callable[[SearchProgress], None] | None = None
    _reported: float = -math.inf

    def remaining(self) -> float:
        now = time.perf_counter()
        if self.report is not None and now - self._reported >= PROGRESS_INTERVAL_S:
            self._reported = now
            self.report(
                SearchProgress(now - self.started, self.deadline - self.started, self.checked,
                               self.passed)
            )  # fmt: skip
        return 0.0 if interrupt.cancelled() else self.deadline - now

    def judged(self, passed: bool) -> None:
        """Count one exact check."""
        self.checked += 1
        self.passed += int(passed)


class StreamProgress:
    """How far a stream has got: exhausted, proven optimal so far, stopped by the clock, the gap
    of a time-limited solve, the solves made and the designs the exact check rejected."""

    def __init__(self) -> None:
        self.exhausted = False
        self.optimal = True
        self.timed_out = False
        self.gap: float | None = None
        self.solves = 0
        self.rejected: list[tuple[Design, Verdict]] = []
        self.capped = False  # searched only up to a cost ceiling from the other streams


class ModelStream(StreamProgress):
    """Verified designs of one topology, best first, one solve at a time: each solve is cut by
    the designs already seen, so each new optimum is the next best."""

    def __init__(
        self,
        problem: Problem,
        topologies: frozenset[Topology],
        objective: Objective,
        pair_shape: int | None = None,
    ) -> None:
        self.problem = problem
        self.topologies = topologies
        self.objective = objective
        self.pair_shape = pair_shape
        self._built: BuiltModel | None = None
        self.cost_ceiling = math.inf  # set by the merge: bounds the model's objective
        # Set by the merge: designs of a greater cost (the exact one) cannot be ranked.
        self.rank_limit = math.inf
        StreamProgress.__init__(self)

    def _model(self, clock: Clock) -> BuiltModel:
        if self._built is None:
            from .model import ModelVariant

            started = time.perf_counter()
            self._built = self.problem.build(
                ModelVariant(
                    objective=self.objective, topologies=self.topologies, pair_shape=self.pair_shape
                )
            )
            if math.isfinite(self.cost_ceiling) and not self._built.infeasible:
                self._built.at_most(self.cost_ceiling)
            clock.build += time.perf_counter() - started
        return self._built

    def _below_floor(self, clock: Clock) -> bool:
        """Four discrete parts under a ranking limit, before the model is first built: whether
        the limit is below every cost the model admits (``Problem.discrete_cost_floor``), so
        the stream has nothing to rank and needs no model."""
        if (
            self._built is not None
            or self.topologies != {Topology.DISCRETE}
            or self.objective is not Objective.COST
            or not math.isfinite(self.rank_limit)
        ):
            return False
        started = time.perf_counter()
        floor = self.problem.discrete_cost_floor()
        clock.build += time.perf_counter() - started
        return floor > self.rank_limit * (1.0 + 1e-9) + 1e-9

    def next(
        self, verifier: Verifier, clock: Clock, workers: int
    ) -> tuple[float, Candidate] | None:
        """The next verified design with its ranking key (lower is better), or None."""
        from ortools.sat.python import cp_model

        spec = self.problem.spec
        if self._below_floor(clock):
            self.exhausted = self.capped = True  # proven: no design of it can be ranked
            return None
        while not self.exhausted:
            if clock.remaining() <= 0.0:
                self.timed_out, self.optimal, self.exhausted = True, False, True
                return None
            built = self._model(clock)
            if built.infeasible:
                self.exhausted = True
                return None
            remaining = clock.remaining()
            if remaining <= 0.0:
                self.timed_out, self.optimal, self.exhausted = True, False, True
                return None
            solver = configured_solver(remaining, workers)
            started = time.perf_counter()
            status = solver.solve(built.model)
            clock.solve += time.perf_counter() - started
            self.solves += 1
            if status in (cp_model.INFEASIBLE, cp_model.MODEL_INVALID):
                self.exhausted = True
                return None
            if status == cp_model.UNKNOWN:
                self.timed_out, self.optimal, self.exhausted = True, False, True
                return None
            if status == cp_model.FEASIBLE:
                # Time is up: report the best found with its gap and stop this stream.
                self.optimal, self.timed_out, self.exhausted = False, True, True
                objective, bound = solver.objective_value, solver.best_objective_bound
                self.gap = abs(objective - bound) / max(abs(objective), 1e-12)
            chosen, design = self.problem.decode(solver, built)
            built.exclude(chosen)
            if status == cp_model.OPTIMAL:
                built.no_better(solver.objective_value)
            # Start the next solve from this design: its neighbours are often the next best.
            built.model.clear_hints()  # type: ignore[no-untyped-call]
            for lit in built.literals():
                built.model.add_hint(lit, solver.boolean_value(lit))
            started = time.perf_counter()
            verdict = verifier(design, spec)
            clock.verify += time.perf_counter() - started
            clock.judged(verdict.passed)
            if not verdict.passed:
                self.rejected.append((design, verdict))
                if len(self.rejected) >= MAX_CUTS:
                    self.optimal, self.exhausted = False, True
                continue
            cost = design_cost(design, spec.preferences)
            if self.objective is Objective.COST:
                key = cost.total
            elif self.objective is Objective.CMRR_MARGIN:
                key = -solver.objective_value
            else:
                key = solver.objective_value
            return key, Candidate(design, cost, verdict)
        return None


class FrontierStream(StreamProgress):
    """Verified designs of one topology from an exact cost-ordered enumeration
    (``optimizer.solve.frontier``): each design it yields is the cheapest not yet seen that can
    meet CMRR and gain, so the k-th that passes the exact check is the k-th cheapest overall."""

    def __init__(self, problem: Problem, topology: Topology) -> None:
        self.problem = problem
        self.topologies = frozenset({topology})
        self.pair_shape: int | None = None
        spec, catalog, env = problem.spec, problem.catalog, problem.env
        self._out_of_time = False
        self.cost_ceiling = math.inf  # set by the merge where the source takes it
        # On the yield basis: the linearised yield conditions of each design before its Monte
        # Carlo (``optimizer.solve.yieldbox.DesignScreen``), far cheaper than the exact check.
        self._screen = (
            yieldbox.DesignScreen(
                spec,
                env,
                log_balance_limit(spec.requirements.cmrr_floor_db, spec.amplifier.cmrr_ratio),
            )
            if yieldbox.serves(spec)
            else None
        )
        # The one-dual and the class-quadruple searches screen each electrical design themselves
        # (its variants with it).
        self._screen_each = None if topology is Topology.PAIR_PLUS_DISCRETE else self._screen
        self._source: Iterator[Design]
        if topology is Topology.DISCRETE and self._screen is not None:
            block = _class_block(spec, catalog, env, problem.block)
            self._source = ClassQuadSearch(
                spec, catalog, env, block, self._stop, lambda: self.cost_ceiling
            )
            self._screen_each = None
        elif topology is Topology.DISCRETE:
            self._source = discrete_frontier(spec, catalog, env, self._stop, problem.shared)
        elif topology is Topology.PAIR_PLUS_DISCRETE:
            self._source = mixed_frontier(
                spec,
                catalog,
                env,
                self._stop,
                problem.shared,
                lambda: self.cost_ceiling,
                self._screen,
            )
        else:
            self._source = network_frontier(spec, catalog, env, topology)
        self._clock: Clock | None = None
        StreamProgress.__init__(self)

    @property
    def takes_ceiling(self) -> bool:
        """The source reads :attr:`cost_ceiling` (one dual with two discrete parts, the class
        quadruples): the merge runs it after the other enumerations have set it."""
        return isinstance(self._source, ClassQuadSearch) or (
            Topology.PAIR_PLUS_DISCRETE in self.topologies
        )

    def _stop(self) -> bool:
        """Asked by the enumeration between steps: the clock ran out or the run was cancelled."""
        if self._clock is not None and self._clock.remaining() <= 0.0:
            self._out_of_time = True
        return self._out_of_time

    def next(
        self, verifier: Verifier, clock: Clock, workers: int
    ) -> tuple[float, Candidate] | None:
        del workers
        spec = self.problem.spec
        while not self.exhausted:
            if clock.remaining() <= 0.0:
                self.timed_out, self.optimal, self.exhausted = True, False, True
                return None
            started = time.perf_counter()
            self._clock = clock
            design = next(self._source, None)
            clock.build += time.perf_counter() - started
            if design is None:
                if self._out_of_time:  # ended early: nothing is proven
                    self.timed_out, self.optimal = True, False
                self.exhausted = True
                return None
            self.solves += 1
            if self._screen_each and not self._screen_each.passes(design):
                continue  # cannot meet the yield: the exact check would reject it
            started = time.perf_counter()
            verdict = verifier(design, spec)
            clock.verify += time.perf_counter() - started
            clock.judged(verdict.passed)
            if not verdict.passed:
                self.rejected.append((design, verdict))
                continue
            cost = design_cost(design, spec.preferences)
            return cost.total, Candidate(design, cost, verdict)
        return None


#: Topologies the exact enumeration serves on the yield basis (``optimizer.solve.yieldbox``):
#: every one with a network; four discrete parts go through ``optimizer.solve.classquads``
#: where its premises hold, else CP-SAT.
YIELD_ENUMERATED = frozenset(t for t in Topology if t is not Topology.DISCRETE)


def frontier_applies(spec: Spec, topology: Topology, env: LinearEnvironment) -> bool:
    """The exact enumeration serves the lowest-cost objective: on the worst-case basis for every
    topology (``optimizer.solve.frontier``, ``optimizer.solve.mixed``); on the yield basis for
    every topology with a network, through the box and the design screen of
    ``optimizer.solve.yieldbox`` (no same-lot tracking, a yield above one half), and for four
    discrete parts through the class quadruples of ``optimizer.solve.classquads`` (where
    ``classquads.serves``: no source or REF impedance, no line cost, ...). The other
    objectives, and the other four-discrete yield specs, use the CP-SAT streams."""
    if spec.preferences.objective is not Objective.COST:
        return False
    if spec.requirements.cmrr_basis is CmrrBasis.WORST_CASE:
        return True
    if topology is Topology.DISCRETE:
        return classquads.serves(spec, env)
    return topology in YIELD_ENUMERATED and yieldbox.serves(spec)


def make_streams(problem: Problem, spec: Spec) -> list[ModelStream | FrontierStream]:
    """One stream per allowed topology; one dual network plus two discrete parts gets one stream
    per position pair the network may occupy (each such model is much smaller). A stream whose
    parts the catalog lacks altogether (no quad, no dual for its positions, no discrete part for
    a position it needs) is left out: it has no design, so no model is built for it."""
    objective = spec.preferences.objective
    streams: list[ModelStream | FrontierStream] = []
    for topology in Topology:
        if topology not in spec.preferences.topologies:
            continue
        if frontier_applies(spec, topology, problem.env):
            streams.append(FrontierStream(problem, topology))
            continue
        covered, shape_of = problem.options.positions, problem.options.shape
        has_discrete = [bool(problem.block.usable(i)) for i in range(4)]
        if topology is Topology.PAIR_PLUS_DISCRETE:
            for shape in range(len(ALL_SHAPES)):
                rest = [i for i in range(4) if i not in ALL_SHAPES[shape]]
                if ((covered == PAIR) & (shape_of == shape)).any() and all(
                    has_discrete[i] for i in rest
                ):
                    streams.append(ModelStream(problem, frozenset({topology}), objective, shape))
            continue
        if topology is Topology.DISCRETE:
            possible = all(has_discrete)
        elif topology is Topology.QUAD:
            possible = bool((covered == QUAD).any())
        else:
            shapes = EQUAL_SHAPES if topology is Topology.EQUAL_PAIRS else DIVIDER_SHAPES
            possible = all(
                ((covered == PAIR) & (shape_of == ALL_SHAPES.index(s))).any() for s in shapes
            )
        if possible:
            streams.append(ModelStream(problem, frozenset({topology}), objective))
    return streams


def _class_block(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, block: DiscreteBlock
) -> DiscreteBlock:
    """The classes the class-quadruple search runs on (``optimizer.solve.classquads``): with a
    BOM line cost or a per-line stock penalty its own block, the dominance judged alike at
    every position (swapping a dominated part never adds a line) and, with the penalty, on the
    part costs without it (a stocked part is dominated only by a stocked one, so the swap adds
    no penalty either); the problem's own block otherwise."""
    prefs = spec.preferences
    penalised = prefs.line_penalty > 0.0
    if prefs.line_cost <= 0.0 and not penalised:
        return block
    if penalised:
        spec = replace(spec, preferences=replace(prefs, stock_penalty=0.0))
    return build_discrete(catalog, spec, env, same_everywhere=True)
