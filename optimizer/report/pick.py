"""The report of ``quartet pick``: the ranked table, the status line, the winner's full check
report, and a JSON document.

:func:`build_pick_report` gathers what the outputs show (it runs the Monte Carlo for the
displayed designs only: the pick itself runs it only where the CMRR basis is a yield);
:func:`render_pick` returns Rich renderables (the CLI prints them) and :func:`pick_to_json` a
plain ``dict`` ready for :func:`json.dumps` (write it with :func:`pick_json_text`).

JSON document, schema ``quartet-pick/1`` (keys in this fixed order; figures in SI units, the
unit in the key name; fractions are plain fractions, 0.001 = 0.1 %)::

    schema              "quartet-pick/1"
    quartet_version     the program version that wrote it
    spec                {path, title}
    search              {status ("proven_optimal", "time_limit" or "infeasible"),
                         proven_optimal: bool, objective, stock_policy, designs_asked,
                         designs_found, time_limit_s, gap (relative; null when not known),
                         rejected_by_exact_check, solves, model_size}
    ranked              [design]  best first
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
              tightest: {name, value, limit, margin, unit}}
"""

from __future__ import annotations

import os
import time
from collections.abc import Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, Final

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from .._version import __version__
from ..analysis.montecarlo import monte_carlo
from ..cost import CostBreakdown
from ..design import Design, Placement, Topology
from ..parts import NetworkPart
from ..solve.search import MAX_CUTS, PickResult, SearchStatus
from ..spec import CmrrBasis, Spec
from ..units import format_fraction, format_quantity, format_resistance, format_tempco
from ..verify import Verification
from .check import (
    _cautions_panel,
    _db,
    _figure,
    _finite_only,
    _pct,
    _position_json,
    check_json_text,
    label_of,
    render_check,
)

if TYPE_CHECKING:  # the diagnosis module is imported only when a pick finds nothing
    from ..solve.diagnose import Diagnosis

__all__ = [
    "SCHEMA",
    "TOPOLOGY_LABELS",
    "PickReport",
    "Shown",
    "build_pick_report",
    "pick_json_text",
    "pick_to_json",
    "render_pick",
    "render_pick_table",
    "render_status",
]

#: Version tag of the JSON document.
SCHEMA: Final = "quartet-pick/1"
#: Significant digits of the figures in the table.
DIGITS: Final = 4

#: Short readable names of the topologies (the JSON keeps the values of ``Topology``).
TOPOLOGY_LABELS: Final = {
    Topology.DISCRETE: "4 discrete",
    Topology.QUAD: "quad network",
    Topology.EQUAL_PAIRS: "2 equal-value duals",
    Topology.DIVIDER_PAIRS: "2 divider duals",
    Topology.PAIR_PLUS_DISCRETE: "dual + 2 discrete",
}

#: Header of the table: the column names of ``quartet pick`` (our own wording).
TABLE_COLUMNS: Final = (
    "#",
    "build",
    "R1",
    "R2",
    "R3",
    "R4",
    "rel. cost",
    "CMRR worst",
    "CMRR stat.",
    "gain err. worst",
    "noise out",
    "least margin",
)


@dataclass(frozen=True)
class Shown:
    """One design the report shows: ``rank`` (1-based; None for a best-of-the-other-kind
    design), its cost and its verification with the Monte-Carlo result filled in."""

    rank: int | None
    design: Design
    cost: CostBreakdown
    verification: Verification

    @property
    def kind_label(self) -> str:
        if self.rank is not None:
            return f"rank {self.rank}"
        if self.design.topology is Topology.DISCRETE:
            return "best four-discrete design"
        return "best network design"


@dataclass(frozen=True)
class PickReport:
    """Everything the outputs of ``quartet pick`` show."""

    spec: Spec
    result: PickResult
    ranked: tuple[Shown, ...]
    other_kind: tuple[Shown, ...]
    diagnosis: Diagnosis | None
    designs_asked: int
    time_limit_s: float
    statistics_seconds: float
    cautions: tuple[str, ...]
    #: A signal (SIGINT, SIGTERM) stopped the search: the designs are those found so far.
    interrupted: bool = False

    @property
    def winner(self) -> Shown | None:
        return self.ranked[0] if self.ranked else None


#: Most threads for the displayed designs' Monte Carlo runs.
STATISTICS_THREADS = 4


def _with_statistics(verdict: object, design: Design, spec: Spec) -> Verification:
    if not isinstance(verdict, Verification):
        raise TypeError(f"expected the verdict of optimizer.verify.verify, got {type(verdict)}")
    if verdict.monte_carlo is not None:
        return verdict
    # On the worst-case basis the Monte Carlo is informative only: it changes no requirement,
    # so the verdict with the result filled in equals verify(..., statistics=True).
    return replace(verdict, monte_carlo=monte_carlo(design, spec))


def build_pick_report(
    spec: Spec,
    result: PickResult,
    *,
    designs_asked: int,
    time_limit_s: float,
    cautions: Sequence[str],
    diagnosis: Diagnosis | None = None,
    interrupted: bool = False,
) -> PickReport:
    """The report of one pick: runs the Monte Carlo (``spec.preferences`` samples and seed)
    for every displayed design that has none yet."""
    started = time.perf_counter()
    shown = (*result.ranked, *result.extras)
    # Each design's Monte Carlo has its own generator (seeded from the spec), so running them on
    # the machine's cores in threads (numpy releases the GIL) gives the same results in order.
    workers = max(1, min(len(shown), os.cpu_count() or 1, STATISTICS_THREADS))
    with ThreadPoolExecutor(workers) as pool:
        verdicts = list(pool.map(lambda c: _with_statistics(c.verdict, c.design, spec), shown))
    count = len(result.ranked)
    ranked = tuple(
        Shown(i + 1, c.design, c.cost, v)
        for i, (c, v) in enumerate(zip(result.ranked, verdicts[:count], strict=True))
    )
    others = tuple(
        Shown(None, c.design, c.cost, v)
        for c, v in zip(result.extras, verdicts[count:], strict=True)
    )
    return PickReport(
        spec=spec,
        result=result,
        ranked=ranked,
        other_kind=others,
        diagnosis=diagnosis,
        designs_asked=designs_asked,
        time_limit_s=time_limit_s,
        statistics_seconds=time.perf_counter() - started,
        cautions=tuple(cautions),
        interrupted=interrupted,
    )


# ---------------------------------------------------------------------------------------------
# Rich
# ---------------------------------------------------------------------------------------------


def _part_cell(placement: Placement) -> Text:
    """Value on the first line; below it the tolerance and tempco (discrete part), or the
    network's id with the element number (1-based; ``pkg 2`` for a second package of the same
    network) and its ratio tolerance and tracking tempco."""
    part = placement.part
    text = Text(format_resistance(placement.resistance_ohm, 6), style="bold")
    if isinstance(part, NetworkPart):
        assert placement.element is not None
        package = f" pkg {placement.package + 1}" if placement.package else ""
        text.append(f"\n{part.part_id} #{placement.element + 1}{package}")
        text.append(
            f"\nratio {format_fraction(part.ratio_tolerance, DIGITS)}, "
            f"{format_tempco(part.tracking_tempco_per_k, DIGITS)}"
        )
    else:
        text.append(
            f"\n±{format_fraction(part.tolerance, DIGITS)} "
            f"{format_tempco(part.tempco_per_k, DIGITS)}"
        )
    return text


def _noise(verification: Verification) -> str:
    for check in verification.checks:
        if check.name == "output_noise":
            return format_quantity(check.value, "V", 3) + " rms"
    return "n/a"


#: Shorter names than ``label_of`` gives, for the narrow margin column.
_SHORT_LABELS: Final = {"yield": "yield"}


def _tightest(verification: Verification) -> Text:
    tight = verification.tightest
    style = "green" if tight.passed else "bold red"
    label = _SHORT_LABELS.get(tight.name) or label_of(tight.name)
    return Text(f"{label}\n{_figure(tight.margin, tight.unit, signed=True)}", style=style)


def _row(shown: Shown) -> list[RenderableType]:
    verification = shown.verification
    worst = verification.worst_case
    mc = verification.monte_carlo
    rank = str(shown.rank) if shown.rank is not None else "other"
    return [
        Text(rank),
        Text(TOPOLOGY_LABELS[shown.design.topology]),
        *(_part_cell(p) for p in shown.design.placements),
        Text(f"{shown.cost.total:.3f}"),
        Text(_db(worst.cmrr_db)),
        Text(_db(mc.cmrr_at_yield_db) if mc is not None else "n/a"),
        Text(f"±{_pct(worst.gain_error_worst)}"),
        Text(_noise(verification)),
        _tightest(verification),
    ]


def render_pick_table(
    shown: Sequence[Shown], spec: Spec, title: str, *, explain: bool = True
) -> Table:
    """The designs as a table (the columns are :data:`TABLE_COLUMNS`); ``explain``: a caption
    saying what the CMRR columns mean."""
    req = spec.requirements
    caption = (
        f"CMRR worst: every tolerance, tempco over {req.temp_min_c:g} to {req.temp_max_c:g} °C"
        f"{', life drift' if req.life_s > 0 else ''}, source and REF impedance and the "
        f"amplifier at once (floor {req.cmrr_floor_db:g} dB). CMRR stat.: reached by "
        f"{format_fraction(req.yield_target)} of {spec.preferences.samples:,} Monte-Carlo builds."
        " rel. cost: relative units."
    )
    table = Table(
        title=title,
        title_justify="left",
        header_style="bold",
        caption=caption if explain else None,
        caption_justify="left",
        show_lines=True,
    )
    for name in TABLE_COLUMNS:
        numeric = name in (
            "#",
            "rel. cost",
            "CMRR worst",
            "CMRR stat.",
            "gain err. worst",
            "noise out",
        )
        table.add_column(
            name,
            justify="right" if numeric else "left",
            no_wrap=name in ("#", "CMRR worst", "CMRR stat."),
        )
    for item in shown:
        table.add_row(*_row(item))
    return table


def _objective_words(spec: Spec) -> str:
    return spec.preferences.objective.value.replace("_", " ")


def _seconds(report: PickReport) -> str:
    r = report.result
    total = r.build_seconds + r.solve_seconds + r.verify_seconds + report.statistics_seconds
    return (
        f"{total:.1f} s in all (solver {r.solve_seconds:.1f} s, model building "
        f"{r.build_seconds:.1f} s, exact checks {r.verify_seconds:.1f} s, Monte Carlo of the "
        f"shown designs {report.statistics_seconds:.1f} s)"
    )


def render_status(report: PickReport) -> Text:
    """One status line: proven optimal, best found at the time limit (with the gap), or
    nothing found; the candidates the exact check rejected; the time spent."""
    r = report.result
    found = len(report.ranked)
    rejected = f"{r.cuts} candidate(s) rejected by the exact check, {r.solves} solve(s)"
    text = Text("Status: ", style="bold")
    if r.status is SearchStatus.OPTIMAL:
        text.append("proven optimal", style="bold green")
        if found < report.designs_asked:
            text.append(f": only {found} design(s) meet the spec, all shown")
        else:
            text.append(f": the {found} best design(s) by {_objective_words(report.spec)}")
    elif r.status is SearchStatus.TIME_LIMIT:
        if report.interrupted:
            stopped = "the search was interrupted"
        elif r.cuts >= MAX_CUTS:
            stopped = f"the search stopped after {r.cuts} rejected candidates"
        else:
            stopped = f"the time limit ({report.time_limit_s:g} s) ran out"
        gap = "gap unknown" if r.gap is None else f"gap {r.gap * 100:.2f} %"
        if found:
            text.append("best found, NOT proven optimal", style="bold yellow")
            text.append(f": {stopped}; {gap}")
        else:
            text.append("no design found", style="bold yellow")
            hint = "" if report.interrupted else " (a longer --time-limit may find one)"
            text.append(
                f": {stopped} before any design passed the exact check; this does not prove "
                f"that none exists{hint}"
            )
    else:
        text.append("nothing meets the spec", style="bold red")
        text.append(": no design from the catalogs passes the exact check")
    text.append(f"; {rejected}; {_seconds(report)}.")
    return text


def render_pick(report: PickReport) -> RenderableType:
    """The whole output as one Rich renderable (nothing is printed here): safety cautions
    when the spec has any, the ranked table, the best design of the missing kind, the status
    line, the diagnosis when nothing meets the spec, and the full check report of the
    winner."""
    spec = report.spec
    title = spec.title or "spec"
    where = f" ({spec.source_path})" if spec.source_path else ""
    parts: list[RenderableType] = [Text(f"Pick for: {title}{where}", style="bold")]
    if report.cautions:
        parts.append(_cautions_panel(report.cautions))
    basis = (
        " (CMRR judged by the Monte-Carlo yield)"
        if spec.requirements.cmrr_basis is CmrrBasis.YIELD
        else ""
    )
    if report.ranked:
        parts.append(
            render_pick_table(
                report.ranked,
                spec,
                f"Designs that meet the spec, best first by {_objective_words(spec)}{basis}",
            )
        )
    if report.other_kind:
        parts.append(
            render_pick_table(
                report.other_kind,
                spec,
                "Best of the kind the ranking above lacks (shown for comparison)",
                explain=not report.ranked,
            )
        )
    parts.append(render_status(report))
    if report.diagnosis is not None:
        parts.append(Text("Diagnosis: ", style="bold").append(report.diagnosis.text, style=""))
    winner = report.winner
    if winner is not None:
        parts.append(Text("\nThe best design in full:", style="bold"))
        parts.append(render_check(winner.design, spec, winner.verification))
    return Group(*parts)


# ---------------------------------------------------------------------------------------------
# JSON
# ---------------------------------------------------------------------------------------------


def _design_json(shown: Shown) -> dict[str, Any]:
    verification = shown.verification
    worst = verification.worst_case
    mc = verification.monte_carlo
    positions = []
    for placement in shown.design.placements:
        entry = _position_json(placement, None)
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
        "ranked": [_design_json(s) for s in report.ranked],
        "other_kind": [_design_json(s) for s in report.other_kind],
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
    document: dict[str, Any] = _finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def pick_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text (the same writer as ``quartet check``: fixed key order,
    two-space indent, ASCII only, no NaN or infinity)."""
    return check_json_text(document)
