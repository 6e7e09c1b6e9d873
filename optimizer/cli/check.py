"""``quartet check``: the exact check of a design the user gives."""

from __future__ import annotations

import argparse

from rich.console import Console

from .catalogs import _spec_catalogs
from .options import (
    EXIT_NOT_MET,
    EXIT_OK,
    _add_catalog_option,
    _add_export_options,
    _all_warnings,
    _Parser,
    _whole_number,
)
from .outputs import _check_outputs, _notes, _stage, _verify_spice, _warn, _write_exports


def _add_check_command(commands: argparse._SubParsersAction[_Parser]) -> None:
    from ..spec import MAX_SAMPLES

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


def _check(args: argparse.Namespace, console: Console) -> int:
    import dataclasses

    from ..report.check import render_check
    from ..report.checkjson import check_json_text, check_to_json
    from ..specfile import load_spec
    from ..userdesign import build_user_design
    from ..verify import verify

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
