"""Outputs of ``quartet sweep``: a Rich table of cost against the CMRR floor (or the gain
accuracy), a text chart for the terminal, and a plot (PNG or SVG) through matplotlib when it is
installed."""

from __future__ import annotations

import io
from typing import Final, Literal

from rich.table import Table
from rich.text import Text

from ..solve.search import SearchStatus
from ..sweep import SeriesPoint, SweepResult
from ..units import format_fraction

__all__ = [
    "axis_label",
    "last_feasible",
    "level_text",
    "render_sweep_table",
    "sweep_plot",
    "sweep_text_chart",
]

SERIES: Final = ("discrete", "network")
#: Height of the text chart in lines.
CHART_ROWS: Final = 12


def _series(result: SweepResult, kind: str) -> list[SeriesPoint]:
    return [p.discrete if kind == "discrete" else p.network for p in result.points]


def axis_label(result: SweepResult) -> str:
    return "CMRR floor" if result.axis == "cmrr" else "gain accuracy"


def level_text(result: SweepResult, level: float) -> str:
    """``80 dB`` for a CMRR floor, ``±0.1 %`` for a gain accuracy."""
    return f"{level:g} dB" if result.axis == "cmrr" else f"±{format_fraction(level, 4)}"


def last_feasible(result: SweepResult, kind: str) -> int | None:
    """Index of the most demanding level (highest CMRR floor, smallest gain accuracy) at
    which the ``kind`` series ("discrete" or "network") still has a design while a more
    demanding level of the range has none; None when it never stops (or never starts) within
    the range."""
    costs = [s.cost for s in _series(result, kind)]
    found = [i for i, c in enumerate(costs) if c is not None]
    if not found:
        return None
    tightest = found[0]
    for index in found[1:]:
        if result.tightening(tightest, index):
            tightest = index
    beyond = [j for j in range(len(costs)) if result.tightening(tightest, j)]
    return tightest if beyond else None


def _cell(point: SeriesPoint, marked: bool) -> Text:
    if point.status is None:
        return Text("not allowed", style="dim")
    if point.cost is None:
        word = "none" if point.status is SearchStatus.INFEASIBLE else "none found in time"
        return Text(word, style="dim")
    text = Text(f"{point.cost:.3f}")
    if point.status is not SearchStatus.OPTIMAL:
        text.append(" (not proven)", style="yellow")
    if marked:
        text.append("  <- last feasible", style="bold")
    return text


def render_sweep_table(result: SweepResult, title: str) -> Table:
    """Floor, cheapest discrete cost, cheapest network cost, the cheaper kind; the last floor
    at which each kind is feasible is marked."""
    marks = {kind: last_feasible(result, kind) for kind in SERIES}
    table = Table(
        title=Text(title),  # user text (the spec title): never read as markup or emoji
        title_justify="left",
        header_style="bold",
        caption=f"Relative cost units; each search limited to {result.time_limit_s:g} s.",
        caption_justify="left",
    )
    table.add_column(axis_label(result), justify="right")
    table.add_column("4 discrete", justify="right")
    table.add_column("network", justify="right")
    table.add_column("cheaper")
    for index, point in enumerate(result.points):
        table.add_row(
            Text(level_text(result, point.level)),
            _cell(point.discrete, marks["discrete"] == index),
            _cell(point.network, marks["network"] == index),
            Text(point.cheaper),
        )
    return table


def sweep_text_chart(result: SweepResult, rows: int = CHART_ROWS) -> str:
    """Cost against floor as characters: ``d`` a discrete design, ``n`` a network design,
    ``*`` both at the same height; below the axis, per kind, ``x`` none exists, ``?`` none
    found in time; one column per floor, cost rising upwards (linear scale from the lowest to the
    highest cost found, so no design is drawn at a cost it does not have)."""
    costs = [c for kind in SERIES for c in (s.cost for s in _series(result, kind)) if c is not None]
    if not costs:
        return "(no design found at any floor)"
    top, low = max(costs), min(costs)
    span = (top - low) or 1.0
    width = len(result.points)
    grid = [[" "] * width for _ in range(rows)]
    for kind, mark in (("discrete", "d"), ("network", "n")):
        for column, point in enumerate(_series(result, kind)):
            if point.cost is None:
                continue
            row = min(rows - 1, round((point.cost - low) / span * (rows - 1)))
            cell = grid[rows - 1 - row]
            cell[column] = "*" if cell[column] not in (" ", mark) else mark
    labels = [f"{low + span * (rows - 1 - i) / (rows - 1):.4g}" for i in range(rows)]
    label = max(len(text) for text in labels)
    lines = []
    for text, line in zip(labels, grid, strict=True):
        lines.append(f"{text:>{label}} |" + " ".join(line))
    lines.append(" " * label + " +" + "-" * (2 * width - 1))
    for kind, name in (("discrete", "no d"), ("network", "no n")):
        marks = [
            " "
            if p.cost is not None or p.status is None
            else ("x" if p.status is SearchStatus.INFEASIBLE else "?")
            for p in _series(result, kind)
        ]
        if any(m != " " for m in marks):
            lines.append(f"{name:>{label}} |" + " ".join(marks))
    first, last = result.points[0].level, result.points[-1].level
    lines.append(
        " " * label
        + f"  {axis_label(result)} {level_text(result, first)} ... {level_text(result, last)}"
    )
    lines.append(
        " " * label + "  d = four discrete, n = network, * = both; rows no d / no n: x = none "
        "exists, ? = none found in time; cost in relative units"
    )
    return "\n".join(lines)


#: Costs spanning more than this ratio are drawn on a log axis.
LOG_SPAN: Final = 10.0
#: Most x ticks drawn at the sweep's own levels.
MAX_TICKS: Final = 25


def sweep_plot(result: SweepResult, fmt: Literal["png", "svg"], title: str) -> bytes | None:
    """The cost curves as PNG or SVG bytes, or None when matplotlib (optional extra ``plot``)
    is not installed. Ticks at the sweep's levels; a log cost axis when the costs span more
    than :data:`LOG_SPAN`; a design found but not proven cheapest (the time limit) drawn
    hollow; a level where none was found marked along the bottom (``x``: none exists, ``?``:
    none found in time); nothing clipped (a tight bounding box, the title wrapped)."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        return None
    import textwrap

    scale = 1.0 if result.axis == "cmrr" else 100.0
    levels = [p.level * scale for p in result.points]
    costs = [c for kind in SERIES for c in (s.cost for s in _series(result, kind)) if c is not None]
    figure, axes = plt.subplots(figsize=(7, 4))
    try:
        log = bool(costs) and min(costs) > 0 and max(costs) / min(costs) > LOG_SPAN
        if log:
            axes.set_yscale("log")
        bottom = min(costs) if costs else 1.0
        for kind, marker, colour in (("discrete", "o", "#1f5f99"), ("network", "s", "#b5651d")):
            series = _series(result, kind)
            found = [
                (x, s.cost, s.status is SearchStatus.OPTIMAL)
                for x, s in zip(levels, series, strict=True)
                if s.cost is not None
            ]
            if found:
                axes.plot([x for x, _, _ in found], [c for _, c, _ in found], "-", color=colour,
                          label=kind)  # fmt: skip
                for x, cost, proven in found:
                    axes.plot([x], [cost], marker, color=colour,
                              markerfacecolor=colour if proven else "white")  # fmt: skip
            for x, point in zip(levels, series, strict=True):
                if point.cost is None and point.status is not None:
                    none = point.status is SearchStatus.INFEASIBLE
                    axes.plot([x], [bottom], linestyle="none", marker="x" if none else "$?$",
                              color=colour, markersize=9)  # fmt: skip
        for marker, face, words in (
            ("o", "white", "not proven cheapest"),
            ("x", "grey", "none exists"),
            ("$?$", "grey", "none found in time"),
        ):
            axes.plot([], [], linestyle="none", marker=marker, color="grey",
                      markerfacecolor=face, label=words)  # fmt: skip
        if len(levels) <= MAX_TICKS:
            axes.set_xticks(levels)
        else:
            step = -(-len(levels) // MAX_TICKS)
            axes.set_xticks(levels[::step])
        axes.tick_params(axis="x", labelrotation=45 if len(levels) > 12 else 0)
        axes.set_xlabel("CMRR floor (dB)" if result.axis == "cmrr" else "gain accuracy (± %)")
        axes.set_ylabel("cheapest cost (relative units" + (", log scale)" if log else ")"))
        axes.set_title("\n".join(textwrap.wrap(title, 60)), fontsize=10)
        axes.legend(fontsize=8)
        figure.tight_layout()
        buffer = io.BytesIO()
        metadata = {"Date": None} if fmt == "svg" else {"Software": None}
        figure.savefig(buffer, format=fmt, metadata=metadata, bbox_inches="tight")
    finally:
        plt.close(figure)
    return buffer.getvalue()
