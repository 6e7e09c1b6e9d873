"""Catalog summaries as Rich renderables (the CLI prints them; nothing here prints)."""

from __future__ import annotations

import math
from collections.abc import Callable

import pandas as pd
from rich.console import Group, RenderableType
from rich.table import Table

from ..catalog import Catalog
from ..units import format_fraction, format_tempco

__all__ = ["catalog_counts", "render_catalog_summary"]


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


def _breakdown(
    title: str,
    heading: str,
    frame: pd.DataFrame,
    column: str,
    label: Callable[[str], str],
    key: Callable[[str], tuple[float, str]],
) -> Table:
    """A two-count table (parts, in stock) of ``frame`` grouped by ``column``; groups with no
    parts are left out."""
    table = Table(title=title, title_justify="left")
    table.add_column(heading)
    table.add_column("parts", justify="right")
    table.add_column("in stock", justify="right")
    values = frame[column]
    in_stock = frame["stock_qty"].to_numpy() > 0
    totals = {str(k): int(v) for k, v in values.value_counts(sort=False).items() if v > 0}
    stocked = {str(k): int(v) for k, v in values[in_stock].value_counts(sort=False).items()}
    for name in sorted(totals, key=key):
        table.add_row(label(name), _count(totals[name]), _count(stocked.get(name, 0)))
    return table


def _series_key(name: str) -> tuple[float, str]:
    """E24, E96, E192 by density; parts in no series ("") last."""
    return (float(name[1:]), "") if name.startswith("E") else (math.inf, name)


def _descending(name: str) -> tuple[float, str]:
    return (-float(name), "")


def _as_text(name: str) -> tuple[float, str]:
    return (0.0, name)


def render_catalog_summary(catalog: Catalog) -> RenderableType:
    """Totals, then discrete parts by series, tolerance grade, tempco and size, and networks by
    kind, each with the number in house stock."""
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
    frame = catalog.discrete
    if len(frame) > 0:
        parts.append(
            _breakdown(
                "Discrete parts by E-series",
                "series",
                frame,
                "series",
                lambda v: v or "(none)",
                _series_key,
            )
        )
        parts.append(
            _breakdown(
                "Discrete parts by tolerance",
                "tolerance",
                frame,
                "tolerance",
                lambda v: format_fraction(float(v)),
                _descending,
            )
        )
        parts.append(
            _breakdown(
                "Discrete parts by tempco",
                "tempco",
                frame,
                "tempco_per_k",
                lambda v: format_tempco(float(v)),
                _descending,
            )
        )
        parts.append(_breakdown("Discrete parts by size", "size", frame, "size", str, _as_text))
    if catalog.networks:
        kinds = Table(title="Networks by kind", title_justify="left")
        kinds.add_column("kind")
        kinds.add_column("networks", justify="right")
        kinds.add_column("in stock", justify="right")
        for name, elements in (("quad", 4), ("dual", 2)):
            members = [n for n in catalog.networks if n.elements == elements]
            if members:
                kinds.add_row(
                    name, _count(len(members)), _count(sum(1 for n in members if n.in_stock))
                )
        parts.append(kinds)
    if catalog.sources:
        sources = Table(title="Sources", title_justify="left", show_header=False)
        sources.add_column("source")
        for source in catalog.sources:
            sources.add_row(source)
        parts.append(sources)
    return Group(*parts)
