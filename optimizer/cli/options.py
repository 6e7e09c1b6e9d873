"""Shared pieces of the command parsers: the exit codes, the argparse class that raises
instead of exiting, the value converters and the options several commands share (one builder
each), and the warnings about option values.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable, Sequence

from rich.console import Console

from ..errors import quote

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


def _bare_fraction(option: str, text: str | None) -> str | None:
    """A warning for a fraction option written as a bare number of 0.05 or more."""
    from ..specfile.keys import BARE_FRACTION_WARNING

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
