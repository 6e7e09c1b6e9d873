"""The ``quartet`` command line: a thin layer that parses arguments, calls the library and
prints through Rich. It is the only module that talks to the terminal.

Exit codes: 0 success; 1 a requirement not met or nothing feasible; 2 bad input; 3 the time
limit ended the search with a best design found (not proven optimal).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING

from rich.console import Console
from rich.markup import escape

from ._version import __version__
from .errors import QuartetError

if TYPE_CHECKING:
    from .catalog import Catalog
    from .spec import Spec

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
    return parser


# ---------------------------------------------------------------------------------------------
# catalog / spec commands
# ---------------------------------------------------------------------------------------------


def _add_catalog_commands(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    catalog = commands.add_parser("catalog", help="show or validate parts catalogs")
    sub = catalog.add_subparsers(dest="catalog_command", metavar="ACTION", parser_class=_Parser)
    sub.required = True
    show = sub.add_parser("show", help="summarise catalogs (no path: the built-in catalogs)")
    show.add_argument("paths", nargs="*", metavar="PATH")
    show.set_defaults(handler=_catalog_show)
    validate = sub.add_parser("validate", help="check a catalog file row by row")
    validate.add_argument("paths", nargs="+", metavar="PATH")
    validate.set_defaults(handler=_catalog_validate)


def _add_spec_commands(commands: argparse._SubParsersAction[argparse.ArgumentParser]) -> None:
    spec = commands.add_parser("spec", help="validate a spec file")
    sub = spec.add_subparsers(dest="spec_command", metavar="ACTION", parser_class=_Parser)
    sub.required = True
    validate = sub.add_parser("validate", help="load a spec file and report every problem located")
    validate.add_argument("path", metavar="SPEC")
    validate.set_defaults(handler=_spec_validate)


def _catalog_show(args: argparse.Namespace, console: Console) -> int:
    from .catalog import load_catalogs
    from .report.catalog import render_catalog_summary

    catalog = load_catalogs(args.paths, include_builtin=not args.paths)
    console.print(render_catalog_summary(catalog))
    return EXIT_OK


def _catalog_validate(args: argparse.Namespace, console: Console) -> int:
    from .catalog import load_catalogs
    from .report.catalog import render_catalog_summary

    catalog = load_catalogs(args.paths, include_builtin=False)
    console.print(render_catalog_summary(catalog))
    console.print(f"[green]valid[/green]: {', '.join(args.paths)}")
    return EXIT_OK


def _spec_validate(args: argparse.Namespace, console: Console) -> int:
    from .report.spec import render_spec_summary
    from .specfile import load_spec

    spec = load_spec(args.path)
    console.print(render_spec_summary(spec))
    console.print(f"[green]valid[/green]: {args.path}")
    return EXIT_OK


# ---------------------------------------------------------------------------------------------
# check: verify a design the user brings
# ---------------------------------------------------------------------------------------------


def _whole_number(minimum: int) -> Callable[[str], int]:
    def parse(text: str) -> int:
        try:
            value = int(text.replace("_", "").replace(",", ""))
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
        if value < minimum:
            raise argparse.ArgumentTypeError(f"expected {minimum} or more, got {text!r}")
        return value

    return parse


def _add_check_command(commands: argparse._SubParsersAction[_Parser]) -> None:
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
    check.add_argument(
        "--catalog", action="append", default=[], metavar="PATH",
        help="extra catalog file for the ids (repeatable); the spec's catalogs are always read",
    )  # fmt: skip
    check.add_argument("--samples", type=_whole_number(1), metavar="N", help="Monte-Carlo builds")
    check.add_argument("--seed", type=_whole_number(0), metavar="S", help="Monte-Carlo seed")
    check.add_argument("--json", action="store_true", help="write the result as JSON")
    check.set_defaults(handler=_check)


def _spec_catalogs(spec: Spec, extra: Sequence[str]) -> Catalog:
    """The spec's catalogs, then ``extra`` files (a file named twice is read once), plus the
    built-in catalogs unless the spec says ``builtin_catalogs: false``."""
    import os

    from .catalog import load_catalogs

    paths: dict[str, str] = {}
    for path in (*spec.preferences.catalogs, *extra):
        paths.setdefault(os.path.realpath(path), path)
    return load_catalogs(list(paths.values()), spec.preferences.use_builtin_catalogs)


def _check(args: argparse.Namespace, console: Console) -> int:
    import dataclasses

    from .report.check import check_json_text, check_to_json, render_check
    from .specfile import load_spec
    from .userdesign import build_user_design
    from .verify import verify

    spec = load_spec(args.spec)
    if args.seed is not None:
        spec = dataclasses.replace(
            spec, preferences=dataclasses.replace(spec.preferences, seed=args.seed)
        )
    catalog = None
    if args.parts is not None or args.network:
        catalog = _spec_catalogs(spec, args.catalog)
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
    result = verify(user.design, spec, statistics=True, samples=args.samples)
    extra = {"origins": user.origins, "assumptions": user.assumptions}
    if args.json:
        text = check_json_text(check_to_json(user.design, spec, result, **extra))
        console.print(text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        console.print(render_check(user.design, spec, result, **extra))
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
    pick.add_argument(
        "--catalog", action="append", default=[], metavar="PATH",
        help="extra catalog file (repeatable); the spec's catalogs are always read",
    )  # fmt: skip
    pick.add_argument(
        "--top", type=_whole_number(1), metavar="N",
        help="how many designs to rank (default: the spec's alternatives)",
    )  # fmt: skip
    pick.add_argument(
        "--stock-only", action="store_true", help="use only parts in house stock"
    )
    pick.add_argument(
        "--objective", choices=[o.value for o in Objective],
        help="what to rank by (default: the spec's objective)",
    )  # fmt: skip
    pick.add_argument(
        "--time-limit", type=_seconds, default=PICK_TIME_LIMIT_S, metavar="S",
        help=f"seconds for the search (default {PICK_TIME_LIMIT_S:g})",
    )  # fmt: skip
    pick.add_argument("--json", action="store_true", help="write the result as JSON")
    pick.set_defaults(handler=_pick)


def _pick(args: argparse.Namespace, console: Console) -> int:
    import dataclasses

    from .analysis.checks import safety_cautions
    from .report.pick import build_pick_report, pick_json_text, pick_to_json, render_pick
    from .solve.diagnose import diagnose
    from .solve.search import SearchStatus, pick, with_objective
    from .spec import Objective, StockPolicy
    from .specfile import load_spec
    from .verify import verify

    spec = load_spec(args.spec)
    if args.stock_only:
        spec = dataclasses.replace(
            spec, preferences=dataclasses.replace(spec.preferences, stock=StockPolicy.ONLY)
        )
    if args.objective is not None:
        spec = with_objective(spec, Objective(args.objective))
    catalog = _spec_catalogs(spec, args.catalog)
    top = args.top if args.top is not None else spec.preferences.alternatives
    result = pick(spec, catalog, verify, top=top, time_limit_s=args.time_limit)
    diagnosis = None
    if result.status is SearchStatus.INFEASIBLE:
        limit = min(DIAGNOSIS_TIME_LIMIT_S, args.time_limit)
        diagnosis = diagnose(spec, catalog, verify, time_limit_s=limit)
    report = build_pick_report(
        spec,
        result,
        designs_asked=top,
        time_limit_s=args.time_limit,
        cautions=safety_cautions(spec),
        diagnosis=diagnosis,
    )
    if args.json:
        text = pick_json_text(pick_to_json(report))
        console.print(text, markup=False, highlight=False, emoji=False, soft_wrap=True)
    else:
        console.print(render_pick(report))
    if result.status is SearchStatus.OPTIMAL:
        return EXIT_OK
    if result.status is SearchStatus.INFEASIBLE:
        return EXIT_NOT_MET
    return EXIT_TIME_LIMIT


# ---------------------------------------------------------------------------------------------
# entry points
# ---------------------------------------------------------------------------------------------


def main(argv: Sequence[str] | None = None, *, console: Console | None = None, err: Console | None = None) -> int:
    """Run the command line; returns the exit code instead of exiting."""
    out = console or Console()
    errors = err or Console(stderr=True)
    parser = build_parser()
    try:
        args = parser.parse_args(list(sys.argv[1:] if argv is None else argv))
    except _UsageError as exc:
        errors.print(parser.format_usage().rstrip(), markup=False, highlight=False)
        errors.print(f"error: {exc}", markup=False, highlight=False)
        return EXIT_BAD_INPUT
    except SystemExit as exc:  # --version and --help
        return int(exc.code or 0)
    handler: Handler = args.handler
    try:
        return handler(args, out)
    except QuartetError as exc:
        # escape: messages quote the user's own text, which may contain [markup].
        name = type(exc).__name__
        errors.print(f"[bold red]{name}[/bold red]: {escape(str(exc))}", highlight=False)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        errors.print("interrupted")
        return 130


def main_entry() -> None:
    """Console-script entry point."""
    raise SystemExit(main())
