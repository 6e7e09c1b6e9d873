"""The JSON document of ``quartet pick``: :func:`pick_to_json` returns a plain ``dict`` ready for
:func:`json.dumps` (write it with :func:`pick_json_text`).

JSON document, schema ``quartet-pick/1`` (keys in this fixed order; figures in SI units, the
unit in the key name; fractions are plain fractions, 0.001 = 0.1 %)::

    schema              "quartet-pick/1"
    quartet_version     the program version that wrote it
    spec                {path, title}
    search              {status ("proven_optimal", "time_limit" or "infeasible"),
                         proven_optimal: bool, objective, stock_policy, designs_asked,
                         designs_found, time_limit_s, gap (relative; null when not known),
                         rejected_by_exact_check, solves, model_size}
    ranked              [design]  one per distinct choice (family), best first
    family_members      [design]  every other design of each ranked family (same cost,
                         another base value or another part with the same elements); rank is
                         the choice's rank, statistics null (no Monte Carlo run)
    kind_trade          null unless the spec allows both kinds: {text, four_discrete, network},
                         each {meets_spec, cost, cmrr_db (worst case, or at the yield target),
                         search_timed_out, relaxed_floor_db, out_of_reach_db}; a kind that
                         meets nothing gives its cheapest design at the first relaxed floor
                         (relaxed_floor_db) that has one, and the lowest floor shown to have
                         none (out_of_reach_db: null when the pick searched the kind below the
                         ranking's last cost only and the asked floor found none in time);
                         null figures if none found
    other_kind          [design]  the best design of a kind (four discrete parts, or a
                         network) the ranking lacks although the spec allows it
    diagnosis           null unless infeasible: {binding: [requirement names],
                         best_reachable: [{requirement, asked, reachable, note}], text}
    safety_cautions     [text]  (empty when none apply)
    warnings            [text]  plausibility warnings on the spec and options (usually empty)
    timing              {build_s, solve_s, verify_s, statistics_s}: wall-clock seconds; the
                         only part that differs between two runs on the same input
    non_finite          [{key, was}]: every figure written as null because it was not a
                         finite number (as in ``quartet-check/1``)

    design = {rank (1-based; null for other_kind), kind_label, topology, placement_count,
              positions: [{position, resistance_ohm, part_id, kind, network_element,
                           network_package, tolerance, tempco_per_k, drift_1000h,
                           ratio_tolerance, tracking_tempco_per_k, ratio_drift_1000h, power_w,
                           max_voltage_v}]  (as in quartet-check/1, without given_as),
              cost: {parts, placements, lines, stock_penalty, total}  (relative units),
              meets_spec,
              worst_case: {cmrr_db, gain_error_min, gain_error_max, gain_error_worst},
              statistics: {builds, seed, yield, yield_target, cmrr_at_yield_db} or null,
              output_noise_v_rms,
              tightest: {name, value, limit, margin, unit},
              family_key (12 hex digits shared by the designs of one family),
              family_size (designs in the family), in_stock (every part has house stock)}
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, Final

from .._version import __version__
from ..solve.ranking import family_id, family_key
from ..solve.search import SearchStatus
from .checkjson import check_json_text, finite_only, position_json
from .pick import trade_text
from .pickreport import PickReport, Shown

__all__ = [
    "SCHEMA",
    "pick_json_text",
    "pick_to_json",
]


#: Version tag of the JSON document.
SCHEMA: Final = "quartet-pick/1"


# ---------------------------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------------------------


def _design_json(shown: Shown, family_size: int = 1) -> dict[str, Any]:
    verification = shown.verification
    worst = verification.worst_case
    mc = verification.monte_carlo
    positions = []
    for placement in shown.design.placements:
        entry = position_json(placement, None)
        del entry["given_as"]
        positions.append(entry)
    noise = next((c.value for c in verification.checks if c.name == "output_noise"), None)
    tight = verification.tightest
    cost = shown.cost
    return {
        "rank": shown.rank,
        "kind_label": shown.kind_label,
        "topology": shown.design.topology.value,
        "placement_count": shown.design.placement_count,
        "positions": positions,
        "cost": {
            "parts": cost.parts,
            "placements": cost.placements,
            "lines": cost.lines,
            "stock_penalty": cost.stock_penalty,
            "total": cost.total,
        },
        "meets_spec": verification.passed,
        "worst_case": {
            "cmrr_db": worst.cmrr_db,
            "gain_error_min": worst.gain_error_min,
            "gain_error_max": worst.gain_error_max,
            "gain_error_worst": worst.gain_error_worst,
        },
        "statistics": None
        if mc is None
        else {
            "builds": mc.samples,
            "seed": mc.seed,
            "yield": mc.yield_fraction,
            "yield_target": mc.yield_target,
            "cmrr_at_yield_db": mc.cmrr_at_yield_db,
        },
        "output_noise_v_rms": noise,
        "tightest": {
            "name": tight.name,
            "value": float(tight.value),
            "limit": float(tight.limit),
            "margin": float(tight.margin),
            "unit": tight.unit or "fraction",
        },
        "family_key": family_id(family_key(shown.design, cost)),
        "family_size": family_size,
        "in_stock": all(p.part.in_stock for p in shown.design.placements),
    }


def pick_to_json(report: PickReport, warnings: Sequence[str] = ()) -> dict[str, Any]:
    """The JSON document of schema :data:`SCHEMA` (module docstring): plain dicts, lists,
    strings, bools, ints and finite floats (non-finite figures become ``None`` and are listed
    under ``non_finite``). Everything except ``timing`` is the same on every run with the
    same inputs (when the search is not cut short by the time limit)."""
    spec = report.spec
    r = report.result
    diagnosis = report.diagnosis
    raw: dict[str, Any] = {
        "schema": SCHEMA,
        "quartet_version": __version__,
        "spec": {"path": spec.source_path, "title": spec.title},
        "search": {
            "status": r.status.value,
            "proven_optimal": r.status is SearchStatus.OPTIMAL,
            "objective": spec.preferences.objective.value,
            "stock_policy": spec.preferences.stock.value,
            "designs_asked": report.designs_asked,
            "designs_found": len(report.ranked),
            "time_limit_s": float(report.time_limit_s),
            "gap": r.gap,
            "rejected_by_exact_check": r.cuts,
            "solves": r.solves,
            "model_size": r.option_count,
        },
        "ranked": [
            _design_json(s, 1 + (len(report.members[i]) if i < len(report.members) else 0))
            for i, s in enumerate(report.ranked)
        ],
        "family_members": [
            _design_json(m, 1 + len(group)) for group in report.members for m in group
        ],
        "other_kind": [_design_json(s) for s in report.other_kind],
        "kind_trade": None
        if report.trade is None
        else {
            "text": trade_text(report.trade, spec),
            **{
                key: {
                    "meets_spec": b.meets,
                    "cost": b.cost,
                    "cmrr_db": b.cmrr_db,
                    "search_timed_out": b.timed_out,
                    "relaxed_floor_db": b.floor_db,
                    "out_of_reach_db": b.out_of_reach_db,
                }
                for key, b in (
                    ("four_discrete", report.trade.discrete),
                    ("network", report.trade.network),
                )
            },
        },
        "diagnosis": None
        if diagnosis is None
        else {
            "binding": list(diagnosis.binding),
            "best_reachable": [
                {
                    "requirement": b.requirement,
                    "asked": b.asked,
                    "reachable": b.reachable,
                    "note": b.note,
                }
                for b in diagnosis.best
            ],
            "text": diagnosis.text,
        },
        "safety_cautions": list(report.cautions),
        "warnings": list(warnings),
        "timing": {
            "build_s": r.build_seconds,
            "solve_s": r.solve_seconds,
            "verify_s": r.verify_seconds,
            "statistics_s": report.statistics_seconds,
        },
    }
    found: list[dict[str, str]] = []
    document: dict[str, Any] = finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def pick_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text (the same writer as ``quartet check``: fixed key order,
    two-space indent, ASCII only, no NaN or infinity)."""
    return check_json_text(document)
