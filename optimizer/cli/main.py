"""The parser of every command, ``main`` (exit codes instead of exiting, every error
located and printed without a traceback) and the console-script entry point.
"""

from __future__ import annotations

import argparse
import os
import sys
import warnings
from collections.abc import Sequence

from rich.console import Console
from rich.markup import escape

from .. import interrupt
from .._version import __version__
from ..errors import QuartetError
from .board import _add_board_command
from .catalogs import _add_catalog_commands, _add_spec_commands
from .check import _add_check_command
from .options import EXIT_BAD_INPUT, Handler, _option_warnings, _Parser, _UsageError
from .outputs import _export_paths
from .pick import _add_pick_command
from .sweep import _add_sweep_command


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
    from ..safewrite import STDOUT

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
