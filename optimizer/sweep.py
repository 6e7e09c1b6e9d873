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
from .design import Topology
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
NETWORK_TOPOLOGIES: tuple[Topology, ...] = tuple(t for t in Topology if t is not Topology.DISCRETE)
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


def _series(
    spec: Spec,
    catalog: Catalog,
    axis: SweepAxis,
    level: float,
    kinds: Sequence[Topology],
    time_limit_s: float,
) -> SeriesPoint:
    allowed = tuple(t for t in spec.preferences.topologies if t in kinds)
    if not allowed:
        return SeriesPoint(None, None, None)
    point_spec = replace(
        spec,
        requirements=replace(spec.requirements, cmrr_floor_db=level)
        if axis == "cmrr"
        else replace(spec.requirements, gain_accuracy=level),
        preferences=replace(spec.preferences, topologies=allowed, objective=Objective.COST),
    )
    result: PickResult = pick(
        point_spec, catalog, verify_candidate, top=1, time_limit_s=time_limit_s
    )
    if not result.ranked:
        return SeriesPoint(None, result.status, None)
    best = result.ranked[0]
    return SeriesPoint(best.cost.total, result.status, best.design.topology)


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
    limited to ``time_limit_s`` seconds. ``progress(done, level)`` is called after each
    level. Bad levels (e.g. a gain accuracy of 0) raise :class:`optimizer.errors.ModelError`
    before any search."""
    if axis not in ("cmrr", "gain_accuracy"):
        raise ValueError(f"unknown sweep axis {axis!r}")
    for level in levels:  # validate every level first: no half-done sweep on bad input
        if axis == "cmrr":
            replace(spec.requirements, cmrr_floor_db=level)
        else:
            replace(spec.requirements, gain_accuracy=level)
    points = []
    for index, level in enumerate(levels):
        discrete = _series(spec, catalog, axis, level, DISCRETE_TOPOLOGIES, time_limit_s)
        network = _series(spec, catalog, axis, level, NETWORK_TOPOLOGIES, time_limit_s)
        points.append(SweepPoint(float(level), discrete, network))
        if progress is not None:
            progress(index + 1, float(level))
    return SweepResult(tuple(points), time_limit_s, axis)


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
