"""The built-in matched networks, expanded from their recipe (``catalogs/networks.yaml``):
kinds, grades and sets of base values and ratios."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..parts import NetworkPart
from ..units import parse_fraction, parse_power, parse_resistance, parse_tempco, parse_voltage
from .recipe import RecipeReader
from .series import rkm_code
from .table import BUILTIN_NETWORK_SOURCE

__all__ = ["generate_networks"]


def _network_cost(grade_cost: float, kind_factor: float, shape_factor: float) -> float:
    """Relative unit cost of a generated network, an ILLUSTRATIVE model of our own (relative
    units, the same as the discrete parts')::

        unit_cost = grade_cost * kind_factor * shape_factor

    rounded to 4 decimals."""
    return round(grade_cost * kind_factor * shape_factor, 4)


def _ratio_values(base: float, ratio: float) -> float:
    """``base * ratio``, dividing by the whole number 1/ratio for attenuations so that
    10 kΩ * 0.1 gives exactly 1 kΩ."""
    if ratio < 1.0:
        inverse = 1.0 / ratio
        if abs(inverse - round(inverse)) < 1e-9:
            return base / round(inverse)
    return base * ratio


def _ratio_label(ratio: float) -> str:
    if ratio < 1.0:
        return f"A{1.0 / ratio:.6g}"
    return f"G{ratio:.6g}"


def generate_networks(
    recipe: Mapping[str, Any], source: str = BUILTIN_NETWORK_SOURCE
) -> tuple[NetworkPart, ...]:
    """Expand a network recipe (the mapping of ``catalogs/networks.yaml``) into network parts.

    Element order follows R1..R4: a quad of shape ``ratio`` is ``[R, G·R, R, G·R]``, a dual of
    shape ``ratio`` is ``[R, G·R]``; shape ``equal`` repeats ``R``. Combinations with an element
    outside ``element_range`` are skipped. ``unit_cost = grade cost * kind cost factor * shape
    cost factor`` (illustrative)."""
    r = RecipeReader(recipe, source)
    data = r.data
    window = r.value_range(r.get(data, "element_range", "element_range"), "element_range")
    kinds = _network_kinds(r, data)
    shape_factor = {
        str(name): r.number(value, f"shape_cost_factor.{name}", positive=True)
        for name, value in r.mapping(
            r.get(data, "shape_cost_factor", ""), "shape_cost_factor"
        ).items()
    }
    grades = _network_grades(r, data)
    parts: list[NetworkPart] = []
    seen: set[str] = set()
    for i, entry in enumerate(r.items(r.get(data, "sets", ""), "sets")):
        key = f"sets[{i}]"
        entry = r.mapping(entry, key)
        kind = str(r.get(entry, "kind", key))
        if kind not in kinds:
            raise r.fail(f"{key}.kind", f"expected one of {', '.join(kinds)}, got {kind!r}")
        shape = str(r.get(entry, "shape", key))
        if shape not in ("equal", "ratio") or shape not in shape_factor:
            raise r.fail(
                f"{key}.shape", f"expected equal or ratio (with a shape_cost_factor), got {shape!r}"
            )
        bases = [
            r.parse(parse_resistance, v, f"{key}.values[{j}]")
            for j, v in enumerate(r.items(r.get(entry, "values", key), f"{key}.values"))
        ]
        ratios = (
            [1.0]
            if shape == "equal"
            else [
                r.number(g, f"{key}.ratios[{j}]", positive=True)
                for j, g in enumerate(r.items(r.get(entry, "ratios", key), f"{key}.ratios"))
            ]
        )
        for ratio in ratios:
            for base in bases:
                pair = (base, _ratio_values(base, ratio))
                if not all(window[0] * (1 - 1e-9) <= v <= window[1] * (1 + 1e-9) for v in pair):
                    continue
                for part in _network_grade_parts(
                    kinds[kind], shape, shape_factor[shape], ratio, pair, grades
                ):
                    if part.part_id in seen:
                        raise r.fail(key, f"the set repeats the network id {part.part_id}")
                    seen.add(part.part_id)
                    parts.append(part)
    return tuple(parts)


#: A network kind of the recipe: element count, power per element (W), voltage rating (V) and
#: cost factor.
_NetworkKind = tuple[int, float, float, float]


def _network_kinds(r: RecipeReader, data: Mapping[str, Any]) -> dict[str, _NetworkKind]:
    """The recipe's ``kinds``: each one's element count (2 or 4), ratings and cost factor."""
    kinds: dict[str, _NetworkKind] = {}
    for name, spec in r.mapping(r.get(data, "kinds", ""), "kinds").items():
        key = f"kinds.{name}"
        spec = r.mapping(spec, key)
        elements = r.get(spec, "elements", key)
        if elements not in (2, 4):
            raise r.fail(f"{key}.elements", f"expected 2 or 4, got {elements!r}")
        kinds[str(name)] = (
            int(elements),
            r.parse(parse_power, r.get(spec, "power", key), f"{key}.power"),
            r.parse(parse_voltage, r.get(spec, "max_voltage", key), f"{key}.max_voltage"),
            r.number(r.get(spec, "cost_factor", key), f"{key}.cost_factor", positive=True),
        )
    return kinds


def _network_grades(r: RecipeReader, data: Mapping[str, Any]) -> list[dict[str, float]]:
    """The recipe's ``grades``: ratio tolerance, tracking, absolute figures, drifts and cost."""
    grades = []
    for i, grade in enumerate(r.items(r.get(data, "grades", ""), "grades")):
        key = f"grades[{i}]"
        grade = r.mapping(grade, key)
        grades.append(
            {
                "ratio_tolerance": r.parse(
                    parse_fraction, r.get(grade, "ratio_tolerance", key), f"{key}.ratio_tolerance"
                ),
                "tracking": r.parse(parse_tempco, r.get(grade, "tracking", key), f"{key}.tracking"),
                "tolerance": r.parse(
                    parse_fraction, r.get(grade, "tolerance", key), f"{key}.tolerance"
                ),
                "tempco": r.parse(parse_tempco, r.get(grade, "tempco", key), f"{key}.tempco"),
                "drift": r.parse(parse_fraction, r.get(grade, "drift", key), f"{key}.drift"),
                "ratio_drift": r.parse(
                    parse_fraction, r.get(grade, "ratio_drift", key), f"{key}.ratio_drift"
                ),
                "cost": r.number(r.get(grade, "cost", key), f"{key}.cost"),
            }
        )
    return grades


def _network_grade_parts(
    kind: _NetworkKind,
    shape: str,
    shape_factor: float,
    ratio: float,
    pair: tuple[float, float],
    grades: list[dict[str, float]],
) -> list[NetworkPart]:
    """One network part per grade for one base value and ratio of a set."""
    elements, power, voltage, kind_factor = kind
    base = pair[0]
    values = pair * (elements // 2) if shape == "ratio" else (base,) * elements
    label = "EQ" if shape == "equal" else _ratio_label(ratio)
    return [
        NetworkPart(
            part_id=(
                f"QN{elements}-{label}-{rkm_code(base, 3, short=True)}-"
                f"{round(grade['ratio_tolerance'] * 1e6):d}"
            ),
            values_ohm=tuple(values),
            abs_tolerance=grade["tolerance"],
            ratio_tolerance=grade["ratio_tolerance"],
            abs_tempco_per_k=grade["tempco"],
            tracking_tempco_per_k=grade["tracking"],
            power_per_element_w=power,
            max_voltage_v=voltage,
            unit_cost=_network_cost(grade["cost"], kind_factor, shape_factor),
            drift_1000h=grade["drift"],
            ratio_drift_1000h=grade["ratio_drift"],
        )
        for grade in grades
    ]
