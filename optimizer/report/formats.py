"""How the reports write their figures (levels in dB, fractions in percent, quantities with their
unit, to :data:`DIGITS` significant digits) and the cautions panel every report shows.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Final

from rich.panel import Panel
from rich.text import Text

from ..units import format_fraction, format_quantity

__all__ = [
    "DIGITS",
    "cautions_panel",
    "fmt_db",
    "fmt_figure",
    "fmt_pct",
]


#: Significant digits of the figures in the Rich report.
DIGITS: Final = 4


# ---------------------------------------------------------------------------------------------
# Formatting
# ---------------------------------------------------------------------------------------------


def fmt_db(level: float, signed: bool = False) -> str:
    if math.isnan(level):
        return "n/a"
    if math.isinf(level):
        return ("+" if signed and level > 0 else "") + ("∞ dB" if level > 0 else "-∞ dB")
    return f"{level:+.2f} dB" if signed else f"{level:.2f} dB"


def fmt_pct(fraction: float, signed: bool = False) -> str:
    if not math.isfinite(fraction):
        return "n/a"
    text = format_fraction(abs(fraction), DIGITS)
    if fraction < 0:
        return f"-{text}"
    return f"+{text}" if signed else text


def fmt_figure(value: float, unit: str, signed: bool = False) -> str:
    """A figure in its unit: dB with two decimals, fractions in percent (or ppm), the rest in
    engineering notation."""
    if math.isnan(value):
        return "n/a"
    if unit == "dB":
        return fmt_db(value, signed)
    if unit == "":
        return fmt_pct(value, signed)
    if math.isinf(value):
        return f"{'-' if value < 0 else ''}∞ {unit}"
    text = format_quantity(value, unit, DIGITS)
    return f"+{text}" if signed and value > 0 else text


def cautions_panel(cautions: Sequence[str]) -> Panel:
    body = Text()
    for index, caution in enumerate(cautions):
        if index:
            body.append("\n\n")
        body.append("• ")
        body.append(caution)
    return Panel(
        body,
        title=Text("SAFETY CAUTIONS", style="bold red"),
        border_style="bold red",
        expand=True,
    )
