"""The ``--verify-spice`` table: simulated gains beside the analysis' closed form."""

from __future__ import annotations

import math

from rich.table import Table
from rich.text import Text

from ..spicecheck import GainComparison, relative_difference

__all__ = ["render_gain_comparison"]


def _number(value: float) -> str:
    return f"{value:.12g}" if math.isfinite(value) else str(value)


def render_gain_comparison(comparison: GainComparison) -> Table:
    """Differential gain, common-mode gain and CMRR (dB): simulated (ngspice), analysed
    (``transfer.coefficients``) and their relative difference."""
    table = Table(
        title="Simulator cross-check (ngspice operating point vs the closed form)",
        title_justify="left",
        header_style="bold",
        caption="Spec's maximum source and REF impedances, its amplifier's minimum open-loop "
        "gain and CMRR.",
        caption_justify="left",
    )
    for name in ("figure", "simulated", "analysis", "relative difference"):
        table.add_column(name, justify="left" if name == "figure" else "right")
    c = comparison
    rows = (
        ("differential gain", c.simulated_differential, c.analysed_differential),
        ("common-mode gain", c.simulated_common_mode, c.analysed_common_mode),
        ("CMRR (dB)", c.simulated_cmrr_db, c.analysed_cmrr_db),
    )
    for name, simulated, analysed in rows:
        table.add_row(
            Text(name),
            Text(_number(simulated)),
            Text(_number(analysed)),
            Text(f"{relative_difference(simulated, analysed):.3g}"),
        )
    return table
