"""File exports of ``quartet pick`` and ``quartet check``: a bill of materials (CSV), a report
(Markdown or HTML) with a Monte-Carlo histogram of CMRR, and the text of both.

Everything here returns text or bytes; only the command line writes files (through
:mod:`optimizer.safewrite`).

BOM columns (our own naming, one line per orderable item: a discrete part used at two
positions is one line of quantity 2; a network appears once per package with the positions it
serves)::

    positions          the positions served, e.g. "R1 R3"
    part_id            the catalog id
    kind               "discrete" or "network"
    resistance_ohm     the value in ohms; for a network the used elements as "R1=1000;R2=20000"
    tolerance          initial tolerance as a fraction (a network: its absolute tolerance)
    ratio_tolerance    a network's ratio tolerance as a fraction (empty for a discrete part)
    tempco_ppm_per_k   tempco bound in ppm/K (a network: its absolute tempco)
    tracking_ppm_per_k a network's tracking tempco in ppm/K (empty for a discrete part)
    size               package size code
    quantity           how many to place per board
    unit_cost          relative cost of one item
    house_stock        the house stock quantity (0 = not stocked)
"""

from __future__ import annotations

import base64
import csv
import html
import io
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Final, Literal

from ..analysis.drift import drift_model_summary
from ..analysis.montecarlo import MonteCarloResult
from ..analysis.worstcase import WorstCase
from ..design import Design, Placement
from ..parts import DiscretePart, NetworkPart
from ..spec import Spec
from ..units import format_fraction, format_resistance, format_tempco
from ..verify import Verification
from .check import label_of
from .formats import fmt_db, fmt_figure, fmt_pct

__all__ = [
    "BOM_COLUMNS",
    "Block",
    "BomLine",
    "bom_csv_text",
    "bom_lines",
    "check_blocks",
    "histogram_png",
    "histogram_text",
    "pick_blocks",
    "render_report",
]

BOM_COLUMNS: Final = (
    "positions",
    "part_id",
    "kind",
    "resistance_ohm",
    "tolerance",
    "ratio_tolerance",
    "tempco_ppm_per_k",
    "tracking_ppm_per_k",
    "size",
    "quantity",
    "unit_cost",
    "house_stock",
)

#: Width of the longest histogram bar in characters.
BAR_WIDTH: Final = 40


@dataclass(frozen=True)
class BomLine:
    """One line of the bill of materials (see the module docstring for the fields)."""

    positions: tuple[str, ...]
    part_id: str
    kind: str
    resistance: str
    tolerance: float
    ratio_tolerance: float | None
    tempco_per_k: float
    tracking_per_k: float | None
    size: str
    quantity: int
    unit_cost: float
    house_stock: int


def bom_lines(design: Design) -> tuple[BomLine, ...]:
    """The design's orderable items in position order of first use: discrete parts grouped by
    part id (quantity = positions served), networks grouped by package (quantity 1)."""
    groups: dict[tuple[str, str, int], list[int]] = {}
    for index, placement in enumerate(design.placements):
        part = placement.part
        key = (
            ("network", part.part_id, placement.package)
            if isinstance(part, NetworkPart)
            else ("discrete", part.part_id, 0)
        )
        groups.setdefault(key, []).append(index)
    lines = []
    for (kind, _part_id, _package), indices in groups.items():
        placements = [design.placements[i] for i in indices]
        part = placements[0].part
        positions = tuple(p.position for p in placements)
        if isinstance(part, NetworkPart):
            values = ";".join(f"{p.position}={p.resistance_ohm!r}" for p in placements)
            lines.append(
                BomLine(positions, part.part_id, kind, values, part.abs_tolerance,
                        part.ratio_tolerance, part.abs_tempco_per_k, part.tracking_tempco_per_k,
                        part.size, 1,
                        part.unit_cost, part.stock_qty)
            )  # fmt: skip
        else:
            assert isinstance(part, DiscretePart)
            lines.append(
                BomLine(positions, part.part_id, kind, repr(part.resistance_ohm), part.tolerance,
                        None, part.tempco_per_k, None, part.size, len(placements), part.unit_cost,
                        part.stock_qty)
            )  # fmt: skip
    return tuple(lines)


def bom_csv_text(design: Design) -> str:
    """The bill of materials as CSV (header :data:`BOM_COLUMNS`), written with the ``csv``
    module; every text cell passes through :func:`optimizer.safewrite.escape_csv_cell`."""
    from ..safewrite import escape_csv_cell

    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(BOM_COLUMNS)
    for line in bom_lines(design):
        writer.writerow(
            [
                escape_csv_cell(" ".join(line.positions)),
                escape_csv_cell(line.part_id),
                escape_csv_cell(line.kind),
                escape_csv_cell(line.resistance),
                repr(line.tolerance),
                "" if line.ratio_tolerance is None else repr(line.ratio_tolerance),
                repr(line.tempco_per_k * 1e6),
                "" if line.tracking_per_k is None else repr(line.tracking_per_k * 1e6),
                escape_csv_cell(line.size),
                str(line.quantity),
                repr(line.unit_cost),
                str(line.house_stock),
            ]
        )
    return buffer.getvalue()


# ---------------------------------------------------------------------------------------------
# Histogram
# ---------------------------------------------------------------------------------------------


def histogram_text(result: MonteCarloResult, width: int = BAR_WIDTH) -> str:
    """The Monte-Carlo distribution of per-build worst CMRR as text: one line per bin (lower
    and upper edge in dB, a bar of █ scaled to the fullest bin, the count), with a marker line
    ``---- CMRR floor ... ----`` where the floor falls and ``<- floor`` on the bin holding it."""
    counts = result.histogram_counts
    edges = result.histogram_edges_db
    floor = result.cmrr_floor_db
    if not counts:
        return "(no finite CMRR values to show)"
    peak = max(counts) or 1
    rule = f"---- CMRR floor {floor:g} dB ----"
    lines: list[str] = []
    placed = False
    if floor < edges[0]:
        lines.append(rule)
        placed = True
    for index, count in enumerate(counts):
        low, high = edges[index], edges[index + 1]
        if not placed and floor < low:
            lines.append(rule)
            placed = True
        bar = "█" * round(count / peak * width)
        last = index == len(counts) - 1
        inside = low <= floor < high or (last and floor == high)
        mark = "  <- floor" if inside else ""
        lines.append(f"{low:9.2f} to {high:9.2f} dB |{bar:<{width}}| {count:>8,}{mark}")
    if not placed and not any("<- floor" in line for line in lines):
        lines.append(rule)
    return "\n".join(lines)


def histogram_png(result: MonteCarloResult) -> bytes | None:
    """A PNG of the CMRR histogram with the floor drawn in, or None when matplotlib (optional
    extra ``plot``) is not installed."""
    try:
        import matplotlib

        matplotlib.use("Agg")
        import matplotlib.pyplot as plt
    except ImportError:
        return None
    edges = result.histogram_edges_db
    figure, axes = plt.subplots(figsize=(7, 3.5))
    try:
        axes.stairs(result.histogram_counts, edges, fill=True, color="#4a7ab5")
        axes.axvline(result.cmrr_floor_db, color="#c0392b", linewidth=2, label="CMRR floor")
        axes.set_xlabel("worst CMRR of a build (dB)")
        axes.set_ylabel("builds")
        axes.legend()
        figure.tight_layout()
        buffer = io.BytesIO()
        figure.savefig(
            buffer, format="png", dpi=100, metadata={"Software": None}, bbox_inches="tight"
        )
    finally:
        plt.close(figure)
    return buffer.getvalue()


# ---------------------------------------------------------------------------------------------
# Report blocks (Markdown / HTML)
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Block:
    """One piece of a report: a heading, a paragraph, a table, or a CMRR histogram."""

    kind: Literal["heading", "para", "table", "histogram"]
    text: str = ""
    headers: tuple[str, ...] = ()
    rows: tuple[tuple[str, ...], ...] = ()
    histogram: MonteCarloResult | None = None


def _part_text(design: Design, index: int) -> str:
    placement = design.placements[index]
    part = placement.part
    value = format_resistance(placement.resistance_ohm, 6)
    if isinstance(part, NetworkPart):
        assert placement.element is not None
        return f"{value} ({part.part_id} #{placement.element + 1})"
    return f"{value} ({part.part_id}, ±{format_fraction(part.tolerance, 4)})"


def _design_row(placement: Placement) -> tuple[str, ...]:
    """Position, value, part (with the element of a network), absolute tolerance and tempco,
    and for a network the ratio tolerance and tracking tempco that set the CMRR."""
    part = placement.part
    value = format_resistance(placement.resistance_ohm, 6)
    if isinstance(part, NetworkPart):
        assert placement.element is not None
        return (
            placement.position,
            value,
            f"{part.part_id} element {placement.element + 1} (package {placement.package + 1})",
            f"±{format_fraction(part.abs_tolerance, 4)} absolute",
            f"±{format_tempco(part.abs_tempco_per_k, 4)} absolute",
            format_fraction(part.ratio_tolerance, 4),
            format_tempco(part.tracking_tempco_per_k, 4),
        )
    return (
        placement.position,
        value,
        part.part_id,
        f"±{format_fraction(part.tolerance, 4)}",
        f"±{format_tempco(part.tempco_per_k, 4)}",
        "–",
        "–",
    )


def _assumptions(spec: Spec) -> list[tuple[str, str]]:
    """The conditions every figure of the report assumes, in words with units."""
    req, sig, ref = spec.requirements, spec.signal, spec.reference
    years = req.life_s / (365.25 * 86400.0)
    rows = [
        ("temperature range", f"{req.temp_min_c:g} to {req.temp_max_c:g} °C"),
        ("operating life (drift)", f"{years:.3g} years" if req.life_s > 0 else "none"),
        ("life drift model", drift_model_summary(req.drift_model, True)),
        (
            "source impedance per leg",
            f"{format_resistance(sig.source.min_ohm, 4)} to "
            f"{format_resistance(sig.source.max_ohm, 4)}, legs differ by up to "
            f"{format_resistance(sig.source.imbalance_ohm, 4)}",
        ),
        (
            "REF drive impedance",
            f"{format_resistance(ref.impedance_min_ohm, 4)} to "
            f"{format_resistance(ref.impedance_max_ohm, 4)}",
        ),
        ("CMRR judged by", "the worst case" if req.cmrr_basis.value == "worst_case"
         else f"the Monte-Carlo yield (target {format_fraction(req.yield_target)})"),
        (
            "Monte Carlo",
            f"{spec.preferences.samples:,} builds, seed {spec.preferences.seed}",
        ),
        ("amplifier", spec.amplifier.name),
    ]  # fmt: skip
    return rows


def check_blocks(design: Design, spec: Spec, verification: Verification) -> list[Block]:
    """The check figures of one design: cautions, parts, requirements, worst case, the error
    budget and the Monte-Carlo histogram of CMRR."""
    blocks = [Block("para", text=f"SAFETY CAUTION: {c}") for c in verification.cautions]
    blocks += _titled("Design", _design_table(design))
    blocks += _titled("Requirements", _requirements_table(verification))
    blocks += _titled("Every check", _checks_table(verification))
    blocks += _titled(
        "Conditions and assumptions",
        Block("table", headers=("item", "value"), rows=tuple(_assumptions(spec))),
    )
    blocks += _titled("Worst case", _worst_table(verification.worst_case))
    blocks += _titled(
        "Error budget (each source alone, worst case)", _budget_table(verification.worst_case)
    )
    blocks += _histogram_blocks(verification.monte_carlo)
    verdict = (
        "meets the spec"
        if verification.passed
        else ("does NOT meet the spec: " + ", ".join(label_of(n) for n in verification.failures))
    )
    blocks.append(Block("para", text=f"Verdict: {verdict}."))
    return blocks


def _titled(title: str, block: Block) -> list[Block]:
    """A heading and the block under it."""
    return [Block("heading", text=title), block]


def _design_table(design: Design) -> Block:
    """One row per placed part: value, part, tolerance, tempco and the network figures."""
    return Block(
        "table",
        headers=(
            "position",
            "value",
            "part",
            "tolerance",
            "tempco",
            "ratio tolerance (network)",
            "tracking (network)",
        ),
        rows=tuple(_design_row(p) for p in design.placements),
    )


def _requirements_table(verification: Verification) -> Block:
    """One row per requirement: met, value, limit and margin."""
    return Block(
        "table",
        headers=("requirement", "met", "value", "limit", "margin"),
        rows=tuple(
            (
                label_of(m.name),
                "yes" if m.passed else "NO",
                fmt_figure(m.value, m.unit),
                fmt_figure(m.limit, m.unit),
                fmt_figure(m.margin, m.unit, signed=True),
            )
            for m in verification.requirements
        ),
    )


def _checks_table(verification: Verification) -> Block:
    """One row per check, with its outcome, margin and how it was found."""
    return Block(
        "table",
        headers=("check", "outcome", "margin", "how it was found"),
        rows=tuple(
            (
                label_of(c.name),
                ("met" if c.passed else "NOT met")
                if c.limit == c.limit  # nan: no requirement set
                else "no requirement",
                fmt_figure(c.margin, c.unit, signed=True) if c.limit == c.limit else "",
                c.detail,
            )
            for c in verification.checks
        ),
    )


def _worst_table(worst: WorstCase) -> Block:
    """The worst-case CMRR (with and without the amplifier), gain error and corner count."""
    return Block(
        "table",
        headers=("figure", "value"),
        rows=(
            ("CMRR, worst case", fmt_db(worst.cmrr_db)),
            ("CMRR, resistors only", fmt_db(worst.cmrr_resistors_db)),
            ("gain error, worst", f"±{fmt_pct(worst.gain_error_worst)}"),
            ("nominal gain", f"{worst.nominal_gain:.8g}"),
            ("corners evaluated", f"{worst.corner_count:,}"),
        ),
    )


def _budget_table(worst: WorstCase) -> Block:
    """The error budget: each source of error alone, and its share."""
    return Block(
        "table",
        headers=(
            "source of error",
            "CMRR alone",
            "share of CM error",
            "gain error alone",
            "share of gain error",
        ),
        rows=tuple(
            (
                label_of(b.name),
                fmt_db(b.cmrr_db),
                f"{b.cmrr_share * 100:.1f} %",
                f"±{fmt_pct(b.gain_error)}",
                f"{b.gain_share * 100:.1f} %",
            )
            for b in worst.budget
        ),
    )


def _histogram_blocks(mc: MonteCarloResult | None) -> list[Block]:
    """The Monte-Carlo summary and histogram of CMRR, when the check ran one."""
    if mc is None:
        return []
    summary = Block(
        "para",
        text=f"{mc.samples:,} builds (seed {mc.seed}); yield {fmt_pct(mc.yield_fraction)}; "
        f"CMRR reached by {fmt_pct(mc.yield_target)} of builds: "
        f"{fmt_db(mc.cmrr_at_yield_db)}; floor {mc.cmrr_floor_db:g} dB.",
    )
    return [*_titled("Monte-Carlo histogram of CMRR", summary), Block("histogram", histogram=mc)]


def pick_blocks(
    rows: Sequence[tuple[int, Design, float, Verification]], spec: Spec, status: str
) -> list[Block]:
    """The ranked table of a pick: ``rows`` of (rank, design, total cost, verification)."""
    from .pick import FILE_TABLE_COLUMNS  # here: ``quartet check`` does not load the solver

    table_rows = []
    for rank, design, cost, verification in rows:
        mc = verification.monte_carlo
        table_rows.append(
            (
                str(rank),
                design.topology.value,
                *(_part_text(design, i) for i in range(4)),
                f"{cost:.3f}",
                fmt_db(verification.worst_case.cmrr_db),
                fmt_db(mc.cmrr_at_yield_db) if mc is not None else "n/a",
                f"±{fmt_pct(verification.worst_case.gain_error_worst)}",
            )
        )
    return [
        Block("heading", text="Ranked designs"),
        Block("para", text=f"Search: {status}. Costs in relative units."),
        Block(
            "table",
            headers=FILE_TABLE_COLUMNS,
            rows=tuple(table_rows),
        ),
    ]


def _md_cell(text: str) -> str:
    return text.replace("|", "\\|").replace("\n", " ")


def _markdown(title: str, blocks: Sequence[Block]) -> str:
    out = [f"# {title}", ""]
    for block in blocks:
        if block.kind == "heading":
            out += [f"## {block.text}", ""]
        elif block.kind == "para":
            out += [block.text, ""]
        elif block.kind == "table":
            out.append("| " + " | ".join(_md_cell(h) for h in block.headers) + " |")
            out.append("|" + "---|" * len(block.headers))
            out += ["| " + " | ".join(_md_cell(c) for c in row) + " |" for row in block.rows]
            out.append("")
        else:
            assert block.histogram is not None
            out += ["```text", histogram_text(block.histogram), "```", ""]
    return "\n".join(out)


def _html(title: str, blocks: Sequence[Block], plots: bool) -> str:
    e = html.escape
    out = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>{e(title)}</title>",
        "<style>body{font-family:sans-serif;margin:2em}table{border-collapse:collapse}"
        "td,th{border:1px solid #999;padding:2px 6px}pre{font-size:12px}</style>",
        "</head><body>",
        f"<h1>{e(title)}</h1>",
    ]
    for block in blocks:
        if block.kind == "heading":
            out.append(f"<h2>{e(block.text)}</h2>")
        elif block.kind == "para":
            out.append(f"<p>{e(block.text)}</p>")
        elif block.kind == "table":
            out.append("<table><tr>" + "".join(f"<th>{e(h)}</th>" for h in block.headers) + "</tr>")
            for row in block.rows:
                out.append("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>")
            out.append("</table>")
        else:
            assert block.histogram is not None
            png = histogram_png(block.histogram) if plots else None
            if png is not None:
                data = base64.b64encode(png).decode("ascii")
                out.append(
                    f'<img alt="Monte-Carlo histogram of CMRR with the floor" '
                    f'src="data:image/png;base64,{data}">'
                )
            out.append(f"<pre>{e(histogram_text(block.histogram))}</pre>")
    out.append("</body></html>")
    return "\n".join(out) + "\n"


def render_report(
    title: str, blocks: Sequence[Block], fmt: Literal["md", "html"], *, plots: bool = True
) -> str:
    """The report as Markdown (``fmt="md"``: tables, the histogram as a text block) or HTML
    (``"html"``: tables, the histogram as an embedded PNG when matplotlib is installed and
    ``plots``, always also as text in a ``<pre>``)."""
    if fmt == "md":
        return _markdown(title, blocks)
    if fmt == "html":
        return _html(title, blocks, plots)
    raise ValueError(f"unknown report format {fmt!r}")


def report_format(path: str) -> Literal["md", "html"] | None:
    """``"md"`` for a .md/.markdown file, ``"html"`` for .html/.htm, else None."""
    lower = path.lower()
    if lower.endswith((".md", ".markdown")):
        return "md"
    if lower.endswith((".html", ".htm")):
        return "html"
    return None
