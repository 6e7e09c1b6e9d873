"""The allowed range of each part field, in one table every reader uses.

A part's fields are checked in three places: the frozen dataclasses of :mod:`optimizer.parts`
(one value at a time), the column validators of user catalogs
(:mod:`optimizer.catalog.cells`, a million cells at a time) and the built-in recipes. Each
takes its limits from :data:`PART_FIELDS`, so the three cannot drift apart. Units are SI:
ohms, fractions (0.001 = 0.1 %), per kelvin, watts, volts, relative cost.

The limits are plausibility fences, not physics (common practice): a tolerance, drift or ratio
tolerance of 50 % or more is a unit mistake (``50`` meant as ``50 ppm``), and a tempco above
10,000 ppm/K is no resistor's.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

import numpy as np
import numpy.typing as npt

__all__ = ["FRACTION", "NONNEGATIVE", "PART_FIELDS", "POSITIVE", "TEMPCO", "FieldBound"]


@dataclass(frozen=True)
class FieldBound:
    """Finite values in ``[low, high]``; ``low_open`` / ``high_open`` leave out that end."""

    low: float
    high: float = math.inf
    low_open: bool = False
    high_open: bool = False

    def holds(self, value: float) -> bool:
        """True when ``value`` is a finite number inside the bound."""
        if not math.isfinite(value):
            return False
        above = value > self.low if self.low_open else value >= self.low
        below = value < self.high if self.high_open else value <= self.high
        return above and below

    def holds_all(self, values: npt.NDArray[np.float64]) -> npt.NDArray[np.bool_]:
        """:meth:`holds` for every element of ``values`` (vectorised)."""
        above = values > self.low if self.low_open else values >= self.low
        below = values < self.high if self.high_open else values <= self.high
        return np.asarray(np.isfinite(values) & above & below, dtype=bool)


#: Above zero (resistance, power, voltage rating, gain-bandwidth ...).
POSITIVE: Final = FieldBound(0.0, low_open=True)
#: Zero or more (cost, noise, currents).
NONNEGATIVE: Final = FieldBound(0.0)
#: A fraction of zero to below 50 % (tolerance, ratio tolerance, drift, ratio drift).
FRACTION: Final = FieldBound(0.0, 0.5, high_open=True)
#: A tempco of 0 to 0.01 per kelvin (10,000 ppm/K), tracking included.
TEMPCO: Final = FieldBound(0.0, 0.01)

#: The bound of every numeric part field, by its catalog column name.
PART_FIELDS: Final[dict[str, FieldBound]] = {
    "resistance": POSITIVE,
    "tolerance": FRACTION,
    "ratio_tolerance": FRACTION,
    "tempco": TEMPCO,
    "tracking": TEMPCO,
    "power": POSITIVE,
    "max_voltage": POSITIVE,
    "cost": NONNEGATIVE,
    "drift": FRACTION,
    "ratio_drift": FRACTION,
}
