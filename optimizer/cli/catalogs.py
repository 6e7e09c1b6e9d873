"""``quartet catalog`` and ``quartet spec`` (show and validate), and the catalogs a spec
names plus the extra ``--catalog`` files, read once each.
"""

from __future__ import annotations

import argparse
import os
from collections.abc import Sequence
from typing import TYPE_CHECKING

from rich.console import Console
from rich.markup import escape

if TYPE_CHECKING:
    from ..catalog import Catalog
    from ..spec import Spec
from .options import EXIT_OK, _Parser
from .outputs import _notes, _warn


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
    from ..catalog import load_catalogs
    from ..report.catalog import render_catalog_summary

    _warn(args, console)
    paths = _once(args, console, args.paths)
    catalog = load_catalogs(paths, include_builtin=not paths)
    _catalog_notes(args, console, catalog)
    console.print(render_catalog_summary(catalog))
    return EXIT_OK


def _catalog_validate(args: argparse.Namespace, console: Console) -> int:
    from ..catalog import load_catalogs
    from ..report.catalog import render_catalog_summary

    _warn(args, console)
    paths = _once(args, console, args.paths)
    catalog = load_catalogs(paths, include_builtin=False, check_builtin=not args.alone)
    _catalog_notes(args, console, catalog)
    console.print(render_catalog_summary(catalog))
    checked = "" if args.alone else " (ids checked against the built-in catalog)"
    console.print(f"[green]valid[/green]: {escape(', '.join(paths))}{checked}", emoji=False)
    return EXIT_OK


def _spec_validate(args: argparse.Namespace, console: Console) -> int:
    from ..report.spec import render_spec_summary
    from ..specfile import load_spec

    spec = load_spec(args.path)
    _warn(args, console, spec)
    console.print(render_spec_summary(spec))
    console.print(f"[green]valid[/green]: {escape(args.path)}", emoji=False)
    return EXIT_OK


def _spec_catalogs(spec: Spec, extra: Sequence[str], notes: Console | None = None) -> Catalog:
    """:func:`optimizer.api.spec_catalogs`, with the reading notes printed to ``notes``."""
    from ..api import spec_catalogs

    catalog = spec_catalogs(spec, extra)
    if notes is not None:
        for note in dict.fromkeys(catalog.notes):
            notes.print(f"note: {escape(note)}", highlight=False, emoji=False)
    return catalog
