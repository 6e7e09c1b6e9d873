"""The ``quartet`` command line: a thin layer that parses arguments, calls the library and
prints through Rich. It is the only module that talks to the terminal.

Exit codes: 0 success; 1 a requirement not met or nothing feasible; 2 bad input; 3 the time
limit ended the search with a best design found (not proven optimal); 130 / 143 interrupted by
SIGINT / SIGTERM (128 + the signal number).
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
import warnings
from collections.abc import Callable, Iterator, Sequence
from typing import TYPE_CHECKING

from rich.console import Console
from rich.markup import escape

from . import interrupt
from ._version import __version__
from .errors import QuartetError, quote

if TYPE_CHECKING:
    from .catalog import Catalog
    from .design import Design
    from .report.pick import PickReport
    from .solve.search import SearchProgress
    from .spec import Spec
    from .verify import Verification

EXIT_OK = 0
EXIT_NOT_MET = 1
EXIT_BAD_INPUT = 2
EXIT_TIME_LIMIT = 3

Handler = Callable[[argparse.Namespace, Console], int]


class _Parser(argparse.ArgumentParser):
    """argparse that raises instead of exiting, so ``main`` controls output and exit codes."""

    def error(self, message: str) -> None:  # type: ignore[override]
        raise _UsageError(f"{self.prog}: {message}")


class _UsageError(Exception):
    pass


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="quartet",
        description="Pick and verify the four resistors of an op-amp difference amplifier.",
    )
    parser.add_argument("--version", action="version", version=f"quartet {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    commands.required = True
    _add_catalog_commands(commands)
    _add_spec_commands(commands)
    _add_check_command(commands)
    _add_pick_command(commands)
    _add_sweep_command(commands)
    _add_board_command(commands)
    return parser


# ---------------------------------------------------------------------------------------------
# catalog / spec commands
# ---------------------------------------------------------------------------------------------


def _add_catalog_commands(commands: argparse._SubParsersAction[_Parser]) -> None:
    catalog = commands.add_parser("catalog", help="show or validate parts catalogs")
    sub = catalog.add_subparsers(dest="catalog_command", metavar="ACTION", parser_class=_Parser)
    sub.required = True
    show = sub.add_parser("show", help="summarise catalogs (no path: the built-in catalogs)")
    show.add_argument("paths", nargs="*", metavar="PATH")
    show.set_defaults(handler=_catalog_show)
    validate = sub.add_parser("validate", help="check a catalog file row by row")
    validate.add_argument("paths", nargs="+", metavar="PATH")
    validate.add_argument(
        "--alone", action="store_true",
        help="do not compare ids with the built-in catalog (for specs with builtin_catalogs: "
        "false)",
    )  # fmt: skip
    validate.set_defaults(handler=_catalog_validate)


def _add_spec_commands(commands: argparse._SubParsersAction[_Parser]) -> None:
    spec = commands.add_parser("spec", help="validate a spec file")
    sub = spec.add_subparsers(dest="spec_command", metavar="ACTION", parser_class=_Parser)
    sub.required = True
    validate = sub.add_parser("validate", help="load a spec file and report every problem located")
    validate.add_argument("path", metavar="SPEC")
    validate.set_defaults(handler=_spec_validate)


def _catalog_notes(args: argparse.Namespace, console: Console, catalog: Catalog) -> None:
    """The notes on how catalog files were read (encoding, separator, ignored columns), once
    each."""
    for note in dict.fromkeys(catalog.notes):
        _notes(args, console).print(f"note: {escape(note)}", highlight=False, emoji=False)


def _once(args: argparse.Namespace, console: Console, paths: Sequence[str]) -> list[str]:
    """``paths`` with a file named twice (by any name) kept once, and a note saying so."""
    import os

    kept: dict[str, str] = {}
    for path in paths:
        real = os.path.realpath(path)
        if real not in kept:
            kept[real] = path
            continue
        first = kept[real]
        shown = path if first == path else f"{path} (the same file as {first})"
        _notes(args, console).print(
            f"note: {escape(shown)}: named more than once; read once", highlight=False, emoji=False
        )
    return list(kept.values())


def _catalog_show(args: argparse.Namespace, console: Console) -> int:
    from .catalog import load_catalogs
    from .report.catalog import render_catalog_summary

    _warn(args, console)
    paths = _once(args, console, args.paths)
    catalog = load_catalogs(paths, include_builtin=not paths)
    _catalog_notes(args, console, catalog)
    console.print(render_catalog_summary(catalog))
    return EXIT_OK


def _catalog_validate(args: argparse.Namespace, console: Console) -> int:
    from .catalog import load_catalogs
    from .report.catalog import render_catalog_summary

    _warn(args, console)
    paths = _once(args, console, args.paths)
    catalog = load_catalogs(paths, include_builtin=False, check_builtin=not args.alone)
    _catalog_notes(args, console, catalog)
    console.print(render_catalog_summary(catalog))
    checked = "" if args.alone else " (ids checked against the built-in catalog)"
    console.print(f"[green]valid[/green]: {escape(', '.join(paths))}{checked}", emoji=False)
    return EXIT_OK


def _spec_validate(args: argparse.Namespace, console: Console) -> int:
    from .report.spec import render_spec_summary
    from .specfile import load_spec

    spec = load_spec(args.path)
    _warn(args, console, spec)
    console.print(render_spec_summary(spec))
    console.print(f"[green]valid[/green]: {escape(args.path)}", emoji=False)
    return EXIT_OK


# ---------------------------------------------------------------------------------------------
# check: verify a design the user brings
# ---------------------------------------------------------------------------------------------


def _whole_number(minimum: int, maximum: int | None = None) -> Callable[[str], int]:
    def parse(text: str) -> int:
        shown = quote(text)
        try:
            value = int(text.replace("_", "").replace(",", ""))
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number, got {shown}") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(f"expected {minimum} or more, got {shown}")
        if maximum is not None and value > maximum:
            raise argparse.ArgumentTypeError(f"expected at most {maximum:,}, got {shown}")
        return value

    return parse


def _add_check_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    from .spec import MAX_SAMPLES

    check = commands.add_parser(
        "check",
        help="verify a design of your own against a spec",
        description="Verify four resistors you choose against a spec: worst case, error "
        "budget, Monte-Carlo yield and every other check. Exit 0 when every requirement "
        "holds, 1 when one does not, 2 on bad input.",
    )
    check.add_argument("spec", metavar="SPEC", help="spec file (YAML)")
    for position in ("r1", "r2", "r3", "r4"):
        check.add_argument(
            f"--{position}",
            metavar="PART",
            help=f"{position.upper()} as VALUE[/TOL][/TEMPCO], e.g. 10k/0.1%%/25ppm/K",
        )
    for option, metavar, text in (
        ("--tolerance", "TOL", "tolerance of every value without its own"),
        ("--tempco", "TC", "tempco of every value without its own"),
        ("--drift", "D", "life drift per 1000 h of the values (default none)"),
        ("--power", "P", "power rating of the values at 70 °C (assumed 0.1 W)"),
        ("--max-voltage", "V", "limiting voltage of the values (assumed 75 V)"),
    ):
        check.add_argument(option, metavar=metavar, help=text)
    check.add_argument(
        "--parts", nargs=4, metavar="ID", help="catalog ids for R1 R2 R3 R4 (ID:E for a network "
        "element, - for a position given otherwise)",
    )  # fmt: skip
    check.add_argument(
        "--network", action="append", default=[], metavar="ID:E1,E2,E3,E4",
        help="one network package: the element at R1..R4 (1-based, - for none); repeatable",
    )  # fmt: skip
    _add_catalog_option(check, what=" for the ids")
    check.add_argument(
        "--samples", type=_whole_number(1, MAX_SAMPLES), metavar="N",
        help=f"Monte-Carlo builds (at most {MAX_SAMPLES:,})",
    )  # fmt: skip
    check.add_argument("--seed", type=_whole_number(0), metavar="S", help="Monte-Carlo seed")
    check.add_argument("--json", action="store_true", help="write the result as JSON")
    _add_export_options(check, "the checked design")
    check.set_defaults(handler=_check)


def _spec_catalogs(spec: Spec, extra: Sequence[str], notes: Console | None = None) -> Catalog:
    """:func:`optimizer.api.spec_catalogs`, with the reading notes printed to ``notes``."""
    from .api import spec_catalogs

    catalog = spec_catalogs(spec, extra)
    if notes is not None:
        for note in dict.fromkeys(catalog.notes):
            notes.print(f"note: {escape(note)}", highlight=False, emoji=False)
    return catalog


def _check(args: argparse.Namespace, console: Console) -> int:
    import dataclasses

    from .report.check import check_json_text, check_to_json, render_check
    from .specfile import load_spec
    from .userdesign import build_user_design
    from .verify import verify

    _check_outputs(args)
    _stage("spec")
    spec = load_spec(args.spec)
    _check_outputs(args, spec)
    _warn(args, console, spec)
    if args.seed is not None:
        spec = dataclasses.replace(
            spec, preferences=dataclasses.replace(spec.preferences, seed=args.seed)
        )
    catalog = None
    if args.parts is not None or args.network:
        _stage("catalog")
        catalog = _spec_catalogs(spec, args.catalog, _notes(args, console))
    user = build_user_design(
        values=(args.r1, args.r2, args.r3, args.r4),
        parts=args.parts,
        networks=args.network,
        catalog=catalog,
        tolerance=args.tolerance,
        tempco=args.tempco,
        drift=args.drift,
        power=args.power,
        max_voltage=args.max_voltage,
    )
    _stage("monte-carlo")
    result = verify(user.design, spec, statistics=True, samples=args.samples)
    extra = {"origins": user.origins, "assumptions": user.assumptions}
    document = check_to_json(user.design, spec, result, **extra, warnings=_all_warnings(args))
    json_text = check_json_text(document)
    if args.json:
        console.print(json_text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        console.print(render_check(user.design, spec, result, **extra))
    _write_exports(args, console, spec, user.design, result, json_text, pick_report=None)
    _verify_spice(args, console, spec, user.design)
    return EXIT_OK if result.passed else EXIT_NOT_MET


# ---------------------------------------------------------------------------------------------
# pick: the cheapest designs that meet the spec
# ---------------------------------------------------------------------------------------------

#: Default time limit of ``quartet pick`` in seconds.
PICK_TIME_LIMIT_S = 60.0
#: The diagnosis of an infeasible spec runs several searches, each limited to this (seconds).
DIAGNOSIS_TIME_LIMIT_S = 20.0


def _seconds(text: str) -> float:
    import math

    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number of seconds, got {text!r}") from None
    if not math.isfinite(value) or value <= 0.0:
        raise argparse.ArgumentTypeError(f"expected a number of seconds above zero, got {text!r}")
    return value


def _penalty(text: str) -> float:
    import math

    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected a relative cost (a number of zero or more), got {text!r}"
        ) from None
    if not math.isfinite(value) or value < 0.0:
        raise argparse.ArgumentTypeError(f"expected a relative cost of zero or more, got {text!r}")
    return value


def _add_pick_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    from .spec import Objective

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
    import dataclasses

    from .analysis.safety import safety_cautions
    from .report.pick import build_pick_report, pick_json_text, pick_to_json, render_pick
    from .solve.search import SearchStatus, pick, with_objective
    from .spec import Objective, StockPolicy
    from .specfile import load_spec
    from .statistics import with_statistics
    from .verify import verify_candidate

    _check_outputs(args)
    _stage("spec")
    spec = load_spec(args.spec)
    _check_outputs(args, spec)
    _warn(args, console, spec)
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
    diagnosis = None
    if result.status is SearchStatus.INFEASIBLE and not stopped:
        from .solve.diagnose import diagnose

        limit = min(DIAGNOSIS_TIME_LIMIT_S, args.time_limit)
        with interrupt.winding_down():
            diagnosis = diagnose(spec, catalog, verify_candidate, time_limit_s=limit)
        interrupt.check()
    trade = None
    if not stopped and result.ranked:
        from .solve.trade import TRADE_TIME_LIMIT_S, kind_trade

        with interrupt.winding_down():
            limit = min(TRADE_TIME_LIMIT_S, args.time_limit)
            trade = kind_trade(spec, catalog, verify_candidate, result, time_limit_s=limit)
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
    if args.json:
        console.print(json_text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        console.print(render_pick(report, width=console.width))
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
    if result.status is SearchStatus.OPTIMAL:
        return EXIT_OK
    if result.status is SearchStatus.INFEASIBLE:
        return EXIT_NOT_MET
    return EXIT_TIME_LIMIT


# ---------------------------------------------------------------------------------------------
# exports and the simulator cross-check (pick and check)
# ---------------------------------------------------------------------------------------------


def _add_catalog_option(
    parser: argparse.ArgumentParser, *, source: str = "spec", what: str = ""
) -> None:
    """The repeatable ``--catalog PATH`` of every command that reads catalogs: extra files read
    after the ones ``source`` (the spec or the board file) names."""
    parser.add_argument(
        "--catalog", action="append", default=[], metavar="PATH",
        help=f"extra catalog file{what} (repeatable); the {source}'s catalogs are always read",
    )  # fmt: skip


def _add_time_limit_option(
    parser: argparse.ArgumentParser, default_s: float, *, each: bool = False
) -> None:
    """``--time-limit S`` of the commands that search (``each``: one limit per search)."""
    which = "each search" if each else "the search"
    parser.add_argument(
        "--time-limit", type=_seconds, default=default_s, metavar="S",
        help=f"seconds for {which} (default {default_s:g})",
    )  # fmt: skip


def _add_export_options(parser: argparse.ArgumentParser, what: str) -> None:
    parser.add_argument("--bom", metavar="FILE.csv", help=f"write the bill of materials of {what}")
    parser.add_argument(
        "--json-out", metavar="FILE", help="write the JSON document (as --json prints) to a file"
    )
    parser.add_argument(
        "--netlist", metavar="FILE.cir", help=f"write a SPICE netlist of {what} (ngspice -b runs)"
    )
    parser.add_argument(
        "--report", metavar="FILE.md|FILE.html",
        help="write a report (Markdown or HTML by the extension) with the CMRR histogram",
    )  # fmt: skip
    parser.add_argument("--force", action="store_true", help="replace output files that exist")
    parser.add_argument(
        "--verify-spice", action="store_true",
        help=f"simulate {what} with ngspice and compare its gains with the analysis",
    )  # fmt: skip


def _export_paths(args: argparse.Namespace) -> list[str]:
    names = ("bom", "json_out", "netlist", "report")
    return [p for p in (getattr(args, n, None) for n in names) if p is not None]


def _check_outputs(args: argparse.Namespace, spec: Spec | None = None) -> None:
    """Fail before any work when an output path may not be written: not a regular file (a
    device, FIFO, folder or a symlink to one), exists without --force, folder missing or not
    writable, one file named for two outputs, an input of the run (the spec, a catalog), a
    report with an extension other than .md or .html, or standard output asked twice or beside
    --json."""
    from .safewrite import STDOUT, OutputError, check_outputs

    if args.report is not None and args.report != STDOUT:
        from .report.exports import report_format

        if report_format(args.report) is None:
            raise OutputError(f"{args.report}: a report file must end in .md or .html")
    paths = _export_paths(args)
    if STDOUT in paths and getattr(args, "json", False):
        raise OutputError(
            f"{STDOUT}: --json already prints its document on standard output; send the "
            "export to a file"
        )
    inputs = [args.spec, *getattr(args, "catalog", [])]
    if spec is not None:
        inputs += list(spec.preferences.catalogs)
    check_outputs(paths, force=args.force, inputs=inputs)


def _bare_fraction(option: str, text: str | None) -> str | None:
    """A warning for a fraction option written as a bare number of 0.05 or more."""
    from .specfile import BARE_FRACTION_WARNING

    if text is None:
        return None
    try:
        value = float(text.strip())
    except ValueError:
        return None
    if value < BARE_FRACTION_WARNING:
        return None
    return f"{option} {text}: means ±{value * 100:g} %; write {text}% for {text} percent"


def _option_warnings(args: argparse.Namespace, argv: Sequence[str]) -> list[str]:
    """Plausibility warnings on the command line: an option given twice (the last is used)
    and a tolerance or drift written as a bare number of 0.05 or more."""
    repeatable = {"--catalog", "--network"}
    counts: dict[str, int] = {}
    for token in argv:
        if token == "--":
            break
        if token.startswith("--"):
            name = token.split("=", 1)[0]
            counts[name] = counts.get(name, 0) + 1
    found = [
        f"{name} given {count} times; the last one is used"
        for name, count in counts.items()
        if count > 1 and name not in repeatable
    ]
    for option in ("tolerance", "drift"):
        warning = _bare_fraction(f"--{option}", getattr(args, option, None))
        if warning:
            found.append(warning)
    for position in ("r1", "r2", "r3", "r4"):
        part = getattr(args, position, None)
        fields = part.split("/") if part else []
        if len(fields) > 1:
            warning = _bare_fraction(f"--{position}", fields[1])
            if warning:
                found.append(warning.replace(f" {fields[1]}:", f" {part}: tolerance {fields[1]}"))
    return found


def _all_warnings(args: argparse.Namespace) -> list[str]:
    return [*getattr(args, "spec_warnings", ()), *getattr(args, "option_warnings", ())]


def _warn(args: argparse.Namespace, console: Console, spec: Spec | None = None) -> None:
    """Print the plausibility warnings once (spec and options); kept for the JSON document."""
    if spec is not None:
        args.spec_warnings = list(spec.warnings)
    for text in _all_warnings(args):
        _notes(args, console).print(
            f"[yellow]warning[/yellow]: {escape(text)}", highlight=False, emoji=False
        )


#: Environment variable: a debugging aid the interrupt tests use. When set, each stage of a run
#: prints ``quartet-stage: NAME`` to standard error; when it names a stage, the run also waits
#: there for STAGE_PAUSE_S seconds (a signal ends the wait).
STAGES_VARIABLE = "QUARTET_STAGES"
STAGE_PAUSE_S = 5.0


def _stage(name: str) -> None:
    wanted = os.environ.get(STAGES_VARIABLE)
    if not wanted:
        return
    sys.stderr.write(f"quartet-stage: {name}\n")
    sys.stderr.flush()
    if wanted == name:
        import time

        time.sleep(STAGE_PAUSE_S)


@contextlib.contextmanager
def _search_progress() -> Iterator[Callable[[SearchProgress], None] | None]:
    """A progress line for the search on standard error when it is a terminal (spinner,
    designs checked and verified, elapsed time; removed when the search ends); nothing when
    standard error is a pipe or a file. Under :data:`STAGES_VARIABLE` the stage ``designs``
    is marked when the first design has passed the exact check."""
    marked = False

    def mark(state: SearchProgress) -> None:
        nonlocal marked
        if state.passed and not marked:
            marked = True
            _stage("designs")

    staged = bool(os.environ.get(STAGES_VARIABLE))
    if not sys.stderr.isatty():
        yield mark if staged else None
        return
    from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

    columns = (SpinnerColumn(), TextColumn("{task.description}"), TimeElapsedColumn())
    with Progress(*columns, console=Console(stderr=True), transient=True) as bar:
        task = bar.add_task("searching", total=None)

        def show(state: SearchProgress) -> None:
            if staged:
                mark(state)
            bar.update(
                task,
                description=f"searching: {state.passed} verified of {state.checked} checked, "
                f"limit {state.time_limit_s:g} s",
            )

        yield show


def _notes(args: argparse.Namespace, console: Console) -> Console:
    """Where side notes go: standard error when --json or an export to standard output
    (``-``) puts a document on standard output."""
    from .safewrite import STDOUT

    note_console: Console | None = getattr(args, "note_console", None)
    if getattr(args, "json", False) or STDOUT in _export_paths(args):
        return note_console if note_console is not None else Console(stderr=True)
    return console


def _write_outputs(
    args: argparse.Namespace, console: Console, outputs: Sequence[tuple[str, str]]
) -> None:
    """Write ``(path, text)`` outputs as one step (safewrite.write_all: all or none), then the
    one meant for standard output (``-``), if any."""
    from .safewrite import STDOUT, write_all

    files = [(path, text.encode("utf-8")) for path, text in outputs if path != STDOUT]
    if files:
        for written in write_all(files, force=args.force, staged=lambda: _stage("writing")):
            _notes(args, console).print(
                f"wrote {escape(str(written))}", highlight=False, emoji=False
            )
    for path, text in outputs:
        if path == STDOUT:
            sys.stdout.write(text)
            sys.stdout.flush()


def _write_exports(
    args: argparse.Namespace,
    console: Console,
    spec: Spec,
    design: Design,
    verification: Verification,
    json_text: str,
    *,
    pick_report: PickReport | None,
) -> None:
    """Write the files asked for (all through safewrite; --force replaces existing ones)."""
    from .safewrite import STDOUT

    outputs: list[tuple[str, str]] = []
    if args.bom is not None:
        from .report.exports import bom_csv_text

        outputs.append((args.bom, bom_csv_text(design)))
    if args.json_out is not None:
        outputs.append((args.json_out, json_text + "\n"))
    if args.netlist is not None:
        from .analysis.safety import safety_cautions
        from .netlist import design_netlist

        netlist = design_netlist(design, spec, cautions=safety_cautions(spec))
        outputs.append((args.netlist, netlist))
    if args.report is not None:
        from .report.exports import check_blocks, pick_blocks, render_report, report_format

        fmt = "md" if args.report == STDOUT else report_format(args.report)
        assert fmt is not None  # checked by _check_outputs
        title = f"Quartet {'pick' if pick_report else 'check'}: {spec.title or spec.source_path}"
        blocks = []
        if pick_report is not None:
            rows = [
                (s.rank or 0, s.design, s.cost.total, s.verification) for s in pick_report.ranked
            ]
            blocks += pick_blocks(rows, spec, pick_report.result.status.value.replace("_", " "))
        blocks += check_blocks(design, spec, verification)
        outputs.append((args.report, render_report(title, blocks, fmt)))
    _write_outputs(args, console, outputs)


def _verify_spice(args: argparse.Namespace, console: Console, spec: Spec, design: Design) -> None:
    """--verify-spice: the simulated gains beside the analysis, or a warning line when
    ngspice is missing (the exit code is not changed)."""
    if not args.verify_spice:
        return
    from .errors import SimulatorError
    from .spice import ngspice_available

    out = _notes(args, console)
    if not ngspice_available():
        out.print(
            "[yellow]warning[/yellow]: --verify-spice: ngspice was not found on PATH (Debian "
            "package 'ngspice'); the simulator cross-check was skipped",
            highlight=False,
            emoji=False,
        )
        return
    from .report.simcheck import render_gain_comparison
    from .spicecheck import simulate_gains

    try:
        comparison = simulate_gains(design, spec)
    except SimulatorError as exc:
        out.print(f"[yellow]warning[/yellow]: --verify-spice: {escape(str(exc))}", emoji=False)
        return
    out.print(render_gain_comparison(comparison))


# ---------------------------------------------------------------------------------------------
# sweep: cheapest cost against the CMRR floor
# ---------------------------------------------------------------------------------------------

#: Default time limit of each search of ``quartet sweep`` in seconds.
SWEEP_TIME_LIMIT_S = 10.0


def _add_sweep_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    sweep = commands.add_parser(
        "sweep",
        help="cheapest cost against the CMRR floor, discrete and network builds apart",
        description="Find the cheapest four-discrete design and the cheapest network design "
        "at each CMRR floor of a range (two searches per floor). Exit 0 when done, 2 on bad "
        "input.",
    )
    sweep.add_argument("spec", metavar="SPEC", help="spec file (YAML)")
    axis = sweep.add_mutually_exclusive_group(required=True)
    axis.add_argument("--cmrr", metavar="START:STOP:STEP", help="CMRR floors in dB, e.g. 40:100:2")
    axis.add_argument(
        "--gain-accuracy", metavar="START:STOP:STEP",
        help="gain accuracies in percent, e.g. 0.05:0.5:0.05",
    )  # fmt: skip
    _add_catalog_option(sweep)
    _add_time_limit_option(sweep, SWEEP_TIME_LIMIT_S, each=True)
    sweep.add_argument("--plot", metavar="FILE.png|FILE.svg", help="write the cost curves")
    sweep.add_argument("--force", action="store_true", help="replace a plot file that exists")
    sweep.set_defaults(handler=_sweep)


def _sweep(args: argparse.Namespace, console: Console) -> int:
    from rich.progress import Progress

    from .report.sweep import render_sweep_table, sweep_plot, sweep_text_chart
    from .safewrite import OutputError, check_outputs, write_bytes
    from .specfile import load_spec
    from .sweep import parse_range, sweep

    fmt = None
    if args.plot is not None:
        lower = args.plot.lower()
        fmt = "png" if lower.endswith(".png") else "svg" if lower.endswith(".svg") else None
        if fmt is None:
            raise OutputError(f"{args.plot}: a plot file must end in .png or .svg")
        check_outputs([args.plot], force=args.force, inputs=[args.spec, *args.catalog])
    if args.cmrr is not None:
        floors = parse_range(args.cmrr, "--cmrr")
    else:
        floors = tuple(p / 100.0 for p in parse_range(args.gain_accuracy, "--gain-accuracy"))
    spec = load_spec(args.spec)
    _warn(args, console, spec)
    catalog = _spec_catalogs(spec, args.catalog, _notes(args, console))
    _stage("search")
    with Progress(console=console, transient=True) as progress:
        what = "CMRR floor" if args.cmrr is not None else "gain accuracy"
        task = progress.add_task(f"sweeping the {what}", total=len(floors))

        def advance(done: int, level: float) -> None:
            progress.update(task, completed=done, description=f"{what}: {done} of {len(floors)}")

        result = sweep(
            spec,
            catalog,
            "cmrr" if args.cmrr is not None else "gain_accuracy",
            floors,
            time_limit_s=args.time_limit,
            progress=advance,
        )
    title = f"Cheapest design against the {what}: {spec.title or args.spec}"
    console.print(render_sweep_table(result, title))
    image = None
    if fmt is not None:
        image = sweep_plot(result, "png" if fmt == "png" else "svg", title)
        if image is not None:
            _stage("writing")
            written = write_bytes(args.plot, image, force=args.force)
            console.print(f"wrote {escape(str(written))}", highlight=False, emoji=False)
    if image is None:
        if fmt is not None:
            console.print(
                "[yellow]warning[/yellow]: matplotlib is not installed (pip install "
                "'quartet[plot]'); no plot written, the text chart follows",
                highlight=False,
                emoji=False,
            )
        console.print(sweep_text_chart(result), markup=False, highlight=False, emoji=False)
    return EXIT_OK


# ---------------------------------------------------------------------------------------------
# board: several amplifiers picked together (optimizer.board)
# ---------------------------------------------------------------------------------------------


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
    from .analysis.safety import safety_cautions
    from .board.boardfile import load_board
    from .board.search import BoardStatus, board_search
    from .catalog import load_catalogs
    from .report.board import (
        board_blocks,
        board_bom_csv_text,
        board_json_text,
        board_to_json,
        build_board_report,
        render_board,
    )
    from .report.exports import render_report, report_format
    from .safewrite import STDOUT, OutputError, check_outputs
    from .statistics import board_statistics
    from .verify import verify_candidate

    def outputs_allowed(inputs: list[str]) -> None:
        if args.report is not None and args.report != STDOUT and not report_format(args.report):
            raise OutputError(f"{args.report}: a report file must end in .md or .html")
        if STDOUT in _export_paths(args) and args.json:
            raise OutputError(f"{STDOUT}: --json already prints on standard output")
        check_outputs(_export_paths(args), force=args.force, inputs=inputs)

    outputs_allowed([args.board, *args.catalog])  # before any work
    board = load_board(args.board)
    specs = [a.spec.source_path for a in board.amplifiers if a.spec.source_path]
    outputs_allowed([args.board, *specs, *board.purchasing.catalogs, *args.catalog])
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
    diagnoses = []
    if result.status is BoardStatus.INFEASIBLE and not stopped:
        from .solve.diagnose import diagnose

        limit = min(DIAGNOSIS_TIME_LIMIT_S, args.time_limit)
        with interrupt.winding_down():
            for index in result.infeasible:
                spec = result.specs[index]
                diagnoses.append(
                    (index, diagnose(spec, catalog, verify_candidate, time_limit_s=limit))
                )
        interrupt.check()
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
        console.print(render_board(report))
    if stopped:
        raise interrupt.Interrupted(
            interrupt.signal_number(),
            "the search was stopped; the boards above are the best found so far (not proven "
            "best); no file was written",
        )
    outputs: list[tuple[str, str]] = []
    best = report.best
    if args.json_out is not None:
        outputs.append((args.json_out, json_text + "\n"))
    if best is not None and args.bom is not None:
        outputs.append((args.bom, board_bom_csv_text(board, best)))
    if args.report is not None:
        fmt = "md" if args.report == STDOUT else report_format(args.report)
        assert fmt is not None  # checked by _check_outputs
        title = f"Quartet board: {board.title or args.board}"
        outputs.append((args.report, render_report(title, board_blocks(report), fmt)))
    _write_outputs(args, console, outputs)
    if best is None and args.bom is not None:
        _notes(args, console).print(
            "[yellow]warning[/yellow]: no board was found, so no BOM was written",
            highlight=False,
        )
    if result.status is BoardStatus.OPTIMAL:
        return EXIT_OK
    if result.status is BoardStatus.INFEASIBLE:
        return EXIT_NOT_MET
    return EXIT_TIME_LIMIT


# ---------------------------------------------------------------------------------------------
# entry points
# ---------------------------------------------------------------------------------------------


def main(
    argv: Sequence[str] | None = None, *, console: Console | None = None, err: Console | None = None
) -> int:
    """Run the command line; returns the exit code instead of exiting."""
    out = console or _output_console()
    errors = err or Console(stderr=True)
    parser = build_parser()
    try:
        args = parser.parse_args(list(sys.argv[1:] if argv is None else argv))
    except _UsageError as exc:
        errors.print(parser.format_usage().rstrip(), markup=False, highlight=False, emoji=False)
        errors.print(f"error: {exc}", markup=False, highlight=False, emoji=False)
        return EXIT_BAD_INPUT
    except SystemExit as exc:  # --version and --help
        return int(exc.code or 0)
    handler: Handler = args.handler
    args.option_warnings = _option_warnings(args, list(sys.argv[1:] if argv is None else argv))
    # Side notes (files written, the simulator cross-check) go here when stdout carries JSON.
    args.note_console = errors
    from .safewrite import STDOUT

    if console is None and STDOUT in _export_paths(args):
        out = errors  # standard output carries the export
    interrupt.reset()
    try:
        # No Python warning reaches the user: the analysis treats overflowing figures itself
        # (an infinite error is a failed check), so numpy's RuntimeWarnings are noise here.
        with interrupt.armed(), warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return handler(args, out)
    except (RecursionError, MemoryError) as exc:
        errors.print(
            f"[bold red]{type(exc).__name__}[/bold red]: the input is too large or too deeply "
            "nested to process",
            highlight=False,
            emoji=False,
        )
        return EXIT_BAD_INPUT
    except QuartetError as exc:
        # escape: messages quote the user's own text, which may contain [markup].
        name = type(exc).__name__
        errors.print(
            f"[bold red]{name}[/bold red]: {escape(str(exc))}", highlight=False, emoji=False
        )
        return EXIT_BAD_INPUT
    except interrupt.Interrupted as exc:
        detail = f": {exc.detail}" if exc.detail else ""
        errors.print(f"interrupted{escape(detail)}", highlight=False, emoji=False)
        return exc.exit_code
    except KeyboardInterrupt:
        errors.print("interrupted")
        return 130


#: Width used when the output is not a terminal (a pipe or a file) and COLUMNS is not set:
#: wide enough for the ranked table without truncating part ids.
PIPE_WIDTH = 160


def _output_console() -> Console:
    """The console for standard output: the terminal's width, or PIPE_WIDTH for pipes."""
    if sys.stdout.isatty() or "COLUMNS" in os.environ:
        return Console()
    return Console(width=PIPE_WIDTH)


def main_entry() -> None:
    """Console-script entry point."""
    raise SystemExit(main())
