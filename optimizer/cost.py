"""The cost of a design in relative units: parts, placements, distinct lines, stock penalty.

One definition serves the pick, the exhaustive reference searches and the reports, so that
"cheapest" means the same thing everywhere::

    cost = Σ part costs (a network package counted once)
         + placement_cost × placements (each discrete part and each network package)
         + line_cost × distinct part numbers
         + stock_penalty × distinct part numbers not in house stock (stock policy "prefer")

The stock penalty is charged **per line**, like the line cost: a part that is not stocked must
be ordered and qualified once, however many times the design places it (one unstocked quad used
as two packages, or one unstocked chip resistor at two positions, pays the penalty once).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from .design import Design
from .parts import DiscretePart, NetworkPart
from .spec import Preferences

__all__ = ["CostBreakdown", "design_cost", "parts_cost"]


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


def parts_cost(
    placed: Sequence[DiscretePart | NetworkPart], preferences: Preferences
) -> CostBreakdown:
    """Relative cost of the physical parts ``placed`` (each discrete part and each network
    package once, in any order) under ``preferences`` (module docstring for the formula)."""
    lines: dict[str, bool] = {}
    parts = 0.0
    for part in placed:
        parts += part.unit_cost
        lines[part.part_id] = part.in_stock
    unstocked = sum(1 for stocked in lines.values() if not stocked)
    penalty = preferences.line_penalty * unstocked
    return CostBreakdown(
        parts=parts,
        placements=preferences.placement_cost * len(placed),
        lines=preferences.line_cost * len(lines),
        stock_penalty=penalty,
    )


def design_cost(design: Design, preferences: Preferences) -> CostBreakdown:
    """Relative cost of ``design`` under ``preferences`` (module docstring for the formula)."""
    placed: list[DiscretePart | NetworkPart] = []
    seen_packages: set[tuple[str, int]] = set()
    for placement in design.placements:
        key = placement.package_key
        if key is not None:
            if key in seen_packages:
                continue
            seen_packages.add(key)
        placed.append(placement.part)
    return parts_cost(placed, preferences)
