"""JSON Schemas (draft 2020-12 vocabulary) of the ``quartet-pick/1``, ``quartet-check/1`` and
``quartet-board/1`` documents, as Python dicts (``json.dumps`` of one is a schema file), and a
small validator for the subset of the vocabulary they use: ``type`` (one or a list),
``const``, ``enum``, ``properties``, ``required``, ``additionalProperties: false``, ``items``
and ``minimum``.
"""

from __future__ import annotations

from typing import Any, Final

from ..design import Topology

__all__ = ["BOARD_SCHEMA", "CHECK_SCHEMA", "PICK_SCHEMA", "schema_errors"]

_DIALECT: Final = "https://json-schema.org/draft/2020-12/schema"


def _obj(props: dict[str, Any], *, nullable: bool = False) -> dict[str, Any]:
    return {
        "type": ["object", "null"] if nullable else "object",
        "properties": props,
        "required": list(props),
        "additionalProperties": False,
    }


def _arr(items: dict[str, Any]) -> dict[str, Any]:
    return {"type": "array", "items": items}


_NUM: Final = {"type": "number"}
_NUM_N: Final = {"type": ["number", "null"]}
_INT: Final = {"type": "integer", "minimum": 0}
_INT_N: Final = {"type": ["integer", "null"]}
_STR: Final = {"type": "string"}
_STR_N: Final = {"type": ["string", "null"]}
_BOOL: Final = {"type": "boolean"}
_TOPOLOGIES: Final = {"type": "string", "enum": [t.value for t in Topology]}

_POSITION_COMMON: Final = {
    "position": {"type": "string", "enum": ["R1", "R2", "R3", "R4"]},
    "resistance_ohm": _NUM,
    "part_id": _STR,
    "kind": {"type": "string", "enum": ["discrete", "network"]},
    "network_element": _INT_N,
    "network_package": _INT_N,
}
_POSITION_FIGURES: Final = {
    "tolerance": _NUM_N,
    "tempco_per_k": _NUM_N,
    "drift_1000h": _NUM_N,
    "ratio_tolerance": _NUM_N,
    "tracking_tempco_per_k": _NUM_N,
    "ratio_drift_1000h": _NUM_N,
    "power_w": _NUM_N,
    "max_voltage_v": _NUM_N,
}
_NON_FINITE: Final = _arr(
    _obj({"key": _STR, "was": {"type": "string", "enum": ["inf", "-inf", "nan"]}})
)
_SPEC_REF: Final = _obj({"path": _STR_N, "title": _STR_N})
_MARGIN: Final = {"value": _NUM_N, "limit": _NUM_N, "margin": _NUM_N, "unit": _STR}
_PERCENTILES: Final = _arr(_obj({"percent": _NUM, "value": _NUM_N}))

CHECK_SCHEMA: Final[dict[str, Any]] = {
    "$schema": _DIALECT,
    "$id": "quartet-check/1",
    "title": "quartet check result",
    **_obj(
        {
            "schema": {"const": "quartet-check/1"},
            "quartet_version": _STR,
            "spec": _SPEC_REF,
            "verdict": _obj({"meets_spec": _BOOL, "failed": _arr(_STR), "tightest": _STR}),
            "design": _obj(
                {
                    "topology": _TOPOLOGIES,
                    "nominal_gain": _NUM,
                    "target_gain": _NUM,
                    "assumptions": _arr(_STR),
                    "positions": _arr(
                        _obj({**_POSITION_COMMON, "given_as": _STR_N, **_POSITION_FIGURES})
                    ),
                }
            ),
            "requirements": _arr(_obj({"name": _STR, "met": _BOOL, **_MARGIN})),
            "worst_case": _obj(
                {
                    "cmrr_db": _NUM_N,
                    "cmrr_resistors_only_db": _NUM_N,
                    "gain_min": _NUM,
                    "gain_max": _NUM,
                    "gain_error_min": _NUM,
                    "gain_error_max": _NUM,
                    "gain_error_worst": _NUM,
                    "nominal_gain": _NUM,
                    "nominal_cmrr_db": _NUM_N,
                    "target_gain": _NUM,
                    "corners_evaluated": _INT,
                    "drift_model": {"enum": ["symmetric", "one_sided"]},
                }
            ),
            "error_budget": _arr(
                _obj(
                    {
                        "contributor": _STR,
                        "cmrr_error": _NUM_N,
                        "cmrr_db": _NUM_N,
                        "cmrr_share": _NUM_N,
                        "gain_error": _NUM_N,
                        "gain_share": _NUM_N,
                    }
                )
            ),
            "statistics": _obj(
                {
                    "builds": _INT,
                    "seed": _INT,
                    "distribution": _STR,
                    "sigma_k": _NUM_N,
                    "yield": _NUM,
                    "yield_target": _NUM,
                    "cmrr_pass_fraction": _NUM,
                    "gain_pass_fraction": _NUM,
                    "cmrr_floor_db": _NUM,
                    "cmrr_at_yield_db": _NUM_N,
                    "cmrr_percentiles_db": _PERCENTILES,
                    "gain_error_percentiles": _PERCENTILES,
                    "drift_model": {"enum": ["symmetric", "one_sided"]},
                    "drift_shared_variance": _NUM_N,
                },
                nullable=True,
            ),
            "checks": _arr(
                _obj(
                    {
                        "name": _STR,
                        "met": _BOOL,
                        **_MARGIN,
                        "has_requirement": _BOOL,
                        "detail": _STR,
                    }
                )
            ),
            "safety_cautions": _arr(_STR),
            "warnings": _arr(_STR),
            "non_finite": _NON_FINITE,
        }
    ),
}

_PICK_DESIGN: Final = _obj(
    {
        "rank": _INT_N,
        "kind_label": _STR,
        "topology": _TOPOLOGIES,
        "placement_count": _INT,
        "positions": _arr(_obj({**_POSITION_COMMON, **_POSITION_FIGURES})),
        "cost": _obj(
            {"parts": _NUM, "placements": _NUM, "lines": _NUM, "stock_penalty": _NUM, "total": _NUM}
        ),
        "meets_spec": _BOOL,
        "worst_case": _obj(
            {
                "cmrr_db": _NUM_N,
                "gain_error_min": _NUM,
                "gain_error_max": _NUM,
                "gain_error_worst": _NUM,
            }
        ),
        "statistics": _obj(
            {
                "builds": _INT,
                "seed": _INT,
                "yield": _NUM,
                "yield_target": _NUM,
                "cmrr_at_yield_db": _NUM_N,
            },
            nullable=True,
        ),
        "output_noise_v_rms": _NUM_N,
        "tightest": _obj({"name": _STR, **_MARGIN}),
        "family_key": _STR,
        "family_size": _INT,
        "in_stock": _BOOL,
    }
)

PICK_SCHEMA: Final[dict[str, Any]] = {
    "$schema": _DIALECT,
    "$id": "quartet-pick/1",
    "title": "quartet pick result",
    **_obj(
        {
            "schema": {"const": "quartet-pick/1"},
            "quartet_version": _STR,
            "spec": _SPEC_REF,
            "search": _obj(
                {
                    "status": {
                        "type": "string",
                        "enum": ["proven_optimal", "time_limit", "infeasible"],
                    },
                    "proven_optimal": _BOOL,
                    "objective": _STR,
                    "stock_policy": _STR,
                    "designs_asked": _INT,
                    "designs_found": _INT,
                    "time_limit_s": _NUM,
                    "gap": _NUM_N,
                    "rejected_by_exact_check": _INT,
                    "solves": _INT,
                    "model_size": _INT,
                }
            ),
            "ranked": _arr(_PICK_DESIGN),
            "family_members": _arr(_PICK_DESIGN),
            "other_kind": _arr(_PICK_DESIGN),
            "kind_trade": _obj(
                {
                    "text": _STR,
                    **{
                        k: _obj(
                            {
                                "meets_spec": _BOOL,
                                "cost": _NUM_N,
                                "cmrr_db": _NUM_N,
                                "search_timed_out": _BOOL,
                                "relaxed_floor_db": _NUM_N,
                                "out_of_reach_db": _NUM_N,
                            }
                        )
                        for k in ("four_discrete", "network")
                    },
                },
                nullable=True,
            ),
            "diagnosis": _obj(
                {
                    "binding": _arr(_STR),
                    "best_reachable": _arr(
                        _obj(
                            {
                                "requirement": _STR,
                                "asked": {},
                                "reachable": {},
                                "note": _STR_N,
                            }
                        )
                    ),
                    "text": _STR,
                },
                nullable=True,
            ),
            "safety_cautions": _arr(_STR),
            "warnings": _arr(_STR),
            "timing": _obj(
                {"build_s": _NUM, "solve_s": _NUM, "verify_s": _NUM, "statistics_s": _NUM}
            ),
            "non_finite": _NON_FINITE,
        }
    ),
}


_BOARD_COST: Final = _obj(
    {
        "parts": _NUM,
        "placements": _NUM,
        "lines": _NUM,
        "stock_penalty": _NUM,
        "total": _NUM,
        "line_count": _INT,
    }
)
_BOARD_AMPLIFIER: Final = _obj(
    {
        "name": _STR,
        "quantity": _INT,
        "designator_prefix": _STR,
        "spec_path": _STR_N,
        "topology": _TOPOLOGIES,
        "positions": _arr(_obj({**_POSITION_COMMON, **_POSITION_FIGURES})),
        "channel_cost": _obj({"parts": _NUM, "placements": _NUM}),
        "alone_cost": _NUM_N,
        "meets_spec": _BOOL,
        "cmrr_worst_db": _NUM_N,
        "gain_error_worst": _NUM_N,
        "cmrr_at_yield_db": _NUM_N,
    }
)
_BOARD_BOM_LINE: Final = _obj(
    {
        "part_id": _STR,
        "kind": {"type": "string", "enum": ["discrete", "network"]},
        "values_ohm": _arr(_NUM),
        "tolerance": _NUM,
        "ratio_tolerance": _NUM_N,
        "tempco_per_k": _NUM,
        "tracking_tempco_per_k": _NUM_N,
        "size": _STR,
        "quantity": _INT,
        "designators": _arr(_STR),
        "amplifiers": _arr(_STR),
        "unit_cost": _NUM,
        "extended_cost": _NUM,
        "house_stock": _INT,
    }
)

BOARD_SCHEMA: Final[dict[str, Any]] = {
    "$schema": _DIALECT,
    "$id": "quartet-board/1",
    "title": "quartet board result",
    **_obj(
        {
            "schema": {"const": "quartet-board/1"},
            "quartet_version": _STR,
            "board": _obj({"path": _STR_N, "title": _STR_N}),
            "purchasing": _obj(
                {
                    "catalogs": _arr(_STR),
                    "builtin_catalogs": _BOOL,
                    "stock_policy": {"type": "string", "enum": ["any", "only", "prefer"]},
                    "stock_penalty": _NUM,
                    "line_cost": _NUM,
                    "placement_cost": _NUM,
                    "max_lines": _INT_N,
                }
            ),
            "search": _obj(
                {
                    "status": {
                        "type": "string",
                        "enum": ["proven_optimal", "time_limit", "infeasible"],
                    },
                    "proven_optimal": _BOOL,
                    "boards_asked": _INT,
                    "boards_found": _INT,
                    "time_limit_s": _NUM,
                    "designs_read": _arr(_INT),
                    "exact_checks": _INT,
                    "rejected_by_exact_check": _INT,
                }
            ),
            "boards": _arr(
                _obj(
                    {
                        "rank": _INT,
                        "cost": _BOARD_COST,
                        "amplifiers": _arr(_BOARD_AMPLIFIER),
                        "bom": _arr(_BOARD_BOM_LINE),
                    }
                )
            ),
            "alone": _obj(
                {"cost": _BOARD_COST, "amplifiers": _arr(_BOARD_AMPLIFIER)}, nullable=True
            ),
            "saving": _obj(
                {"alone_total": _NUM, "board_total": _NUM, "saving": _NUM, "fraction": _NUM},
                nullable=True,
            ),
            "diagnosis": _arr(_obj({"amplifier": _STR, "binding": _arr(_STR), "text": _STR})),
            "safety_cautions": _arr(_STR),
            "warnings": _arr(_STR),
            "timing": _obj({"search_s": _NUM, "statistics_s": _NUM}),
            "non_finite": _NON_FINITE,
        }
    ),
}


def _type_ok(value: Any, name: str) -> bool:
    if name == "null":
        return value is None
    if name == "boolean":
        return isinstance(value, bool)
    if name == "integer":
        return isinstance(value, int) and not isinstance(value, bool)
    if name == "number":
        return isinstance(value, (int, float)) and not isinstance(value, bool)
    if name == "string":
        return isinstance(value, str)
    if name == "array":
        return isinstance(value, list)
    if name == "object":
        return isinstance(value, dict)
    raise ValueError(f"schema uses unknown type {name!r}")


def schema_errors(value: Any, schema: dict[str, Any], path: str = "$") -> list[str]:
    """Every place where ``value`` breaks ``schema`` (the subset in the module docstring), as
    ``"<path>: <what>"`` lines; empty when it conforms."""
    errors: list[str] = []
    if "type" in schema:
        names = schema["type"] if isinstance(schema["type"], list) else [schema["type"]]
        if not any(_type_ok(value, n) for n in names):
            return [f"{path}: expected {' or '.join(names)}, got {type(value).__name__}"]
    if "const" in schema and value != schema["const"]:
        errors.append(f"{path}: expected {schema['const']!r}, got {value!r}")
    if "enum" in schema and value not in schema["enum"]:
        errors.append(f"{path}: expected one of {schema['enum']}, got {value!r}")
    if "minimum" in schema and _type_ok(value, "number") and value < schema["minimum"]:
        errors.append(f"{path}: expected at least {schema['minimum']}, got {value!r}")
    if isinstance(value, dict):
        props: dict[str, Any] = schema.get("properties", {})
        for key in schema.get("required", []):
            if key not in value:
                errors.append(f"{path}: missing key {key!r}")
        for key, item in value.items():
            if key in props:
                errors += schema_errors(item, props[key], f"{path}.{key}")
            elif schema.get("additionalProperties") is False:
                errors.append(f"{path}: unexpected key {key!r}")
    if isinstance(value, list) and "items" in schema:
        for index, item in enumerate(value):
            errors += schema_errors(item, schema["items"], f"{path}[{index}]")
    return errors
