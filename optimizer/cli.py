"""The ``quartet`` command line: a thin layer that parses arguments, calls the library and
prints through Rich. It is the only module that talks to the terminal.

Exit codes: 0 success; 1 a requirement not met or nothing feasible; 2 bad input; 3 the time
limit ended the search with a best design found (not proven optimal).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence

from rich.console import Console
from rich.markup import escape

from ._version import __version__
from .errors import QuartetError

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


def _check(args: argparse.Namespace, console: Console) -> int:
    import dataclasses
    import os

    from .catalog import load_catalogs
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
        paths: dict[str, str] = {}
        for path in (*spec.preferences.catalogs, *args.catalog):
            paths.setdefault(os.path.realpath(path), path)
        catalog = load_catalogs(list(paths.values()), spec.preferences.use_builtin_catalogs)
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
