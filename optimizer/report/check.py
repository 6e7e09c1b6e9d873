"""The Rich report of ``quartet check`` (:func:`render_check`; the CLI prints it): the design,
the requirements, the worst case and its budget, the Monte Carlo, the other checks, the
cautions and the verdict of one verified design. The JSON document is in ``report.checkjson``.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Final

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..analysis.checks import Outcome
from ..analysis.drift import drift_model_summary
from ..analysis.montecarlo import MonteCarloResult
from ..analysis.worstcase import BudgetItem, WorstCase
from ..cost import CostBreakdown, design_cost
from ..design import Design, Placement, Topology
from ..parts import NetworkPart
from ..spec import CmrrBasis, Spec
from ..units import format_quantity, format_resistance, format_tempco
from ..verify import Verification
from .formats import DIGITS, cautions_panel, fmt_db, fmt_figure, fmt_pct

__all__ = [
    "BUDGET_LABELS",
    "REQUIREMENT_LABELS",
    "TOPOLOGY_LABELS",
    "label_of",
    "render_check",
]


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
            f"±{fmt_pct(part.abs_tolerance)} absolute, {fmt_pct(part.ratio_tolerance)} ratio",
            f"±{format_tempco(part.abs_tempco_per_k, DIGITS)} absolute, "
            f"{format_tempco(part.tracking_tempco_per_k, DIGITS)} tracking",
            f"{fmt_pct(part.drift_1000h)}, ratio {fmt_pct(part.ratio_drift_1000h)}",
            f"{format_quantity(part.power_per_element_w, 'W', DIGITS)} / "
            f"{format_quantity(part.max_voltage_v, 'V', DIGITS)} per element",
            f"{part.part_id} element {placement.element + 1} (package {placement.package + 1})",
        )
    return (
        f"±{fmt_pct(part.tolerance)}",
        f"±{format_tempco(part.tempco_per_k, DIGITS)}",
        fmt_pct(part.drift_1000h) if part.drift_1000h else "none",
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
        f"{fmt_pct(gain / target - 1.0, signed=True)} off); "
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
        shown_limit = fmt_figure(limit, m.unit)
        if m.name == "gain_accuracy":
            shown_limit = f"±{shown_limit}"
        table.add_row(
            Text(label_of(m.name)),
            Text(fmt_figure(m.value, m.unit)),
            Text(shown_limit),
            Text(fmt_figure(m.margin, m.unit, signed=True)),
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
        ("CMRR, with the amplifier", fmt_db(worst.cmrr_db)),
        ("CMRR, resistors and impedances only", fmt_db(worst.cmrr_resistors_db)),
        (
            "gain range",
            f"{worst.gain_min:.6g} to {worst.gain_max:.6g} (target {worst.target_gain:.6g})",
        ),
        (
            "gain error range",
            f"{fmt_pct(worst.gain_error_min, True)} to {fmt_pct(worst.gain_error_max, True)}",
        ),
        ("nominal gain", f"{worst.nominal_gain:.6g}"),
        ("nominal CMRR (ideal amplifier, no source impedance)", fmt_db(worst.nominal_cmrr_db)),
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
            Text(fmt_db(item.cmrr_db)),
            Text(f"{item.cmrr_share * 100:.1f} %"),
            Text(f"±{fmt_pct(item.gain_error)}"),
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
    target = fmt_pct(result.yield_target)
    rows = [
        ("builds simulated", f"{result.samples:,} (seed {result.seed}; {spread})"),
        ("yield: CMRR floor and gain accuracy together", fmt_pct(result.yield_fraction)),
        ("yield asked for", target),
        (f"builds at or above the CMRR floor ({fmt_db(result.cmrr_floor_db)})",
         fmt_pct(result.cmrr_pass_fraction)),
        (f"builds within the gain accuracy (±{fmt_pct(result.gain_accuracy)})",
         fmt_pct(result.gain_pass_fraction)),
        (f"CMRR reached by {target} of builds", fmt_db(result.cmrr_at_yield_db)),
        ("life drift model", drift_model_summary(spec.requirements.drift_model, True)),
    ]  # fmt: skip
    reached = {fmt_pct(result.yield_target)}
    for percent, level in result.cmrr_percentiles_db:
        share = fmt_pct((100 - percent) / 100)
        if share in reached:  # one row per distinct statistic
            continue
        reached.add(share)
        rows.append((f"CMRR reached by {share} of builds", fmt_db(level)))
    for percent, error in result.gain_error_percentiles:
        rows.append(
            (
                f"gain error: {fmt_pct(percent / 100)} of builds are below",
                fmt_pct(error, signed=True),
            )
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
        margin = "" if informational else fmt_figure(c.margin, c.unit, signed=True)
        table.add_row(Text(label_of(c.name)), outcome, Text(margin), Text(c.detail))
    return table


def _verdict(verification: Verification, spec: Spec) -> Text:
    if verification.passed:
        tight = verification.tightest
        text = Text("Verdict: ", style="bold")
        text.append("meets the spec", style="bold green")
        text.append(
            f"; tightest requirement: {label_of(tight.name)} "
            f"(margin {fmt_figure(tight.margin, tight.unit, signed=True)})"
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
        parts.append(cautions_panel(verification.cautions))
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
        parts.append(cautions_panel(verification.cautions))
    parts.append(_verdict(verification, spec))
    return Group(*parts)
