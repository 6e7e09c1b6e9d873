"""``quartet board``: several amplifier kinds picked together."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

from rich.console import Console

from .. import interrupt
from .catalogs import _catalog_notes, _once
from .options import (
    DIAGNOSIS_TIME_LIMIT_S,
    EXIT_NOT_MET,
    EXIT_OK,
    EXIT_TIME_LIMIT,
    PICK_TIME_LIMIT_S,
    _add_catalog_option,
    _add_time_limit_option,
    _all_warnings,
    _Parser,
    _whole_number,
)
from .outputs import _export_paths, _notes, _warn, _write_outputs

if TYPE_CHECKING:
    from ..board.model import Board
    from ..board.search import BoardResult, BoardStatus
    from ..catalog import Catalog
    from ..report.board import BoardReport
    from ..solve.diagnose import Diagnosis


def _add_board_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    board = commands.add_parser(
        "board",
        help="pick every amplifier of a board together, sharing BOM lines",
        description="Pick one design per amplifier of a board file so that the whole board "
        "costs least (parts, placements, one line cost per distinct part id), every design "
        "verified exactly; show each amplifier, the merged BOM and the saving against picking "
        "each alone. Exit 0 when proven optimal, 1 when an amplifier cannot be met (with its "
        "diagnosis), 2 on bad input, 3 when the time limit ended the search first.",
    )
    board.add_argument("board", metavar="BOARD", help="board file (YAML)")
    _add_catalog_option(board, source="board")
    board.add_argument(
        "--top", type=_whole_number(1, 100), metavar="N",
        help="how many boards to rank (default: the board's purchasing.alternatives)",
    )  # fmt: skip
    _add_time_limit_option(board, PICK_TIME_LIMIT_S)
    board.add_argument("--json", action="store_true", help="write the result as JSON")
    board.add_argument("--bom", metavar="FILE.csv", help="write the merged BOM of the best board")
    board.add_argument("--json-out", metavar="FILE", help="write the JSON document to a file")
    board.add_argument(
        "--report", metavar="FILE.md|FILE.html", help="write a report (Markdown or HTML)"
    )
    board.add_argument("--force", action="store_true", help="replace output files that exist")
    board.set_defaults(handler=_board)


def _board(args: argparse.Namespace, console: Console) -> int:
    from ..analysis.safety import safety_cautions
    from ..board.boardfile import load_board
    from ..board.search import board_search
    from ..catalog import load_catalogs
    from ..report.board import board_json_text, board_to_json, build_board_report
    from ..statistics import board_statistics
    from ..verify import verify_candidate

    _board_outputs_allowed(args, [args.board, *args.catalog])  # before any work
    board = load_board(args.board)
    specs = [a.spec.source_path for a in board.amplifiers if a.spec.source_path]
    _board_outputs_allowed(args, [args.board, *specs, *board.purchasing.catalogs, *args.catalog])
    args.spec_warnings = list(board.warnings)
    _warn(args, console)
    paths = _once(args, console, [*board.purchasing.catalogs, *args.catalog])
    catalog = load_catalogs(paths, board.purchasing.use_builtin_catalogs)
    _catalog_notes(args, console, catalog)
    top = args.top if args.top is not None else board.purchasing.alternatives
    with interrupt.winding_down():
        result = board_search(
            board, catalog, verify_candidate, top=top, time_limit_s=args.time_limit
        )
    stopped = interrupt.cancelled()
    diagnoses = [] if stopped else _board_diagnoses(args, catalog, result)
    cautions = list(dict.fromkeys(c for a in board.amplifiers for c in safety_cautions(a.spec)))
    verifications, statistics_s = board_statistics(result)
    report = build_board_report(
        board, result, boards_asked=top, time_limit_s=args.time_limit, cautions=cautions,
        diagnoses=diagnoses, interrupted=stopped, verifications=verifications,
        statistics_seconds=statistics_s,
    )  # fmt: skip
    json_text = board_json_text(board_to_json(report, _all_warnings(args)))
    if args.json:
        console.print(json_text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        from ..report.board import render_board

        console.print(render_board(report))
    if stopped:
        raise interrupt.Interrupted(
            interrupt.signal_number(),
            "the search was stopped; the boards above are the best found so far (not proven "
            "best); no file was written",
        )
    _write_board_files(args, console, board, report, json_text)
    return _board_exit_code(result.status)


def _board_outputs_allowed(args: argparse.Namespace, inputs: list[str]) -> None:
    """Refuse the export paths before any work: a report must be .md or .html, ``--json``
    and an export cannot both print, and no input or existing file is overwritten without
    ``--force``.
    """
    from ..report.exports import report_format
    from ..safewrite import STDOUT, OutputError, check_outputs

    if args.report is not None and args.report != STDOUT and not report_format(args.report):
        raise OutputError(f"{args.report}: a report file must end in .md or .html")
    if STDOUT in _export_paths(args) and args.json:
        raise OutputError(f"{STDOUT}: --json already prints on standard output")
    check_outputs(_export_paths(args), force=args.force, inputs=inputs)


def _board_diagnoses(
    args: argparse.Namespace, catalog: Catalog, result: BoardResult
) -> list[tuple[int, Diagnosis]]:
    """The diagnosis of each amplifier that nothing meets, when the board is infeasible."""
    from ..board.search import BoardStatus
    from ..verify import verify_candidate

    if result.status is not BoardStatus.INFEASIBLE:
        return []
    from ..solve.diagnose import diagnose

    diagnoses = []
    limit = min(DIAGNOSIS_TIME_LIMIT_S, args.time_limit)
    with interrupt.winding_down():
        for index in result.infeasible:
            spec = result.specs[index]
            diagnoses.append((index, diagnose(spec, catalog, verify_candidate, time_limit_s=limit)))
    interrupt.check()
    return diagnoses


def _write_board_files(
    args: argparse.Namespace, console: Console, board: Board, report: BoardReport, json_text: str
) -> None:
    """Write the JSON, the merged BOM of the best board and the report that were asked for."""
    from ..report.board import board_blocks, board_bom_csv_text
    from ..report.exports import render_report, report_format
    from ..safewrite import STDOUT

    outputs: list[tuple[str, str]] = []
    best = report.best
    if args.json_out is not None:
        outputs.append((args.json_out, json_text + "\n"))
    if best is not None and args.bom is not None:
        outputs.append((args.bom, board_bom_csv_text(board, best)))
    if args.report is not None:
        fmt = "md" if args.report == STDOUT else report_format(args.report)
        assert fmt is not None  # checked by _board_outputs_allowed
        title = f"Quartet board: {board.title or args.board}"
        outputs.append((args.report, render_report(title, board_blocks(report), fmt)))
    _write_outputs(args, console, outputs)
    if best is None and args.bom is not None:
        _notes(args, console).print(
            "[yellow]warning[/yellow]: no board was found, so no BOM was written",
            highlight=False,
        )


def _board_exit_code(status: BoardStatus) -> int:
    """0 proven optimal, 1 an amplifier cannot be met, 3 the time limit ended the search."""
    from ..board.search import BoardStatus

    if status is BoardStatus.OPTIMAL:
        return EXIT_OK
    if status is BoardStatus.INFEASIBLE:
        return EXIT_NOT_MET
    return EXIT_TIME_LIMIT
