"""The designs of one electrical design of four discrete parts (``solve.classquads``): its
value choices grouped by exact cost, each group's choices nearest the middle of the resistance
window first, less those whose nominal values cannot meet the input-impedance floor or whose
parts fail the value checks (output noise, input impedance).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from numpy.typing import NDArray

from ..analysis.checks import check_input_impedance, check_output_noise
from ..analysis.formulas import common_mode_input_resistance, differential_input_resistance
from ..catalog import Catalog
from ..design import Design, Placement
from ..parts import DiscretePart
from ..spec import Spec
from .discrete import DiscreteBlock
from .frontier import cached_part

__all__ = [
    "CostGroup",
    "ValueChoices",
    "lines_cost",
    "nominal_impedance_reaches",
    "value_checks_pass",
]

Array = NDArray[np.float64]


@dataclass(frozen=True)
class CostGroup:
    """Value choices of one quadruple at one exact cost: value-index pairs of each half, row by
    row."""

    quad: tuple[int, int, int, int]
    first: NDArray[np.int64]
    second: NDArray[np.int64]


class ValueChoices:
    """The value choices of the electrical designs ``solve.classquads.ClassQuadSearch`` finds, as
    designs in exact cost order; ``stop()`` ends a group early."""

    def __init__(
        self,
        spec: Spec,
        catalog: Catalog,
        block: DiscreteBlock,
        stop: Callable[[], bool],
        part_cost: Array,
        line_charge: Array,
    ) -> None:
        self._spec, self._catalog, self._block, self._stop = spec, catalog, block, stop
        # Per class: a part's cost with its placement, and the cost of each BOM line of it.
        self._part_cost, self._line_charge = part_cost, line_charge
        # Parts looked up once (a table row costs a tenth of a millisecond, and a search can
        # place the same parts in many designs).
        self._part_cache: dict[int, DiscretePart] = {}
        prefs = spec.preferences
        values = block.values if block.values.size else np.ones(1)
        low_ohm = max(prefs.resistance_min_ohm, float(values.min()))
        high_ohm = min(prefs.resistance_max_ohm, float(values.max()))
        self._middle_ohm = math.sqrt(low_ohm * max(high_ohm, low_ohm))

    def cost_groups(
        self, quad: tuple[int, int, int, int], first: NDArray[np.int64], second: NDArray[np.int64]
    ) -> list[tuple[float, CostGroup]]:
        """The value choices of one electrical design grouped by exact cost (``optimizer.cost``:
        parts, placements, one line per distinct part id, the stock penalty once per line of an
        unstocked part), each group's choices those nearest the middle of the resistance window
        first."""
        block = self._block
        rows_a = np.column_stack([block.part_row[quad[0], first[:, 0]],
                                  block.part_row[quad[1], first[:, 1]]])  # fmt: skip
        rows_b = np.column_stack([block.part_row[quad[2], second[:, 0]],
                                  block.part_row[quad[3], second[:, 1]]])  # fmt: skip
        r1, r2 = rows_a[:, 0][:, None], rows_a[:, 1][:, None]
        r3, r4 = rows_b[:, 0][None, :], rows_b[:, 1][None, :]
        new = [
            np.ones((first.shape[0], second.shape[0]), dtype=bool),
            np.broadcast_to(r2 != r1, (first.shape[0], second.shape[0])),
            (r3 != r1) & (r3 != r2),
            (r4 != r1) & (r4 != r2) & (r4 != r3),
        ]
        parts = float(sum(self._part_cost[c] for c in quad))
        charges = [float(self._line_charge[c]) for c in quad]
        cost = parts + lines_cost(charges, [n.astype(float) for n in new])
        middle = math.log(self._middle_ohm)
        near = (
            np.abs(np.log(block.values[first[:, 0]]) - middle)[:, None]
            + np.abs(np.log(block.values[second[:, 0]]) - middle)[None, :]
        )
        flat_cost, flat_near = np.ravel(cost), np.ravel(near)
        order = np.lexsort((flat_near, flat_cost))
        floor = self._spec.requirements.min_input_impedance_ohm
        if floor > 0.0:  # value choices whose nominal impedance is below the floor cannot pass
            v = block.values
            reach = np.ravel(
                nominal_impedance_reaches(
                    v[first[:, 0]][:, None], v[second[:, 0]][None, :], v[second[:, 1]][None, :],
                    floor,
                )
            )  # fmt: skip
            order = order[reach[order]]
            if order.size == 0:
                return []
        groups: list[tuple[float, CostGroup]] = []
        levels = flat_cost[order]
        starts = np.r_[0, np.flatnonzero(np.diff(levels) > 1e-12 * (1.0 + abs(levels[0]))) + 1]
        ends = np.r_[starts[1:], levels.size]
        for s, e in zip(starts.tolist(), ends.tolist(), strict=True):
            picked = order[s:e]
            ia, ib = np.divmod(picked, second.shape[0])
            groups.append((float(levels[s]), CostGroup(quad, first[ia], second[ib])))
        return groups

    def designs(self, group: CostGroup) -> Iterator[Design]:
        """The designs of one cost group, in its order."""
        for at in range(0, group.first.shape[0], 64):  # a few at a time: groups can be large
            yield from self._designs_at(group, at, at + 64)

    def _designs_at(self, group: CostGroup, start: int, stop: int) -> Iterator[Design]:
        """Designs ``start`` to ``stop`` of one cost group, less those that fail the spec's
        output-noise ceiling or input-impedance floor: the exact checks themselves
        (``analysis.checks``), which read the values and the parts' spreads and nothing the
        Monte Carlo reads, so a design they turn down fails the exact check whatever its
        yield (the stream would only count it as rejected). Dominance stays sound for them: a
        part no looser than another at its value has value ranges inside the other's at every
        operating corner and stage of life, so the lowest impedance and the highest noise over
        those corners are no worse."""
        block, spec = self._block, self._spec
        req = spec.requirements
        screened = req.max_output_noise_v_rms is not None or req.min_input_impedance_ohm > 0.0
        quad = group.quad
        firsts, seconds = group.first[start:stop].tolist(), group.second[start:stop].tolist()
        for (k1, k2), (k3, k4) in zip(firsts, seconds, strict=True):
            if self._stop():
                return
            rows = (
                block.part_row[quad[0], k1],
                block.part_row[quad[1], k2],
                block.part_row[quad[2], k3],
                block.part_row[quad[3], k4],
            )
            design = Design(
                tuple(  # type: ignore[arg-type]
                    Placement(f"R{i + 1}", cached_part(self._catalog, int(row), self._part_cache))
                    for i, row in enumerate(rows)
                )
            )
            if screened and not value_checks_pass(design, spec):
                continue
            yield design


def value_checks_pass(design: Design, spec: Spec) -> bool:
    """The spec's output-noise ceiling and input-impedance floor (``analysis.checks``; each
    passes when the spec sets none)."""
    return check_output_noise(design, spec).passed and all(
        o.passed for o in check_input_impedance(design, spec)
    )


def nominal_impedance_reaches(
    r1: Array, r3: Array, r4: Array, floor_ohm: float
) -> NDArray[np.bool_]:
    """Whether nominal values can meet an input-impedance floor (ohms; no REF impedance):
    ``R1 + R3 ≥ Z`` and ``R1·(R3 + R4)/(R1 + R3) ≥ Z`` (``analysis.formulas``:
    ``differential_input_resistance``, ``common_mode_input_resistance``), each less a relative
    1e-9 against rounding. Necessary for ``analysis.checks.check_input_impedance``: both
    resistances are monotone in each value (the common-mode one rises with R1 and R4, and with
    R3 exactly when R1 > R4), so their least value over the box of a design's operating
    corners, which holds the nominal values, lies at a corner and is at most the nominal one."""
    floor = floor_ohm * (1.0 - 1e-9)
    differential = differential_input_resistance(r1, r3)
    common = common_mode_input_resistance(r1, r3, r4)
    return np.asarray((differential >= floor) & (common >= floor), dtype=bool)


def lines_cost(charges: Sequence[float], counts: Sequence[Any]) -> Any:
    """The BOM lines' cost (relative units): ``Σ countᵢ·chargeᵢ`` over the classes, each
    ``chargeᵢ`` the line cost plus the stock penalty when the class is not stocked
    (``optimizer.cost``), each ``countᵢ`` (a number or an array) its lines. When every charge
    is the same it is ``charge·Σ countᵢ``, the floats the line cost alone gave."""
    if len(set(charges)) == 1:
        return charges[0] * sum(counts)
    return sum(count * charge for count, charge in zip(counts, charges, strict=True))
