"""The discrete-versus-network trade in one line: for each kind the spec allows, its best
cost and CMRR, or (when no design of the kind meets the spec) the cheapest design of that kind
at the first relaxed CMRR floor where one exists; and what the extra decibels of the better
kind cost.

The best design of each kind comes from the pick (the ranking and its ``extras``). For a kind
with none, the pick restricted to that kind runs again at the floors the diagnosis relaxes to
(the asked floor less 3, 6, 12, 20, 30 dB, ``optimizer.solve.diagnose``), lowest cost first,
until one has a design: on the worst-case basis each of these is the exact enumeration, so the
line states a proven cheapest design at that floor and the floors proven out of reach. The
whole trade is bounded in time (``TRADE_TIME_LIMIT_S``). Pure: no printing, no files.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace

from ..catalog import Catalog
from ..design import Topology
from ..spec import CmrrBasis, Objective, Spec
from .diagnose import CMRR_STEPS_DB
from .search import Candidate, PickResult, SearchStatus, pick
from .verdict import Verifier

__all__ = ["TRADE_TIME_LIMIT_S", "KindBest", "Trade", "cost_per_db", "kind_trade"]

#: Seconds for the searches of one kind that has no design meeting the spec (they add to every
#: pick where one kind meets nothing, so the bound is short; tests pass their own bound).
TRADE_TIME_LIMIT_S = 1.0


@dataclass(frozen=True)
class KindBest:
    """The best design of one kind: ``meets`` the spec (then the cheapest), or not: then the
    cheapest at ``floor_db``, the first relaxed floor (dB) where the kind has a design, and
    ``out_of_reach_db``, the lowest floor at which the kind was shown to have none (the asked
    floor or a relaxed one); None figures when no relaxed floor gave a design (``timed_out``
    says whether the searches ran out of time)."""

    kind: str  # "four discrete" or "network"
    meets: bool
    cost: float | None
    cmrr_db: float | None
    timed_out: bool = False
    floor_db: float | None = None
    out_of_reach_db: float | None = None


@dataclass(frozen=True)
class Trade:
    """Both kinds' best and the asked floor (dB)."""

    discrete: KindBest
    network: KindBest
    floor_db: float


def cost_per_db(cost_a: float, cmrr_a_db: float, cost_b: float, cmrr_b_db: float) -> float:
    """Relative cost per extra dB going from design a to design b:
    (cost_b − cost_a) / (CMRR_b − CMRR_a); ``nan`` when the CMRRs are equal."""
    extra = cmrr_b_db - cmrr_a_db
    return (cost_b - cost_a) / extra if extra != 0.0 else math.nan


def _cmrr(candidate: Candidate, spec: Spec) -> float:
    """The CMRR the spec judges by: worst case, or the CMRR at the yield target."""
    verdict = candidate.verdict
    if spec.requirements.cmrr_basis is CmrrBasis.YIELD:
        mc = getattr(verdict, "monte_carlo", None)
        return float(mc.cmrr_at_yield_db) if mc is not None else math.nan
    worst = getattr(verdict, "worst_case", None)
    return float(worst.cmrr_db) if worst is not None else math.nan


def _is_discrete(candidate: Candidate) -> bool:
    return candidate.design.topology is Topology.DISCRETE


def _relaxed_floors(asked_db: float) -> tuple[float, ...]:
    """The floors (dB) the trade tries for a kind that meets nothing: the asked floor less each
    step of the diagnosis, at least 1 dB, without repeats."""
    out: list[float] = []
    for step in CMRR_STEPS_DB:
        floor = max(1.0, asked_db - step)
        if floor < asked_db and floor not in out:
            out.append(floor)
    return tuple(out)


def _cheapest_below_floor(
    spec: Spec,
    catalog: Catalog,
    verifier: Verifier,
    kind: tuple[Topology, ...],
    time_s: float,
    capped: bool = False,
) -> KindBest:
    """The cheapest design of ``kind`` at the first relaxed floor that has one, as a
    :class:`KindBest` without its label (no figures when none has); each search gets the time
    left of ``time_s``. ``capped``: the pick searched the kind only below a cost ceiling
    (``PickResult.capped``), so the asked floor is tried first (a design there meets the spec;
    none found in time leaves the asked floor's reach unknown: ``out_of_reach_db`` None)."""
    req = spec.requirements
    deadline = time.perf_counter() + time_s
    out_of_reach: float | None = None if capped else req.cmrr_floor_db
    asked = (req.cmrr_floor_db,) if capped else ()
    for floor in (*asked, *_relaxed_floors(req.cmrr_floor_db)):
        left = deadline - time.perf_counter()
        if left <= 0.0:
            return KindBest("", False, None, None, True, None, out_of_reach)
        relaxed = replace(
            spec,
            requirements=replace(req, cmrr_floor_db=floor),
            preferences=replace(
                spec.preferences, topologies=kind, objective=Objective.COST, cost_cap=None
            ),
        )
        result = pick(relaxed, catalog, verifier, top=1, time_limit_s=left)
        timed_out = result.status is SearchStatus.TIME_LIMIT
        if result.ranked:
            best = result.ranked[0]
            if floor == req.cmrr_floor_db:  # meets the spec
                return KindBest("", True, best.cost.total, _cmrr(best, spec), timed_out)
            return KindBest(
                "", False, best.cost.total, _cmrr(best, spec), timed_out, floor, out_of_reach
            )
        if timed_out:
            return KindBest("", False, None, None, True, None, out_of_reach)
        out_of_reach = floor
    return KindBest("", False, None, None, False, None, out_of_reach)


def kind_trade(
    spec: Spec,
    catalog: Catalog,
    verifier: Verifier,
    result: PickResult,
    *,
    time_limit_s: float = TRADE_TIME_LIMIT_S,
) -> Trade | None:
    """The trade when ``spec`` allows both kinds (None otherwise, or when the pick found
    nothing: the diagnosis speaks then)."""
    allowed = spec.preferences.topologies
    wants_network = tuple(t for t in allowed if t is not Topology.DISCRETE)
    if Topology.DISCRETE not in allowed or not wants_network or not result.ranked:
        return None
    shown = (*result.ranked, *result.extras)
    bests: list[KindBest] = []
    for label, discrete, kind in (
        ("four discrete", True, (Topology.DISCRETE,)),
        ("network", False, wants_network),
    ):
        mine = [c for c in shown if _is_discrete(c) == discrete]
        if mine:
            best = min(mine, key=lambda c: c.cost.total)
            bests.append(KindBest(label, True, best.cost.total, _cmrr(best, spec)))
            continue
        capped = bool(set(kind) & result.capped)
        found = _cheapest_below_floor(spec, catalog, verifier, kind, time_limit_s, capped)
        bests.append(replace(found, kind=label))
    return Trade(bests[0], bests[1], spec.requirements.cmrr_floor_db)
