"""The report of ``quartet pick``: the ranked table, the status line, the winner's full check
report, and a JSON document.

:func:`build_pick_report` gathers what the outputs show (the Monte Carlo of the displayed
designs is filled in before, by ``optimizer.statistics``; the report computes nothing);
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
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Final

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from .._version import __version__
from ..cost import CostBreakdown
from ..design import Design, Topology
from ..parts import DiscretePart, NetworkPart
from ..solve.ranking import base_values, family_id, family_key
from ..solve.search import MAX_EXTRA_DESIGNS, Candidate, PickResult, SearchStatus
from ..solve.streams import MAX_CUTS
from ..solve.trade import KindBest, Trade, cost_per_db
from ..spec import CmrrBasis, Objective, Spec
from ..units import format_fraction, format_quantity, format_resistance
from ..verify import Verification
from .check import (
    TOPOLOGY_LABELS,
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
    "buy_lines",
    "pick_json_text",
    "pick_to_json",
    "render_buy",
    "render_pick",
    "render_pick_table",
    "render_status",
]

#: Version tag of the JSON document.
SCHEMA: Final = "quartet-pick/1"
#: Significant digits of the figures in the table.
DIGITS: Final = 4


#: Columns of the ranking on a wide screen (150 columns and more; our own wording). On a
#: narrow screen the figures stack in one column (:data:`NARROW_COLUMNS`); the part ids and
#: the cost are never cut at any width.
TABLE_COLUMNS: Final = (
    "#",
    "what to buy",
    "cost (rel.)",
    "CMRR worst case",
    "CMRR at yield",
    "gain error worst",
    "output noise",
    "tightest margin",
)
#: Columns of the ranking below :data:`WIDE_FROM` columns.
NARROW_COLUMNS: Final = ("#", "what to buy", "cost (rel.)", "figures")
#: Terminal width from which the wide layout is used.
WIDE_FROM: Final = 150
#: Columns of the ranked table in file reports (one column per position).
FILE_TABLE_COLUMNS: Final = (
    "#",
    "build",
    "R1",
    "R2",
    "R3",
    "R4",
    "cost (rel.)",
    "CMRR worst case",
    "CMRR at yield",
    "gain error worst",
)
#: At most this many other base values are named in a ranking row (the JSON has them all).
ALSO_SHOWN: Final = 6


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
    #: Per ranked choice, the other designs of its family (same cost, another base value or
    #: another part with the same elements), best first; their Monte Carlo is not run.
    members: tuple[tuple[Shown, ...], ...] = ()
    #: Some catalog part has house stock: the tables show each part's stock.
    stock_known: bool = False
    #: Both kinds (four discrete parts, a network) allowed: each kind's best (None otherwise).
    trade: Trade | None = None

    @property
    def winner(self) -> Shown | None:
        return self.ranked[0] if self.ranked else None


def _verification(verdict: object) -> Verification:
    if not isinstance(verdict, Verification):
        raise TypeError(f"expected the verdict of optimizer.verify.verify, got {type(verdict)}")
    return verdict


def build_pick_report(
    spec: Spec,
    result: PickResult,
    *,
    designs_asked: int,
    time_limit_s: float,
    cautions: Sequence[str],
    diagnosis: Diagnosis | None = None,
    interrupted: bool = False,
    stock_known: bool = False,
    trade: Trade | None = None,
    statistics_seconds: float = 0.0,
) -> PickReport:
    """The report of one pick, computing nothing: the displayed designs' Monte Carlo is filled
    in beforehand (``optimizer.statistics.with_statistics``, whose seconds are
    ``statistics_seconds``); a design without one shows "n/a" for its statistical figures."""
    choices = result.choices or tuple(range(1, len(result.ranked) + 1))
    leaders: list[Candidate] = []
    followers: dict[int, list[Candidate]] = {}
    for number, candidate in zip(choices, result.ranked, strict=True):
        if number in followers:
            followers[number].append(candidate)
        else:
            followers[number] = []
            leaders.append(candidate)
    shown = (*leaders, *result.extras)
    verdicts = [_verification(c.verdict) for c in shown]
    count = len(leaders)
    ranked = tuple(
        Shown(i + 1, c.design, c.cost, v)
        for i, (c, v) in enumerate(zip(leaders, verdicts[:count], strict=True))
    )
    members = tuple(
        tuple(Shown(i + 1, c.design, c.cost, _verification(c.verdict)) for c in group)
        for i, group in enumerate(followers.values())
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
        members=members,
        stock_known=stock_known,
        trade=trade,
        diagnosis=diagnosis,
        designs_asked=designs_asked,
        time_limit_s=time_limit_s,
        statistics_seconds=statistics_seconds,
        cautions=tuple(cautions),
        interrupted=interrupted,
    )


# ---------------------------------------------------------------------------------------------
# Rich
# ---------------------------------------------------------------------------------------------


def _short_ohms(ohms: float) -> str:
    """A value without the unit sign: ``4990 -> "4.99k"``."""
    return format_resistance(ohms, DIGITS).replace(" Ω", "").replace(" ", "")


def buy_lines(design: Design) -> list[tuple[str, int, str, DiscretePart | NetworkPart]]:
    """The distinct parts of ``design`` as (part id, quantity, where it goes, part): a
    discrete part's quantity counts its positions; a network's its packages, and where it
    goes maps each position to its element (``R1=#1``, 1-based); with two packages of one
    part, the positions of each package are listed after its number
    (``package 1: R1=#1 R2=#2; package 2: R3=#1 R4=#2``)."""
    lines: dict[str, tuple[dict[int, list[str]], DiscretePart | NetworkPart]] = {}
    for index, placement in enumerate(design.placements):
        part = placement.part
        groups, _ = lines.setdefault(part.part_id, ({}, part))
        if isinstance(part, NetworkPart):
            assert placement.element is not None
            groups.setdefault(placement.package, []).append(
                f"{placement.position}=#{placement.element + 1}"
            )
        else:
            groups.setdefault(index, []).append(placement.position)
    out: list[tuple[str, int, str, DiscretePart | NetworkPart]] = []
    for part_id, (groups, part) in lines.items():
        if isinstance(part, NetworkPart) and len(groups) > 1:
            where = "; ".join(f"package {k + 1}: {' '.join(v)}" for k, v in groups.items())
        else:
            where = " ".join(w for v in groups.values() for w in v)
        out.append((part_id, len(groups), where, part))
    return out


def _stock_word(part: DiscretePart | NetworkPart) -> str:
    return f"yes ({part.stock_qty:,})" if part.in_stock else "no"


def _buy_cell(shown: Shown, also: Sequence[Shown], stock: bool) -> Text:
    """Build and values on the first lines; then one line per part to buy (id whole, then
    quantity and positions), the stock of each part when ``stock``; last the other base values
    of the same family at the same cost."""
    design = shown.design
    text = Text(TOPOLOGY_LABELS[design.topology], style="bold")
    values = "  ".join(f"{p.position} {_short_ohms(p.resistance_ohm)}" for p in design.placements)
    text.append(f"\n{values}")
    for part_id, quantity, where, part in buy_lines(design):
        text.append("\n")
        text.append(part_id, style="bold cyan")
        text.append(f" ×{quantity}")
        stocked = f"; in stock: {_stock_word(part)}" if stock else ""
        text.append(f"\n  {where}{stocked}", style="dim")
    others = _also_values(shown, also)
    if others:
        text.append(f"\nalso at this cost: {others}", style="italic")
    return text


def _base_text(design: Design) -> str:
    return "+".join(_short_ohms(v) for v in base_values(design))


def _also_values(shown: Shown, also: Sequence[Shown]) -> str:
    """The base values of the other members of the family (``1k, 2k, 5k …``), each once; the
    count of members that differ only in part ids."""
    mine = _base_text(shown.design)
    names: list[str] = []
    same = 0
    for other in also:
        name = _base_text(other.design)
        if name == mine:
            same += 1
        elif name not in names:
            names.append(name)
    words = ", ".join(names[:ALSO_SHOWN])
    if len(names) > ALSO_SHOWN:
        words += f" … ({len(names)} values in all)"
    if same:
        words += ("; " if words else "") + f"{same} other part choice(s) at these values"
    return words


def _noise(verification: Verification) -> str:
    for check in verification.checks:
        if check.name == "output_noise":
            return format_quantity(check.value, "V", 3) + " rms"
    return "n/a"


def _tightest(verification: Verification) -> Text:
    tight = verification.tightest
    style = "green" if tight.passed else "bold red"
    return Text(
        f"{label_of(tight.name)}\n{_figure(tight.margin, tight.unit, signed=True)}", style=style
    )


def _figures(shown: Shown, spec: Spec) -> list[Text]:
    verification = shown.verification
    worst = verification.worst_case
    mc = verification.monte_carlo
    return [
        Text(_db(worst.cmrr_db)),
        Text(_db(mc.cmrr_at_yield_db) if mc is not None else "n/a"),
        Text(f"±{_pct(worst.gain_error_worst)}"),
        Text(_noise(verification)),
        _tightest(verification),
    ]


def _row(
    shown: Shown, also: Sequence[Shown], spec: Spec, wide: bool, stock: bool
) -> list[RenderableType]:
    rank = str(shown.rank) if shown.rank is not None else "other"
    head = [Text(rank), _buy_cell(shown, also, stock), Text(f"{shown.cost.total:.3f}")]
    figures = _figures(shown, spec)
    if wide:
        return [*head, *figures]
    yield_pct = format_fraction(spec.requirements.yield_target)
    stacked = Text()
    for label, cell in zip(
        ("CMRR worst ", f"CMRR at {yield_pct} ", "gain error ", "noise ", "tightest: "),
        figures,
        strict=True,
    ):
        if stacked:
            stacked.append("\n")
        stacked.append(label, style="dim")
        stacked.append_text(cell)
    return [*head, stacked]


def render_pick_table(
    shown: Sequence[Shown],
    spec: Spec,
    title: str,
    *,
    explain: bool = True,
    width: int = 160,
    members: Sequence[Sequence[Shown]] = (),
    stock: bool = False,
) -> Table:
    """The designs as a table: :data:`TABLE_COLUMNS` from :data:`WIDE_FROM` columns of
    ``width``, else :data:`NARROW_COLUMNS` (the figures stacked); ``members``: per design the
    other designs of its family (named as "also at this cost"); ``stock``: show the house stock
    of each part; ``explain``: a caption saying what the CMRR columns mean."""
    req = spec.requirements
    yield_pct = format_fraction(req.yield_target)
    caption = (
        f"CMRR worst case: every tolerance, tempco over {req.temp_min_c:g} to "
        f"{req.temp_max_c:g} °C{', life drift' if req.life_s > 0 else ''}, source and REF "
        f"impedance and the amplifier at once (floor {req.cmrr_floor_db:g} dB). CMRR at yield: "
        f"the CMRR that {yield_pct} of {spec.preferences.samples:,} simulated builds reach. "
        "Cost in relative units. One row per distinct choice: other base values of the same "
        "parts at the same cost are named below the parts."
    )
    wide = width >= WIDE_FROM
    table = Table(
        title=title,
        title_justify="left",
        header_style="bold",
        caption=caption if explain else None,
        caption_justify="left",
        show_lines=True,
    )
    id_width = max(
        (len(line[0]) + 3 + len(str(line[1])) for s in shown for line in buy_lines(s.design)),
        default=10,
    )
    for name in TABLE_COLUMNS if wide else NARROW_COLUMNS:
        numeric = name not in ("what to buy", "tightest margin", "figures")
        table.add_column(
            name,
            justify="right" if numeric else "left",
            no_wrap=name in ("#", "cost (rel.)", "CMRR worst case", "CMRR at yield"),
            min_width=id_width if name == "what to buy" else None,
            overflow="fold",
        )
    for i, item in enumerate(shown):
        also = members[i] if i < len(members) else ()
        table.add_row(*_row(item, also, spec, wide, stock))
    return table


#: The objectives in words (the spec and the JSON keep the values of ``Objective``).
OBJECTIVE_WORDS: Final = {
    Objective.COST: "lowest cost",
    Objective.CMRR_MARGIN: "most CMRR margin",
    Objective.PLACEMENTS: "fewest parts to place",
}


def _objective_words(spec: Spec) -> str:
    return OBJECTIVE_WORDS[spec.preferences.objective]


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
        designs = found + sum(len(m) for m in report.members)
        counted = f"{found} distinct choice(s), {designs} design(s)"
        if found < report.designs_asked and not r.ties_cut:
            text.append(f": only {counted} meet the spec, all shown")
        else:
            text.append(f": the {counted} best by {_objective_words(report.spec)}")
        if r.ties_cut:
            text.append(
                f" (collection stopped after {MAX_EXTRA_DESIGNS} extra designs: the lists of "
                "other values at the same cost may be incomplete, and more choices may exist "
                "beyond those shown)"
            )
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


def _kind_words(best: KindBest, floor_db: float, basis: str) -> str:
    if best.meets and best.cost is not None and best.cmrr_db is not None:
        if best.timed_out:  # searched at the asked floor after the pick, and cut by the clock
            return (
                f"{best.kind}: best found within the search's time bound at cost "
                f"{best.cost:.3f} with {best.cmrr_db:.2f} dB {basis}"
            )
        return f"{best.kind}: cheapest at cost {best.cost:.3f} with {best.cmrr_db:.2f} dB {basis}"
    dash = best.kind.replace(" ", "-")
    unreached = best.out_of_reach_db
    nor = f" (nor {unreached:g} dB)" if unreached is not None and unreached < floor_db else ""
    head = f"no {dash} design reaches {floor_db:g} dB{nor}"
    if unreached is None:  # searched below a cost ceiling only: the asked floor's reach unknown
        head = f"no {dash} design found at {floor_db:g} dB within the search's time bound"
    if best.cost is None or best.cmrr_db is None or best.floor_db is None:
        if unreached is None:
            return head
        if best.timed_out:
            return f"{head}, and none was found within the search's time bound"
        return f"{head}, nor any lower floor tried"
    found = " (best found within the search's time bound)" if best.timed_out else ""
    return (
        f"{head}; the cheapest at {best.floor_db:g} dB costs {best.cost:.3f} with "
        f"{best.cmrr_db:.2f} dB {basis}{found}"
    )


def trade_text(trade: Trade, spec: Spec) -> str:
    """One line: each kind's best (or why it has none) and what the extra decibels cost."""
    basis = (
        f"at {format_fraction(spec.requirements.yield_target)} yield"
        if spec.requirements.cmrr_basis is CmrrBasis.YIELD
        else "worst case"
    )
    d, n = trade.discrete, trade.network
    words = [_kind_words(d, trade.floor_db, basis), _kind_words(n, trade.floor_db, basis)]
    if d.meets and n.meets:
        assert d.cost is not None and n.cost is not None
        assert d.cmrr_db is not None and n.cmrr_db is not None
        cheap, dear = (d, n) if d.cost <= n.cost else (n, d)
        assert cheap.cmrr_db is not None and dear.cmrr_db is not None
        assert cheap.cost is not None and dear.cost is not None
        extra = dear.cmrr_db - cheap.cmrr_db
        if extra <= 0.0:
            words.append(f"the {cheap.kind} design is cheaper and has {-extra:.2f} dB more")
        else:
            rate = cost_per_db(cheap.cost, cheap.cmrr_db, dear.cost, dear.cmrr_db)
            words.append(
                f"the {dear.kind} design's extra {extra:.2f} dB cost {dear.cost - cheap.cost:.3f}"
                f" more ({rate:.3f} per dB)"
            )
    return "Discrete or network: " + "; ".join(words) + "."


def render_buy(report: PickReport) -> Table | None:
    """The "buy this" block for the winner: each part id once with its quantity, where each
    element goes, whether house stock has it, its unit cost; the total cost in the caption."""
    winner = report.winner
    if winner is None:
        return None
    cost = winner.cost
    table = Table(
        title=f"Buy this (choice 1, {TOPOLOGY_LABELS[winner.design.topology]})",
        title_justify="left",
        header_style="bold",
        caption=(
            f"Total relative cost {cost.total:.3f}: parts {cost.parts:.3f}, placements "
            f"{cost.placements:.3f}, BOM lines {cost.lines:.3f}, stock penalty "
            f"{cost.stock_penalty:.3f}."
        ),
        caption_justify="left",
    )
    table.add_column("part id", no_wrap=True)
    table.add_column("qty", justify="right", no_wrap=True)
    table.add_column("goes to (position=element)", overflow="fold")
    table.add_column("in house stock", no_wrap=True)
    table.add_column("unit cost", justify="right", no_wrap=True)
    for part_id, quantity, where, part in buy_lines(winner.design):
        table.add_row(
            Text(part_id),
            Text(str(quantity)),
            Text(where),
            Text(_stock_word(part)),
            Text(f"{part.unit_cost:.3f}"),
        )
    return table


def render_pick(report: PickReport, width: int = 160) -> RenderableType:
    """The whole output as one Rich renderable (nothing is printed here), laid out for a
    terminal ``width`` columns wide: safety cautions when the spec has any, the ranked table
    (one row per distinct choice), the best design of the missing kind, the "buy this" block,
    the status line, the diagnosis when nothing meets the spec, and the full check report of
    the winner. User text (titles, paths) is never read as markup."""
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
                f"Distinct choices that meet the spec, best first by {_objective_words(spec)}"
                f"{basis}",
                width=width,
                members=report.members,
                stock=report.stock_known,
            )
        )
    if report.other_kind:
        parts.append(
            render_pick_table(
                report.other_kind,
                spec,
                "Best of the kind the ranking above lacks (shown for comparison)",
                explain=not report.ranked,
                width=width,
                stock=report.stock_known,
            )
        )
    if report.trade is not None:
        parts.append(Text(trade_text(report.trade, spec)))
    buy = render_buy(report)
    if buy is not None:
        parts.append(buy)
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


def _design_json(shown: Shown, family_size: int = 1) -> dict[str, Any]:
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
    document: dict[str, Any] = _finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def pick_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text (the same writer as ``quartet check``: fixed key order,
    two-space indent, ASCII only, no NaN or infinity)."""
    return check_json_text(document)
