"""The reader of a built-in catalog recipe (``catalogs/discrete_recipe.yaml``,
``catalogs/networks.yaml``): every problem is a :class:`CatalogError` naming the key path."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import Any

from ..errors import CatalogError, UnitError
from ..units import exceeds, parse_resistance

__all__ = ["RecipeReader"]


class RecipeReader:
    """Reads one recipe mapping; every problem is a :class:`CatalogError` naming the key path."""

    def __init__(self, data: object, source: str) -> None:
        self.source = source
        self.data = self.mapping(data, "")

    def fail(self, key: str, message: str) -> CatalogError:
        return CatalogError(message, path=self.source, column=key)

    def mapping(self, value: object, key: str) -> Mapping[str, Any]:
        if not isinstance(value, Mapping):
            raise self.fail(key, f"expected a mapping, got {type(value).__name__}")
        return value

    def items(self, value: object, key: str) -> list[Any]:
        if not isinstance(value, list) or not value:
            raise self.fail(key, "expected a non-empty list")
        return value

    def get(self, mapping: Mapping[str, Any], key: str, path: str) -> Any:
        if key not in mapping:
            raise self.fail(path, f"missing key {key!r}")
        return mapping[key]

    def parse(self, parser: Callable[[object], float], value: object, key: str) -> float:
        try:
            return parser(value)
        except UnitError as exc:
            raise self.fail(key, str(exc)) from None

    def number(self, value: object, key: str, *, positive: bool = False) -> float:
        if (
            isinstance(value, bool)
            or not isinstance(value, (int, float))
            or not math.isfinite(value)
        ):
            raise self.fail(key, f"expected a number, got {value!r}")
        if value < 0 or (positive and value == 0):
            raise self.fail(
                key,
                f"expected a number {'above zero' if positive else 'of zero or more'}, "
                f"got {value!r}",
            )
        return float(value)

    def value_range(self, value: object, key: str) -> tuple[float, float]:
        pair = self.items(value, key)
        if len(pair) != 2:
            raise self.fail(key, f"expected [low, high], got {value!r}")
        low = self.parse(parse_resistance, pair[0], f"{key}[0]")
        high = self.parse(parse_resistance, pair[1], f"{key}[1]")
        if exceeds(low, high):  # equal within rounding counts as equal (units.NUMBER_REL_TOL)
            raise self.fail(key, f"expected low <= high, got {value!r}")
        return min(low, high), high
