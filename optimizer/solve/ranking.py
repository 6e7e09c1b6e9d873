"""How the ranking tells designs apart: part families (one choice, several base values) and
the tie-breaks applied after cost.

**Family.** Two designs are one choice when they are built the same way and differ at most in
base values or in which catalog part supplies electrically identical elements. A design's
groups are its network packages and (as one group) its discrete parts; each group has a base
value (its first element's value). One family: the same topology, the same positions in each
group, each value the same multiple of its group's base value, the same grade at each
position (tolerance or absolute and ratio tolerance, tempco or tracking, drift, rating, size,
unit cost), and the same cost. So a quad network grade at 1 k, 2 k, 5 k ... is one choice, a
gain-2 network and an attenuate-by-2 network used backwards are one choice, and four discrete
parts scaled together by one factor are one choice.

**Tie-breaks** (only among designs of exactly equal cost; the ranking stays exact in cost),
in this order:

1. more margin on the binding requirement (the requirement that is tightest for most designs
   of the tie group), counted in whole steps: 1 dB for a figure in dB, a tenth of the limit
   otherwise, so that a few hundredths of a dB do not outweigh the keys below;
2. fewer BOM lines (distinct part ids);
3. balanced inputs: R1 = R3 and R2 = R4 (each unequal pair counts one);
4. lower output noise (rms);
5. values from a shorter E-series (IEC 60063: E3 before E6 ... before E192);
6. the part ids, so that the order is fully determined.

Pure: no printing, no files.
"""

from __future__ import annotations

import hashlib
import math
from collections import Counter
from collections.abc import Sequence
from typing import Any

from ..cost import CostBreakdown
from ..design import Design
from ..eseries import ESeries, is_member
from ..parts import NetworkPart

__all__ = [
    "RATIO_DIGITS",
    "base_values",
    "binding_requirement",
    "family_id",
    "family_key",
    "margin_steps",
    "series_rank",
    "tie_key",
    "unbalanced_pairs",
]

#: Significant digits to which ratios and costs are compared when forming a family.
RATIO_DIGITS = 9

#: The E-series from shortest to longest (IEC 60063).
_SERIES_ORDER = (
    ESeries.E3,
    ESeries.E6,
    ESeries.E12,
    ESeries.E24,
    ESeries.E48,
    ESeries.E96,
    ESeries.E192,
)


def _round(value: float) -> float:
    """``value`` to :data:`RATIO_DIGITS` significant digits (0 and non-finite unchanged)."""
    if value == 0.0 or not math.isfinite(value):
        return value
    return round(value, RATIO_DIGITS - 1 - math.floor(math.log10(abs(value))))


def _grade(part: object) -> tuple[Any, ...]:
    """Everything about a part except its id and its value(s)."""
    if isinstance(part, NetworkPart):
        return (
            "network",
            part.elements,
            part.abs_tolerance,
            part.ratio_tolerance,
            part.abs_tempco_per_k,
            part.tracking_tempco_per_k,
            part.drift_1000h,
            part.ratio_drift_1000h,
            part.power_per_element_w,
            part.max_voltage_v,
            part.size,
            part.unit_cost,
        )
    return (
        "discrete",
        getattr(part, "tolerance", None),
        getattr(part, "tempco_per_k", None),
        getattr(part, "drift_1000h", None),
        getattr(part, "power_w", None),
        getattr(part, "max_voltage_v", None),
        getattr(part, "size", None),
        str(getattr(part, "technology", None)),
        getattr(part, "unit_cost", None),
    )


def base_values(design: Design) -> tuple[float, ...]:
    """The base value of each group of the design in ohms: the first element's value of each
    network package (in order of first use), then the first discrete part's value (when the
    design has discrete parts)."""
    values: dict[object, float] = {}
    for placement in design.placements:
        group = placement.package_key or "discrete"
        values.setdefault(group, placement.resistance_ohm)
    discrete = values.pop("discrete", None)
    return (*values.values(), *(() if discrete is None else (discrete,)))


def family_key(design: Design, cost: CostBreakdown) -> tuple[Any, ...]:
    """The key two designs of one family share (module docstring): the topology, the total
    cost and, per position, its group (network package, or the discrete parts as one group),
    its value relative to the group's base value (dimensionless) and its grade."""
    packages = design.packages
    base: dict[object, float] = {}
    positions = []
    for placement in design.placements:
        key = placement.package_key
        group = "discrete" if key is None else packages.index(key)
        first = base.setdefault(group, placement.resistance_ohm)
        positions.append((group, _round(placement.resistance_ohm / first), _grade(placement.part)))
    return (design.topology.value, _round(cost.total), tuple(positions))


def family_id(key: tuple[Any, ...]) -> str:
    """A short stable text for a family key (for the JSON document): the first 12 hex digits
    of the SHA-256 of its ``repr``."""
    return hashlib.sha256(repr(key).encode("utf-8")).hexdigest()[:12]


def margin_steps(margin: float, limit: float, unit: str) -> int:
    """``margin`` counted in whole steps: 1 dB when ``unit`` is "dB", else a tenth of
    ``|limit|`` (or of 1 when the limit is 0 or not finite); floor division. A non-finite
    margin counts as a very large (or very small) number of steps. Common practice: compare
    design margins coarsely, not to the last hundredth of a dB."""
    if math.isnan(margin):
        return -(10**9)
    if math.isinf(margin):
        return 10**9 if margin > 0 else -(10**9)
    if unit == "dB":
        step = 1.0
    else:
        step = 0.1 * abs(limit) if math.isfinite(limit) and limit != 0.0 else 0.1
    return math.floor(margin / step + 1e-9)


def unbalanced_pairs(resistances_ohm: Sequence[float], rel: float = 1e-9) -> int:
    """How many of the pairs (R1, R3) and (R2, R4) have unequal values (0 = balanced inputs,
    equal impedance seen from both inputs; common practice for a difference amplifier)."""
    r1, r2, r3, r4 = resistances_ohm
    return int(not math.isclose(r1, r3, rel_tol=rel)) + int(not math.isclose(r2, r4, rel_tol=rel))


def series_rank(resistances_ohm: Sequence[float]) -> int:
    """Index (0 = E3 ... 6 = E192) of the shortest IEC 60063 series that holds every value;
    7 when none does."""
    for index, series in enumerate(_SERIES_ORDER):
        if all(is_member(series, r) for r in resistances_ohm):
            return index
    return len(_SERIES_ORDER)


def _requirements(verdict: object) -> tuple[Any, ...]:
    return tuple(getattr(verdict, "requirements", ()))


def binding_requirement(verdicts: Sequence[object]) -> str | None:
    """The requirement that is tightest for most of ``verdicts`` (ties: the first name in
    alphabetical order); None when the verdicts carry no requirements."""
    names = [
        getattr(getattr(v, "tightest", None), "name", None) for v in verdicts if _requirements(v)
    ]
    counts = Counter(str(n) for n in names if n is not None)
    if not counts:
        return None
    best = max(counts.values())
    return min(n for n, c in counts.items() if c == best)


def _noise(verdict: object) -> float:
    for check in getattr(verdict, "checks", ()):
        if getattr(check, "name", None) == "output_noise":
            value = float(check.value)
            return value if math.isfinite(value) else math.inf
    return math.inf


def tie_key(design: Design, verdict: object, binding: str | None) -> tuple[Any, ...]:
    """The sort key among designs of equal cost (module docstring; lower sorts first)."""
    steps = 0
    for margin in _requirements(verdict):
        if margin.name == binding:
            steps = margin_steps(float(margin.margin), float(margin.limit), margin.unit)
            break
    resistances = design.resistances_ohm
    ids = tuple(p.part.part_id for p in design.placements)
    return (
        -steps,
        len(set(ids)),
        unbalanced_pairs(resistances),
        _noise(verdict),
        series_rank(resistances),
        ids,
        tuple(p.element if p.element is not None else -1 for p in design.placements),
    )
