"""The discrete-versus-network trade in one line: for each kind the spec allows, its best
cost and CMRR, or (when no design of the kind meets the spec) the best CMRR the kind reaches
and at what cost; and what the extra decibels of the better kind cost.

The best design of each kind comes from the pick (the ranking and its ``extras``). For a kind
with none, a bounded search (``TRADE_TIME_LIMIT_S``) restricted to that kind, with the CMRR
floor relaxed as the diagnosis relaxes it (``optimizer.solve.diagnose``), ranks by the most
CMRR margin. Pure: no printing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from ..catalog import Catalog
from ..design import Topology
from ..spec import CmrrBasis, Objective, Spec
from .diagnose import _relaxed_floor
from .search import Candidate, PickResult, SearchStatus, Verifier, pick

__all__ = ["TRADE_TIME_LIMIT_S", "KindBest", "Trade", "cost_per_db", "kind_trade"]

#: Seconds for the search of one kind that has no design meeting the spec (it adds to every
#: pick where one kind meets nothing, so it is kept short; tests pass their own bound).
TRADE_TIME_LIMIT_S = 1.0

NETWORK_TOPOLOGIES = tuple(t for t in Topology if t is not Topology.DISCRETE)


@dataclass(frozen=True)
class KindBest:
    """The best design of one kind: ``meets`` the spec (then the cheapest), or not (then the
    one with the most CMRR found, ``cmrr_db`` below the floor); None figures when the bounded
    search found nothing (``timed_out`` says whether it ran out of time)."""

    kind: str  # "four discrete" or "network"
    meets: bool
    cost: float | None
    cmrr_db: float | None
    timed_out: bool = False


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


def _best_below_floor(
    spec: Spec, catalog: Catalog, verifier: Verifier, kind: tuple[Topology, ...], time_s: float
) -> tuple[Candidate | None, bool]:
    """The design of ``kind`` with the most CMRR once the floor is relaxed (bounded search)."""
    req = spec.requirements
    relaxed = replace(
        spec,
        requirements=replace(req, cmrr_floor_db=_relaxed_floor(req.cmrr_floor_db)),
        preferences=replace(
            spec.preferences, topologies=kind, objective=Objective.CMRR_MARGIN, cost_cap=None
        ),
    )
    result = pick(relaxed, catalog, verifier, top=1, time_limit_s=time_s)
    found = result.ranked[0] if result.ranked else None
    return found, result.status is SearchStatus.TIME_LIMIT


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
        found, timed_out = _best_below_floor(spec, catalog, verifier, kind, time_limit_s)
        if found is None:
            bests.append(KindBest(label, False, None, None, timed_out))
        else:
            bests.append(KindBest(label, False, found.cost.total, _cmrr(found, spec), timed_out))
    return Trade(bests[0], bests[1], spec.requirements.cmrr_floor_db)
