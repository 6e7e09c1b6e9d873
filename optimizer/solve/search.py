"""The pick: solve the CP-SAT relaxation, verify every candidate exactly, cut the failures,
and collect the N cheapest verified designs.

Because the linear model is a relaxation of the exact check (``optimizer.solve.model``) and a
solve only ever excludes designs already seen, the k-th verified design of a run of proven-optimal
solves is the k-th cheapest design that passes the exact check: the ranking is proven, not
heuristic. When the time limit stops a solve early the status says so, with the gap.

The solver is configured once (``configured_solver``): a fixed seed and a single search worker
by default, so the same inputs give the same designs in the same order on every run.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field, replace
from enum import Enum
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from .. import interrupt
from ..catalog import Catalog
from ..cost import CostBreakdown, design_cost
from ..design import Design, Placement, Topology
from ..spec import CmrrBasis, Objective, Spec, StockPolicy
from . import classquads, yieldbox
from .amplifier import amplifier_limits
from .classquads import ClassQuadSearch
from .discrete import DiscreteBlock, build_discrete, least_cost, value_constants
from .environment import LinearEnvironment, linear_environment
from .frontier import discrete_frontier
from .halfgroups import Shared
from .limits import LOOSE_BUDGET, Limits, limits_for
from .mixed import mixed_frontier
from .networks import network_frontier
from .options import (
    ALL_SHAPES,
    C_DELTA,
    DIVIDER_SHAPES,
    EQUAL_SHAPES,
    PAIR,
    QUAD,
    OptionTable,
    build_options,
)
from .ranking import binding_requirement, family_key, tie_key
from .screen import log_balance_limit
from .verdict import Verdict, Verifier

if TYPE_CHECKING:  # CP-SAT loads on first use: the exact enumerations never need it
    from ortools.sat.python import cp_model

    from .model import BuiltModel, ModelVariant

__all__ = [
    "Candidate",
    "OrderedDesigns",
    "PickResult",
    "SearchProgress",
    "SearchStatus",
    "configured_solver",
    "pick",
]

DEFAULT_TIME_LIMIT_S = 30.0
MAX_CUTS = 400
#: Relative widening of the budget of ``Problem.discrete_cost_floor`` against the model's own
#: rounding of its budget and spreads to integer units (the model stays the looser of the two).
FLOOR_SLACK = 1e-6
#: Most designs taken beyond the count asked for, to complete the tie group at the cut and (for
#: distinct choices) the families: a bound on the work, reported as ``PickResult.ties_cut``.
MAX_EXTRA_DESIGNS = 200
NETWORK_TOPOLOGIES = frozenset(
    {Topology.QUAD, Topology.EQUAL_PAIRS, Topology.DIVIDER_PAIRS, Topology.PAIR_PLUS_DISCRETE}
)


class SearchStatus(str, Enum):
    """How a search ended."""

    OPTIMAL = "proven_optimal"
    TIME_LIMIT = "time_limit"
    INFEASIBLE = "infeasible"


@dataclass(frozen=True)
class Candidate:
    """A verified design with its cost and the verification result."""

    design: Design
    cost: CostBreakdown
    verdict: Verdict


@dataclass(frozen=True)
class PickResult:
    """The outcome of :func:`pick`.

    ``ranked``: verified designs, cheapest first (by the spec's objective); ``extras``: the best
    discrete and best network design when the ranked list lacks one of the kinds; ``status`` and
    ``gap`` (relative, for a time-limited search); timing in seconds; ``cuts``: candidates the
    exact check rejected."""

    ranked: tuple[Candidate, ...]
    extras: tuple[Candidate, ...]
    status: SearchStatus
    gap: float | None
    solve_seconds: float
    verify_seconds: float
    build_seconds: float
    cuts: int
    solves: int
    option_count: int
    rejected: tuple[tuple[Design, Verdict], ...] = field(default=())
    #: Per ranked design, the 1-based number of its distinct choice (family, see
    #: ``optimizer.solve.ranking``); every design of one family has the same number.
    choices: tuple[int, ...] = field(default=())
    #: The collection stopped at MAX_EXTRA_DESIGNS: the last tie group (or the lists of
    #: family members) may be incomplete; the cost order of what is shown stays exact.
    ties_cut: bool = False
    #: Topologies whose search was given a cost ceiling (the cost of the last ranked design):
    #: designs dearer than it were never looked for, so a kind missing from ``ranked`` and
    #: ``extras`` may still have designs that meet the spec.
    capped: frozenset[Topology] = field(default=frozenset())


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


@dataclass(frozen=True)
class SearchProgress:
    """How far a running search has got (for a progress display): seconds since it started,
    the time limit (s), candidates the exact check has judged and how many of them passed."""

    elapsed_s: float
    time_limit_s: float
    checked: int
    passed: int


#: Least seconds between two progress reports.
PROGRESS_INTERVAL_S = 0.1


@dataclass
class _Clock:
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


@dataclass(frozen=True)
class _ModelParts:
    """The option table, discrete block and value constants of the CP-SAT model."""

    options: OptionTable
    block: DiscreteBlock
    constants: tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]


@dataclass(frozen=True)
class Problem:
    """Everything the model is built from (kept together for re-builds). The CP-SAT model's
    parts (options, discrete block, value constants) are built on first use: a pick served by
    the exact enumerations alone never needs them."""

    spec: Spec
    catalog: Catalog
    env: LinearEnvironment
    limits: Limits
    _parts: list[_ModelParts] = field(default_factory=list, compare=False, repr=False)
    shared: Shared = field(default_factory=Shared, compare=False, repr=False)
    """The exact enumerations' shared parts (:func:`prepare` keeps the half records only when
    the one-dual-two-discrete search will read them)."""

    def _model_parts(self) -> _ModelParts:
        if not self._parts:
            block = build_discrete(self.catalog, self.spec, self.env)
            self._parts.append(
                _ModelParts(
                    build_options(self.catalog, self.spec, self.env),
                    block,
                    value_constants(block, self.spec, self.env),
                )
            )
        return self._parts[0]

    @property
    def options(self) -> OptionTable:
        return self._model_parts().options

    @property
    def block(self) -> DiscreteBlock:
        return self._model_parts().block

    @property
    def constants(self) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        return self._model_parts().constants

    @property
    def built(self) -> bool:
        """Whether the CP-SAT model's parts have been built."""
        return bool(self._parts)

    def build(self, variant: ModelVariant) -> BuiltModel:
        from .model import build_model

        return build_model(
            self.options, self.block, self.spec, self.env, self.limits, variant, self.constants
        )

    def discrete_cost_floor(self) -> float:
        """A lower bound on the cost of every four-discrete design the CP-SAT model admits: at
        each of the model's mismatch vertices, the least cost of four classes whose spreads,
        at each position's least weight over its values, fit the model's budget
        (``discrete.least_cost``), the largest over the vertices; 0 where the budget is loose.
        Relative cost units: the parts and their placements (the model's per-placement stock
        penalty left out: the cost charges it per line) and one BOM line."""
        from .cpterms import extreme_vertices

        limits, block, spec = self.limits, self.block, self.spec
        yield_basis = spec.requirements.cmrr_basis is CmrrBasis.YIELD
        if not 0.0 < limits.cmrr_budget < LOOSE_BUDGET or (yield_basis and limits.z <= 0.0):
            return 0.0
        _, fraction, _ = self.constants
        usable = [block.usable(i) for i in range(4)]
        if not all(usable):
            return math.inf
        spread = block.var if yield_basis else block.own
        limit = limits.cmrr_budget / limits.z if yield_basis else limits.cmrr_budget
        budget = (limit**2 if yield_basis else limit) * (1.0 + FLOOR_SLACK)
        sides = extreme_vertices(self.env.vertices, spec.requirements.gain)
        cost = block.cost - block.penalty
        floor = 0.0
        for v in sorted(set(sides.delta_high + sides.delta_low)):
            f = np.array([fraction[block.value_indices(i), v, i].min() for i in range(4)])
            w = np.abs(C_DELTA) * f
            weights = w**2 if yield_basis else w
            floor = max(floor, least_cost(cost, spread, usable, weights, budget))
        return floor + spec.preferences.line_cost

    @property
    def size(self) -> int:
        return len(self.options) + sum(
            len(self.block.value_indices(i)) + len(self.block.usable(i)) for i in range(4)
        )

    def decode(
        self, solver: cp_model.CpSolver, built: BuiltModel
    ) -> tuple[list[cp_model.IntVar], Design]:
        """The chosen decision literals and the design they make."""
        chosen = [lit for lit in built.literals() if solver.boolean_value(lit)]
        slots: dict[int, Placement] = {}
        package_count: dict[str, int] = {}
        for i, lit in enumerate(built.x):
            if not solver.boolean_value(lit):
                continue
            recipe = built.options.makers[i]
            network = self.catalog.networks[recipe[0][2]]
            package = package_count.get(network.part_id, 0)
            package_count[network.part_id] = package + 1
            for position, _, _, element in recipe:
                slots[position] = Placement(f"R{position + 1}", network, element, package)
        for position in range(4):
            ks = [k for k, lit in built.value[position].items() if solver.boolean_value(lit)]
            cs = [c for c, lit in built.grade[position].items() if solver.boolean_value(lit)]
            if ks and cs:
                row = int(self.block.part_row[cs[0], ks[0]])
                slots[position] = Placement(f"R{position + 1}", self.catalog.discrete_part(row))
        design = Design((slots[0], slots[1], slots[2], slots[3]))
        return chosen, design


class _Progress:
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


class _Stream(_Progress):
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
        _Progress.__init__(self)

    def _model(self, clock: _Clock) -> BuiltModel:
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

    def _below_floor(self, clock: _Clock) -> bool:
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
        self, verifier: Verifier, clock: _Clock, workers: int
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


class _FrontierStream(_Progress):
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
            # With a BOM line cost, its own block: dominance judged alike at every position, so
            # swapping a dominated part never adds a line (``optimizer.solve.classquads``).
            block = (
                build_discrete(catalog, spec, env, same_everywhere=True)
                if spec.preferences.line_cost > 0.0
                else problem.block
            )
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
        self._clock: _Clock | None = None
        _Progress.__init__(self)

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
        self, verifier: Verifier, clock: _Clock, workers: int
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


def _frontier_applies(spec: Spec, topology: Topology, env: LinearEnvironment) -> bool:
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


def prepare(spec: Spec, catalog: Catalog) -> Problem:
    """The environment and limits of the linear model; its options, discrete block and value
    constants follow on first use (:class:`Problem`)."""
    env = linear_environment(spec)
    return Problem(spec, catalog, env, limits_for(spec, env), shared=Shared())


def pick(
    spec: Spec,
    catalog: Catalog,
    verifier: Verifier,
    *,
    top: int | None = None,
    time_limit_s: float | None = None,
    workers: int = 1,
    distinct: bool = False,
    progress: Callable[[SearchProgress], None] | None = None,
) -> PickResult:
    """The ``top`` best designs (by the spec's objective) from ``catalog`` that pass ``verifier``.

    One stream of designs per allowed topology, merged best first (ties go to the topology
    listed first in :class:`Topology`). ``distinct`` (the CLI's ranking): ``top`` counts
    distinct choices (families, ``optimizer.solve.ranking``); designs of equal cost are ordered
    by the tie-breaks there, the whole tie group at the cut being fetched first; ``ranked``
    holds every design of the first ``top`` families, grouped by family and numbered in
    ``PickResult.choices``. Infeasibility is not an exception here: an empty
    ``ranked`` with status INFEASIBLE lets the caller run the diagnosis. ``progress`` (if
    given) is called with a :class:`SearchProgress` at most every
    :data:`PROGRESS_INTERVAL_S` seconds while the search runs (between steps; a CP-SAT solve
    is one step)."""
    wanted = top if top is not None else spec.preferences.alternatives
    started = time.perf_counter()
    clock = _Clock(
        deadline=started + (time_limit_s if time_limit_s is not None else DEFAULT_TIME_LIMIT_S),
        started=started,
        report=progress,
    )
    problem = prepare(spec, catalog)
    clock.build += time.perf_counter() - started
    streams = _streams(problem, spec)
    cp_sat = any(isinstance(s, _Stream) for s in streams)
    if (
        (cp_sat and problem.size == 0)
        or problem.limits.cmrr_budget <= 0.0
        or amplifier_limits(spec)
    ):
        streams = []  # nothing can pass: leave the reasons to the diagnosis
    replay: list[list[tuple[float, Candidate]]] = [[] for _ in streams]

    def advance(i: int) -> tuple[float, Candidate] | None:
        if replay[i]:
            return replay[i].pop(0)
        return streams[i].next(verifier, clock, workers)

    _bound_later_streams(streams, replay, wanted, spec, verifier, clock, workers, distinct)
    heads: list[tuple[float, Candidate] | None] = [advance(i) for i in range(len(streams))]
    taken: list[tuple[float, Candidate]] = []
    families: set[tuple[object, ...]] = set()
    ties_cut = False
    while True:
        live = [(head[0], i) for i, head in enumerate(heads) if head is not None]
        if not live:
            break
        key, best = min(live)
        if distinct:
            if len(families) >= wanted and not _same_key(key, taken[-1][0]):
                break  # the tie group at the cut is complete
            if len(taken) >= wanted + MAX_EXTRA_DESIGNS:
                ties_cut = True
                break
        head = heads[best]
        assert head is not None
        taken.append(head)
        families.add(family_key(head[1].design, head[1].cost))
        if not distinct and len(taken) >= wanted:
            # Plain ranking: the stream's next design is not needed (the extras come from the
            # streams of the other kind).
            heads[best] = None
            break
        heads[best] = advance(best)
    found, choices = _order(taken, wanted, distinct)
    kept = {id(c) for c in found}
    left = [t for t in taken if id(t[1]) not in kept]
    extras = _best_of_each_kind(found, streams, heads, left)
    timed_out = any(s.timed_out for s in streams)
    rejected = [r for s in streams for r in s.rejected]
    if found:
        proven = not timed_out and all(s.optimal for s in streams)
        status = SearchStatus.OPTIMAL if proven else SearchStatus.TIME_LIMIT
    else:
        status = (
            SearchStatus.TIME_LIMIT
            if timed_out or len(rejected) >= MAX_CUTS
            else SearchStatus.INFEASIBLE
        )
    gaps = [s.gap for s in streams if s.gap is not None]
    return PickResult(
        ranked=tuple(found),
        extras=extras,
        status=status,
        gap=max(gaps) if gaps else None,
        solve_seconds=clock.solve,
        verify_seconds=clock.verify,
        build_seconds=clock.build,
        cuts=len(rejected),
        solves=sum(s.solves for s in streams),
        option_count=problem.size if problem.built else 0,
        rejected=tuple(rejected),
        choices=choices,
        ties_cut=ties_cut,
        capped=frozenset(t for s in streams if s.capped for t in s.topologies),
    )


def _same_key(a: float, b: float) -> bool:
    """Two ranking keys are a tie (equal up to rounding of sums of relative costs)."""
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)


def _order(
    taken: list[tuple[float, Candidate]], wanted: int, distinct: bool
) -> tuple[list[Candidate], tuple[int, ...]]:
    """The taken designs (best key first) with each tie group sorted by the tie-breaks of
    ``optimizer.solve.ranking`` and cut to the designs of the first ``wanted`` families,
    grouped by family (``distinct``), or the first ``wanted`` in merge order; with each
    design's family number."""
    if not distinct:  # the merge order (ties: the topology listed first)
        numbers_plain: dict[tuple[object, ...], int] = {}
        plain = [c for _, c in taken[:wanted]]
        fams = [family_key(c.design, c.cost) for c in plain]
        return plain, tuple(numbers_plain.setdefault(f, len(numbers_plain) + 1) for f in fams)
    ordered: list[Candidate] = []
    start = 0
    while start < len(taken):
        end = start
        while end < len(taken) and _same_key(taken[end][0], taken[start][0]):
            end += 1
        group = [c for _, c in taken[start:end]]
        binding = binding_requirement([c.verdict for c in group])
        ordered.extend(sorted(group, key=lambda c: tie_key(c.design, c.verdict, binding)))
        start = end
    numbers: dict[tuple[object, ...], int] = {}
    members: dict[int, list[Candidate]] = {}
    for candidate in ordered:
        fam = family_key(candidate.design, candidate.cost)
        number = numbers.setdefault(fam, len(numbers) + 1)
        members.setdefault(number, []).append(candidate)
    found: list[Candidate] = []
    choices: list[int] = []
    for number in range(1, min(wanted, len(members)) + 1):
        found.extend(members[number])
        choices.extend([number] * len(members[number]))
    return found, tuple(choices)


def _bound_later_streams(
    streams: list[_Stream | _FrontierStream],
    replay: list[list[tuple[float, Candidate]]],
    wanted: int,
    spec: Spec,
    verifier: Verifier,
    clock: _Clock,
    workers: int,
    distinct: bool = False,
) -> None:
    """Take the wanted number of designs from the exact enumerations first (kept in ``replay``
    for the merge); the cost of the last of them bounds the CP-SAT streams' objective and the
    one-dual-two-discrete enumeration from above: a design dearer than it cannot enter the
    ranking, so the bound removes nothing the ranking needs, gives CP-SAT a tight bound from
    its first solve and spares the enumeration the placements above it. CP-SAT streams are
    bounded only where the model's objective is the exact cost (lowest cost; no per-line stock
    penalty, which the model charges per placement)."""
    prefs = spec.preferences
    if prefs.objective is not Objective.COST:
        return
    exact_cost = not (prefs.stock is StockPolicy.PREFER and prefs.stock_penalty > 0.0)
    bounded = [
        s
        for s in streams
        if (isinstance(s, _Stream) and exact_cost)
        or (isinstance(s, _FrontierStream) and s.takes_ceiling)
    ]
    fronts = [
        i for i, s in enumerate(streams) if isinstance(s, _FrontierStream) and not s.takes_ceiling
    ]
    if not fronts or not (bounded or any(isinstance(s, _Stream) for s in streams)):
        return
    heads = {i: streams[i].next(verifier, clock, workers) for i in fronts}
    taken = 0
    families: set[tuple[object, ...]] = set()
    last = math.inf
    while taken < wanted:
        live = [(head[0], i) for i, head in heads.items() if head is not None]
        if not live:
            break
        last, best = min(live)
        head = heads[best]
        assert head is not None
        replay[best].append(head)
        families.add(family_key(head[1].design, head[1].cost))
        # Distinct choices: the bound is the cost of the wanted-th family, not design.
        taken = len(families) if distinct else taken + 1
        heads[best] = streams[best].next(verifier, clock, workers) if taken < wanted else None
    for i, head in heads.items():
        if head is not None:
            replay[i].append(head)
    if taken < wanted:
        return
    for stream in bounded:
        stream.cost_ceiling = last
        stream.capped = True
    for stream in streams:
        if isinstance(stream, _Stream):
            stream.rank_limit = last


def _streams(problem: Problem, spec: Spec) -> list[_Stream | _FrontierStream]:
    """One stream per allowed topology; one dual network plus two discrete parts gets one stream
    per position pair the network may occupy (each such model is much smaller). A stream whose
    parts the catalog lacks altogether (no quad, no dual for its positions, no discrete part for
    a position it needs) is left out: it has no design, so no model is built for it."""
    objective = spec.preferences.objective
    streams: list[_Stream | _FrontierStream] = []
    for topology in Topology:
        if topology not in spec.preferences.topologies:
            continue
        if _frontier_applies(spec, topology, problem.env):
            streams.append(_FrontierStream(problem, topology))
            continue
        covered, shape_of = problem.options.positions, problem.options.shape
        has_discrete = [bool(problem.block.usable(i)) for i in range(4)]
        if topology is Topology.PAIR_PLUS_DISCRETE:
            for shape in range(len(ALL_SHAPES)):
                rest = [i for i in range(4) if i not in ALL_SHAPES[shape]]
                if ((covered == PAIR) & (shape_of == shape)).any() and all(
                    has_discrete[i] for i in rest
                ):
                    streams.append(_Stream(problem, frozenset({topology}), objective, shape))
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
            streams.append(_Stream(problem, frozenset({topology}), objective))
    return streams


def _best_of_each_kind(
    found: list[Candidate],
    streams: list[_Stream | _FrontierStream],
    heads: list[tuple[float, Candidate] | None],
    left: Sequence[tuple[float, Candidate]] = (),
) -> tuple[Candidate, ...]:
    """When the ranking shows only discrete or only network designs although both kinds are
    allowed, add the best design of the missing kind (the next head of its streams, or a design
    taken but left out of the ranking: ``left``)."""
    if not found:
        return ()
    shown_discrete = any(c.design.topology is Topology.DISCRETE for c in found)
    shown_network = any(c.design.topology is not Topology.DISCRETE for c in found)
    extras: list[Candidate] = []
    for want_discrete, shown in ((True, shown_discrete), (False, shown_network)):
        if shown:
            continue
        pool = [
            head
            for stream, head in zip(streams, heads, strict=False)
            if head is not None and (Topology.DISCRETE in stream.topologies) == want_discrete
        ]
        pool += [t for t in left if (t[1].design.topology is Topology.DISCRETE) == want_discrete]
        if pool:
            extras.append(min(pool, key=lambda h: h[0])[1])
    return tuple(extras)


def with_objective(spec: Spec, objective: Objective) -> Spec:
    """``spec`` with another objective (for the CLI's overrides)."""
    return replace(spec, preferences=replace(spec.preferences, objective=objective))


class OrderedDesigns:
    """Every design of ``spec`` from ``catalog`` that the search's screens let through, best
    first by the ranking key (the exact cost for the lowest-cost objective), one at a time and
    with no fixed count: the topology streams of :func:`pick`, merged as :func:`pick` merges
    them (ties to the topology listed first). Each design is judged by ``verifier`` as it is
    taken; a verifier that passes everything defers the exact check to the caller (the board
    search does): each stream still yields in nondecreasing key, so the order stays exact.

    ``hold_cp_sat``: the CP-SAT streams wait until :meth:`release` (the exact enumerations run
    alone, so a caller can first learn a bound); the designs they then bring may be cheaper
    than some already taken, but each later :meth:`peek` is again the least key of every design
    not yet taken. ``peek`` is None when none is left; ``proven`` says that every stream ran
    out without the clock (``deadline``, a ``time.perf_counter`` value), a signal or a hold
    cutting it short, so no design was left out (beyond a released ceiling)."""

    def __init__(
        self,
        spec: Spec,
        catalog: Catalog,
        verifier: Verifier,
        *,
        deadline: float,
        workers: int = 1,
        hold_cp_sat: bool = False,
    ) -> None:
        self._clock = _Clock(deadline=deadline)
        started = time.perf_counter()
        problem = prepare(spec, catalog)
        self._clock.build += time.perf_counter() - started
        self._streams = _streams(problem, spec)
        cp_sat = any(isinstance(s, _Stream) for s in self._streams)
        if (
            (cp_sat and problem.size == 0)
            or problem.limits.cmrr_budget <= 0.0
            or amplifier_limits(spec)
        ):
            self._streams = []  # nothing can pass
        self._problem = problem
        self._verifier = verifier
        self._workers = workers
        self._held = hold_cp_sat
        self._seen: set[Design] = set()  # designs the CP-SAT streams gave (two may overlap)
        self._extended: set[int] = set()  # CP-SAT streams continued by a later one
        self._heads: list[tuple[float, Candidate] | None] = [None] * len(self._streams)
        self._started = [False] * len(self._streams)

    def _live(self) -> list[tuple[float, int]]:
        for i, stream in enumerate(self._streams):
            if not self._started[i] and not (self._held and isinstance(stream, _Stream)):
                self._started[i] = True
                self._heads[i] = self._next(stream)
        return [(head[0], i) for i, head in enumerate(self._heads) if head is not None]

    @property
    def has_cp_sat(self) -> bool:
        """Some stream is a CP-SAT stream."""
        return any(isinstance(s, _Stream) for s in self._streams)

    @property
    def holding(self) -> bool:
        """Some CP-SAT stream still waits for :meth:`release`."""
        return self._held and any(isinstance(s, _Stream) for s in self._streams)

    def release(self, ceiling: float = math.inf) -> None:
        """Let the CP-SAT streams in, each bounded above by ``ceiling`` (designs dearer than it
        are left out; ``inf``: none). Called again with a higher ceiling, it adds for each
        CP-SAT stream a stream of the designs from its old ceiling up to the new one (a design
        both give is taken once)."""
        for i, stream in enumerate(list(self._streams)):
            if not isinstance(stream, _Stream):
                continue
            if not self._started[i]:
                stream.cost_ceiling = min(stream.cost_ceiling, ceiling)
                continue
            if ceiling <= stream.cost_ceiling or i in self._extended:
                continue
            self._extended.add(i)
            from .cpterms import COST_SCALE

            fresh = _Stream(self._problem, stream.topologies, stream.objective, stream.pair_shape)
            fresh.cost_ceiling = ceiling
            built = fresh._model(self._clock)
            if not built.infeasible and built.goal is not None:
                slack = 4 * len(built.literals()) + 1  # each term rounds by half a unit at most
                built.model.add(built.goal >= math.floor(stream.cost_ceiling * COST_SCALE) - slack)
            self._streams.append(fresh)
            self._heads.append(None)
            self._started.append(False)
        self._held = False

    def peek(self) -> float | None:
        live = self._live()
        return min(live)[0] if live else None

    def next(self) -> Candidate | None:
        live = self._live()
        if not live:
            return None
        _, best = min(live)
        head = self._heads[best]
        assert head is not None
        stream = self._streams[best]
        self._heads[best] = self._next(stream)
        return head[1]

    def _next(self, stream: _Stream | _FrontierStream) -> tuple[float, Candidate] | None:
        while True:
            head = stream.next(self._verifier, self._clock, self._workers)
            if head is None or not isinstance(stream, _Stream):
                return head
            if head[1].design not in self._seen:
                self._seen.add(head[1].design)
                return head

    @property
    def proven(self) -> bool:
        return (
            not self.holding
            and not any(s.timed_out for s in self._streams)
            and all(s.optimal for s in self._streams)
        )

    @property
    def seconds(self) -> tuple[float, float, float]:
        """(build, solve, verify) seconds so far."""
        return self._clock.build, self._clock.solve, self._clock.verify
