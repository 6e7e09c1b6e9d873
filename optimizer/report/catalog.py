"""Catalog summaries as Rich renderables (the CLI prints them; nothing here prints)."""

from __future__ import annotations

import math
from collections.abc import Sequence

import pandas as pd
from rich.console import Group, RenderableType
from rich.table import Table
from rich.text import Text

from ..catalog import Catalog
from ..parts import NetworkPart
from ..units import format_fraction, format_resistance, format_tempco

__all__ = ["catalog_counts", "grade_matrix", "network_matrix", "render_catalog_summary"]


def _count(number: int) -> str:
    return f"{number:,}"


def catalog_counts(catalog: Catalog) -> dict[str, int]:
    """The headline numbers of a catalog: discrete parts, networks (total, quad, dual) and how
    many of each are in house stock."""
    stock = catalog.discrete["stock_qty"].to_numpy()
    quads = sum(1 for n in catalog.networks if n.elements == 4)
    return {
        "discrete": catalog.discrete_count,
        "discrete_in_stock": int((stock > 0).sum()),
        "networks": catalog.network_count,
        "quad": quads,
        "dual": catalog.network_count - quads,
        "networks_in_stock": sum(1 for n in catalog.networks if n.in_stock),
    }


def _series_key(name: str) -> tuple[float, str]:
    """E24, E96, E192 by density; parts in no series ("") last."""
    return (float(name[1:]), "") if name.startswith("E") else (math.inf, name)


def _cell(count: int, stocked: int, low: float, high: float) -> Text:
    """``count`` parts (``stocked`` of them in house stock) and their relative cost range."""
    text = Text(_count(count), style="bold")
    if stocked:
        text.append(f" ({_count(stocked)} stocked)", style="green")
    span = f"{low:.3g}" if math.isclose(low, high) else f"{low:.3g}–{high:.3g}"
    text.append(f"\ncost {span}", style="dim")
    return text


def grade_matrix(frame: pd.DataFrame) -> Table:
    """Discrete parts as one matrix: a row per grade (tolerance and tempco, loosest first), a
    column per E-series; each cell the parts, how many are stocked, and their cost range; the
    last columns the sizes and the value range of the grade."""
    series = sorted({str(v) for v in frame["series"]}, key=_series_key)
    table = Table(
        title="Discrete parts: which grades in which series (parts, stock, relative cost)",
        title_justify="left",
        show_lines=True,
    )
    table.add_column("grade")
    for name in series:
        table.add_column(name or "(no series)", justify="right")
    table.add_column("sizes")
    table.add_column("values")
    stocked = frame["stock_qty"].to_numpy() > 0
    frame = frame.assign(_stocked=stocked)
    grades: dict[tuple[float, float], pd.DataFrame] = {
        (float(key[0]), float(key[1])): group  # type: ignore[arg-type]
        for key, group in frame.groupby(["tolerance", "tempco_per_k"], sort=False)
    }
    for (tol, tempco), group in sorted(grades.items(), key=lambda g: (-g[0][0], -g[0][1])):
        cells: list[Text] = [Text(f"±{format_fraction(tol)}, {format_tempco(tempco)}")]
        for name in series:
            part = group[group["series"].astype(str) == name]
            if len(part) == 0:
                cells.append(Text("–", style="dim"))
                continue
            cost = part["unit_cost"]
            cells.append(
                _cell(len(part), int(part["_stocked"].sum()), float(cost.min()), float(cost.max()))
            )
        cells.append(Text(" ".join(sorted({str(v) for v in group["size"]}))))
        low, high = float(group["resistance_ohm"].min()), float(group["resistance_ohm"].max())
        cells.append(Text(f"{format_resistance(low, 3)} to {format_resistance(high, 3)}"))
        table.add_row(*cells)
    return table


def network_matrix(networks: Sequence[NetworkPart]) -> Table:
    """Networks as one matrix: a row per matching grade (ratio tolerance and tracking, loosest
    first), a column per kind (quad, dual); each cell the networks, stock and cost range."""
    table = Table(
        title="Networks: which matching grades as quads and duals (networks, stock, relative cost)",
        title_justify="left",
        show_lines=True,
    )
    table.add_column("matching grade")
    table.add_column("quad (4 elements)", justify="right")
    table.add_column("dual (2 elements)", justify="right")
    grades = sorted(
        {(n.ratio_tolerance, n.tracking_tempco_per_k) for n in networks},
        key=lambda g: (-g[0], -g[1]),
    )
    for ratio, tracking in grades:
        cells: list[Text] = [
            Text(f"ratio {format_fraction(ratio)}, tracking {format_tempco(tracking)}")
        ]
        for elements in (4, 2):
            members = [
                n
                for n in networks
                if n.elements == elements
                and (n.ratio_tolerance, n.tracking_tempco_per_k) == (ratio, tracking)
            ]
            if not members:
                cells.append(Text("–", style="dim"))
                continue
            costs = [n.unit_cost for n in members]
            cells.append(
                _cell(len(members), sum(1 for n in members if n.in_stock), min(costs), max(costs))
            )
        table.add_row(*cells)
    return table


def render_catalog_summary(catalog: Catalog) -> RenderableType:
    """Totals; then what a user can get: the discrete grades by E-series and the network
    matching grades by kind, each cell with its count, house stock and cost range."""
    counts = catalog_counts(catalog)
    totals = Table(title="Catalog", title_justify="left")
    totals.add_column("")
    totals.add_column("count", justify="right")
    totals.add_column("in stock", justify="right")
    totals.add_row(
        "discrete parts", _count(counts["discrete"]), _count(counts["discrete_in_stock"])
    )
    totals.add_row("networks", _count(counts["networks"]), _count(counts["networks_in_stock"]))
    totals.add_row(
        "all parts",
        _count(counts["discrete"] + counts["networks"]),
        _count(counts["discrete_in_stock"] + counts["networks_in_stock"]),
    )
    parts: list[RenderableType] = [totals]
    if len(catalog.discrete) > 0:
        parts.append(grade_matrix(catalog.discrete))
    if catalog.networks:
        parts.append(network_matrix(catalog.networks))
    if catalog.sources:
        sources = Table(title="Sources", title_justify="left", show_header=False)
        sources.add_column("source")
        for source in catalog.sources:
            sources.add_row(source)
        parts.append(sources)
    return Group(*parts)
