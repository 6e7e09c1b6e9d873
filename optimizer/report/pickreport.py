"""What the outputs of ``quartet pick`` show (:class:`PickReport`), gathered by
:func:`build_pick_report`: the Monte Carlo of the displayed designs is filled in before, by
``optimizer.statistics``; the report computes nothing.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from ..cost import CostBreakdown
from ..design import Design, Topology
from ..solve.search import Candidate, PickResult
from ..solve.trade import Trade
from ..spec import Spec
from ..verify import Verification

if TYPE_CHECKING:  # the diagnosis module is imported only when a pick finds nothing
    from ..solve.diagnose import Diagnosis

__all__ = [
    "PickReport",
    "Shown",
    "build_pick_report",
]


@dataclass(frozen=True)
class Shown:
    """One design the report shows: ``rank`` (1-based; None for a best-of-the-other-kind
    design), its cost and its verification with the Monte-Carlo result filled in."""

    rank: int | None
    design: Design
    cost: CostBreakdown
    verification: Verification

    @property
    def kind_label(self) -> str:
        if self.rank is not None:
            return f"rank {self.rank}"
        if self.design.topology is Topology.DISCRETE:
            return "best four-discrete design"
        return "best network design"


@dataclass(frozen=True)
class PickReport:
    """Everything the outputs of ``quartet pick`` show."""

    spec: Spec
    result: PickResult
    ranked: tuple[Shown, ...]
    other_kind: tuple[Shown, ...]
    diagnosis: Diagnosis | None
    designs_asked: int
    time_limit_s: float
    statistics_seconds: float
    cautions: tuple[str, ...]
    #: A signal (SIGINT, SIGTERM) stopped the search: the designs are those found so far.
    interrupted: bool = False
    #: Per ranked choice, the other designs of its family (same cost, another base value or
    #: another part with the same elements), best first; their Monte Carlo is not run.
    members: tuple[tuple[Shown, ...], ...] = ()
    #: Some catalog part has house stock: the tables show each part's stock.
    stock_known: bool = False
    #: Both kinds (four discrete parts, a network) allowed: each kind's best (None otherwise).
    trade: Trade | None = None

    @property
    def winner(self) -> Shown | None:
        return self.ranked[0] if self.ranked else None


def _verification(verdict: object) -> Verification:
    if not isinstance(verdict, Verification):
        raise TypeError(f"expected the verdict of optimizer.verify.verify, got {type(verdict)}")
    return verdict


def build_pick_report(
    spec: Spec,
    result: PickResult,
    *,
    designs_asked: int,
    time_limit_s: float,
    cautions: Sequence[str],
    diagnosis: Diagnosis | None = None,
    interrupted: bool = False,
    stock_known: bool = False,
    trade: Trade | None = None,
    statistics_seconds: float = 0.0,
) -> PickReport:
    """The report of one pick, computing nothing: the displayed designs' Monte Carlo is filled
    in beforehand (``optimizer.statistics.with_statistics``, whose seconds are
    ``statistics_seconds``); a design without one shows "n/a" for its statistical figures."""
    choices = result.choices or tuple(range(1, len(result.ranked) + 1))
    leaders: list[Candidate] = []
    followers: dict[int, list[Candidate]] = {}
    for number, candidate in zip(choices, result.ranked, strict=True):
        if number in followers:
            followers[number].append(candidate)
        else:
            followers[number] = []
            leaders.append(candidate)
    shown = (*leaders, *result.extras)
    verdicts = [_verification(c.verdict) for c in shown]
    count = len(leaders)
    ranked = tuple(
        Shown(i + 1, c.design, c.cost, v)
        for i, (c, v) in enumerate(zip(leaders, verdicts[:count], strict=True))
    )
    members = tuple(
        tuple(Shown(i + 1, c.design, c.cost, _verification(c.verdict)) for c in group)
        for i, group in enumerate(followers.values())
    )
    others = tuple(
        Shown(None, c.design, c.cost, v)
        for c, v in zip(result.extras, verdicts[count:], strict=True)
    )
    return PickReport(
        spec=spec,
        result=result,
        ranked=ranked,
        other_kind=others,
        members=members,
        stock_known=stock_known,
        trade=trade,
        diagnosis=diagnosis,
        designs_asked=designs_asked,
        time_limit_s=time_limit_s,
        statistics_seconds=statistics_seconds,
        cautions=tuple(cautions),
        interrupted=interrupted,
    )
