"""One table of part-field bounds (optimizer.bounds) serves the dataclasses and the catalog
readers alike: at each edge of each bound, a part built in Python and the same part read from
a CSV catalog are accepted or refused together. (The limits themselves are plausibility
fences, common practice; what is tested here is that the readers agree.)"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from optimizer.bounds import PART_FIELDS, FieldBound
from optimizer.catalog import load_catalog
from optimizer.errors import CatalogError, ModelError
from optimizer.parts import DiscretePart

#: The DiscretePart keyword of each CSV column a discrete part has.
DISCRETE_FIELDS = {
    "resistance": "resistance_ohm",
    "tolerance": "tolerance",
    "tempco": "tempco_per_k",
    "power": "power_w",
    "max_voltage": "max_voltage_v",
    "cost": "unit_cost",
    "drift": "drift_1000h",
}
GOOD = {"resistance": 1e4, "tolerance": 1e-3, "tempco": 25e-6, "power": 0.1,
        "max_voltage": 75.0, "cost": 1.5, "drift": 0.0}  # fmt: skip


def _edges(bound: FieldBound) -> list[float]:
    values = [bound.low, float(np.nextafter(bound.low, -math.inf))]
    values.append(float(np.nextafter(bound.low, math.inf)))
    if math.isfinite(bound.high):
        values += [bound.high, float(np.nextafter(bound.high, math.inf))]
        values.append(float(np.nextafter(bound.high, -math.inf)))
    return values


def test_holds_and_holds_all_agree_at_every_edge() -> None:
    for bound in set(PART_FIELDS.values()):
        values = [*_edges(bound), math.nan, math.inf, -math.inf]
        vectorised = bound.holds_all(np.array(values))
        assert vectorised.tolist() == [bound.holds(v) for v in values]


def test_edges_of_the_bounds_as_written() -> None:
    assert not PART_FIELDS["resistance"].holds(0.0) and PART_FIELDS["resistance"].holds(1e-9)
    assert PART_FIELDS["tolerance"].holds(0.0) and not PART_FIELDS["tolerance"].holds(0.5)
    assert PART_FIELDS["tempco"].holds(0.01) and not PART_FIELDS["tempco"].holds(0.0100001)
    assert PART_FIELDS["cost"].holds(0.0) and not PART_FIELDS["cost"].holds(-1e-12)


@pytest.mark.parametrize("column", sorted(DISCRETE_FIELDS))
def test_a_part_and_its_catalog_row_are_accepted_together(column: str, tmp_path: Path) -> None:
    bound = PART_FIELDS[column]
    for value in _edges(bound):
        fields = {DISCRETE_FIELDS[k]: v for k, v in GOOD.items()} | {DISCRETE_FIELDS[column]: value}
        try:
            DiscretePart(part_id="ZZ-EDGE", size="0603", **fields)
            built = True
        except ModelError:
            built = False
        cells = GOOD | {column: value}
        path = tmp_path / "edge.csv"
        header = "part_id,resistance,tolerance,tempco,size,power,max_voltage,cost,stock,drift\n"
        row = (
            f"ZZ-EDGE,{cells['resistance']!r},{cells['tolerance']!r},{cells['tempco']!r},0603,"
            f"{cells['power']!r},{cells['max_voltage']!r},{cells['cost']!r},0,{cells['drift']!r}\n"
        )
        path.write_text(header + row, encoding="utf-8")
        try:
            load_catalog(str(path))
            read = True
        except CatalogError:
            read = False
        assert (built, read) == (bound.holds(value),) * 2, (column, value)
