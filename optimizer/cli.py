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
