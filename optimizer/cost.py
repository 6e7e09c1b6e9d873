"""The cost of a design in relative units: parts, placements, distinct lines, stock penalty.

One definition serves the CP-SAT objective, the exhaustive reference enumerator and the reports,
so that "cheapest" means the same thing everywhere::

    cost = Σ part costs (a network package counted once)
         + placement_cost × placements (each discrete part and each network package)
         + line_cost × distinct part numbers
         + stock_penalty × placements not in house stock (only with stock policy "prefer")
"""

from __future__ import annotations

from dataclasses import dataclass

from .design import Design
from .spec import Preferences, StockPolicy

__all__ = ["CostBreakdown", "design_cost"]


@dataclass(frozen=True)
class CostBreakdown:
    """The parts of :func:`design_cost` (relative units)."""

    parts: float
    placements: float
    lines: float
    stock_penalty: float

    @property
    def total(self) -> float:
        return self.parts + self.placements + self.lines + self.stock_penalty


def design_cost(design: Design, preferences: Preferences) -> CostBreakdown:
    """Relative cost of ``design`` under ``preferences`` (module docstring for the formula)."""
    parts = 0.0
    placed = 0
    not_stocked = 0
    lines: set[str] = set()
    seen_packages: set[tuple[str, int]] = set()
    for placement in design.placements:
        key = placement.package_key
        if key is not None:
            if key in seen_packages:
                continue
            seen_packages.add(key)
        parts += placement.part.unit_cost
        placed += 1
        lines.add(placement.part.part_id)
        if not placement.part.in_stock:
            not_stocked += 1
    penalty = (
        preferences.stock_penalty * not_stocked if preferences.stock is StockPolicy.PREFER else 0.0
    )
    return CostBreakdown(
        parts=parts,
        placements=preferences.placement_cost * placed,
        lines=preferences.line_cost * len(lines),
        stock_penalty=penalty,
    )
