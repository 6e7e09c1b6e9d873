"""What the commands share around their outputs: the export files (checked before any
search, written without overwriting), the side notes, the simulator cross-check, the stage
markers and the search progress on a terminal.
"""

from __future__ import annotations

import argparse
import contextlib
import os
import sys
from collections.abc import Callable, Iterator, Sequence
from typing import TYPE_CHECKING

from rich.console import Console
from rich.markup import escape

if TYPE_CHECKING:
    from ..design import Design
    from ..report.pickreport import PickReport
    from ..solve.search import SearchProgress
    from ..spec import Spec
    from ..verify import Verification
from .options import _all_warnings


def _export_paths(args: argparse.Namespace) -> list[str]:
    names = ("bom", "json_out", "netlist", "report")
    return [p for p in (getattr(args, n, None) for n in names) if p is not None]


def _check_outputs(args: argparse.Namespace, spec: Spec | None = None) -> None:
    """Fail before any work when an output path may not be written: not a regular file (a
    device, FIFO, folder or a symlink to one), exists without --force, folder missing or not
    writable, one file named for two outputs, an input of the run (the spec, a catalog), a
    report with an extension other than .md or .html, or standard output asked twice or beside
    --json."""
    from ..safewrite import STDOUT, OutputError, check_outputs

    if args.report is not None and args.report != STDOUT:
        from ..report.exports import report_format

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
    from ..safewrite import STDOUT

    note_console: Console | None = getattr(args, "note_console", None)
    if getattr(args, "json", False) or STDOUT in _export_paths(args):
        return note_console if note_console is not None else Console(stderr=True)
    return console


def _write_outputs(
    args: argparse.Namespace, console: Console, outputs: Sequence[tuple[str, str]]
) -> None:
    """Write ``(path, text)`` outputs as one step (safewrite.write_all: all or none), then the
    one meant for standard output (``-``), if any."""
    from ..safewrite import STDOUT, write_all

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
    from ..safewrite import STDOUT

    outputs: list[tuple[str, str]] = []
    if args.bom is not None:
        from ..report.exports import bom_csv_text

        outputs.append((args.bom, bom_csv_text(design)))
    if args.json_out is not None:
        outputs.append((args.json_out, json_text + "\n"))
    if args.netlist is not None:
        from ..analysis.safety import safety_cautions
        from ..netlist import design_netlist

        netlist = design_netlist(design, spec, cautions=safety_cautions(spec))
        outputs.append((args.netlist, netlist))
    if args.report is not None:
        from ..report.exports import check_blocks, pick_blocks, render_report, report_format

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
    from ..errors import SimulatorError
    from ..spice import ngspice_available

    out = _notes(args, console)
    if not ngspice_available():
        out.print(
            "[yellow]warning[/yellow]: --verify-spice: ngspice was not found on PATH (Debian "
            "package 'ngspice'); the simulator cross-check was skipped",
            highlight=False,
            emoji=False,
        )
        return
    from ..report.simcheck import render_gain_comparison
    from ..spicecheck import simulate_gains

    try:
        comparison = simulate_gains(design, spec)
    except SimulatorError as exc:
        out.print(f"[yellow]warning[/yellow]: --verify-spice: {escape(str(exc))}", emoji=False)
        return
    out.print(render_gain_comparison(comparison))


def _warn(args: argparse.Namespace, console: Console, spec: Spec | None = None) -> None:
    """Print the plausibility warnings once (spec and options); kept for the JSON document."""
    if spec is not None:
        args.spec_warnings = list(spec.warnings)
    for text in _all_warnings(args):
        _notes(args, console).print(
            f"[yellow]warning[/yellow]: {escape(text)}", highlight=False, emoji=False
        )
