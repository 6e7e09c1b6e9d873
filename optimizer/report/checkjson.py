"""The JSON document of ``quartet check``: :func:`check_to_json` returns a plain ``dict`` ready for
:func:`json.dumps` (see :func:`check_json_text`).

JSON document, schema ``quartet-check/1`` (keys in this fixed order; figures in SI units, the
unit in the key name; fractions are plain fractions, 0.001 = 0.1 %)::

    schema              "quartet-check/1"
    quartet_version     the program version that wrote it
    spec                {path, title}
    verdict             {meets_spec: bool, failed: [requirement names], tightest: name}
    design              {topology, nominal_gain, target_gain, assumptions: [text],
                         positions: [{position, resistance_ohm, part_id, kind ("discrete" or
                         "network"), network_element (1-based or null), network_package
                         (1-based or null), given_as, tolerance, tempco_per_k, drift_1000h,
                         ratio_tolerance, tracking_tempco_per_k, ratio_drift_1000h (networks;
                         null for discrete parts), power_w, max_voltage_v}]}
    requirements        [{name, met, value, limit, margin, unit}]  (unit "fraction", "dB", ...)
    worst_case          {cmrr_db, cmrr_resistors_only_db, gain_min, gain_max, gain_error_min,
                         gain_error_max, gain_error_worst, nominal_gain, nominal_cmrr_db,
                         target_gain, corners_evaluated, drift_model}
    error_budget        [{contributor, cmrr_error, cmrr_db, cmrr_share, gain_error,
                         gain_share}]  (each contributor alone; shares are fractions)
    statistics          null when not run, else {builds, seed, distribution, sigma_k,
                         yield, yield_target, cmrr_pass_fraction, gain_pass_fraction,
                         cmrr_floor_db, cmrr_at_yield_db, cmrr_percentiles_db: [{percent, value}],
                         gain_error_percentiles: [{percent, value}], drift_model,
                         drift_shared_variance (one-sided drift; else null)}
    checks              [{name, met, value, limit, margin, unit, has_requirement, detail}]
    safety_cautions     [text]  (empty when none apply)
    warnings            [text]  plausibility warnings on the spec and options (usually empty)
    non_finite          [{key, was}]: every figure written as null because it was not a
                         finite number ("inf", "-inf" or "nan"), e.g. the CMRR of a perfectly
                         balanced bridge (inf) or the limit of a figure with no requirement (nan)

JSON has no infinity or NaN, so such figures are written as ``null`` and listed in
``non_finite`` with their key path (``worst_case.nominal_cmrr_db``, ``checks[13].limit``).
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from typing import Any, Final

from .._version import __version__
from ..analysis.drift import DRIFT_SHARED_VARIANCE
from ..analysis.montecarlo import MonteCarloResult
from ..design import Design, Placement
from ..parts import NetworkPart
from ..spec import DriftModel, Spec
from ..verify import Verification

__all__ = [
    "SCHEMA",
    "check_json_text",
    "check_to_json",
    "finite_only",
    "position_json",
]


#: Version tag of the JSON document.
SCHEMA: Final = "quartet-check/1"


# ---------------------------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------------------------


def position_json(placement: Placement, given_as: str | None) -> dict[str, Any]:
    part = placement.part
    network = isinstance(part, NetworkPart)
    entry: dict[str, Any] = {
        "position": placement.position,
        "resistance_ohm": placement.resistance_ohm,
        "part_id": part.part_id,
        "kind": "network" if network else "discrete",
        "network_element": None if placement.element is None else placement.element + 1,
        "network_package": placement.package + 1 if network else None,
        "given_as": given_as,
    }
    if isinstance(part, NetworkPart):
        entry.update(
            tolerance=part.abs_tolerance,
            tempco_per_k=part.abs_tempco_per_k,
            drift_1000h=part.drift_1000h,
            ratio_tolerance=part.ratio_tolerance,
            tracking_tempco_per_k=part.tracking_tempco_per_k,
            ratio_drift_1000h=part.ratio_drift_1000h,
            power_w=part.power_per_element_w,
            max_voltage_v=part.max_voltage_v,
        )
    else:
        entry.update(
            tolerance=part.tolerance,
            tempco_per_k=part.tempco_per_k,
            drift_1000h=part.drift_1000h,
            ratio_tolerance=None,
            tracking_tempco_per_k=None,
            ratio_drift_1000h=None,
            power_w=part.power_w,
            max_voltage_v=part.max_voltage_v,
        )
    return entry


def _statistics_json(result: MonteCarloResult | None, spec: Spec) -> dict[str, Any] | None:
    if result is None:
        return None
    model = spec.requirements.drift_model
    return {
        "builds": result.samples,
        "seed": result.seed,
        "distribution": result.distribution,
        "sigma_k": result.sigma_k,
        "yield": result.yield_fraction,
        "yield_target": result.yield_target,
        "cmrr_pass_fraction": result.cmrr_pass_fraction,
        "gain_pass_fraction": result.gain_pass_fraction,
        "cmrr_floor_db": result.cmrr_floor_db,
        "cmrr_at_yield_db": result.cmrr_at_yield_db,
        "cmrr_percentiles_db": [{"percent": p, "value": v} for p, v in result.cmrr_percentiles_db],
        "gain_error_percentiles": [
            {"percent": p, "value": v} for p, v in result.gain_error_percentiles
        ],
        "drift_model": model.value,
        "drift_shared_variance": (DRIFT_SHARED_VARIANCE if model is DriftModel.ONE_SIDED else None),
    }


def finite_only(value: Any, path: str, found: list[dict[str, str]]) -> Any:
    """``value`` with every non-finite float replaced by ``None`` and recorded in ``found``."""
    if isinstance(value, float):
        if math.isfinite(value):
            return float(value)
        found.append(
            {"key": path, "was": "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")}
        )
        return None
    if isinstance(value, dict):
        return {k: finite_only(v, f"{path}.{k}" if path else k, found) for k, v in value.items()}
    if isinstance(value, list):
        return [finite_only(v, f"{path}[{i}]", found) for i, v in enumerate(value)]
    return value


def check_to_json(
    design: Design,
    spec: Spec,
    verification: Verification,
    *,
    origins: Sequence[str] | None = None,
    assumptions: Sequence[str] = (),
    warnings: Sequence[str] = (),
) -> dict[str, Any]:
    """The JSON document of schema :data:`SCHEMA` (module docstring): plain dicts, lists,
    strings, bools, ints and finite floats (non-finite figures become ``None`` and are listed
    under ``non_finite``)."""
    worst = verification.worst_case
    raw: dict[str, Any] = {
        "schema": SCHEMA,
        "quartet_version": __version__,
        "spec": {"path": spec.source_path, "title": spec.title},
        "verdict": {
            "meets_spec": verification.passed,
            "failed": list(verification.failures),
            "tightest": verification.tightest.name,
        },
        "design": {
            "topology": design.topology.value,
            "nominal_gain": design.nominal_gain,
            "target_gain": spec.requirements.gain,
            "assumptions": list(assumptions),
            "positions": [
                position_json(p, None if origins is None else origins[i])
                for i, p in enumerate(design.placements)
            ],
        },
        "requirements": [
            {
                "name": m.name,
                "met": m.passed,
                "value": float(m.value),
                "limit": float(m.limit),
                "margin": float(m.margin),
                "unit": m.unit or "fraction",
            }
            for m in verification.requirements
        ],
        "worst_case": {
            "cmrr_db": worst.cmrr_db,
            "cmrr_resistors_only_db": worst.cmrr_resistors_db,
            "gain_min": worst.gain_min,
            "gain_max": worst.gain_max,
            "gain_error_min": worst.gain_error_min,
            "gain_error_max": worst.gain_error_max,
            "gain_error_worst": worst.gain_error_worst,
            "nominal_gain": worst.nominal_gain,
            "nominal_cmrr_db": worst.nominal_cmrr_db,
            "target_gain": worst.target_gain,
            "corners_evaluated": worst.corner_count,
            "drift_model": spec.requirements.drift_model.value,
        },
        "error_budget": [
            {
                "contributor": item.name,
                "cmrr_error": item.cmrr_error,
                "cmrr_db": item.cmrr_db,
                "cmrr_share": item.cmrr_share,
                "gain_error": item.gain_error,
                "gain_share": item.gain_share,
            }
            for item in worst.budget
        ],
        "statistics": _statistics_json(verification.monte_carlo, spec),
        "checks": [
            {
                "name": c.name,
                "met": c.passed,
                "value": float(c.value),
                "limit": float(c.limit),
                "margin": float(c.margin),
                "unit": c.unit or "fraction",
                "has_requirement": not math.isnan(c.limit),
                "detail": c.detail,
            }
            for c in verification.checks
        ],
        "safety_cautions": list(verification.cautions),
        "warnings": list(warnings),
    }
    found: list[dict[str, str]] = []
    document: dict[str, Any] = finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def check_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text: fixed key order, two-space indent, ASCII only (non-ASCII
    characters escaped), no NaN or infinity (refused rather than written)."""
    return json.dumps(document, indent=2, ensure_ascii=True, allow_nan=False)
