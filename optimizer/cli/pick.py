"""``quartet pick``: the search, the diagnosis when nothing is feasible, the ranking and
the exports of the best design.
"""

from __future__ import annotations

import argparse
import dataclasses
from typing import TYPE_CHECKING

from rich.console import Console

from .. import interrupt
from .catalogs import _spec_catalogs
from .options import (
    DIAGNOSIS_TIME_LIMIT_S,
    EXIT_NOT_MET,
    EXIT_OK,
    EXIT_TIME_LIMIT,
    PICK_TIME_LIMIT_S,
    _add_catalog_option,
    _add_export_options,
    _add_time_limit_option,
    _all_warnings,
    _Parser,
    _penalty,
    _whole_number,
)
from .outputs import (
    _check_outputs,
    _notes,
    _search_progress,
    _stage,
    _verify_spice,
    _warn,
    _write_exports,
    _write_outputs,
)

if TYPE_CHECKING:
    from ..catalog import Catalog
    from ..report.pickreport import PickReport
    from ..solve.diagnose import Diagnosis
    from ..solve.results import PickResult, SearchStatus
    from ..solve.trade import Trade
    from ..spec import Spec


def _add_pick_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    from ..spec import Objective

    pick = commands.add_parser(
        "pick",
        help="find the cheapest resistor sets that meet a spec",
        description="Search the catalogs for the best designs that meet a spec, verify each "
        "exactly and show them ranked, then the full check of the best. Exit 0 when the "
        "ranking is proven optimal, 1 when nothing meets the spec (with a diagnosis), 2 on "
        "bad input, 3 when the time limit ended the search first.",
    )
    pick.add_argument("spec", metavar="SPEC", help="spec file (YAML)")
    _add_catalog_option(pick)
    pick.add_argument(
        "--top", type=_whole_number(1), metavar="N",
        help="how many designs to rank (default: the spec's alternatives)",
    )  # fmt: skip
    pick.add_argument("--stock-only", action="store_true", help="use only parts in house stock")
    pick.add_argument(
        "--prefer-stock", type=_penalty, metavar="PENALTY",
        help="prefer parts in house stock: add PENALTY (relative cost) per BOM line that is "
        "not stocked (the spec's stock: prefer with this penalty)",
    )  # fmt: skip
    pick.add_argument(
        "--objective", choices=[o.value for o in Objective],
        help="what to rank by (default: the spec's objective)",
    )  # fmt: skip
    _add_time_limit_option(pick, PICK_TIME_LIMIT_S)
    pick.add_argument("--json", action="store_true", help="write the result as JSON")
    _add_export_options(pick, "the best design (rank 1)")
    pick.add_argument(
        "--write-partial", action="store_true",
        help="when interrupted, still write the files for the best design found so far",
    )  # fmt: skip
    pick.set_defaults(handler=_pick)


def _pick(args: argparse.Namespace, console: Console) -> int:
    from ..analysis.safety import safety_cautions
    from ..report.pickjson import pick_json_text, pick_to_json
    from ..report.pickreport import build_pick_report
    from ..solve.search import pick
    from ..specfile import load_spec
    from ..statistics import with_statistics
    from ..verify import verify_candidate

    _check_outputs(args)
    _stage("spec")
    spec = load_spec(args.spec)
    _check_outputs(args, spec)
    _warn(args, console, spec)
    spec = _spec_with_options(args, spec)
    _stage("catalog")
    catalog = _spec_catalogs(spec, args.catalog, _notes(args, console))
    top = args.top if args.top is not None else spec.preferences.alternatives
    _stage("search")
    # A signal during the search stops it; the search then returns what it found so far.
    with interrupt.winding_down(), _search_progress() as progress:
        result = pick(
            spec,
            catalog,
            verify_candidate,
            top=top,
            time_limit_s=args.time_limit,
            distinct=True,
            progress=progress,
        )
    stopped = interrupt.cancelled()
    diagnosis, trade = _follow_ups(args, spec, catalog, result, stopped)
    _stage("statistics")
    result, statistics_s = with_statistics(result, spec)
    report = build_pick_report(
        spec,
        result,
        statistics_seconds=statistics_s,
        designs_asked=top,
        time_limit_s=args.time_limit,
        cautions=safety_cautions(spec),
        diagnosis=diagnosis,
        interrupted=stopped,
        stock_known=catalog.stock_count > 0,
        trade=trade,
    )
    json_text = pick_json_text(pick_to_json(report, _all_warnings(args)))
    _show(args, console, report, json_text)
    _write_pick_files(args, console, spec, report, json_text, stopped)
    return _exit_code(result.status)


def _spec_with_options(args: argparse.Namespace, spec: Spec) -> Spec:
    """The spec with the command line's stock and objective options applied."""
    from ..solve.search import with_objective
    from ..spec import Objective, StockPolicy

    if args.stock_only:
        spec = dataclasses.replace(
            spec, preferences=dataclasses.replace(spec.preferences, stock=StockPolicy.ONLY)
        )
    elif args.prefer_stock is not None:
        spec = dataclasses.replace(
            spec,
            preferences=dataclasses.replace(
                spec.preferences, stock=StockPolicy.PREFER, stock_penalty=args.prefer_stock
            ),
        )
    if args.objective is not None:
        spec = with_objective(spec, Objective(args.objective))
    return spec


def _follow_ups(
    args: argparse.Namespace,
    spec: Spec,
    catalog: Catalog,
    result: PickResult,
    stopped: bool,
) -> tuple[Diagnosis | None, Trade | None]:
    """The diagnosis when nothing met the spec, the topology trade when something did;
    neither after a signal stopped the search.
    """
    from ..solve.results import SearchStatus
    from ..verify import verify_candidate

    diagnosis = None
    if result.status is SearchStatus.INFEASIBLE and not stopped:
        from ..solve.diagnose import diagnose

        limit = min(DIAGNOSIS_TIME_LIMIT_S, args.time_limit)
        with interrupt.winding_down():
            diagnosis = diagnose(spec, catalog, verify_candidate, time_limit_s=limit)
        interrupt.check()
    trade = None
    if not stopped and result.ranked:
        from ..solve.trade import TRADE_TIME_LIMIT_S, kind_trade

        with interrupt.winding_down():
            limit = min(TRADE_TIME_LIMIT_S, args.time_limit)
            trade = kind_trade(spec, catalog, verify_candidate, result, time_limit_s=limit)
    return diagnosis, trade


def _show(args: argparse.Namespace, console: Console, report: PickReport, json_text: str) -> None:
    """Print the ranking: the JSON text with ``--json``, the Rich tables otherwise."""
    from ..report.pick import render_pick

    if args.json:
        console.print(json_text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        console.print(render_pick(report, width=console.width))


def _write_pick_files(
    args: argparse.Namespace,
    console: Console,
    spec: Spec,
    report: PickReport,
    json_text: str,
    stopped: bool,
) -> None:
    """Write the exports of the best design; after a signal only with ``--write-partial``,
    and raise :class:`interrupt.Interrupted` once the files (or none) are written.
    """
    winner = report.winner
    signum = interrupt.signal_number()
    if stopped and args.write_partial:
        interrupt.reset()  # write what was found; a second signal stops the writing
    if stopped and not args.write_partial:
        count = len(report.ranked)
        found = f"the {count} design(s) above are" if count else "no design was"
        raise interrupt.Interrupted(
            signum,
            f"the search was stopped; {found} found so far (not proven best); no file was "
            "written (--write-partial writes the files of the best design found so far)",
        )
    if winner is not None:
        _write_exports(
            args, console, spec, winner.design, winner.verification, json_text, pick_report=report
        )
        if not stopped:
            _verify_spice(args, console, spec, winner.design)
    elif args.json_out is not None:
        _write_outputs(args, console, [(args.json_out, json_text + "\n")])
    if winner is None and (args.bom or args.netlist or args.report or args.verify_spice):
        _notes(args, console).print(
            "[yellow]warning[/yellow]: no design was found, so no BOM, netlist or report was "
            "written and nothing was simulated",
            highlight=False,
            emoji=False,
        )
    if stopped:
        raise interrupt.Interrupted(
            signum,
            "the search was stopped; the files above hold the best design found so far "
            "(not proven best)"
            if winner is not None
            else "the search was stopped before any design was found; "
            + (
                "the JSON file records that (no other file was written)"
                if args.json_out is not None
                else "no file was written"
            ),
        )


def _exit_code(status: SearchStatus) -> int:
    """The exit code of a finished search: 0 proven, 1 nothing meets the spec, 3 time limit."""
    from ..solve.results import SearchStatus

    if status is SearchStatus.OPTIMAL:
        return EXIT_OK
    if status is SearchStatus.INFEASIBLE:
        return EXIT_NOT_MET
    return EXIT_TIME_LIMIT
