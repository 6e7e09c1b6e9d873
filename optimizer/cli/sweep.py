"""``quartet sweep``: the cheapest design at each level of one requirement."""

from __future__ import annotations

import argparse

from rich.console import Console
from rich.markup import escape

from .catalogs import _spec_catalogs
from .options import EXIT_OK, _add_catalog_option, _add_time_limit_option, _Parser
from .outputs import _notes, _stage, _warn

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

    from ..report.sweep import render_sweep_table, sweep_plot, sweep_text_chart
    from ..safewrite import OutputError, check_outputs, write_bytes
    from ..specfile import load_spec
    from ..sweep import parse_range, sweep

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
