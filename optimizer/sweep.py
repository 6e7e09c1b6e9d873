"""Cost against a requirement: the cheapest design at each CMRR floor (or each gain accuracy)
of a range, as two series — four discrete parts only, and the network builds only — each found
by :func:`optimizer.solve.search.pick` with ``top=1`` on a copy of the spec whose requirement
(and allowed topologies) are replaced, ranked by lowest cost.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from typing import Literal

from .catalog import Catalog
from .design import NETWORK_TOPOLOGIES, Design, Topology
from .errors import SpecError
from .solve.search import PickResult, SearchStatus, pick
from .spec import Objective, Spec
from .verify import verify_candidate

__all__ = [
    "DISCRETE_TOPOLOGIES",
    "NETWORK_TOPOLOGIES",
    "SeriesPoint",
    "SweepAxis",
    "SweepPoint",
    "SweepResult",
    "parse_range",
    "sweep",
    "sweep_cmrr",
]

#: What a sweep varies: the CMRR floor (dB) or the gain accuracy (a fraction).
SweepAxis = Literal["cmrr", "gain_accuracy"]

DISCRETE_TOPOLOGIES: tuple[Topology, ...] = (Topology.DISCRETE,)
#: Most points a sweep may have (each costs two searches).
MAX_POINTS = 500


def parse_range(text: str, option: str = "--cmrr") -> tuple[float, ...]:
    """``"40:100:2"`` → (40, 42, …, 100): start, stop (included when the steps reach it) and a
    step above zero; a single number gives one point."""
    parts = text.split(":")
    try:
        numbers = [float(p) for p in parts]
    except ValueError:
        raise SpecError(
            f"expected START:STOP:STEP numbers such as 40:100:2, got {text!r}", key=option
        ) from None
    if len(numbers) == 1:
        numbers = [numbers[0], numbers[0], 1.0]
    if len(numbers) != 3 or not all(math.isfinite(n) for n in numbers):
        raise SpecError(f"expected START:STOP:STEP such as 40:100:2, got {text!r}", key=option)
    start, stop, step = numbers
    if step <= 0.0 or stop < start:
        raise SpecError(
            f"expected STOP at or above START and STEP above zero, got {text!r}", key=option
        )
    count = math.floor((stop - start) / step + 1e-9) + 1
    if count > MAX_POINTS:
        raise SpecError(f"{count} points; at most {MAX_POINTS} are allowed", key=option)
    return tuple(round(start + i * step, 9) for i in range(count))


@dataclass(frozen=True)
class SeriesPoint:
    """The cheapest design of one kind at one floor: ``cost`` (relative units) is None when
    the search found none; ``status`` as :class:`SearchStatus`; None when the spec allows no
    topology of this kind."""

    cost: float | None
    status: SearchStatus | None
    topology: Topology | None


@dataclass(frozen=True)
class SweepPoint:
    """One requirement level (a CMRR floor in dB, or a gain accuracy as a fraction) with the
    discrete and network results."""

    level: float
    discrete: SeriesPoint
    network: SeriesPoint

    @property
    def cheaper(self) -> str:
        """ "discrete", "network", "equal", or "none"."""
        d, n = self.discrete.cost, self.network.cost
        if d is None and n is None:
            return "none"
        if n is None or (d is not None and d < n):
            return "discrete"
        if d is None or n < d:
            return "network"
        return "equal"


@dataclass(frozen=True)
class SweepResult:
    """The points in the order asked; ``axis`` says what ``SweepPoint.level`` is."""

    points: tuple[SweepPoint, ...]
    time_limit_s: float
    axis: SweepAxis = "cmrr"

    def tightening(self, index: int, other: int) -> bool:
        """True when point ``other`` asks more than point ``index`` (a higher CMRR floor, or a
        smaller gain accuracy)."""
        a, b = self.points[index].level, self.points[other].level
        return b > a if self.axis == "cmrr" else b < a


def _point_spec(spec: Spec, axis: SweepAxis, level: float, allowed: tuple[Topology, ...]) -> Spec:
    return replace(
        spec,
        requirements=replace(spec.requirements, cmrr_floor_db=level)
        if axis == "cmrr"
        else replace(spec.requirements, gain_accuracy=level),
        preferences=replace(spec.preferences, topologies=allowed, objective=Objective.COST),
    )


@dataclass(frozen=True)
class _Proven:
    """The proven outcome of a kind at a looser level: its cheapest design (None when proven
    infeasible) and what the point showed."""

    design: Design | None
    point: SeriesPoint


def _series(
    spec: Spec,
    catalog: Catalog,
    axis: SweepAxis,
    level: float,
    kinds: Sequence[Topology],
    time_limit_s: float,
    looser: _Proven | None,
) -> tuple[SeriesPoint, _Proven | None]:
    """The kind's point at ``level`` and, when proven, what a tighter level may inherit.

    Inheritance (set inclusion): every check is monotone in the swept requirement, so the
    designs meeting a tighter level are a subset of those meeting a looser one. A kind proven
    infeasible at a looser level is infeasible here; a proven cheapest design of a looser level
    that passes the exact check here is the cheapest here too (nothing cheaper met even the
    looser level). Only then is the search skipped; the design is always checked here."""
    allowed = tuple(t for t in spec.preferences.topologies if t in kinds)
    if not allowed:
        return SeriesPoint(None, None, None), None
    point_spec = _point_spec(spec, axis, level, allowed)
    if looser is not None:
        if looser.design is None:
            return looser.point, looser
        if verify_candidate(looser.design, point_spec).passed:
            return looser.point, looser
    result: PickResult = pick(
        point_spec, catalog, verify_candidate, top=1, time_limit_s=time_limit_s
    )
    if not result.ranked:
        point = SeriesPoint(None, result.status, None)
        return point, (_Proven(None, point) if result.status is SearchStatus.INFEASIBLE else None)
    best = result.ranked[0]
    point = SeriesPoint(best.cost.total, result.status, best.design.topology)
    return point, (_Proven(best.design, point) if result.status is SearchStatus.OPTIMAL else None)


def sweep(
    spec: Spec,
    catalog: Catalog,
    axis: SweepAxis,
    levels: Sequence[float],
    *,
    time_limit_s: float,
    progress: Callable[[int, float], None] | None = None,
) -> SweepResult:
    """The cheapest discrete and network designs at each of ``levels`` (CMRR floors in dB for
    ``axis="cmrr"``, gain accuracies as fractions for ``"gain_accuracy"``); each search is
    limited to ``time_limit_s`` seconds. The levels are worked from the loosest (the lowest
    floor, the widest accuracy) to the tightest, so that a tighter level can inherit a looser
    level's proven outcome (:func:`_series`); the points come back in the order asked.
    ``progress(done, level)`` is called after each level, in the order worked. Bad levels (e.g.
    a gain accuracy of 0) raise :class:`optimizer.errors.ModelError` before any search."""
    if axis not in ("cmrr", "gain_accuracy"):
        raise ValueError(f"unknown sweep axis {axis!r}")
    for level in levels:  # validate every level first: no half-done sweep on bad input
        if axis == "cmrr":
            replace(spec.requirements, cmrr_floor_db=level)
        else:
            replace(spec.requirements, gain_accuracy=level)
    sign = 1.0 if axis == "cmrr" else -1.0
    order = sorted(range(len(levels)), key=lambda i: sign * float(levels[i]))
    points: dict[int, SweepPoint] = {}
    proven_d: _Proven | None = None
    proven_n: _Proven | None = None
    for done, index in enumerate(order, start=1):
        level = float(levels[index])
        discrete, proven_d = _series(
            spec, catalog, axis, level, DISCRETE_TOPOLOGIES, time_limit_s, proven_d
        )
        network, proven_n = _series(
            spec, catalog, axis, level, NETWORK_TOPOLOGIES, time_limit_s, proven_n
        )
        points[index] = SweepPoint(level, discrete, network)
        if progress is not None:
            progress(done, level)
    return SweepResult(tuple(points[i] for i in range(len(levels))), time_limit_s, axis)


def sweep_cmrr(
    spec: Spec,
    catalog: Catalog,
    floors_db: Sequence[float],
    *,
    time_limit_s: float,
    progress: Callable[[int, float], None] | None = None,
) -> SweepResult:
    """:func:`sweep` over CMRR floors (dB)."""
    return sweep(spec, catalog, "cmrr", floors_db, time_limit_s=time_limit_s, progress=progress)
