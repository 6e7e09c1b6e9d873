"""Why nothing meets the spec, and what the catalog can reach instead.

Two steps:

1. :func:`amplifier_limits`: checks no choice of resistors can fix (small-signal and
   full-power bandwidth, amplifier input range, output swing), evaluated on ideal resistor sets
   across the gain tolerance band with the smallest allowed values (least bias-current error).
   A check that fails on every one of them binds whatever the catalog holds.
2. :func:`diagnose`: relax one requirement at a time (CMRR floor, gain accuracy, minimum input
   impedance, output noise, operating life) and see whether a design then exists; for each
   requirement that binds, search for the best value this catalog reaches (the CMRR by the
   most-margin objective, the others by bisection) and verify it exactly.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace

from ..catalog import Catalog
from ..design import Design
from ..spec import CmrrBasis, Objective, Spec
from ..units import format_fraction, format_quantity, format_resistance
from .amplifier import amplifier_limits
from .search import PickResult, SearchStatus, pick
from .verdict import Verifier

__all__ = ["BestReachable", "Diagnosis", "diagnose"]


@dataclass(frozen=True)
class BestReachable:
    """The best value of one requirement that the catalog can reach (for a diagnosis)."""

    requirement: str
    asked: str
    reachable: str
    note: str = ""


@dataclass(frozen=True)
class Diagnosis:
    """What binds (requirement names), the best values reachable, and a sentence for people."""

    binding: tuple[str, ...]
    best: tuple[BestReachable, ...]
    text: str


def _feasible(spec: Spec, catalog: Catalog, verifier: Verifier, time_limit_s: float) -> PickResult:
    return pick(spec, catalog, verifier, top=1, time_limit_s=time_limit_s)


@dataclass(frozen=True)
class _Relaxation:
    name: str
    label: str
    relaxed: Spec
    asked: str


#: How far below the asked floor (dB) the diagnosis tries, in turn, to see whether the CMRR
#: floor binds. Small steps first: a mildly relaxed floor keeps the linear model tight and the
#: searches short, and it is where the answer usually is.
CMRR_STEPS_DB = (3.0, 6.0, 12.0, 20.0, 30.0)


def _relaxed_floor(asked_db: float) -> float:
    """The loosest floor the diagnosis tries: the asked floor less the largest step (≥ 1 dB)."""
    return max(1.0, asked_db - CMRR_STEPS_DB[-1])


def _loosest_feasible_floor(
    spec: Spec, catalog: Catalog, verifier: Verifier, time_limit_s: float
) -> Spec | None:
    """The spec with the first relaxed floor (asked − 3, −6, −12, −20, −30 dB) at which a
    design exists, or None when none of them helps."""
    req = spec.requirements
    for step in CMRR_STEPS_DB:
        floor = max(1.0, req.cmrr_floor_db - step)
        relaxed = replace(spec, requirements=replace(req, cmrr_floor_db=floor))
        if _feasible(relaxed, catalog, verifier, time_limit_s).ranked:
            return relaxed
    return None


def _relaxations(spec: Spec) -> list[_Relaxation]:
    req = spec.requirements
    out = [
        _Relaxation(
            "cmrr_floor",
            "CMRR floor",
            replace(
                spec, requirements=replace(req, cmrr_floor_db=_relaxed_floor(req.cmrr_floor_db))
            ),
            f"{req.cmrr_floor_db:g} dB",
        ),
        _Relaxation(
            "gain_accuracy",
            "gain accuracy",
            replace(spec, requirements=replace(req, gain_accuracy=0.5)),
            f"±{format_fraction(req.gain_accuracy)}",
        ),
    ]
    if req.min_input_impedance_ohm > 0:
        out.append(
            _Relaxation(
                "min_input_impedance",
                "minimum input impedance",
                replace(spec, requirements=replace(req, min_input_impedance_ohm=0.0)),
                format_resistance(req.min_input_impedance_ohm),
            )
        )
    if req.max_output_noise_v_rms is not None:
        out.append(
            _Relaxation(
                "output_noise",
                "output noise",
                replace(spec, requirements=replace(req, max_output_noise_v_rms=None)),
                format_quantity(req.max_output_noise_v_rms, "V rms", 4),
            )
        )
    if req.life_s > 0:
        out.append(
            _Relaxation(
                "operating_life",
                "operating life (drift)",
                replace(spec, requirements=replace(req, life_s=0.0)),
                f"{req.life_s / 3.15576e7:g} years",
            )
        )
    return out


def diagnose(
    spec: Spec, catalog: Catalog, verifier: Verifier, *, time_limit_s: float = 20.0
) -> Diagnosis:
    """Name what binds and the best reachable value of each binding requirement."""
    limits = amplifier_limits(spec)
    if limits:
        names = tuple(c.name for c in limits)
        amplifier_best = tuple(
            BestReachable(
                c.name,
                _format(c.limit, c.unit),
                _format(c.value, c.unit),
                "the amplifier and signal decide this, not the resistors",
            )
            for c in limits
        )
        text = "; ".join(
            f"{b.requirement}: {b.reachable} reachable, {b.asked} needed ({b.note})"
            for b in amplifier_best
        )
        return Diagnosis(names, amplifier_best, f"nothing can meet the spec: {text}")
    if 1.0 / spec.amplifier.cmrr_ratio >= 10.0 ** (-spec.requirements.cmrr_floor_db / 20.0):
        best_amp = BestReachable(
            "cmrr_floor",
            f"{spec.requirements.cmrr_floor_db:g} dB",
            f"{spec.amplifier.cmrr_db:g} dB",
            "the amplifier's own CMRR is below the floor",
        )
        return Diagnosis(
            ("cmrr_floor",),
            (best_amp,),
            f"nothing can meet the spec: the amplifier's CMRR of {spec.amplifier.cmrr_db:g} dB "
            f"is below the {spec.requirements.cmrr_floor_db:g} dB floor",
        )
    binding: list[str] = []
    best: list[BestReachable] = []
    for relaxation in _relaxations(spec):
        if relaxation.name == "cmrr_floor":
            relaxed = _loosest_feasible_floor(spec, catalog, verifier, time_limit_s)
            if relaxed is None:
                continue
            relaxation = _Relaxation(relaxation.name, relaxation.label, relaxed, relaxation.asked)
        else:
            result = _feasible(relaxation.relaxed, catalog, verifier, time_limit_s)
            if not result.ranked:
                continue
        binding.append(relaxation.name)
        best.append(_best_reachable(relaxation, spec, catalog, verifier, time_limit_s))
    if not binding:
        text = (
            "nothing in the catalogs meets the spec, and relaxing any single requirement does "
            "not help: several requirements bind together, or no part is rated for the stress "
            "(check the resistance range, the stock policy and the parts' power and voltage "
            "ratings)"
        )
        return Diagnosis((), (), text)
    parts = [
        f"{b.requirement}: {b.reachable} is reachable"
        f"{(' ' + b.note) if b.note else ''}, {b.asked} was asked"
        for b in best
    ]
    return Diagnosis(
        tuple(binding), tuple(best), "nothing in the catalogs meets the spec; " + "; ".join(parts)
    )


def _format(value: float, unit: str) -> str:
    if not math.isfinite(value):
        return str(value)
    return format_quantity(value, unit, 4) if unit else f"{value:.4g}"


def _best_reachable(
    relaxation: _Relaxation, spec: Spec, catalog: Catalog, verifier: Verifier, time_limit_s: float
) -> BestReachable:
    req = spec.requirements
    if relaxation.name == "cmrr_floor":
        relaxed = replace(
            relaxation.relaxed,
            preferences=replace(spec.preferences, objective=Objective.CMRR_MARGIN, cost_cap=None),
        )
        result = pick(relaxed, catalog, verifier, top=1, time_limit_s=time_limit_s)
        if result.ranked:
            candidate = result.ranked[0]
            verdict = candidate.verdict
            worst = getattr(verdict, "worst_case", None)
            if req.cmrr_basis is CmrrBasis.YIELD:
                mc = getattr(verdict, "monte_carlo", None)
                value = mc.cmrr_at_yield_db if mc is not None else float("nan")
                what = (
                    f"statistical CMRR {value:.1f} dB at {format_fraction(req.yield_target)} yield"
                )
            else:
                value = worst.cmrr_db if worst is not None else float("nan")
                what = f"worst-case CMRR {value:.1f} dB"
            return BestReachable(
                "cmrr_floor",
                relaxation.asked,
                what,
                f"with {candidate.design.topology.value} {_ids(candidate.design)}",
            )
        return BestReachable(
            "cmrr_floor",
            relaxation.asked,
            "unknown",
            "the search for the best CMRR ran out of time",
        )
    low, high, fmt = _bisection_range(relaxation.name, spec)
    reached = _bisect(relaxation.name, spec, catalog, verifier, low, high, time_limit_s)
    return BestReachable(
        relaxation.name, relaxation.asked, fmt(reached) if reached is not None else "nothing", ""
    )


def _ids(design: Design) -> str:
    seen: list[str] = []
    for placement in design.placements:
        if placement.part.part_id not in seen:
            seen.append(placement.part.part_id)
    return "(" + ", ".join(seen) + ")"


def _bisection_range(name: str, spec: Spec) -> tuple[float, float, Callable[[float], str]]:
    req = spec.requirements
    if name == "gain_accuracy":
        return req.gain_accuracy, 0.5, lambda v: f"±{format_fraction(v, 3)}"
    if name == "min_input_impedance":
        return req.min_input_impedance_ohm, 0.0, lambda v: format_resistance(v, 4)
    if name == "output_noise":
        assert req.max_output_noise_v_rms is not None
        return (
            req.max_output_noise_v_rms,
            req.max_output_noise_v_rms * 1e3,
            lambda v: format_quantity(v, "V rms", 4),
        )
    return req.life_s, 0.0, lambda v: f"{v / 3.15576e7:.3g} years"


def _with(name: str, spec: Spec, value: float) -> Spec:
    req = spec.requirements
    if name == "gain_accuracy":
        relaxed = replace(req, gain_accuracy=value)
    elif name == "min_input_impedance":
        relaxed = replace(req, min_input_impedance_ohm=value)
    elif name == "output_noise":
        relaxed = replace(req, max_output_noise_v_rms=value)
    else:
        relaxed = replace(req, life_s=value)
    return replace(spec, requirements=relaxed)


def _bisect(
    name: str,
    spec: Spec,
    catalog: Catalog,
    verifier: Verifier,
    asked: float,
    relaxed: float,
    time_limit_s: float,
    steps: int = 8,
) -> float | None:
    """The value closest to ``asked`` (between ``asked`` and ``relaxed``) for which a design
    exists, to within the bisection's resolution; ``relaxed`` itself is known feasible."""
    good, bad = relaxed, asked
    for _ in range(steps):
        if good > 0 and bad > 0:
            middle = math.sqrt(good * bad)
        else:
            middle = (good + bad) / 2.0
        result = pick(
            _with(name, spec, middle), catalog, verifier, top=1, time_limit_s=time_limit_s
        )
        if result.ranked:
            good = middle
        elif result.status is SearchStatus.INFEASIBLE:
            bad = middle
        else:
            break
    return good
