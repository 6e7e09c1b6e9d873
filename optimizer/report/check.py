"""The report of ``quartet check``: a Rich report and a JSON document of one verified design.

:func:`render_check` returns Rich renderables (the CLI prints them); :func:`check_to_json`
returns a plain ``dict`` ready for :func:`json.dumps` (see :func:`check_json_text`).

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

from rich.console import Group, RenderableType
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from .._version import __version__
from ..analysis.checks import Outcome
from ..analysis.drift import DRIFT_SHARED_VARIANCE, drift_model_summary
from ..analysis.montecarlo import MonteCarloResult
from ..analysis.worstcase import BudgetItem, WorstCase
from ..cost import CostBreakdown, design_cost
from ..design import Design, Placement, Topology
from ..parts import NetworkPart
from ..spec import CmrrBasis, DriftModel, Spec
from ..units import format_fraction, format_quantity, format_resistance, format_tempco
from ..verify import Verification

__all__ = [
    "BUDGET_LABELS",
    "REQUIREMENT_LABELS",
    "SCHEMA",
    "check_json_text",
    "check_to_json",
    "label_of",
    "render_check",
]

#: Version tag of the JSON document.
SCHEMA: Final = "quartet-check/1"
#: Significant digits of the figures in the Rich report.
DIGITS: Final = 4

#: Readable names of requirements and checks (the JSON keeps the names of ``verify``).
REQUIREMENT_LABELS: Final = {
    "cmrr_worst_case": "CMRR, worst case",
    "gain_accuracy": "gain error, worst case",
    "yield": "yield (CMRR floor and gain accuracy together)",
    "input_impedance_differential": "input resistance, differential",
    "input_impedance_common_mode": "input resistance, common mode",
    "output_noise": "output noise (rms)",
    "amp_input_range": "amplifier input voltage",
    "output_swing": "output voltage",
    "small_signal_bandwidth": "small-signal bandwidth",
    "full_power_bandwidth": "full-power bandwidth",
    "output_offset": "output offset",
    **{f"power_{p}": f"power in {p}" for p in ("R1", "R2", "R3", "R4")},
    **{f"voltage_{p}": f"voltage across {p}" for p in ("R1", "R2", "R3", "R4")},
}
#: Readable names of the error-budget contributors.
BUDGET_LABELS: Final = {
    "value_quantisation": "nominal values off the ideal ratio",
    "tolerance": "initial tolerance",
    "tempco": "tempco over the temperature range",
    "life_drift": "drift over the operating life",
    "source_imbalance": "source impedance",
    "ref_impedance": "REF drive impedance",
    "amplifier_cmrr": "amplifier CMRR",
    "open_loop_gain": "amplifier open-loop gain",
}

_MET: Final = "met"
_NOT_MET: Final = "NOT MET"
_INFO: Final = "no requirement"


def label_of(name: str) -> str:
    """The readable name of a requirement, check or budget contributor (the name itself when
    it has none)."""
    return REQUIREMENT_LABELS.get(name) or BUDGET_LABELS.get(name) or name


# ---------------------------------------------------------------------------------------------
# Formatting
# ---------------------------------------------------------------------------------------------


def _db(level: float, signed: bool = False) -> str:
    if math.isnan(level):
        return "n/a"
    if math.isinf(level):
        return ("+" if signed and level > 0 else "") + ("∞ dB" if level > 0 else "-∞ dB")
    return f"{level:+.2f} dB" if signed else f"{level:.2f} dB"


def _pct(fraction: float, signed: bool = False) -> str:
    if not math.isfinite(fraction):
        return "n/a"
    text = format_fraction(abs(fraction), DIGITS)
    if fraction < 0:
        return f"-{text}"
    return f"+{text}" if signed else text


def _figure(value: float, unit: str, signed: bool = False) -> str:
    """A figure in its unit: dB with two decimals, fractions in percent (or ppm), the rest in
    engineering notation."""
    if math.isnan(value):
        return "n/a"
    if unit == "dB":
        return _db(value, signed)
    if unit == "":
        return _pct(value, signed)
    if math.isinf(value):
        return f"{'-' if value < 0 else ''}∞ {unit}"
    text = format_quantity(value, unit, DIGITS)
    return f"+{text}" if signed and value > 0 else text


def _outcome(passed: bool) -> Text:
    return Text(_MET, style="green") if passed else Text(_NOT_MET, style="bold red")


# ---------------------------------------------------------------------------------------------
# Rich report
# ---------------------------------------------------------------------------------------------


def _placement_cells(placement: Placement) -> tuple[str, str, str, str, str]:
    """(tolerance, tempco, drift, ratings, part) of one placement."""
    part = placement.part
    if isinstance(part, NetworkPart):
        assert placement.element is not None
        return (
            f"±{_pct(part.abs_tolerance)} absolute, {_pct(part.ratio_tolerance)} ratio",
            f"±{format_tempco(part.abs_tempco_per_k, DIGITS)} absolute, "
            f"{format_tempco(part.tracking_tempco_per_k, DIGITS)} tracking",
            f"{_pct(part.drift_1000h)}, ratio {_pct(part.ratio_drift_1000h)}",
            f"{format_quantity(part.power_per_element_w, 'W', DIGITS)} / "
            f"{format_quantity(part.max_voltage_v, 'V', DIGITS)} per element",
            f"{part.part_id} element {placement.element + 1} (package {placement.package + 1})",
        )
    return (
        f"±{_pct(part.tolerance)}",
        f"±{format_tempco(part.tempco_per_k, DIGITS)}",
        _pct(part.drift_1000h) if part.drift_1000h else "none",
        f"{format_quantity(part.power_w, 'W', DIGITS)} / "
        f"{format_quantity(part.max_voltage_v, 'V', DIGITS)}",
        part.part_id,
    )


def _design_table(design: Design, origins: Sequence[str] | None) -> Table:
    """Position, value and part first (what gets bought stays whole and on screen: the part
    column is never narrower than the longest id), then the figures."""
    table = Table(
        title="The design",
        title_justify="left",
        header_style="bold",
    )
    table.add_column("pos.", no_wrap=True)
    table.add_column("value", no_wrap=True)
    longest = max(len(p.part.part_id) for p in design.placements)
    table.add_column("part", min_width=longest, overflow="fold")
    for name in ("tolerance", "tempco", "drift per 1000 h", "power / voltage rating"):
        table.add_column(name)
    if origins is not None:
        table.add_column("given as")
    for index, placement in enumerate(design.placements):
        figures = _placement_cells(placement)
        cells = [
            placement.position,
            format_resistance(placement.resistance_ohm, 6),
            figures[-1],
            *figures[:-1],
        ]
        if origins is not None:
            cells.append(origins[index])
        table.add_row(*(Text(c) for c in cells))
    return table


#: Short readable names of the topologies (the JSON keeps the values of ``Topology``).
TOPOLOGY_LABELS: Final = {
    Topology.DISCRETE: "4 discrete",
    Topology.QUAD: "quad network",
    Topology.EQUAL_PAIRS: "2 equal-value duals",
    Topology.DIVIDER_PAIRS: "2 divider duals",
    Topology.PAIR_PLUS_DISCRETE: "dual + 2 discrete",
}


def _cost_line(cost: CostBreakdown) -> str:
    return (
        f"Relative cost {cost.total:.3f}: parts {cost.parts:.3f}, placements "
        f"{cost.placements:.3f}, BOM lines {cost.lines:.3f}, stock penalty "
        f"{cost.stock_penalty:.3f} (the spec's preferences)"
    )


def _design_lines(design: Design, spec: Spec, assumptions: Sequence[str]) -> Text:
    gain = design.nominal_gain
    target = spec.requirements.gain
    lines = [
        f"Nominal gain G = R2/R1 = {gain:.6g} (asked for {target:.6g}, "
        f"{_pct(gain / target - 1.0, signed=True)} off); "
        f"nominal R4/R3 = {design.resistances_ohm[3] / design.resistances_ohm[2]:.6g}",
        f"How the resistors are bought: {TOPOLOGY_LABELS[design.topology]}, "
        f"{design.placement_count} part(s) to place",
        _cost_line(design_cost(design, spec.preferences)),
    ]
    for note in assumptions:
        lines.append(f"Assumed: {note}")
    if spec.requirements.life_s > 0 and any(
        not isinstance(p.part, NetworkPart) and p.part.drift_1000h == 0.0 for p in design.placements
    ):
        lines.append(
            "Note: the spec asks for an operating life, but some parts carry no drift figure: "
            "their ageing is not budgeted."
        )
    return Text("\n".join(lines))


def _requirements_table(requirements: Sequence[Outcome]) -> Table:
    table = Table(title="Requirements", title_justify="left", header_style="bold")
    table.add_column("requirement")
    table.add_column("found", justify="right")
    table.add_column("limit", justify="right")
    table.add_column("margin", justify="right")
    table.add_column("outcome")
    for m in requirements:
        limit = m.limit
        shown_limit = _figure(limit, m.unit)
        if m.name == "gain_accuracy":
            shown_limit = f"±{shown_limit}"
        table.add_row(
            Text(label_of(m.name)),
            Text(_figure(m.value, m.unit)),
            Text(shown_limit),
            Text(_figure(m.margin, m.unit, signed=True)),
            _outcome(m.passed),
        )
    return table


def _worst_case_table(worst: WorstCase, spec: Spec) -> Table:
    table = Table(
        title="Worst case (every bound at once)", title_justify="left", header_style="bold"
    )
    table.add_column("figure")
    table.add_column("value", justify="right")
    rows = [
        ("CMRR, with the amplifier", _db(worst.cmrr_db)),
        ("CMRR, resistors and impedances only", _db(worst.cmrr_resistors_db)),
        (
            "gain range",
            f"{worst.gain_min:.6g} to {worst.gain_max:.6g} (target {worst.target_gain:.6g})",
        ),
        (
            "gain error range",
            f"{_pct(worst.gain_error_min, True)} to {_pct(worst.gain_error_max, True)}",
        ),
        ("nominal gain", f"{worst.nominal_gain:.6g}"),
        ("nominal CMRR (ideal amplifier, no source impedance)", _db(worst.nominal_cmrr_db)),
        ("corners evaluated", f"{worst.corner_count:,}"),
        ("life drift model", drift_model_summary(spec.requirements.drift_model)),
    ]
    for name, value in rows:
        table.add_row(Text(name), Text(value))
    return table


def _budget_table(budget: Sequence[BudgetItem]) -> Table:
    table = Table(
        title="Error budget (each source alone, worst case)",
        title_justify="left",
        header_style="bold",
    )
    table.add_column("source of error")
    table.add_column("CMRR alone", justify="right")
    table.add_column("share of CM error", justify="right")
    table.add_column("gain error alone", justify="right")
    table.add_column("share of gain error", justify="right")
    for item in budget:
        table.add_row(
            Text(label_of(item.name)),
            Text(_db(item.cmrr_db)),
            Text(f"{item.cmrr_share * 100:.1f} %"),
            Text(f"±{_pct(item.gain_error)}"),
            Text(f"{item.gain_share * 100:.1f} %"),
        )
    return table


def _statistics_table(result: MonteCarloResult, spec: Spec) -> Table:
    table = Table(title="Statistics (Monte Carlo)", title_justify="left", header_style="bold")
    table.add_column("figure")
    table.add_column("value", justify="right")
    spread = result.distribution
    if spread == "normal":
        spread += f", tolerance bound = {result.sigma_k:g} sigma"
    target = _pct(result.yield_target)
    rows = [
        ("builds simulated", f"{result.samples:,} (seed {result.seed}; {spread})"),
        ("yield: CMRR floor and gain accuracy together", _pct(result.yield_fraction)),
        ("yield asked for", target),
        (f"builds at or above the CMRR floor ({_db(result.cmrr_floor_db)})",
         _pct(result.cmrr_pass_fraction)),
        (f"builds within the gain accuracy (±{_pct(result.gain_accuracy)})",
         _pct(result.gain_pass_fraction)),
        (f"CMRR reached by {target} of builds", _db(result.cmrr_at_yield_db)),
        ("life drift model", drift_model_summary(spec.requirements.drift_model, True)),
    ]  # fmt: skip
    reached = {_pct(result.yield_target)}
    for percent, level in result.cmrr_percentiles_db:
        share = _pct((100 - percent) / 100)
        if share in reached:  # one row per distinct statistic
            continue
        reached.add(share)
        rows.append((f"CMRR reached by {share} of builds", _db(level)))
    for percent, error in result.gain_error_percentiles:
        rows.append(
            (f"gain error: {_pct(percent / 100)} of builds are below", _pct(error, signed=True))
        )
    for name, value in rows:
        table.add_row(Text(name), Text(value))
    return table


def _checks_table(checks: Sequence[Outcome]) -> Table:
    table = Table(title="Other checks in detail", title_justify="left", header_style="bold")
    table.add_column("check")
    table.add_column("outcome", no_wrap=True)
    table.add_column("margin", justify="right", no_wrap=True)
    table.add_column("how it was found", overflow="fold")
    for c in checks:
        informational = math.isnan(c.limit)
        outcome = Text(_INFO, style="dim") if informational else _outcome(c.passed)
        margin = "" if informational else _figure(c.margin, c.unit, signed=True)
        table.add_row(Text(label_of(c.name)), outcome, Text(margin), Text(c.detail))
    return table


def _cautions_panel(cautions: Sequence[str]) -> Panel:
    body = Text()
    for index, caution in enumerate(cautions):
        if index:
            body.append("\n\n")
        body.append("• ")
        body.append(caution)
    return Panel(
        body,
        title=Text("SAFETY CAUTIONS", style="bold red"),
        border_style="bold red",
        expand=True,
    )


def _verdict(verification: Verification, spec: Spec) -> Text:
    if verification.passed:
        tight = verification.tightest
        text = Text("Verdict: ", style="bold")
        text.append("meets the spec", style="bold green")
        text.append(
            f"; tightest requirement: {label_of(tight.name)} "
            f"(margin {_figure(tight.margin, tight.unit, signed=True)})"
        )
    else:
        text = Text("Verdict: ", style="bold")
        text.append("does NOT meet the spec", style="bold red")
        failed = ", ".join(label_of(n) for n in verification.failures)
        text.append(f"; not met: {failed}")
    if spec.requirements.cmrr_basis is CmrrBasis.YIELD:
        text.append(" (CMRR judged by yield)")
    if verification.cautions:
        text.append("; hazardous voltages: read the safety cautions", style="bold red")
    return text


def render_check(
    design: Design,
    spec: Spec,
    verification: Verification,
    *,
    origins: Sequence[str] | None = None,
    assumptions: Sequence[str] = (),
) -> RenderableType:
    """The whole report as one Rich renderable (nothing is printed here): safety cautions
    first when the spec has any, then the design, the requirements, the worst case, the error
    budget, the statistics, the other checks and a one-line verdict. ``origins``: how each
    position was given (R1..R4); ``assumptions``: notes on assumed ratings."""
    title = spec.title or "spec"
    where = f" ({spec.source_path})" if spec.source_path else ""
    parts: list[RenderableType] = [Text(f"Check of a design against: {title}{where}", style="bold")]
    if verification.cautions:
        parts.append(_cautions_panel(verification.cautions))
    parts += [
        _design_table(design, origins),
        _design_lines(design, spec, assumptions),
        _requirements_table(verification.requirements),
        _worst_case_table(verification.worst_case, spec),
        _budget_table(verification.worst_case.budget),
    ]
    if verification.monte_carlo is not None:
        parts.append(_statistics_table(verification.monte_carlo, spec))
    else:
        parts.append(Text("Statistics: not run."))
    parts.append(_checks_table(verification.checks))
    if verification.cautions:
        parts.append(_cautions_panel(verification.cautions))
    parts.append(_verdict(verification, spec))
    return Group(*parts)


# ---------------------------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------------------------


def _position_json(placement: Placement, given_as: str | None) -> dict[str, Any]:
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


def _finite_only(value: Any, path: str, found: list[dict[str, str]]) -> Any:
    """``value`` with every non-finite float replaced by ``None`` and recorded in ``found``."""
    if isinstance(value, float):
        if math.isfinite(value):
            return float(value)
        found.append(
            {"key": path, "was": "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")}
        )
        return None
    if isinstance(value, dict):
        return {k: _finite_only(v, f"{path}.{k}" if path else k, found) for k, v in value.items()}
    if isinstance(value, list):
        return [_finite_only(v, f"{path}[{i}]", found) for i, v in enumerate(value)]
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
                _position_json(p, None if origins is None else origins[i])
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
    document: dict[str, Any] = _finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def check_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text: fixed key order, two-space indent, ASCII only (non-ASCII
    characters escaped), no NaN or infinity (refused rather than written)."""
    return json.dumps(document, indent=2, ensure_ascii=True, allow_nan=False)
