"""The pick: solve the CP-SAT relaxation, verify every candidate exactly, cut the failures,
and collect the N cheapest verified designs.

Because the linear model is a relaxation of the exact check (``optimizer.solve.model``) and a
solve only ever excludes designs already seen, the k-th verified design of a run of proven-optimal
solves is the k-th cheapest design that passes the exact check: the ranking is proven, not
heuristic. When the time limit stops a solve early the status says so, with the gap.

The solver is configured once (``configured_solver``): a fixed seed and a single search worker
by default, so the same inputs give the same designs in the same order on every run.

The streams it merges are in ``solve.streams``, what their models are built from in
``solve.problem``, what it returns in ``solve.results``.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import replace

from ..catalog import Catalog
from ..design import Design, Topology
from ..spec import Objective, Spec
from .amplifier import amplifier_limits
from .problem import prepare
from .ranking import binding_requirement, family_key, tie_key
from .results import Candidate, PickResult, SearchProgress, SearchStatus
from .streams import MAX_CUTS, Clock, FrontierStream, ModelStream, make_streams
from .verdict import Verifier

__all__ = [
    "Candidate",
    "OrderedDesigns",
    "PickResult",
    "SearchProgress",
    "SearchStatus",
    "pick",
    "with_objective",
]


DEFAULT_TIME_LIMIT_S = 30.0


#: Most designs taken beyond the count asked for, to complete the tie group at the cut and (for
#: distinct choices) the families: a bound on the work, reported as ``PickResult.ties_cut``.
MAX_EXTRA_DESIGNS = 200


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
    clock = Clock(
        deadline=started + (time_limit_s if time_limit_s is not None else DEFAULT_TIME_LIMIT_S),
        started=started,
        report=progress,
    )
    problem = prepare(spec, catalog)
    clock.build += time.perf_counter() - started
    streams = make_streams(problem, spec)
    cp_sat = any(isinstance(s, ModelStream) for s in streams)
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
    streams: list[ModelStream | FrontierStream],
    replay: list[list[tuple[float, Candidate]]],
    wanted: int,
    spec: Spec,
    verifier: Verifier,
    clock: Clock,
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
    exact_cost = prefs.line_penalty <= 0.0
    bounded = [
        s
        for s in streams
        if (isinstance(s, ModelStream) and exact_cost)
        or (isinstance(s, FrontierStream) and s.takes_ceiling)
    ]
    fronts = [
        i for i, s in enumerate(streams) if isinstance(s, FrontierStream) and not s.takes_ceiling
    ]
    if not fronts or not (bounded or any(isinstance(s, ModelStream) for s in streams)):
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
        if isinstance(stream, ModelStream):
            stream.rank_limit = last


def _best_of_each_kind(
    found: list[Candidate],
    streams: list[ModelStream | FrontierStream],
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
        self._clock = Clock(deadline=deadline)
        started = time.perf_counter()
        problem = prepare(spec, catalog)
        self._clock.build += time.perf_counter() - started
        self._streams = make_streams(problem, spec)
        cp_sat = any(isinstance(s, ModelStream) for s in self._streams)
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
            if not self._started[i] and not (self._held and isinstance(stream, ModelStream)):
                self._started[i] = True
                self._heads[i] = self._next(stream)
        return [(head[0], i) for i, head in enumerate(self._heads) if head is not None]

    @property
    def has_cp_sat(self) -> bool:
        """Some stream is a CP-SAT stream."""
        return any(isinstance(s, ModelStream) for s in self._streams)

    @property
    def holding(self) -> bool:
        """Some CP-SAT stream still waits for :meth:`release`."""
        return self._held and any(isinstance(s, ModelStream) for s in self._streams)

    def release(self, ceiling: float = math.inf) -> None:
        """Let the CP-SAT streams in, each bounded above by ``ceiling`` (designs dearer than it
        are left out; ``inf``: none). Called again with a higher ceiling, it adds for each
        CP-SAT stream a stream of the designs from its old ceiling up to the new one (a design
        both give is taken once)."""
        for i, stream in enumerate(list(self._streams)):
            if not isinstance(stream, ModelStream):
                continue
            if not self._started[i]:
                stream.cost_ceiling = min(stream.cost_ceiling, ceiling)
                continue
            if ceiling <= stream.cost_ceiling or i in self._extended:
                continue
            self._extended.add(i)
            from .cpterms import COST_SCALE

            fresh = ModelStream(
                self._problem, stream.topologies, stream.objective, stream.pair_shape
            )
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

    def _next(self, stream: ModelStream | FrontierStream) -> tuple[float, Candidate] | None:
        while True:
            head = stream.next(self._verifier, self._clock, self._workers)
            if head is None or not isinstance(stream, ModelStream):
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
