"""The Monte Carlo of the designs a pick shows, filled in before the report renders them.

On the worst-case basis the pick runs no Monte Carlo (it decides nothing there), yet the
ranking shows each design's CMRR at the yield and the winner's statistics. This module runs it
for the displayed designs only: the first design of each distinct choice (family) and the
extras (best of the missing kind). Each design's Monte Carlo has its own generator, seeded from
the spec (``spec.preferences`` samples and seed), so running them in threads (numpy releases
the GIL) gives the same results as running them in order; on the worst-case basis the verdict
with the result filled in equals ``verify(..., statistics=True)``.
"""

from __future__ import annotations

import os
import time
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace

from .analysis.montecarlo import monte_carlo
from .board.search import BoardResult
from .design import Design
from .solve.search import PickResult
from .spec import Spec
from .verify import Verification

__all__ = [
    "STATISTICS_THREADS",
    "board_statistics",
    "leader_indices",
    "verdicts_with_statistics",
    "with_statistics",
]

#: Most threads for the displayed designs' Monte Carlo runs.
STATISTICS_THREADS = 4


def leader_indices(result: PickResult) -> tuple[int, ...]:
    """Indices into ``result.ranked`` of the first design of each distinct choice (every
    design when the pick did not number families)."""
    choices = result.choices or tuple(range(1, len(result.ranked) + 1))
    seen: set[int] = set()
    leaders = []
    for index, number in enumerate(choices):
        if number not in seen:
            seen.add(number)
            leaders.append(index)
    return tuple(leaders)


def _filled(design: Design, verdict: object, spec: Spec) -> Verification:
    if not isinstance(verdict, Verification):
        raise TypeError(f"expected the verdict of optimizer.verify.verify, got {type(verdict)}")
    if verdict.monte_carlo is not None:
        return verdict
    return replace(verdict, monte_carlo=monte_carlo(design, spec))


def verdicts_with_statistics(
    jobs: Sequence[tuple[Design, object, Spec]],
) -> tuple[Verification, ...]:
    """Each (design, verdict, spec)'s verdict with the design's Monte Carlo under the spec
    filled in (in threads; the same results as in order, module docstring); verdicts that
    carry one keep it."""
    workers = max(1, min(len(jobs), os.cpu_count() or 1, STATISTICS_THREADS))
    with ThreadPoolExecutor(workers) as pool:
        return tuple(pool.map(lambda job: _filled(*job), jobs))


def with_statistics(result: PickResult, spec: Spec) -> tuple[PickResult, float]:
    """``result`` with the Monte Carlo filled in for its displayed designs (module docstring),
    and the seconds that took."""
    started = time.perf_counter()
    leaders = leader_indices(result)
    shown = [result.ranked[i] for i in leaders] + list(result.extras)
    verdicts = verdicts_with_statistics([(c.design, c.verdict, spec) for c in shown])
    filled = [replace(c, verdict=v) for c, v in zip(shown, verdicts, strict=True)]
    ranked = list(result.ranked)
    for index, candidate in zip(leaders, filled, strict=False):
        ranked[index] = candidate
    extras = tuple(filled[len(leaders) :])
    return replace(result, ranked=tuple(ranked), extras=extras), time.perf_counter() - started


def board_statistics(result: BoardResult) -> tuple[tuple[Verification, ...], float]:
    """The verdicts, Monte Carlo filled in, of the best board's designs (each under its kind's
    spec; none when no board was found), and the seconds that took."""
    started = time.perf_counter()
    if not result.boards:
        return (), time.perf_counter() - started
    jobs = [
        (chosen.design, chosen.verdict, spec)
        for chosen, spec in zip(result.boards[0].chosen, result.specs, strict=True)
    ]
    return verdicts_with_statistics(jobs), time.perf_counter() - started
