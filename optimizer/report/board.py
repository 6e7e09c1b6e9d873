"""The outputs of ``quartet board``: one table per amplifier kind with its chosen design, the
merged BOM, the board total against picking each amplifier alone, the ranked boards, a JSON
document, a BOM CSV and the report blocks.

JSON document, schema ``quartet-board/1`` (keys in this fixed order; relative costs; SI
figures with the unit in the key name)::

    schema, quartet_version
    board        {path, title}
    purchasing   {catalogs, builtin_catalogs, stock_policy, stock_penalty, line_cost,
                  placement_cost, max_lines}
    search       {status, proven_optimal, boards_asked, boards_found, time_limit_s,
                  designs_read: [per kind], exact_checks, rejected_by_exact_check}
    boards       [{rank, cost: {parts, placements, lines, stock_penalty, total, line_count},
                   amplifiers: [amplifier], bom: [line]}]  best first
    alone        null, or {cost, amplifiers}: each amplifier's own cheapest design, costed
                  as one board
    saving       null, or {alone_total, board_total, saving, fraction}
    diagnosis    [{amplifier, binding, text}]  (amplifiers nothing meets)
    safety_cautions, warnings, timing {search_s, statistics_s}, non_finite

    amplifier = {name, quantity, designator_prefix, spec_path, topology, positions,
                 channel_cost: {parts, placements}, alone_cost, meets_spec,
                 cmrr_worst_db, gain_error_worst, cmrr_at_yield_db}
    line      = {part_id, kind, values_ohm, tolerance, ratio_tolerance, tempco_per_k,
                 tracking_tempco_per_k, size, quantity, designators, amplifiers, unit_cost,
                 extended_cost, house_stock}
"""

from __future__ import annotations

import csv
import io
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Final

from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from .._version import __version__
from ..board.bom import BoardBomLine, board_bom
from ..board.model import Board, BoardCost, channel_cost
from ..board.search import BoardResult, BoardStatus, RankedBoard
from ..parts import NetworkPart
from ..units import format_fraction, format_resistance, format_tempco
from ..verify import Verification
from .check import TOPOLOGY_LABELS
from .checkjson import check_json_text, finite_only, position_json
from .exports import Block
from .formats import cautions_panel, fmt_db, fmt_pct
from .pick import render_pick_table
from .pickreport import Shown

if TYPE_CHECKING:
    from ..solve.diagnose import Diagnosis

__all__ = [
    "BOARD_BOM_COLUMNS",
    "SCHEMA",
    "BoardReport",
    "board_blocks",
    "board_bom_csv_text",
    "board_json_text",
    "board_to_json",
    "build_board_report",
    "render_board",
]

SCHEMA: Final = "quartet-board/1"

BOARD_BOM_COLUMNS: Final = (
    "part_id",
    "kind",
    "resistance_ohm",
    "tolerance",
    "ratio_tolerance",
    "tempco_ppm_per_k",
    "tracking_ppm_per_k",
    "size",
    "quantity",
    "designators",
    "amplifiers",
    "unit_cost",
    "extended_cost",
    "house_stock",
)


@dataclass(frozen=True)
class BoardReport:
    """Everything the outputs show: the board, the search result, the best board's checks
    with their Monte Carlo (for the tables), the diagnoses of amplifiers nothing meets."""

    board: Board
    result: BoardResult
    verifications: tuple[Verification, ...]
    diagnoses: tuple[tuple[int, Diagnosis], ...]
    boards_asked: int
    time_limit_s: float
    statistics_seconds: float
    cautions: tuple[str, ...]
    interrupted: bool = False

    @property
    def best(self) -> RankedBoard | None:
        return self.result.boards[0] if self.result.boards else None


def build_board_report(
    board: Board,
    result: BoardResult,
    *,
    boards_asked: int,
    time_limit_s: float,
    cautions: Sequence[str],
    diagnoses: Sequence[tuple[int, Diagnosis]] = (),
    interrupted: bool = False,
    verifications: Sequence[Verification] = (),
    statistics_seconds: float = 0.0,
) -> BoardReport:
    """The report, computing nothing: ``verifications`` are the best board's verdicts with
    their Monte Carlo (``optimizer.statistics.board_statistics``, whose seconds are
    ``statistics_seconds``)."""
    return BoardReport(
        board,
        result,
        tuple(verifications),
        tuple(diagnoses),
        boards_asked,
        time_limit_s,
        statistics_seconds,
        tuple(cautions),
        interrupted,
    )


def _money(value: float) -> str:
    return f"{value:.3f}"


def _values(line: BoardBomLine) -> str:
    part = line.part
    if isinstance(part, NetworkPart):
        return " / ".join(format_resistance(v, 6) for v in part.values_ohm)
    return format_resistance(part.resistance_ohm, 6)


def _grade(line: BoardBomLine) -> str:
    part = line.part
    if isinstance(part, NetworkPart):
        return (
            f"ratio ±{format_fraction(part.ratio_tolerance, 4)}, "
            f"{format_tempco(part.tracking_tempco_per_k, 4)} tracking"
        )
    return f"±{format_fraction(part.tolerance, 4)}, {format_tempco(part.tempco_per_k, 4)}"


def render_bom_table(board: Board, chosen: RankedBoard, title: str) -> Table:
    """The merged BOM: one row per part id."""
    lines = board_bom(board.amplifiers, [c.design for c in chosen.chosen])
    table = Table(title=title, title_justify="left", header_style="bold", show_lines=False)
    for name, right in (
        ("part id", False),
        ("values", False),
        ("grade", False),
        ("qty", True),
        ("designators", False),
        ("used by", False),
        ("unit", True),
        ("extended", True),
        ("stock", True),
    ):
        table.add_column(name, justify="right" if right else "left")
    for line in lines:
        table.add_row(
            line.part.part_id,
            _values(line),
            _grade(line),
            str(line.quantity),
            " ".join(line.designators),
            ", ".join(line.amplifiers),
            _money(line.part.unit_cost),
            _money(line.extended_cost),
            str(line.part.stock_qty),
        )
    return table


def _cost_words(cost: BoardCost) -> str:
    penalty = f" + stock penalty {_money(cost.stock_penalty)}" if cost.stock_penalty else ""
    return (
        f"{_money(cost.total)} (parts {_money(cost.parts)} + placements "
        f"{_money(cost.placements)} + {cost.line_count} line(s) {_money(cost.lines)}{penalty})"
    )


def render_totals(report: BoardReport) -> Text:
    """The board total, the total of picking each amplifier alone, and the saving."""
    best, alone = report.best, report.result.alone
    text = Text()
    if best is not None:
        text.append("Board total: ", style="bold").append(_cost_words(best.cost) + "\n")
    if alone is not None:
        text.append("Each amplifier picked alone: ", style="bold")
        text.append(_cost_words(alone.cost) + "\n")
    if best is not None and alone is not None:
        saving = alone.cost.total - best.cost.total
        share = saving / alone.cost.total if alone.cost.total > 0 else 0.0
        text.append("Saving: ", style="bold")
        text.append(f"{_money(saving)} ({share * 100:.1f} % of the alone total)", style="green")
    return text


def render_status(report: BoardReport) -> Text:
    r = report.result
    text = Text("Status: ", style="bold")
    if r.status is BoardStatus.OPTIMAL:
        text.append("proven optimal", style="bold green")
        found = len(r.boards)
        text.append(
            f": the {found} cheapest board(s)"
            if found >= report.boards_asked
            else f": only {found} board(s) exist, all shown"
        )
    elif r.status is BoardStatus.TIME_LIMIT:
        why = "interrupted" if report.interrupted else f"time limit ({report.time_limit_s:g} s)"
        if r.boards:
            text.append("best found, NOT proven optimal", style="bold yellow")
            text.append(f": {why}")
        else:
            text.append("no board found", style="bold yellow")
            text.append(f": {why} before every amplifier had a checked design")
    elif r.infeasible:
        names = ", ".join(report.board.amplifiers[i].name for i in r.infeasible)
        text.append("an amplifier cannot be met", style="bold red")
        text.append(f": nothing in the catalogs meets {names}")
    else:
        text.append("no board meets the line cap", style="bold red")
        text.append(f": no choice uses at most {report.board.purchasing.max_lines} line(s)")
    read = ", ".join(str(n) for n in r.read)
    text.append(
        f"; designs read per amplifier: {read}; {r.verified} exact check(s), "
        f"{r.rejected} rejected; {r.seconds:.2f} s search, "
        f"{report.statistics_seconds:.2f} s statistics."
    )
    return text


def _alternatives(report: BoardReport) -> Table:
    table = Table(
        title="Boards, best first", title_justify="left", header_style="bold", show_lines=True
    )
    table.add_column("#", justify="right")
    table.add_column("rel. cost", justify="right")
    table.add_column("lines", justify="right")
    for amplifier in report.board.amplifiers:
        table.add_column(amplifier.name)
    for rank, ranked in enumerate(report.result.boards, start=1):
        cells = [
            f"{TOPOLOGY_LABELS[c.design.topology]}\n"
            + " ".join(dict.fromkeys(p.part.part_id for p in c.design.placements))
            for c in ranked.chosen
        ]
        table.add_row(str(rank), _money(ranked.cost.total), str(ranked.cost.line_count), *cells)
    return table


def render_board(report: BoardReport) -> RenderableType:
    """The whole output (nothing is printed here)."""
    board = report.board
    where = f" ({board.source_path})" if board.source_path else ""
    parts: list[RenderableType] = [Text(f"Board: {board.title or 'board'}{where}", style="bold")]
    if report.cautions:
        parts.append(cautions_panel(report.cautions))
    best = report.best
    if best is not None:
        for index, (amplifier, chosen, verification, spec) in enumerate(
            zip(board.amplifiers, best.chosen, report.verifications, report.result.specs,
                strict=True)
        ):  # fmt: skip
            channels = (
                f"{amplifier.prefix}1"
                if amplifier.quantity == 1
                else f"{amplifier.prefix}1 … {amplifier.prefix}{amplifier.quantity}"
            )
            title = (
                f"{amplifier.name} × {amplifier.quantity} ({channels}): "
                f"{spec.title or spec.source_path or 'spec'}; rel. cost of one alone"
            )
            shown = Shown(1, chosen.design, chosen.alone_cost, verification)
            parts.append(render_pick_table([shown], spec, title, explain=index == 0))
        parts.append(render_bom_table(board, best, "Merged BOM of the best board"))
        parts.append(render_totals(report))
        if len(report.result.boards) > 1:
            parts.append(_alternatives(report))
    parts.append(render_status(report))
    for index, diagnosis in report.diagnoses:
        name = board.amplifiers[index].name
        parts.append(Text(f"Diagnosis of {name}: ", style="bold").append(diagnosis.text))
    return Group(*parts)


# ---------------------------------------------------------------------------------------------
# JSON, CSV, report blocks
# ---------------------------------------------------------------------------------------------


def _cost_json(cost: BoardCost) -> dict[str, Any]:
    return {
        "parts": cost.parts,
        "placements": cost.placements,
        "lines": cost.lines,
        "stock_penalty": cost.stock_penalty,
        "total": cost.total,
        "line_count": cost.line_count,
    }


def _amplifiers_json(
    report: BoardReport, ranked: RankedBoard, checks: Sequence[Verification] | None
) -> list[dict[str, Any]]:
    out = []
    placement_cost = report.board.purchasing.placement_cost
    for index, (amplifier, chosen) in enumerate(
        zip(report.board.amplifiers, ranked.chosen, strict=True)
    ):
        positions = []
        for placement in chosen.design.placements:
            entry = position_json(placement, None)
            del entry["given_as"]
            positions.append(entry)
        parts, placements = channel_cost(chosen.design, placement_cost)
        check = checks[index] if checks else None
        verdict = chosen.verdict
        worst = check.worst_case if check else getattr(verdict, "worst_case", None)
        mc = check.monte_carlo if check else None
        out.append(
            {
                "name": amplifier.name,
                "quantity": amplifier.quantity,
                "designator_prefix": amplifier.prefix,
                "spec_path": amplifier.spec.source_path,
                "topology": chosen.design.topology.value,
                "positions": positions,
                "channel_cost": {"parts": parts, "placements": placements},
                "alone_cost": chosen.alone_cost.total,
                "meets_spec": bool(verdict.passed),
                "cmrr_worst_db": None if worst is None else worst.cmrr_db,
                "gain_error_worst": None if worst is None else worst.gain_error_worst,
                "cmrr_at_yield_db": None if mc is None else mc.cmrr_at_yield_db,
            }
        )
    return out


def _bom_json(report: BoardReport, ranked: RankedBoard) -> list[dict[str, Any]]:
    out = []
    for line in board_bom(report.board.amplifiers, [c.design for c in ranked.chosen]):
        part = line.part
        network = isinstance(part, NetworkPart)
        out.append(
            {
                "part_id": part.part_id,
                "kind": "network" if network else "discrete",
                "values_ohm": list(part.values_ohm) if isinstance(part, NetworkPart)
                else [part.resistance_ohm],
                "tolerance": part.abs_tolerance if isinstance(part, NetworkPart)
                else part.tolerance,
                "ratio_tolerance": part.ratio_tolerance if isinstance(part, NetworkPart)
                else None,
                "tempco_per_k": part.abs_tempco_per_k if isinstance(part, NetworkPart)
                else part.tempco_per_k,
                "tracking_tempco_per_k": part.tracking_tempco_per_k
                if isinstance(part, NetworkPart) else None,
                "size": part.size,
                "quantity": line.quantity,
                "designators": list(line.designators),
                "amplifiers": list(line.amplifiers),
                "unit_cost": part.unit_cost,
                "extended_cost": line.extended_cost,
                "house_stock": part.stock_qty,
            }
        )  # fmt: skip
    return out


def board_to_json(report: BoardReport, warnings: Sequence[str] = ()) -> dict[str, Any]:
    """The JSON document of schema :data:`SCHEMA` (module docstring)."""
    board, r = report.board, report.result
    p = board.purchasing
    best, alone = report.best, r.alone
    saving = None
    if best is not None and alone is not None:
        amount = alone.cost.total - best.cost.total
        saving = {
            "alone_total": alone.cost.total,
            "board_total": best.cost.total,
            "saving": amount,
            "fraction": amount / alone.cost.total if alone.cost.total > 0 else 0.0,
        }
    raw: dict[str, Any] = {
        "schema": SCHEMA,
        "quartet_version": __version__,
        "board": {"path": board.source_path, "title": board.title},
        "purchasing": {
            "catalogs": list(p.catalogs),
            "builtin_catalogs": p.use_builtin_catalogs,
            "stock_policy": p.stock.value,
            "stock_penalty": p.stock_penalty,
            "line_cost": p.line_cost,
            "placement_cost": p.placement_cost,
            "max_lines": p.max_lines,
        },
        "search": {
            "status": r.status.value,
            "proven_optimal": r.status is BoardStatus.OPTIMAL,
            "boards_asked": report.boards_asked,
            "boards_found": len(r.boards),
            "time_limit_s": float(report.time_limit_s),
            "designs_read": list(r.read),
            "exact_checks": r.verified,
            "rejected_by_exact_check": r.rejected,
        },
        "boards": [
            {
                "rank": rank,
                "cost": _cost_json(ranked.cost),
                "amplifiers": _amplifiers_json(
                    report, ranked, report.verifications if rank == 1 else None
                ),
                "bom": _bom_json(report, ranked),
            }
            for rank, ranked in enumerate(r.boards, start=1)
        ],
        "alone": None
        if alone is None
        else {"cost": _cost_json(alone.cost), "amplifiers": _amplifiers_json(report, alone, None)},
        "saving": saving,
        "diagnosis": [
            {
                "amplifier": board.amplifiers[i].name,
                "binding": list(d.binding),
                "text": d.text,
            }
            for i, d in report.diagnoses
        ],
        "safety_cautions": list(report.cautions),
        "warnings": list(warnings),
        "timing": {"search_s": r.seconds, "statistics_s": report.statistics_seconds},
    }
    found: list[dict[str, str]] = []
    document: dict[str, Any] = finite_only(raw, "", found)
    document["non_finite"] = found
    return document


def board_json_text(document: dict[str, Any]) -> str:
    """The document as JSON text (the writer of ``quartet check``)."""
    return check_json_text(document)


def board_bom_csv_text(board: Board, ranked: RankedBoard) -> str:
    """The merged BOM as CSV (header :data:`BOARD_BOM_COLUMNS`); every text cell passes
    through :func:`optimizer.safewrite.escape_csv_cell`."""
    from ..safewrite import escape_csv_cell

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(BOARD_BOM_COLUMNS)
    for line in board_bom(board.amplifiers, [c.design for c in ranked.chosen]):
        part = line.part
        if isinstance(part, NetworkPart):
            values = ";".join(repr(v) for v in part.values_ohm)
            grade = [
                repr(part.abs_tolerance),
                repr(part.ratio_tolerance),
                repr(part.abs_tempco_per_k * 1e6),
                repr(part.tracking_tempco_per_k * 1e6),
            ]
            kind = "network"
        else:
            values = repr(part.resistance_ohm)
            grade = [repr(part.tolerance), "", repr(part.tempco_per_k * 1e6), ""]
            kind = "discrete"
        writer.writerow(
            [escape_csv_cell(part.part_id), kind, escape_csv_cell(values), *grade,
             escape_csv_cell(part.size), str(line.quantity),
             escape_csv_cell(" ".join(line.designators)),
             escape_csv_cell("; ".join(line.amplifiers)), repr(part.unit_cost),
             repr(line.extended_cost), str(part.stock_qty)]
        )  # fmt: skip
    return buffer.getvalue()


def board_blocks(report: BoardReport) -> list[Block]:
    """The report file: cautions, each amplifier's design, the merged BOM, the totals."""
    blocks: list[Block] = [Block("para", text=f"SAFETY CAUTION: {c}") for c in report.cautions]
    blocks.append(Block("para", text=render_status(report).plain))
    best = report.best
    if best is None:
        return blocks
    for amplifier, chosen, check in zip(
        report.board.amplifiers, best.chosen, report.verifications, strict=True
    ):
        blocks.append(Block("heading", text=f"{amplifier.name} × {amplifier.quantity}"))
        mc = check.monte_carlo
        blocks.append(
            Block(
                "table",
                headers=("position", "value", "part", "CMRR worst", "CMRR stat.", "gain err."),
                rows=tuple(
                    (
                        p.position,
                        format_resistance(p.resistance_ohm, 6),
                        p.part.part_id,
                        fmt_db(check.worst_case.cmrr_db),
                        fmt_db(mc.cmrr_at_yield_db) if mc is not None else "n/a",
                        f"±{fmt_pct(check.worst_case.gain_error_worst)}",
                    )
                    for p in chosen.design.placements
                ),
            )
        )
    lines = board_bom(report.board.amplifiers, [c.design for c in best.chosen])
    blocks.append(Block("heading", text="Merged BOM"))
    blocks.append(
        Block(
            "table",
            headers=("part id", "values", "grade", "qty", "designators", "used by", "extended"),
            rows=tuple(
                (
                    line.part.part_id,
                    _values(line),
                    _grade(line),
                    str(line.quantity),
                    " ".join(line.designators),
                    ", ".join(line.amplifiers),
                    _money(line.extended_cost),
                )
                for line in lines
            ),
        )
    )
    blocks.append(Block("heading", text="Totals"))
    blocks.append(Block("para", text=render_totals(report).plain))
    return blocks
