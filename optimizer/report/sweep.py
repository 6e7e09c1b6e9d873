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
    ``*`` both at the same height; one column per floor, cost rising upwards (linear scale
    from zero to the highest cost found)."""
    costs = [c for kind in SERIES for c in (s.cost for s in _series(result, kind)) if c is not None]
    if not costs:
        return "(no design found at any floor)"
    top = max(costs) or 1.0
    width = len(result.points)
    grid = [[" "] * width for _ in range(rows)]
    for kind, mark in (("discrete", "d"), ("network", "n")):
        for column, point in enumerate(_series(result, kind)):
            if point.cost is None:
                continue
            row = min(rows - 1, round(point.cost / top * (rows - 1)))
            cell = grid[rows - 1 - row]
            cell[column] = "*" if cell[column] not in (" ", mark) else mark
    labels = [f"{top * (rows - 1 - i) / (rows - 1):.3g}" for i in range(rows)]
    label = max(len(text) for text in labels)
    lines = []
    for text, line in zip(labels, grid, strict=True):
        lines.append(f"{text:>{label}} |" + " ".join(line))
    lines.append(" " * label + " +" + "-" * (2 * width - 1))
    first, last = result.points[0].level, result.points[-1].level
    lines.append(
        " " * label
        + f"  {axis_label(result)} {level_text(result, first)} ... {level_text(result, last)}"
    )
    lines.append(" " * label + "  d = four discrete, n = network, * = both; cost relative units")
    return "\n".join(lines)


def sweep_plot(result: SweepResult, fmt: Literal["png", "svg"], title: str) -> bytes | None:
    """The cost curves as PNG or SVG bytes, or None when matplotlib (optional extra ``plot``)
    is not installed."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        return None
    figure, axes = plt.subplots(figsize=(7, 4))
    try:
        for kind, style in (("discrete", "o-"), ("network", "s-")):
            pairs = [
                (p.level * (1.0 if result.axis == "cmrr" else 100.0), s.cost)
                for p, s in zip(result.points, _series(result, kind), strict=True)
                if s.cost is not None
            ]
            if pairs:
                axes.plot([f for f, _ in pairs], [c for _, c in pairs], style, label=kind)
        axes.set_xlabel("CMRR floor (dB)" if result.axis == "cmrr" else "gain accuracy (± %)")
        axes.set_ylabel("cheapest cost (relative units)")
        axes.set_title(title)
        axes.legend()
        buffer = io.BytesIO()
        metadata = {"Date": None} if fmt == "svg" else {"Software": None}
        figure.savefig(buffer, format=fmt, metadata=metadata)
    finally:
        plt.close(figure)
    return buffer.getvalue()
