"""Cost against the CMRR floor: the cheapest design at each floor of a range, as two series —
four discrete parts only, and the network builds only — each found by
:func:`optimizer.solve.search.pick` with ``top=1`` on a copy of the spec whose floor (and
allowed topologies) are replaced.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace

from .catalog import Catalog
from .design import Topology
from .errors import SpecError
from .solve.search import PickResult, SearchStatus, pick
from .spec import Objective, Spec
from .verify import verify

__all__ = [
    "DISCRETE_TOPOLOGIES",
    "NETWORK_TOPOLOGIES",
    "SeriesPoint",
    "SweepPoint",
    "SweepResult",
    "parse_range",
    "sweep_cmrr",
]

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
    """One CMRR floor (dB) with the discrete and network results."""

    floor_db: float
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
    points: tuple[SweepPoint, ...]
    time_limit_s: float


def _series(
    spec: Spec, catalog: Catalog, floor: float, kinds: Sequence[Topology], time_limit_s: float
) -> SeriesPoint:
    allowed = tuple(t for t in spec.preferences.topologies if t in kinds)
    if not allowed:
        return SeriesPoint(None, None, None)
    point_spec = replace(
        spec,
        requirements=replace(spec.requirements, cmrr_floor_db=floor),
        preferences=replace(spec.preferences, topologies=allowed, objective=Objective.COST),
    )
    result: PickResult = pick(point_spec, catalog, verify, top=1, time_limit_s=time_limit_s)
    if not result.ranked:
        return SeriesPoint(None, result.status, None)
    best = result.ranked[0]
    return SeriesPoint(best.cost.total, result.status, best.design.topology)


def sweep_cmrr(
    spec: Spec,
    catalog: Catalog,
    floors_db: Sequence[float],
    *,
    time_limit_s: float,
    progress: Callable[[int, float], None] | None = None,
) -> SweepResult:
    """The cheapest discrete and network designs at each floor in ``floors_db`` (dB); each
    search is limited to ``time_limit_s`` seconds. ``progress(done, floor)`` is called after
    each floor."""
    points = []
    for index, floor in enumerate(floors_db):
        discrete = _series(spec, catalog, floor, DISCRETE_TOPOLOGIES, time_limit_s)
        network = _series(spec, catalog, floor, NETWORK_TOPOLOGIES, time_limit_s)
        points.append(SweepPoint(float(floor), discrete, network))
        if progress is not None:
            progress(index + 1, float(floor))
    return SweepResult(tuple(points), time_limit_s)
