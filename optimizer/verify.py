"""The exact check of one design against a spec: the single definition of "meets the spec".

It combines the exact worst case (``analysis.worstcase``), the Monte-Carlo yield
(``analysis.montecarlo``) and every other check (``analysis.checks``):

* CMRR floor: on the worst-case basis the worst-case CMRR must reach the floor; on the yield
  basis the Monte-Carlo yield (CMRR floor and gain accuracy together) must reach the target.
* Gain accuracy: on the worst-case basis the worst-case gain error must stay inside
  ±accuracy; on the yield basis it is part of the yield.
* Every check of ``analysis.checks`` must pass (input impedance, noise, amplifier input range,
  output swing, bandwidths, resistor power and voltage).

The pick verifies every candidate with :func:`verify`; ``quartet check`` reports it. Pure: no
printing, no files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .analysis.checks import Outcome, run_checks
from .analysis.montecarlo import MonteCarloResult, monte_carlo
from .analysis.safety import safety_cautions
from .analysis.worstcase import WorstCase, worst_case
from .design import Design
from .spec import CmrrBasis, Spec

__all__ = ["Outcome", "Rejection", "Verification", "verify", "verify_candidate"]


@dataclass(frozen=True)
class Verification:
    """The exact check of a design: every requirement with its margin, the worst case, the
    Monte-Carlo result (when computed), the other checks and the safety cautions."""

    worst_case: WorstCase
    monte_carlo: MonteCarloResult | None
    checks: tuple[Outcome, ...]
    requirements: tuple[Outcome, ...]
    cautions: tuple[str, ...]

    @property
    def passed(self) -> bool:
        return all(m.passed for m in self.requirements)

    @property
    def failures(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.requirements if not m.passed)

    @property
    def tightest(self) -> Outcome:
        """The requirement with the least margin relative to its limit."""
        return min(self.requirements, key=_relative_margin)


@dataclass(frozen=True)
class Rejection:
    """A candidate the search's check turned down on its Monte Carlo yield (yield basis),
    before the worst case and the other checks were worked out: ``requirements`` holds the
    yield requirement alone. The search only counts such designs; none is shown."""

    monte_carlo: MonteCarloResult
    requirements: tuple[Outcome, ...]
    cautions: tuple[str, ...]

    @property
    def passed(self) -> bool:
        return False

    @property
    def failures(self) -> tuple[str, ...]:
        return tuple(m.name for m in self.requirements if not m.passed)


def _relative_margin(margin: Outcome) -> float:
    if not math.isfinite(margin.margin):
        return math.inf if margin.margin > 0 or math.isnan(margin.margin) else -math.inf
    scale = abs(margin.limit) if math.isfinite(margin.limit) and margin.limit != 0.0 else 1.0
    return margin.margin / scale


def cmrr_margin(worst: WorstCase, spec: Spec) -> Outcome:
    """Worst-case CMRR (dB) against the floor; margin in dB."""
    floor = spec.requirements.cmrr_floor_db
    return Outcome(
        "cmrr_worst_case", worst.cmrr_db >= floor, worst.cmrr_db, floor, worst.cmrr_db - floor, "dB"
    )


def gain_margin(worst: WorstCase, spec: Spec) -> Outcome:
    """Worst-case |gain error| against the accuracy; margin as a fraction of the gain."""
    accuracy = spec.requirements.gain_accuracy
    error = max(abs(worst.gain_error_min), abs(worst.gain_error_max))
    return Outcome("gain_accuracy", error <= accuracy, error, accuracy, accuracy - error, "")


def yield_margin(result: MonteCarloResult, spec: Spec) -> Outcome:
    """Monte-Carlo yield (CMRR floor and gain accuracy together) against the target."""
    target = spec.requirements.yield_target
    return Outcome(
        "yield",
        result.yield_fraction >= target,
        result.yield_fraction,
        target,
        result.yield_fraction - target,
        "",
    )


def verify_candidate(design: Design, spec: Spec) -> Verification | Rejection:
    """The exact check as the search runs it on each candidate: :func:`verify`, except that a
    design whose exact worst-case CMRR or gain accuracy fails (worst-case basis) is returned at
    once with those requirements only, and one whose Monte Carlo yield fails (yield basis) as
    a :class:`Rejection`, before its worst case (it fails whatever the other checks say, and
    the search only counts it). A design that passes gets the whole check, the same as
    :func:`verify` gives."""
    if spec.requirements.cmrr_basis is CmrrBasis.WORST_CASE:
        worst = worst_case(design, spec)
        cmrr, gain = cmrr_margin(worst, spec), gain_margin(worst, spec)
        if not (cmrr.passed and gain.passed):
            return Verification(worst, None, (), (cmrr, gain), safety_cautions(spec))
        return _complete(design, spec, worst, None, None)
    result = monte_carlo(design, spec)
    margin = yield_margin(result, spec)
    if not margin.passed:
        return Rejection(result, (margin,), safety_cautions(spec))
    return _complete(design, spec, worst_case(design, spec), None, None, result)


def verify(
    design: Design, spec: Spec, *, statistics: bool | None = None, samples: int | None = None
) -> Verification:
    """The exact check of ``design`` against ``spec``.

    ``statistics``: run the Monte Carlo (default: only when the CMRR basis is a yield, where it
    decides the outcome; on the worst-case basis it is informative only)."""
    return _complete(design, spec, worst_case(design, spec), statistics, samples)


def _complete(
    design: Design,
    spec: Spec,
    worst: WorstCase,
    statistics: bool | None,
    samples: int | None,
    result: MonteCarloResult | None = None,
) -> Verification:
    """:func:`verify` from the design's worst case (computed once by the caller) and, when the
    caller ran it with the spec's own samples, its Monte Carlo ``result``."""
    yield_basis = spec.requirements.cmrr_basis is CmrrBasis.YIELD
    run_mc = yield_basis if statistics is None else statistics
    if result is None and (run_mc or yield_basis):
        result = monte_carlo(design, spec, samples=samples)
    checks = run_checks(design, spec)
    margins: list[Outcome] = []
    if yield_basis:
        assert result is not None
        margins.append(yield_margin(result, spec))
    else:
        margins.append(cmrr_margin(worst, spec))
        margins.append(gain_margin(worst, spec))
    margins.extend(
        Outcome(c.name, c.passed, c.value, c.limit, c.margin, c.unit)
        for c in checks
        if not math.isnan(c.limit)
    )
    return Verification(worst, result, checks, tuple(margins), safety_cautions(spec))
