"""What a pick returns: how the search ended (:class:`SearchStatus`), each verified design with its
cost and verdict (:class:`Candidate`), the whole outcome (:class:`PickResult`), and the progress
reports of a running search (:class:`SearchProgress`)."""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum

from ..cost import CostBreakdown
from ..design import Design, Topology
from .verdict import Verdict

__all__ = [
    "PROGRESS_INTERVAL_S",
    "Candidate",
    "PickResult",
    "SearchProgress",
    "SearchStatus",
]


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
