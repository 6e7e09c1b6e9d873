"""The Rich renderables of ``quartet pick`` (:func:`render_pick`; the CLI prints them): the
ranked table, the status line, the trade between the kinds, what to buy and the winner's full
check report, from a :class:`~optimizer.report.pickreport.PickReport`. The JSON document is
in ``report.pickjson``.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Final

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..design import Design
from ..parts import DiscretePart, NetworkPart
from ..solve.ranking import base_values
from ..solve.search import MAX_EXTRA_DESIGNS, SearchStatus
from ..solve.streams import MAX_CUTS
from ..solve.trade import KindBest, Trade, cost_per_db
from ..spec import CmrrBasis, Objective, Spec
from ..units import format_fraction, format_quantity, format_resistance
from ..verify import Verification
from .check import TOPOLOGY_LABELS, label_of, render_check
from .formats import cautions_panel, fmt_db, fmt_figure, fmt_pct
from .pickreport import PickReport, Shown

__all__ = [
    "ALSO_SHOWN",
    "DIGITS",
    "FILE_TABLE_COLUMNS",
    "NARROW_COLUMNS",
    "OBJECTIVE_WORDS",
    "TABLE_COLUMNS",
    "WIDE_FROM",
    "buy_lines",
    "render_buy",
    "render_pick",
    "render_pick_table",
    "render_status",
    "trade_text",
]


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
        f"{label_of(tight.name)}\n{fmt_figure(tight.margin, tight.unit, signed=True)}", style=style
    )


def _figures(shown: Shown, spec: Spec) -> list[Text]:
    verification = shown.verification
    worst = verification.worst_case
    mc = verification.monte_carlo
    return [
        Text(fmt_db(worst.cmrr_db)),
        Text(fmt_db(mc.cmrr_at_yield_db) if mc is not None else "n/a"),
        Text(f"±{fmt_pct(worst.gain_error_worst)}"),
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
        parts.append(cautions_panel(report.cautions))
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
