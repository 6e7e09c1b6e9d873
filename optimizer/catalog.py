"""Parts catalogs: the built-in generic catalog, user catalogs (CSV and YAML) and their union.

A :class:`Catalog` holds discrete resistors as one columnar :class:`pandas.DataFrame` (one row
per orderable part, SI units, see :data:`DISCRETE_COLUMNS`) and matched networks as a tuple of
:class:`~optimizer.parts.NetworkPart`. Discrete rows are validated column by column with
vectorised numpy/pandas operations and turned into :class:`~optimizer.parts.DiscretePart`
objects only on demand, so a catalog of a million rows loads in seconds.

File formats (names of our own; see README, "Parts catalogs"):

* CSV, discrete parts only. Header line with the columns ``part_id, resistance, tolerance,
  tempco, size, power, max_voltage, cost, stock`` (required) and ``technology, drift``
  (optional), in any order. Cells take engineering notation (``4k99``, ``0.1%``, ``25ppm``,
  ``63mW``, ``75V``); plain numbers are SI (ohms, fractions, per kelvin, watts, volts).
  ``stock`` is a whole number or yes/no. Blank lines, and ``#`` comment lines before the
  header, are skipped.
* YAML: a mapping with a ``discrete:`` list (mappings with the CSV column names as keys) and/or
  a ``networks:`` list (see :data:`NETWORK_REQUIRED` and :data:`NETWORK_OPTIONAL`).

Every problem raises :class:`~optimizer.errors.CatalogError` naming the file, the line (as an
editor numbers it: CSV data row n is line n + 1 below a header on line 1) and the column or key,
with what was found and what was expected.
"""

from __future__ import annotations

import csv
import difflib
import functools
import io
import math
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any, Final

import numpy as np
import numpy.typing as npt
import yaml

from .errors import CatalogError, DesignError, ModelError, UnitError
from .eseries import ESeries, decade_values, series_for_name, values_in_range
from .parts import DiscretePart, NetworkPart, Technology
from .units import (
    exceeds,
    parse_fraction,
    parse_power,
    parse_resistance,
    parse_tempco,
    parse_voltage,
)

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import sys

    import pandas as pd

    if sys.version_info >= (3, 11):
        from importlib.resources.abc import Traversable
    else:
        from importlib.abc import Traversable

__all__ = [
    "BUILTIN_DISCRETE_SOURCE",
    "BUILTIN_NETWORK_SOURCE",
    "CSV_OPTIONAL",
    "CSV_REQUIRED",
    "DISCRETE_COLUMNS",
    "NETWORK_OPTIONAL",
    "NETWORK_REQUIRED",
    "STOCK_UNCOUNTED",
    "Catalog",
    "builtin_catalog",
    "builtin_data_folder",
    "catalog_from_parts",
    "empty_discrete_frame",
    "generate_discrete",
    "generate_networks",
    "load_catalog",
    "load_catalogs",
    "rkm_code",
    "series_of_values",
]

#: Columns of :attr:`Catalog.discrete`, in this order (SI units; tolerance and drift are
#: fractions, tempco per kelvin; ``series`` is the E-series name or ""; ``source`` the file).
DISCRETE_COLUMNS: Final = (
    "part_id",
    "resistance_ohm",
    "tolerance",
    "tempco_per_k",
    "size",
    "power_w",
    "max_voltage_v",
    "unit_cost",
    "stock_qty",
    "technology",
    "drift_1000h",
    "series",
    "source",
)
_CATEGORY_COLUMNS: Final = ("size", "technology", "series", "source")

#: Columns a discrete CSV catalog (and each entry of a YAML ``discrete:`` list) must have.
CSV_REQUIRED: Final = (
    "part_id",
    "resistance",
    "tolerance",
    "tempco",
    "size",
    "power",
    "max_voltage",
    "cost",
    "stock",
)
#: Columns a discrete catalog may have.
CSV_OPTIONAL: Final = ("technology", "drift")
#: Keys each entry of a YAML ``networks:`` list must have.
NETWORK_REQUIRED: Final = (
    "part_id",
    "values",
    "tolerance",
    "ratio_tolerance",
    "tempco",
    "tracking",
    "power",
    "max_voltage",
    "cost",
    "stock",
)
#: Keys a YAML network entry may have.
NETWORK_OPTIONAL: Final = ("drift", "ratio_drift", "package")

#: ``stock_qty`` of a part whose stock cell says "yes": stocked, count not given (treated as
#: enough for any build).
STOCK_UNCOUNTED: Final = 2**31 - 1
_STOCK_YES: Final = frozenset({"yes", "y", "true"})
_STOCK_NO: Final = frozenset({"no", "n", "false"})

BUILTIN_DISCRETE_SOURCE: Final = "built-in:discrete_recipe.yaml"
BUILTIN_NETWORK_SOURCE: Final = "built-in:networks.yaml"
_YAML_SUFFIXES: Final = (".yaml", ".yml")
_NULL_TAG: Final = "tag:yaml.org,2002:null"

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]


# ---------------------------------------------------------------------------------------------
# The catalog
# ---------------------------------------------------------------------------------------------


def empty_discrete_frame() -> pd.DataFrame:
    """A discrete table with no rows and the columns and dtypes of :data:`DISCRETE_COLUMNS`."""
    return _frame(
        part_id=np.array([], dtype=object),
        resistance_ohm=np.array([], dtype=float),
        tolerance=np.array([], dtype=float),
        tempco_per_k=np.array([], dtype=float),
        size=np.array([], dtype=object),
        power_w=np.array([], dtype=float),
        max_voltage_v=np.array([], dtype=float),
        unit_cost=np.array([], dtype=float),
        stock_qty=np.array([], dtype=np.int64),
        technology=np.array([], dtype=object),
        drift_1000h=np.array([], dtype=float),
        series=np.array([], dtype=object),
        source=np.array([], dtype=object),
    )


def catalog_from_parts(
    discrete: Sequence[DiscretePart],
    networks: Sequence[NetworkPart] = (),
    source: str = "in-memory",
) -> Catalog:
    """A :class:`Catalog` from part objects, every part credited to ``source`` (for parts built
    in code: tests, benchmarks, a design typed on the command line)."""
    values = np.array([p.resistance_ohm for p in discrete], dtype=float)
    tolerance = np.array([p.tolerance for p in discrete], dtype=float)
    frame = _frame(
        part_id=np.array([p.part_id for p in discrete], dtype=object),
        resistance_ohm=values,
        tolerance=tolerance,
        tempco_per_k=np.array([p.tempco_per_k for p in discrete], dtype=float),
        size=np.array([p.size for p in discrete], dtype=object),
        power_w=np.array([p.power_w for p in discrete], dtype=float),
        max_voltage_v=np.array([p.max_voltage_v for p in discrete], dtype=float),
        unit_cost=np.array([p.unit_cost for p in discrete], dtype=float),
        stock_qty=np.array([p.stock_qty for p in discrete], dtype=np.int64),
        technology=np.array(
            [p.technology.value if p.technology is not None else "" for p in discrete], dtype=object
        ),
        drift_1000h=np.array([p.drift_1000h for p in discrete], dtype=float),
        series=series_of_values(values, tolerance),
        source=np.array([source] * len(discrete), dtype=object),
    )
    return Catalog(frame, tuple(networks), (source,), (source,) * len(networks))


def _frame(**columns: Any) -> pd.DataFrame:
    """Build the discrete table: columns in :data:`DISCRETE_COLUMNS` order, low-cardinality text
    columns as categoricals (a million rows then cost a few bytes each, not a string object)."""
    import pandas as pd

    frame = pd.DataFrame({name: columns[name] for name in DISCRETE_COLUMNS})
    return _normalise(frame)


def _normalise(frame: pd.DataFrame) -> pd.DataFrame:
    for name in _CATEGORY_COLUMNS:
        frame[name] = _text_categorical(frame[name])
    frame["part_id"] = frame["part_id"].astype(str)
    frame["stock_qty"] = frame["stock_qty"].astype(np.int64)
    for name in (
        "resistance_ohm",
        "tolerance",
        "tempco_per_k",
        "power_w",
        "max_voltage_v",
        "unit_cost",
        "drift_1000h",
    ):
        frame[name] = frame[name].astype(np.float64)
    return frame.reset_index(drop=True)


@dataclass(frozen=True, eq=False)
class Catalog:
    """Discrete parts (a columnar table, see :data:`DISCRETE_COLUMNS`) and matched networks.

    ``sources`` names the files combined, in order; ``network_sources`` gives the file of each
    network (parallel to ``networks``). Treat ``discrete`` as read-only: methods return new
    catalogs."""

    discrete: pd.DataFrame
    networks: tuple[NetworkPart, ...] = ()
    sources: tuple[str, ...] = ()
    network_sources: tuple[str, ...] = ()
    #: Notes on how the files were read (encoding, separator, ignored columns), for the user.
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if tuple(self.discrete.columns) != DISCRETE_COLUMNS:
            raise ModelError(
                "catalog",
                "discrete",
                f"expected the columns {', '.join(DISCRETE_COLUMNS)}, "
                f"got {', '.join(map(str, self.discrete.columns))}",
            )
        if not self.network_sources and self.networks:
            object.__setattr__(self, "network_sources", ("",) * len(self.networks))
        if len(self.network_sources) != len(self.networks):
            raise ModelError("catalog", "network_sources", "expected one source per network")

    # -- sizes ------------------------------------------------------------------------------

    def __len__(self) -> int:
        """Discrete parts plus networks."""
        return self.discrete_count + self.network_count

    @property
    def discrete_count(self) -> int:
        return len(self.discrete)

    @property
    def network_count(self) -> int:
        return len(self.networks)

    @property
    def stock_count(self) -> int:
        """Discrete parts and networks with house stock."""
        return int((self.discrete["stock_qty"].to_numpy() > 0).sum()) + sum(
            1 for n in self.networks if n.in_stock
        )

    # -- parts ------------------------------------------------------------------------------

    def discrete_part(self, index: int) -> DiscretePart:
        """The discrete part in row ``index`` (0-based position) as a :class:`DiscretePart`."""
        row = self.discrete.iloc[index]
        technology = str(row["technology"])
        return DiscretePart(
            part_id=str(row["part_id"]),
            resistance_ohm=float(row["resistance_ohm"]),
            tolerance=float(row["tolerance"]),
            tempco_per_k=float(row["tempco_per_k"]),
            size=str(row["size"]),
            power_w=float(row["power_w"]),
            max_voltage_v=float(row["max_voltage_v"]),
            unit_cost=float(row["unit_cost"]),
            stock_qty=int(row["stock_qty"]),
            technology=Technology(technology) if technology else None,
            drift_1000h=float(row["drift_1000h"]),
        )

    def discrete_parts(self, indices: Iterable[int]) -> list[DiscretePart]:
        """:meth:`discrete_part` for each row position in ``indices``."""
        return [self.discrete_part(i) for i in indices]

    @functools.cached_property
    def _id_index(self) -> pd.Index:
        import pandas as pd

        index: pd.Index = pd.Index(self.discrete["part_id"])
        return index

    @functools.cached_property
    def _network_index(self) -> dict[str, int]:
        return {n.part_id: i for i, n in enumerate(self.networks)}

    def find(self, part_id: str) -> DiscretePart | NetworkPart:
        """The part with id ``part_id``; an unknown id raises :class:`DesignError` listing a few
        close ids."""
        if part_id in self._network_index:
            return self.networks[self._network_index[part_id]]
        if part_id in self._id_index:
            position = self._id_index.get_loc(part_id)
            if not isinstance(position, int):  # duplicates cannot happen after loading
                raise DesignError(f"part id {part_id!r} occurs more than once in the catalog")
            return self.discrete_part(position)
        close = self.close_ids(part_id)
        hint = f"; close ids: {', '.join(close)}" if close else ""
        raise DesignError(f"unknown part id {part_id!r} (not in {self._describe_sources()}){hint}")

    def close_ids(self, part_id: str, count: int = 5) -> list[str]:
        """Up to ``count`` ids similar to ``part_id`` (for did-you-mean messages).

        Looks only at ids that share the longest possible prefix with ``part_id`` (at most a
        few thousand), so it stays quick on a catalog of a million rows."""
        import pandas as pd

        ids = pd.concat(
            [
                self.discrete["part_id"].astype(object),
                pd.Series([n.part_id for n in self.networks], dtype=object),
            ],
            ignore_index=True,
        )
        candidates = ids
        for length in range(len(part_id), 0, -1):
            subset = ids[ids.str.startswith(part_id[:length])]
            if len(subset) >= count:
                candidates = subset
                break
        pool = [str(c) for c in candidates.iloc[:5000]]
        return difflib.get_close_matches(part_id, pool, n=count, cutoff=0.5)

    def _describe_sources(self) -> str:
        return ", ".join(self.sources) if self.sources else "an empty catalog"

    # -- combining and filtering ------------------------------------------------------------

    def all_ids(self) -> pd.Index:
        """Every part id, discrete first, then networks."""
        import pandas as pd

        ids: pd.Index = pd.Index(
            np.concatenate(
                [
                    self.discrete["part_id"].to_numpy(dtype=object),
                    np.array([n.part_id for n in self.networks], dtype=object),
                ]
            )
        )
        return ids

    def _source_of(self, part_id: str) -> str:
        if part_id in self._network_index:
            return self.network_sources[self._network_index[part_id]]
        position = self._id_index.get_loc(part_id)
        row = position if isinstance(position, int) else 0
        return str(self.discrete["source"].iloc[row])

    def merge(self, other: Catalog) -> Catalog:
        """Both catalogs in one; a part id in both raises :class:`CatalogError` naming both
        files."""
        first = _first_common(
            np.asarray(other.all_ids(), dtype=object), np.asarray(self.all_ids(), dtype=object)
        )
        if first is not None:
            raise CatalogError(
                f"duplicate part id {first!r}: it is in {self._source_of(first)} and in "
                f"{other._source_of(first)}",
                path=other._source_of(first),
                column="part_id",
            )
        return _concat(self, other)

    def stock_only(self) -> Catalog:
        """Only the parts with house stock (``stock_qty > 0``)."""
        keep = self.discrete["stock_qty"].to_numpy() > 0
        pairs = zip(self.networks, self.network_sources, strict=True)
        networks = [(n, s) for n, s in pairs if n.in_stock]
        return Catalog(
            discrete=_normalise(self.discrete.loc[keep].copy()),
            networks=tuple(n for n, _ in networks),
            sources=self.sources,
            network_sources=tuple(s for _, s in networks),
        )


# ---------------------------------------------------------------------------------------------
# E-series membership and RKM codes
# ---------------------------------------------------------------------------------------------

#: Series a user part's value is tested against, in order (common practice: the grade's own
#: series first, see :func:`_grade_series_code`).
_CATALOG_SERIES: Final = (ESeries.E24, ESeries.E96, ESeries.E192)


def _decade_mantissa(values: FloatArray) -> tuple[FloatArray, BoolArray]:
    """``values / 10^floor(log10(values))`` in [1, 10), and the mask of values that have one
    (finite and above zero)."""
    valid = np.isfinite(values) & (values > 0.0)
    safe = np.where(valid, values, 1.0)
    return safe / 10.0 ** np.floor(np.log10(safe)), valid


def _members_of(series: ESeries, mantissa: FloatArray, valid: BoolArray, rel: float) -> BoolArray:
    """IEC 60063 membership from decade mantissas: ``mantissa * 10^(f-1)`` is, within relative
    ``rel``, one of the series' significands (``f`` = 2 figures up to E24, 3 from E48)."""
    figures = 2 if series <= ESeries.E24 else 3
    scale = 10.0 ** (figures - 1)
    table = np.zeros(10**figures + 1, dtype=bool)
    table[[round(v * scale) for v in decade_values(series)]] = True
    table[10**figures] = True  # 9.9999999 rounds up to the next decade's first value
    scaled = mantissa * scale
    rounded = np.rint(scaled)
    close = np.abs(scaled - rounded) <= rel * scaled
    return valid & close & table[np.clip(rounded, 0, 10**figures).astype(np.int64)]


def _grade_series_code(tolerance: FloatArray) -> npt.NDArray[np.int8]:
    """The series a tolerance grade is usually sold in (common practice), as a code: 1 = E24
    for 2 % and looser, 2 = E96 for 1 % up to 2 %, 3 = E192 below 1 %."""
    return np.where(tolerance >= 0.02 - 1e-12, 1, np.where(tolerance >= 0.01 - 1e-12, 2, 3)).astype(
        np.int8
    )


def series_of_values(values: FloatArray, tolerance: FloatArray) -> npt.NDArray[np.object_]:
    """For each part: the E-series name it belongs to, or "".

    The grade's usual series (:func:`_grade_series_code`) when the value is one of its
    members, else the first of E24, E96, E192 (IEC 60063) that holds the value, else ""."""
    names = np.array(["", *(s.name for s in _CATALOG_SERIES)], dtype=object)
    return np.asarray(names[_series_codes(values, tolerance)], dtype=object)


def _series_codes(values: FloatArray, tolerance: FloatArray) -> npt.NDArray[np.int8]:
    """:func:`series_of_values` as codes: 0 for "", then 1, 2, 3 for E24, E96, E192."""
    mantissa, valid = _decade_mantissa(values)
    membership = [_members_of(s, mantissa, valid, 1e-9) for s in _CATALOG_SERIES]
    codes = np.zeros(values.shape, dtype=np.int8)
    for code in range(len(_CATALOG_SERIES), 0, -1):
        codes[membership[code - 1]] = code
    preferred = _grade_series_code(tolerance)
    for code in range(1, len(_CATALOG_SERIES) + 1):
        codes[(preferred == code) & membership[code - 1]] = code
    return codes


def _text_categorical(values: pd.Series) -> pd.Categorical:
    """A text column as a categorical with plain (object) text categories, so that tables
    from different sources unite without a dtype clash."""
    import pandas as pd

    if isinstance(values.dtype, pd.CategoricalDtype):
        categorical: pd.Categorical = values.array
        if categorical.categories.dtype == object:
            return categorical
        return _from_codes(categorical.codes, [str(c) for c in categorical.categories])
    codes, uniques = pd.factorize(values.to_numpy(dtype=object))
    return _from_codes(codes, [str(u) for u in uniques])


def _series_categorical(values: FloatArray, tolerance: FloatArray) -> pd.Categorical:
    names = ["", *(s.name for s in _CATALOG_SERIES)]
    return _from_codes(_series_codes(values, tolerance), names)


def _from_codes(codes: npt.NDArray[np.integer[Any]], categories: Sequence[str]) -> pd.Categorical:
    """``pd.Categorical.from_codes`` with text categories."""
    import pandas as pd

    categorical: pd.Categorical = pd.Categorical.from_codes(
        codes, categories=pd.Index(list(categories), dtype=object)
    )
    return categorical


_RKM_LETTERS: Final = ("R", "K", "M", "G")


def rkm_code(value_ohm: float, figures: int = 3, *, short: bool = False) -> str:
    """The RKM code of IEC 60062 for a resistance: the multiplier letter (R, K, M, G for
    10^0, 10^3, 10^6, 10^9) stands in place of the decimal point.

    ``figures`` significant digits are written (``rkm_code(4990) == "4K99"``,
    ``rkm_code(1e3, 2) == "1K0"``); ``short=True`` drops trailing zeros after the letter
    (``rkm_code(1e3, short=True) == "1K"``)."""
    if not (value_ohm > 0.0 and math.isfinite(value_ohm)):
        raise ModelError(
            "rkm code", "value", f"expected a finite resistance above zero, got {value_ohm!r}"
        )
    exponent = math.floor(math.log10(value_ohm))
    significand = round(value_ohm / 10.0 ** (exponent - figures + 1))
    if significand >= 10**figures:
        significand //= 10
        exponent += 1
    digits = str(significand)
    group = min(max(exponent // 3, 0), len(_RKM_LETTERS) - 1)
    letter = _RKM_LETTERS[group]
    before = exponent - 3 * group + 1
    if before <= 0:
        head, tail = "0", "0" * (-before) + digits
    elif before >= len(digits):
        head, tail = digits + "0" * (before - len(digits)), ""
    else:
        head, tail = digits[:before], digits[before:]
    if short:
        tail = tail.rstrip("0")
    return f"{head}{letter}{tail}"


# ---------------------------------------------------------------------------------------------
# The built-in catalog: recipes
# ---------------------------------------------------------------------------------------------


class _Recipe:
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


def _discrete_cost(grade_cost: float, size_factor: float, tempco_premium: float) -> float:
    """Relative unit cost of a generated discrete part, an ILLUSTRATIVE model of our own (not
    market data; relative units, not money)::

        unit_cost = grade_cost * size_factor + tempco_premium

    rounded to 4 decimals."""
    return round(grade_cost * size_factor + tempco_premium, 4)


def _network_cost(grade_cost: float, kind_factor: float, shape_factor: float) -> float:
    """Relative unit cost of a generated network, an ILLUSTRATIVE model of our own (relative
    units, the same as the discrete parts')::

        unit_cost = grade_cost * kind_factor * shape_factor

    rounded to 4 decimals."""
    return round(grade_cost * kind_factor * shape_factor, 4)


def generate_discrete(
    recipe: Mapping[str, Any], source: str = BUILTIN_DISCRETE_SOURCE
) -> pd.DataFrame:
    """Expand a discrete recipe (the mapping of ``catalogs/discrete_recipe.yaml``) into the
    discrete table: for each grade, every IEC 60063 value of its series in its range * every
    tempco class * every size. Costs follow the recipe's illustrative model::

        unit_cost = grade cost * size cost factor + tempco premium
    """
    r = _Recipe(recipe, source)
    data = r.data
    low, high = r.value_range(r.get(data, "range", "range"), "range")

    rules: list[tuple[float, ESeries]] = []
    for i, rule in enumerate(
        r.items(r.get(data, "series_by_tolerance", ""), "series_by_tolerance")
    ):
        key = f"series_by_tolerance[{i}]"
        rule = r.mapping(rule, key)
        start = r.parse(parse_fraction, r.get(rule, "from", key), f"{key}.from")
        try:
            rule_series = series_for_name(str(r.get(rule, "series", key)))
        except UnitError as exc:
            raise r.fail(f"{key}.series", str(exc)) from None
        rules.append((start, rule_series))

    sizes: dict[str, tuple[float, float, float]] = {}
    for name, spec in r.mapping(r.get(data, "sizes", ""), "sizes").items():
        key = f"sizes.{name}"
        if not isinstance(name, str):
            raise r.fail(key, f'expected a size code as text (quote it: "{name}")')
        spec = r.mapping(spec, key)
        sizes[name] = (
            r.parse(parse_power, r.get(spec, "power", key), f"{key}.power"),
            r.parse(parse_voltage, r.get(spec, "max_voltage", key), f"{key}.max_voltage"),
            r.number(r.get(spec, "cost_factor", key), f"{key}.cost_factor", positive=True),
        )

    technologies: dict[str, tuple[str, float]] = {}
    for name, spec in r.mapping(r.get(data, "technologies", ""), "technologies").items():
        key = f"technologies.{name}"
        try:
            technology = Technology.from_text(str(name))
        except ModelError as exc:
            raise r.fail(key, exc.message) from None
        spec = r.mapping(spec, key)
        technologies[technology.value] = (
            str(r.get(spec, "code", key)),
            r.parse(parse_fraction, r.get(spec, "drift", key), f"{key}.drift"),
        )

    premium: dict[float, float] = {}
    for name, cost in r.mapping(r.get(data, "tempco_premium", ""), "tempco_premium").items():
        key = f"tempco_premium.{name}"
        premium[r.parse(parse_tempco, name, key)] = r.number(cost, key)

    blocks: list[_Block] = []
    seen: dict[str, str] = {}
    ladders: dict[tuple[ESeries, float, float], tuple[FloatArray, list[str]]] = {}
    code_of: dict[tuple[float, int], str] = {}  # ladders overlap: each code is worked out once
    for i, grade in enumerate(r.items(r.get(data, "grades", ""), "grades")):
        key = f"grades[{i}]"
        grade = r.mapping(grade, key)
        tolerance = r.parse(parse_fraction, r.get(grade, "tolerance", key), f"{key}.tolerance")
        tech_name = str(r.get(grade, "technology", key))
        if tech_name not in technologies:
            raise r.fail(
                f"{key}.technology",
                f"expected one of the technologies {', '.join(technologies)}, got {tech_name!r}",
            )
        tech_code, drift = technologies[tech_name]
        cost = r.number(r.get(grade, "cost", key), f"{key}.cost")
        tempcos = [
            r.parse(parse_tempco, t, f"{key}.tempcos[{j}]")
            for j, t in enumerate(r.items(r.get(grade, "tempcos", key), f"{key}.tempcos"))
        ]
        for j, tempco in enumerate(tempcos):
            if tempco not in premium:
                raise r.fail(
                    f"{key}.tempcos[{j}]", f"no tempco_premium entry for {tempco * 1e6:g} ppm/K"
                )
        g_low, g_high = (
            r.value_range(grade["range"], f"{key}.range") if "range" in grade else (low, high)
        )
        size_names = [str(s) for s in r.items(grade.get("sizes", list(sizes)), f"{key}.sizes")]
        for j, size in enumerate(size_names):
            if size not in sizes:
                raise r.fail(
                    f"{key}.sizes[{j}]",
                    f"expected one of the sizes {', '.join(sizes)}, got {size!r}",
                )
        series = next((s for start, s in rules if tolerance >= start - 1e-12), None)
        if series is None:
            raise r.fail(f"{key}.tolerance", "no series_by_tolerance rule covers this tolerance")
        ladder = (series, max(low, g_low), min(high, g_high))
        if ladder not in ladders:  # grades of one series and range share values and codes
            values = np.array(list(values_in_range(*ladder)), dtype=float)
            figures = 2 if series <= ESeries.E24 else 3
            for v in values:
                if (v, figures) not in code_of:
                    code_of[v, figures] = rkm_code(v, figures)
            ladders[ladder] = values, [code_of[v, figures] for v in values]
        values, codes = ladders[ladder]
        grade_code = f"{tech_code}{round(tolerance * 1e4):d}"
        for size in size_names:
            power, voltage, factor = sizes[size]
            for tempco in tempcos:
                prefix = f"Q-{size}-{grade_code}-{round(tempco * 1e6):d}-"
                if prefix in seen:
                    raise r.fail(
                        key,
                        f"grade repeats the ids of {seen[prefix]} "
                        "(same technology, tolerance, tempco and size)",
                    )
                seen[prefix] = key
                blocks.append(
                    _Block(
                        prefix=prefix,
                        values=values,
                        codes=codes,
                        tolerance=tolerance,
                        tempco_per_k=tempco,
                        size=size,
                        power_w=power,
                        max_voltage_v=voltage,
                        unit_cost=_discrete_cost(cost, factor, premium[tempco]),
                        technology=tech_name,
                        drift_1000h=drift,
                        series=series.name,
                    )
                )
    if not blocks:
        return empty_discrete_frame()
    return _blocks_frame(blocks, source)


@dataclass(frozen=True)
class _Block:
    """One run of generated discrete parts: a grade in one size and tempco class, at every
    value of its ladder (``codes`` the RKM code of each value; the id is prefix + code)."""

    prefix: str
    values: FloatArray
    codes: Sequence[str]
    tolerance: float
    tempco_per_k: float
    size: str
    power_w: float
    max_voltage_v: float
    unit_cost: float
    technology: str
    drift_1000h: float
    series: str


def _blocks_frame(blocks: Sequence[_Block], source: str) -> pd.DataFrame:
    """The discrete table of generated blocks: each block's attributes repeated over its values
    and the text columns built as categoricals straight from the blocks (categories in order of
    first appearance, as factorising the rows would give), without a Python object per row
    except the ids."""
    counts = np.array([len(b.values) for b in blocks], dtype=np.int64)

    def repeated(name: str) -> FloatArray:
        return np.repeat(np.array([getattr(b, name) for b in blocks], dtype=float), counts)

    def categorical(labels: Sequence[str]) -> pd.Categorical:
        categories = list(
            dict.fromkeys(label for label, n in zip(labels, counts, strict=True) if n)
        )
        code_of = {label: code for code, label in enumerate(categories)}
        codes = np.array([code_of.get(label, 0) for label in labels], dtype=np.int64)
        return _from_codes(np.repeat(codes, counts), categories)

    return _frame(
        part_id=np.array([b.prefix + c for b in blocks for c in b.codes], dtype=object),
        resistance_ohm=np.concatenate([b.values for b in blocks]),
        tolerance=repeated("tolerance"),
        tempco_per_k=repeated("tempco_per_k"),
        size=categorical([b.size for b in blocks]),
        power_w=repeated("power_w"),
        max_voltage_v=repeated("max_voltage_v"),
        unit_cost=repeated("unit_cost"),
        stock_qty=np.zeros(int(counts.sum()), dtype=np.int64),
        technology=categorical([b.technology for b in blocks]),
        drift_1000h=repeated("drift_1000h"),
        series=categorical([b.series for b in blocks]),
        source=categorical([source] * len(blocks)),
    )


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
    r = _Recipe(recipe, source)
    data = r.data
    low, high = r.value_range(r.get(data, "element_range", "element_range"), "element_range")
    kinds: dict[str, tuple[int, float, float, float]] = {}
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
    shape_factor = {
        str(name): r.number(value, f"shape_cost_factor.{name}", positive=True)
        for name, value in r.mapping(
            r.get(data, "shape_cost_factor", ""), "shape_cost_factor"
        ).items()
    }
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
        elements, power, voltage, kind_factor = kinds[kind]
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
                if not all(low * (1 - 1e-9) <= v <= high * (1 + 1e-9) for v in pair):
                    continue
                values = pair * (elements // 2) if shape == "ratio" else (base,) * elements
                label = "EQ" if shape == "equal" else _ratio_label(ratio)
                for grade in grades:
                    part_id = (
                        f"QN{elements}-{label}-{rkm_code(base, 3, short=True)}-"
                        f"{round(grade['ratio_tolerance'] * 1e6):d}"
                    )
                    if part_id in seen:
                        raise r.fail(key, f"the set repeats the network id {part_id}")
                    seen.add(part_id)
                    parts.append(
                        NetworkPart(
                            part_id=part_id,
                            values_ohm=tuple(values),
                            abs_tolerance=grade["tolerance"],
                            ratio_tolerance=grade["ratio_tolerance"],
                            abs_tempco_per_k=grade["tempco"],
                            tracking_tempco_per_k=grade["tracking"],
                            power_per_element_w=power,
                            max_voltage_v=voltage,
                            unit_cost=_network_cost(
                                grade["cost"], kind_factor, shape_factor[shape]
                            ),
                            drift_1000h=grade["drift"],
                            ratio_drift_1000h=grade["ratio_drift"],
                        )
                    )
    return tuple(parts)


#: libyaml's safe loader when PyYAML was built with it (ten times faster than the pure-Python
#: one, and it builds the same objects); the pure-Python loader otherwise.
_FAST_SAFE_LOADER: Final[type[yaml.SafeLoader] | type[yaml.CSafeLoader]] = getattr(
    yaml, "CSafeLoader", yaml.SafeLoader
)


#: The built-in catalog data's package (pyproject's package-dir maps the top-level
#: ``catalogs/`` folder to it) and that folder's name in a source tree.
_BUILTIN_PACKAGE: Final = "optimizer.catalogs"
_SOURCE_TREE_FOLDER: Final = "catalogs"


def builtin_data_folder() -> Traversable:
    """The folder holding the built-in catalog data (``discrete_recipe.yaml``,
    ``networks.yaml``).

    The package ``optimizer.catalogs`` when the import system finds it: a plain install (the
    wheel carries it as ``optimizer/catalogs/``) or an editable one (which maps it to the
    checkout's ``catalogs/``). A source tree used without installing has no such package (its
    ``catalogs/`` sits beside ``optimizer/``, not inside it), so the folder is then that
    ``catalogs/``, found from this module's own location. Raises :class:`CatalogError` when
    neither exists."""
    try:
        return resources.files(_BUILTIN_PACKAGE)
    except ModuleNotFoundError as exc:
        if exc.name not in (_BUILTIN_PACKAGE, None):
            raise
    folder = Path(__file__).resolve().parent.parent / _SOURCE_TREE_FOLDER
    if not (folder / "discrete_recipe.yaml").is_file():
        raise CatalogError(
            f"built-in catalog data not found: no package {_BUILTIN_PACKAGE} and no source "
            "tree folder with discrete_recipe.yaml; reinstall Quartet (pip install .)",
            path=str(folder),
        )
    return folder


def _read_builtin(name: str) -> object:
    text = builtin_data_folder().joinpath(name).read_text(encoding="utf-8")
    return yaml.load(text, Loader=_FAST_SAFE_LOADER)


@functools.cache
def builtin_catalog() -> Catalog:
    """The built-in generic catalog: discrete parts generated from ``discrete_recipe.yaml`` and
    matched networks from ``networks.yaml`` (package data of ``optimizer.catalogs``).
    Built once per process."""
    discrete = generate_discrete(_read_builtin("discrete_recipe.yaml"))  # type: ignore[arg-type]
    networks = generate_networks(_read_builtin("networks.yaml"))  # type: ignore[arg-type]
    catalog = Catalog(
        discrete=discrete,
        networks=networks,
        sources=(BUILTIN_DISCRETE_SOURCE, BUILTIN_NETWORK_SOURCE),
        network_sources=(BUILTIN_NETWORK_SOURCE,) * len(networks),
    )
    duplicates = catalog.discrete["part_id"].duplicated()
    if duplicates.any():  # pragma: no cover - the recipe checks id prefixes already
        first = catalog.discrete["part_id"][duplicates].iloc[0]
        raise CatalogError(
            f"duplicate part id {first!r}", path=BUILTIN_DISCRETE_SOURCE, column="part_id"
        )
    return catalog


# ---------------------------------------------------------------------------------------------
# User catalogs: a raw table of cells, validated column by column
# ---------------------------------------------------------------------------------------------


@dataclass
class _Table:
    """Raw cells of one file: each column a Series of numbers (CSV columns pandas read as
    numbers) or of text/None; ``row_lines`` the file line of each row; ``cell_lines`` the line
    of each cell where it differs (YAML keys)."""

    path: str
    columns: dict[str, pd.Series]
    row_lines: IntArray
    cell_lines: dict[str, IntArray] = field(default_factory=dict)

    def line(self, column: str, row: int) -> int:
        lines = self.cell_lines.get(column)
        return int(lines[row]) if lines is not None else int(self.row_lines[row])


@dataclass(frozen=True)
class _Problem:
    row: int
    message: str
    line: int | None = None  # when the cell's own line is not the column's (list elements)


_Problems = _Problem | list[_Problem] | None

#: Rows examined per column for problems (the count of problems stops there).
ROWS_EXAMINED: Final = 10_000


class _ProblemList:
    """Collects the problems of each column; raises them all together."""

    def __init__(self, table: _Table) -> None:
        self.table = table
        self.found: list[tuple[int, int, str, str]] = []

    def add(self, column: str, problem: _Problems, order: int) -> None:
        problems = problem if isinstance(problem, list) else [] if problem is None else [problem]
        for item in problems:
            line = item.line if item.line is not None else self.table.line(column, item.row)
            self.found.append((line, order, column, item.message))

    def raise_first(self) -> None:
        """Raise every problem found (file order), or nothing."""
        if self.found:
            path = self.table.path
            errors = [
                CatalogError(message, path=path, row=line, column=column)
                for line, _, column, message in sorted(self.found)
            ]
            raise _combined(path, errors)


def _is_numeric(cells: pd.Series) -> bool:
    import pandas as pd

    return pd.api.types.is_numeric_dtype(cells.dtype) and not pd.api.types.is_bool_dtype(
        cells.dtype
    )


@dataclass(frozen=True)
class _Cells:
    """A text column factorised: row ``i`` holds ``uniques[codes[i]]`` (stripped text; an
    empty or missing cell is ""). Checks and parsing run once per distinct text, so a column
    of a million cells with a few hundred distinct values costs a few hundred parser calls."""

    codes: IntArray
    uniques: npt.NDArray[np.object_]
    stripped: bool = False  # some cell had surrounding spaces (uniques may then repeat)

    @property
    def empty_unique(self) -> BoolArray:
        return np.asarray(self.uniques == "", dtype=bool)

    def rows(self) -> npt.NDArray[np.object_]:
        """The stripped text of every row."""
        return np.asarray(self.uniques[self.codes], dtype=object)

    def first_row(self, unique_mask: BoolArray) -> int | None:
        """The first row whose text is flagged in ``unique_mask`` (None: no such row)."""
        hits = np.flatnonzero(unique_mask[self.codes])
        return int(hits[0]) if len(hits) else None


def _categorical(codes: IntArray, labels: npt.NDArray[np.object_]) -> pd.Categorical:
    """Rows ``labels[codes]`` as a categorical (labels may repeat; unused ones are dropped)."""
    import pandas as pd

    label_codes, categories = pd.factorize(labels)
    categorical = _from_codes(label_codes[codes], [str(c) for c in categories])
    return categorical.remove_unused_categories()


def _factorise(cells: pd.Series) -> _Cells:
    """Factorise a column of text (or of anything, read as text) into :class:`_Cells`."""
    import pandas as pd

    # plain object arrays factorise about twice as fast as pandas' string dtype
    codes, uniques = pd.factorize(cells.to_numpy(dtype=object), use_na_sentinel=True)
    raw = np.asarray(uniques, dtype=object)
    text = np.array([str(u).strip() for u in raw] + [""], dtype=object)
    codes = np.where(codes < 0, len(uniques), codes).astype(np.int64)
    stripped = bool(np.any(text[:-1] != raw)) if len(raw) else False
    return _Cells(codes, text, stripped)


def _cell_token(cells: pd.Series, row: int) -> str:
    """The text of one cell for a message (a float read by pandas prints without noise)."""
    value = cells.iloc[row]
    if isinstance(value, (float, np.floating)):
        return f"{float(value):g}"
    return str(value).strip()


@dataclass(frozen=True)
class _Quantity:
    """How to read one numeric column: the units parser, what a valid value is (vectorised)
    and the message for a value the parser accepts but the part model refuses."""

    parse: Callable[[object], float]
    expected: str
    valid: Callable[[FloatArray], BoolArray]
    refused: str  # "found {token!r}: expected ..." completes it


def _parse_cost(token: object) -> float:
    """A relative cost: a plain number of zero or more (illustrative units, not money)."""
    expected = "a relative cost of zero or more such as 1.5"
    if isinstance(token, (int, float)) and not isinstance(token, bool):
        value = float(token)
    else:
        try:
            value = float(str(token).strip())
        except ValueError:
            raise UnitError(token, expected, "not a number") from None
    if not math.isfinite(value):
        raise UnitError(token, expected, "not a finite number")
    if value < 0.0:
        raise UnitError(token, expected, "below zero")
    return value


def _finite(values: FloatArray) -> BoolArray:
    return np.isfinite(values)


_QUANTITIES: Final[Mapping[str, _Quantity]] = {
    "resistance": _Quantity(
        parse_resistance,
        "a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        lambda v: _finite(v) & (v > 0.0),
        "a resistance above zero",
    ),
    "tolerance": _Quantity(
        parse_fraction,
        "a tolerance such as 1%, 0.1% or 0.001",
        lambda v: _finite(v) & (v >= 0.0) & (v < 0.5),
        "a tolerance below 50 %",
    ),
    "ratio_tolerance": _Quantity(
        parse_fraction,
        "a ratio tolerance such as 0.05% or 0.0005",
        lambda v: _finite(v) & (v >= 0.0) & (v < 0.5),
        "a ratio tolerance below 50 %",
    ),
    "tempco": _Quantity(
        parse_tempco,
        "a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        lambda v: _finite(v) & (v >= 0.0) & (v <= 0.01),
        "a tempco of 0 to 10,000 ppm/K",
    ),
    "tracking": _Quantity(
        parse_tempco,
        "a tracking tempco such as 2 ppm/K or 2e-6",
        lambda v: _finite(v) & (v >= 0.0) & (v <= 0.01),
        "a tracking tempco of 0 to 10,000 ppm/K",
    ),
    "power": _Quantity(
        parse_power,
        "a power above zero such as 0.1 W or 63 mW",
        lambda v: _finite(v) & (v > 0.0),
        "a power above zero",
    ),
    "max_voltage": _Quantity(
        parse_voltage,
        "a limiting voltage above zero such as 75 V",
        lambda v: _finite(v) & (v > 0.0),
        "a limiting voltage above zero such as 75 V",
    ),
    "cost": _Quantity(
        _parse_cost,
        "a relative cost of zero or more such as 1.5",
        lambda v: _finite(v) & (v >= 0.0),
        "a relative cost of zero or more",
    ),
    "drift": _Quantity(
        parse_fraction,
        "a drift bound over 1000 h such as 0.1% or 0.001",
        lambda v: _finite(v) & (v >= 0.0) & (v < 0.5),
        "a drift bound below 50 %",
    ),
    "ratio_drift": _Quantity(
        parse_fraction,
        "a ratio drift bound over 1000 h such as 0.02% or 0.0002",
        lambda v: _finite(v) & (v >= 0.0) & (v < 0.5),
        "a ratio drift bound below 50 %",
    ),
}


def _read_quantity(
    table: _Table, column: str, quantity: _Quantity, default: float | None
) -> tuple[FloatArray, _Problems]:
    """Read one numeric column: plain numbers vectorised, engineering notation through the
    units parser (once per distinct cell text), then the range check vectorised.

    ``default`` None makes the column required (an empty cell is a problem)."""
    import pandas as pd

    cells = table.columns[column]
    n = len(cells)
    if _is_numeric(cells):
        values = cells.to_numpy(dtype=float, na_value=np.nan).copy()
        empty = np.isnan(values)
    else:
        factor = _factorise(cells)
        empty_u = factor.empty_unique
        values_u = np.array(
            pd.to_numeric(
                pd.Series(factor.uniques, dtype=object).where(~empty_u, None), errors="coerce"
            ).to_numpy(dtype=float, na_value=np.nan)
        )
        failed: dict[int, str] = {}
        for k in np.flatnonzero(np.isnan(values_u) & ~empty_u):
            try:
                values_u[k] = quantity.parse(factor.uniques[k])
            except UnitError as exc:
                failed[int(k)] = str(exc)
        if failed:
            mask = np.zeros(len(values_u), dtype=bool)
            mask[list(failed)] = True
            rows = np.flatnonzero(mask[factor.codes])[:ROWS_EXAMINED]
            listed = [_Problem(int(r), failed[int(factor.codes[r])]) for r in rows]
            return values_u[factor.codes], listed
        values = values_u[factor.codes]
        empty = empty_u[factor.codes]
    problem: _Problem | None = None
    if empty.any():
        if default is None:
            row = int(np.flatnonzero(empty)[0])
            return values, _Problem(row, f"no value: expected {quantity.expected}")
        values[empty] = default
    bad = ~quantity.valid(values) & ~empty if n else np.zeros(0, dtype=bool)
    invalid: list[_Problem] = []
    for row in np.flatnonzero(bad)[:ROWS_EXAMINED]:
        token = _cell_token(cells, int(row))
        try:
            quantity.parse(token)
        except UnitError as exc:
            invalid.append(_Problem(int(row), str(exc)))
        else:
            invalid.append(_Problem(int(row), f"found {token!r}: expected {quantity.refused}"))
    return values, invalid or problem


def _read_ids(
    table: _Table, column: str = "part_id"
) -> tuple[npt.NDArray[np.object_], _Problem | None]:
    """Part ids: non-empty text, unique within the file."""
    import pandas as pd

    factor = _factorise(table.columns[column])
    text = factor.rows()
    row = factor.first_row(factor.empty_unique)
    if row is not None:
        return text, _Problem(row, "no value: expected a part id")
    codes = factor.codes
    if factor.stripped:  # two cells may be equal only after stripping: factorise again
        recoded, _ = pd.factorize(factor.uniques)
        codes = recoded[codes]
    duplicated = pd.Series(codes).duplicated().to_numpy()
    if duplicated.any():
        row = int(np.flatnonzero(duplicated)[0])
        first = int(np.flatnonzero(text == text[row])[0])
        return text, _Problem(
            row, f"duplicate part id {text[row]!r} (first at line {table.line(column, first)})"
        )
    return text, None


_KNOWN_SIZES_NO_ZERO: Final = {code.lstrip("0"): code for code in ("0201", "0402", "0603", "0805")}


def _read_sizes(
    table: _Table, column: str = "size", default: str | None = None
) -> tuple[npt.NDArray[np.object_] | pd.Categorical, _Problem | None]:
    """Size codes: text without inner spaces. ``603`` (a leading zero lost in a spreadsheet) is
    refused with a hint rather than read as another size."""
    factor = _factorise(table.columns[column])
    uniques = factor.uniques.copy()
    empty_u = factor.empty_unique
    if default is not None:
        uniques[empty_u] = default
    else:
        row = factor.first_row(empty_u)
        if row is not None:
            return factor.rows(), _Problem(row, "no value: expected a size code such as 0603")
    for k, token in enumerate(uniques):
        if token in _KNOWN_SIZES_NO_ZERO or re.search(r"\s", token):
            mask = np.zeros(len(uniques), dtype=bool)
            mask[k] = True
            row = factor.first_row(mask)
            if row is None:
                continue
            hint = (
                f"did you mean {_KNOWN_SIZES_NO_ZERO[token]!r}? "
                "(a spreadsheet may have dropped the leading zero)"
                if token in _KNOWN_SIZES_NO_ZERO
                else "a size code has no spaces"
            )
            return factor.rows(), _Problem(
                row, f"found {token!r}: expected a size code such as 0603; {hint}"
            )
    return _categorical(factor.codes, uniques), None


def _read_technology(
    table: _Table, column: str = "technology"
) -> tuple[npt.NDArray[np.object_] | pd.Categorical, _Problem | None]:
    """Optional technology names (``thin film``, ``thin_film``, ``Thin-Film``); empty -> ""."""
    factor = _factorise(table.columns[column])
    valid = ", ".join(m.value for m in Technology)
    names = np.empty(len(factor.uniques), dtype=object)
    for k, token in enumerate(factor.uniques):
        if token == "":
            names[k] = ""
            continue
        try:
            names[k] = Technology.from_text(token).value
        except ModelError:
            mask = np.zeros(len(names), dtype=bool)
            mask[k] = True
            row = factor.first_row(mask)
            assert row is not None
            return factor.rows(), _Problem(row, f"found {token!r}: expected one of {valid}")
    return _categorical(factor.codes, names), None


def _read_stock(table: _Table, column: str = "stock") -> tuple[IntArray, _Problems]:
    """Stock: a whole number of zero or more, or yes/no (yes = :data:`STOCK_UNCOUNTED`)."""
    import pandas as pd

    expected = "a whole number of zero or more, or yes/no"
    cells = table.columns[column]
    n = len(cells)
    if pd.api.types.is_bool_dtype(cells.dtype):  # pandas read a column of true/false
        values = np.where(cells.to_numpy(dtype=bool), float(STOCK_UNCOUNTED), 0.0)
        empty = np.zeros(n, dtype=bool)
    elif _is_numeric(cells):
        values = cells.to_numpy(dtype=float, na_value=np.nan)
        empty = np.isnan(values)
    else:
        factor = _factorise(cells)
        lowered = np.array([u.lower() for u in factor.uniques], dtype=object)
        empty_u = factor.empty_unique
        values_u = np.array(
            pd.to_numeric(
                pd.Series(lowered, dtype=object).where(~empty_u, None), errors="coerce"
            ).to_numpy(dtype=float, na_value=np.nan)
        )
        values_u[np.isin(lowered, list(_STOCK_YES))] = STOCK_UNCOUNTED
        values_u[np.isin(lowered, list(_STOCK_NO))] = 0
        unread = (np.isnan(values_u) & ~empty_u)[factor.codes]
        if unread.any():
            listed = [
                _Problem(int(r), f"found {factor.uniques[factor.codes[r]]!r}: expected {expected}")
                for r in np.flatnonzero(unread)[:ROWS_EXAMINED]
            ]
            return np.zeros(n, dtype=np.int64), listed
        values = values_u[factor.codes]
        empty = empty_u[factor.codes]
    if empty.any():
        row = int(np.flatnonzero(empty)[0])
        return np.zeros(n, dtype=np.int64), _Problem(row, f"no value: expected {expected}")
    bad = ~(
        np.isfinite(values)
        & (values >= 0)
        & (values == np.floor(values))
        & (values <= STOCK_UNCOUNTED)
    )
    if bad.any():
        row = int(np.flatnonzero(bad)[0])
        return np.zeros(n, dtype=np.int64), _Problem(
            row, f"found {_cell_token(cells, row)!r}: expected {expected}"
        )
    return values.astype(np.int64), None


def _discrete_from_table(table: _Table) -> pd.DataFrame:
    """Validate every cell of a discrete table and build the discrete frame."""
    problems = _ProblemList(table)
    problem: _Problems
    order = {name: i for i, name in enumerate((*CSV_REQUIRED, *CSV_OPTIONAL))}
    ids, problem = _read_ids(table)
    problems.add("part_id", problem, order["part_id"])
    numbers: dict[str, FloatArray] = {}
    for column in ("resistance", "tolerance", "tempco", "power", "max_voltage", "cost"):
        numbers[column], problem = _read_quantity(table, column, _QUANTITIES[column], None)
        problems.add(column, problem, order[column])
    n = len(table.row_lines)
    if "drift" in table.columns:
        numbers["drift"], problem = _read_quantity(table, "drift", _QUANTITIES["drift"], 0.0)
        problems.add("drift", problem, order["drift"])
    else:
        numbers["drift"] = np.zeros(n)
    sizes, problem = _read_sizes(table)
    problems.add("size", problem, order["size"])
    stock, problem = _read_stock(table)
    problems.add("stock", problem, order["stock"])
    if "technology" in table.columns:
        technology, problem = _read_technology(table)
        problems.add("technology", problem, order["technology"])
    else:
        technology = _from_codes(np.zeros(n, dtype=np.int8), [""])
    problems.raise_first()
    return _frame(
        part_id=ids,
        resistance_ohm=numbers["resistance"],
        tolerance=numbers["tolerance"],
        tempco_per_k=numbers["tempco"],
        size=sizes,
        power_w=numbers["power"],
        max_voltage_v=numbers["max_voltage"],
        unit_cost=numbers["cost"],
        stock_qty=stock,
        technology=technology,
        drift_1000h=numbers["drift"],
        series=_series_categorical(numbers["resistance"], numbers["tolerance"]),
        source=_from_codes(np.zeros(n, dtype=np.int8), [table.path]),
    )


def _did_you_mean(name: str, known: Sequence[str], what: str) -> str:
    close = difflib.get_close_matches(name, known, n=1, cutoff=0.6)
    if close:
        return f"unknown {what}; did you mean {close[0]!r}?"
    return f"unknown {what}: expected one of {', '.join(known)}"


# ---------------------------------------------------------------------------------------------
# CSV
# ---------------------------------------------------------------------------------------------

_NETWORK_ONLY_COLUMNS: Final = frozenset({"values", "ratio_tolerance", "tracking", "ratio_drift"})
_PARSER_LINE_RE: Final = re.compile(r"Expected (\d+) fields in line (\d+), saw (\d+)")


#: Most problems listed for one catalog file (the count of the rest follows).
MAX_PROBLEMS: Final = 50
#: Column separators recognised in a CSV header line, in order of preference on a tie.
_DELIMITERS: Final = (",", ";", "\t", "|")
_DELIMITER_NAMES: Final = {",": "commas", ";": "semicolons", "\t": "tabs", "|": "bars"}
#: Suffix of the optional file beside a CSV catalog that maps its headers to Quartet's columns.
COLUMNS_SUFFIX: Final = ".columns.yaml"


def _combined(path: str, problems: Sequence[CatalogError]) -> CatalogError:
    """One error listing ``problems`` in file order, at most MAX_PROBLEMS of them; its fields
    locate the first."""
    ordered = sorted(problems, key=lambda e: (e.row or 0, e.column))
    if len(ordered) == 1:
        return ordered[0]
    lines = [str(e) for e in ordered[:MAX_PROBLEMS]]
    if len(ordered) > MAX_PROBLEMS:
        lines.append(f"{path}: {len(ordered) - MAX_PROBLEMS} more problem(s) not listed")
    error = CatalogError(f"{path}: {len(ordered)} problems:\n" + "\n".join(lines))
    first = ordered[0]
    error.path, error.row, error.column = path, first.row, first.column
    error.problems = tuple(ordered)
    return error


def _decode(path: str, data: bytes) -> tuple[str, str | None]:
    """The text of a catalog file and a note on how it was read: UTF-8 with or without a
    byte-order mark, UTF-16 with one, or else Latin-1 (ISO 8859-1, every byte a character) with
    a note. Bytes that no text file holds (NUL and other control characters) are refused."""
    import codecs

    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return data.decode("utf-16"), None
        except UnicodeDecodeError as exc:
            raise CatalogError(
                f"cannot read the file as UTF-16 text ({exc.reason} at byte {exc.start})",
                path=path,
            ) from None
    try:
        text = data.decode("utf-8-sig")
        note = None
    except UnicodeDecodeError as exc:
        text = data.decode("latin-1")
        note = (
            f"{path}: not UTF-8 text (byte 0x{data[exc.start]:02x} at byte {exc.start}); "
            "read as Latin-1 (ISO 8859-1)"
        )
    control = re.search(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f]", text)
    if control is not None:
        line = text[: control.start()].count("\n") + 1
        raise CatalogError(
            f"not a text file: character 0x{ord(control.group()):02x} found; expected "
            "UTF-8, UTF-16 (with a byte-order mark) or Latin-1 text, as a spreadsheet saves "
            "a CSV file",
            path=path,
            row=line,
        )
    return text, note


def _find_header(path: str, text: str) -> tuple[int, str]:
    """The 0-based index of the header line (first line that is neither blank nor a ``#``
    comment) and the line."""
    for index, line in enumerate(text.splitlines()):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        return index, line
    raise CatalogError(
        f"the file is empty: expected a header line with the columns {', '.join(CSV_REQUIRED)}",
        path=path,
    )


def _column_map(path: str) -> tuple[dict[str, str], str | None]:
    """The header mapping of the file ``<name>.columns.yaml`` beside a CSV catalog (``columns:``
    the file's own header -> a Quartet column), lower-cased; empty when there is no such file."""
    from .inputs import MAX_DEPTH, read_bounded, yaml_too_deep

    side = str(Path(path).with_suffix("")) + COLUMNS_SUFFIX
    if not Path(side).exists():
        return {}, None

    def fail(message: str, line: int | None = None) -> CatalogError:
        return CatalogError(message, path=side, row=line)

    text = read_bounded(side, 1024 * 1024, fail, "column mapping").decode("utf-8-sig", "replace")
    if yaml_too_deep(text) is not None:
        raise fail(f"mappings nest deeper than {MAX_DEPTH} levels; expected columns: {{...}}")
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        raise fail("not valid YAML", None if mark is None else mark.line + 1) from None
    expected = "a mapping columns: {their header: one of Quartet's columns}"
    known = (*CSV_REQUIRED, *CSV_OPTIONAL)
    if not isinstance(root, yaml.MappingNode):
        raise fail(f"expected {expected}", 1)
    mapping: dict[str, str] = {}
    problems: list[CatalogError] = []
    for key, value in root.value:
        if not isinstance(key, yaml.ScalarNode) or key.value != "columns":
            problems.append(fail(f"unknown key: expected {expected}", key.start_mark.line + 1))
            continue
        if not isinstance(value, yaml.MappingNode):
            problems.append(fail(f"expected {expected}", value.start_mark.line + 1))
            continue
        for theirs, ours in value.value:
            line = theirs.start_mark.line + 1
            name = _scalar_text(theirs)
            target = _scalar_text(ours)
            if name is None or target is None:
                problems.append(fail(f"expected {expected}", line))
                continue
            target = target.strip().lower()
            if target not in known:
                problems.append(fail(f"{name!r}: {_did_you_mean(target, known, 'column')}", line))
                continue
            mapping[name.strip().lower()] = target
    if problems:
        raise _combined(side, problems)
    return mapping, f"{path}: columns named by {side}"


def _split_header(
    path: str, line: str, mapping: Mapping[str, str], note: str | None
) -> tuple[str, list[str]]:
    """The separator of the header line (the one that gives the most known columns) and the
    header cells, lower-cased and mapped by ``mapping``."""
    known = {*CSV_REQUIRED, *CSV_OPTIONAL}
    best: tuple[int, str, list[str]] | None = None
    for delimiter in _DELIMITERS:
        cells = [c.strip().lower() for c in next(csv.reader([line], delimiter=delimiter))]
        names = [mapping.get(c, c) for c in cells]
        score = sum(1 for n in names if n in known)
        if best is None or score > best[0]:
            best = (score, delimiter, names)
    assert best is not None
    score, delimiter, names = best
    if score == 0:
        from .inputs import quote

        raise CatalogError(
            f"no known column in the header line (found {quote(line)}): expected the columns "
            f"{', '.join(CSV_REQUIRED)} separated by commas, semicolons or tabs (or a "
            f"{Path(path).stem}{COLUMNS_SUFFIX} file beside it that maps the headers)"
            + (f"; {note.removeprefix(path + ': ')}" if note else ""),
            path=path,
        )
    return delimiter, names


def _check_columns(
    path: str,
    names: Sequence[str],
    required: Sequence[str],
    optional: Sequence[str],
    line_of: Callable[[str], int],
    what: str,
    *,
    extra_allowed: bool = False,
) -> list[str]:
    """Check the column (or key) names; returns the names that are ignored (``extra_allowed``:
    unknown names are ignored rather than refused)."""
    known = (*required, *optional)
    seen: set[str] = set()
    ignored: list[str] = []
    problems: list[CatalogError] = []
    for name in names:
        if name in seen and name in known:
            problems.append(
                CatalogError(f"the {what} appears twice", path=path, row=line_of(name), column=name)
            )
        seen.add(name)
        if name not in known:
            if what == "column" and name in _NETWORK_ONLY_COLUMNS:
                message = (
                    "unknown column: a CSV catalog lists discrete parts only; "
                    "list networks in a YAML catalog under networks:"
                )
            elif extra_allowed:
                if name and name not in ignored:
                    ignored.append(name)
                continue
            else:
                message = _did_you_mean(name, known, what)
            problems.append(CatalogError(message, path=path, row=line_of(name), column=name))
    missing = [name for name in required if name not in seen]
    if missing:
        have = ", ".join(n for n in names if n) or "none"
        hints = []
        for name in missing:
            close = difflib.get_close_matches(name, ignored, n=1, cutoff=0.6)
            if close:
                hints.append(f"is {close[0]!r} meant to be {name!r}?")
        which = f"s {', '.join(missing)}" if len(missing) > 1 else ""
        problems.append(
            CatalogError(
                f"missing required {what}{which} (found: {have})"
                + ("; " + " ".join(hints) if hints else ""),
                path=path,
                row=line_of(missing[0]),
                column=missing[0] if len(missing) == 1 else "",
            )
        )
    if problems:
        raise _combined(path, problems)
    return ignored


def _row_lengths(
    path: str, body: str, delimiter: str, width: int, first_line: int
) -> tuple[list[CatalogError], list[tuple[int, int]]]:
    """A problem for each data row with more or fewer cells than the header (blank lines
    aside), and the span of body lines (0-based, end exclusive) each such row occupies."""
    problems: list[CatalogError] = []
    spans: list[tuple[int, int]] = []
    reader = csv.reader(io.StringIO(body), delimiter=delimiter)
    start = 1
    for cells in reader:
        line = first_line + start - 1
        span = (start - 1, reader.line_num)
        start = reader.line_num + 1
        if not cells or len(cells) == width or not any(c.strip() for c in cells):
            continue
        problems.append(
            CatalogError(
                f"found {len(cells)} cells: expected {width} as in the header line "
                f"{first_line - 1}",
                path=path,
                row=line,
            )
        )
        spans.append(span)
    return problems, spans


def _blank_rows(body: str, spans: Sequence[tuple[int, int]], delimiter: str, width: int) -> str:
    """``body`` with the lines of each span replaced by rows of empty cells (one per line, so
    later lines keep their numbers); the reader drops such rows as blank."""
    lines = body.split("\n")
    empty = delimiter * (width - 1)
    for first, end in spans:
        for i in range(first, min(end, len(lines))):
            lines[i] = empty
    return "\n".join(lines)


def _load_csv(path: str, data: bytes) -> tuple[pd.DataFrame, IntArray, tuple[str, ...]]:
    text, encoding_note = _decode(path, data)
    notes = [encoding_note] if encoding_note else []
    mapping, mapping_note = _column_map(path)
    if mapping_note:
        notes.append(mapping_note)
    header_index, header = _find_header(path, text)
    delimiter, names = _split_header(path, header, mapping, encoding_note)
    if delimiter != ",":
        notes.append(f"{path}: columns separated by {_DELIMITER_NAMES[delimiter]}")
    header_line = header_index + 1
    ignored = _check_columns(
        path,
        names,
        CSV_REQUIRED,
        CSV_OPTIONAL,
        lambda _: header_line,
        "column",
        extra_allowed=True,
    )
    if ignored:
        shown = ", ".join(repr(n) for n in ignored[:20])
        more = f" and {len(ignored) - 20} more" if len(ignored) > 20 else ""
        notes.append(f"{path}: columns ignored (not used by Quartet): {shown}{more}")
    known = {*CSV_REQUIRED, *CSV_OPTIONAL}
    used = [i for i, n in enumerate(names) if n in known]
    body = "\n".join(text.splitlines()[header_index + 1 :])
    row_problems, spans = _row_lengths(path, body, delimiter, len(names), header_line + 1)
    if not row_problems:
        return _read_rows(path, body, names, used, delimiter, header_line, notes)
    # rows of the wrong width are reported together with the problems of every other row
    body = _blank_rows(body, spans, delimiter, len(names))
    try:
        _read_rows(path, body, names, used, delimiter, header_line, notes, require_rows=False)
    except CatalogError as exc:
        raise _combined(path, [*row_problems, *exc.problems]) from None
    raise _combined(path, row_problems)


def _read_rows(
    path: str,
    body: str,
    names: Sequence[str],
    used: Sequence[int],
    delimiter: str,
    header_line: int,
    notes: list[str],
    *,
    require_rows: bool = True,
) -> tuple[pd.DataFrame, IntArray, tuple[str, ...]]:
    """The discrete parts of a CSV catalog's data rows (``body``, below the header line);
    with ``require_rows`` a file without data rows is refused."""
    import pandas as pd

    text_columns = {"part_id": str, "size": str}
    column_names = [n if i in used else f"\x00ignored{i}" for i, n in enumerate(names)]
    try:
        raw = pd.read_csv(
            io.StringIO(body),
            header=None,
            names=column_names,
            usecols=[column_names[i] for i in used],
            sep=delimiter,
            dtype={k: v for k, v in text_columns.items() if k in names},
            keep_default_na=False,
            na_values=[""],
            skip_blank_lines=False,
            low_memory=False,
            engine="c",
        )
    except pd.errors.ParserError as exc:
        match = _PARSER_LINE_RE.search(str(exc))
        if match:
            raise CatalogError(
                f"found {match.group(3)} cells: expected {match.group(1)} "
                f"as in the header line {header_line}",
                path=path,
                row=int(match.group(2)) + header_line,
            ) from None
        raise CatalogError(f"cannot read as CSV: {exc}", path=path) from None
    except pd.errors.EmptyDataError:
        raw = pd.DataFrame({names[i]: pd.Series([], dtype=object) for i in used})
    lines = np.arange(len(raw), dtype=np.int64) + header_line + 1
    # blank lines (and lines of bare commas): every cell missing; only rows without a part id
    # can be blank, so test the other columns only on those
    blank = np.array(raw["part_id"].isna().to_numpy(), dtype=bool)
    if blank.any():
        blank[blank] = raw.loc[blank].isna().all(axis=1).to_numpy()
    if blank.any():
        raw = raw.loc[~blank].reset_index(drop=True)
        lines = lines[~blank]
    if len(raw) == 0:
        if not require_rows:
            return raw, lines, tuple(notes)
        raise CatalogError(
            f"no parts: expected data rows below the header line {header_line}", path=path
        )
    table = _Table(path, {names[i]: raw[names[i]] for i in used}, lines)
    frame = _discrete_from_table(table)
    return frame, lines, tuple(notes)


# ---------------------------------------------------------------------------------------------
# YAML
# ---------------------------------------------------------------------------------------------


def _scalar_text(node: yaml.Node) -> str | None:
    """The raw text of a scalar node as written (``0603`` stays ``0603``); None for null."""
    if node.tag == _NULL_TAG:
        return None
    return str(node.value)


def _yaml_rows(
    path: str, node: yaml.Node, section: str, required: Sequence[str], optional: Sequence[str]
) -> tuple[list[int], dict[str, list[object]], dict[str, list[int]]]:
    """Read a list of mappings into columns of raw values with the line of each cell."""
    if not isinstance(node, yaml.SequenceNode):
        raise CatalogError(
            f"expected a list of parts under {section}:",
            path=path,
            row=node.start_mark.line + 1,
            column=section,
        )
    known = (*required, *optional)
    rows: list[int] = []
    cells: dict[str, list[object]] = {k: [] for k in known}
    lines: dict[str, list[int]] = {k: [] for k in known}
    for item in node.value:
        line = item.start_mark.line + 1
        if not isinstance(item, yaml.MappingNode):
            raise CatalogError(
                f"expected a mapping of {', '.join(required)} for each entry of {section}:",
                path=path,
                row=line,
                column=section,
            )
        found: dict[str, tuple[object, int]] = {}
        for key_node, value_node in item.value:
            key = str(key_node.value)
            key_line = key_node.start_mark.line + 1
            if key in found:
                raise CatalogError(
                    "the key appears twice in this entry", path=path, row=key_line, column=key
                )
            if key not in known:
                raise CatalogError(
                    _did_you_mean(key, known, "key"), path=path, row=key_line, column=key
                )
            if key == "values":
                if not isinstance(value_node, yaml.SequenceNode):
                    raise CatalogError(
                        "expected a list of element values such as [1k, 10k, 1k, 10k]",
                        path=path,
                        row=key_line,
                        column=key,
                    )
                values: list[tuple[str | None, int]] = []
                for element in value_node.value:
                    if not isinstance(element, yaml.ScalarNode):
                        raise CatalogError(
                            "expected a single resistance for each element",
                            path=path,
                            row=element.start_mark.line + 1,
                            column=key,
                        )
                    values.append((_scalar_text(element), element.start_mark.line + 1))
                found[key] = (values, key_line)
            elif isinstance(value_node, yaml.ScalarNode):
                found[key] = (_scalar_text(value_node), key_line)
            else:
                raise CatalogError(
                    "expected a single value, not a list or mapping",
                    path=path,
                    row=key_line,
                    column=key,
                )
        for key in known:
            value, key_line = found.get(key, (None, line))
            cells[key].append(value)
            lines[key].append(key_line)
        rows.append(line)
    if not rows:
        raise CatalogError(
            f"the {section}: list is empty", path=path, row=node.start_mark.line + 1, column=section
        )
    return rows, cells, lines


def _yaml_table(
    path: str, node: yaml.Node, section: str, required: Sequence[str], optional: Sequence[str]
) -> _Table:
    import pandas as pd

    rows, cells, lines = _yaml_rows(path, node, section, required, optional)
    return _Table(
        path,
        {k: pd.Series(v, dtype=object) for k, v in cells.items()},
        np.array(rows, dtype=np.int64),
        {k: np.array(v, dtype=np.int64) for k, v in lines.items()},
    )


def _networks_from_table(table: _Table) -> tuple[NetworkPart, ...]:
    """Validate every network entry (column by column, as for discrete parts) and build them."""
    problems = _ProblemList(table)
    problem: _Problems
    order = {name: i for i, name in enumerate((*NETWORK_REQUIRED, *NETWORK_OPTIONAL))}
    ids, problem = _read_ids(table)
    problems.add("part_id", problem, order["part_id"])
    numbers: dict[str, FloatArray] = {}
    for column in (
        "tolerance",
        "ratio_tolerance",
        "tempco",
        "tracking",
        "power",
        "max_voltage",
        "cost",
    ):
        numbers[column], problem = _read_quantity(table, column, _QUANTITIES[column], None)
        problems.add(column, problem, order[column])
    for column in ("drift", "ratio_drift"):
        numbers[column], problem = _read_quantity(table, column, _QUANTITIES[column], 0.0)
        problems.add(column, problem, order[column])
    stock, problem = _read_stock(table)
    problems.add("stock", problem, order["stock"])
    packages, problem = _read_sizes(table, "package", default="network")
    problems.add("package", problem, order["package"])
    values: list[tuple[float, ...]] = []
    for row, cell in enumerate(table.columns["values"]):
        problem = None
        if not cell:
            problem = _Problem(
                row, "no value: expected a list of 2 or 4 element values such as [1k, 10k, 1k, 10k]"
            )
        elif len(cell) not in (2, 4):
            problem = _Problem(
                row, f"found {len(cell)} element values: expected 2 (a dual) or 4 (a quad)"
            )
        else:
            elements: list[float] = []
            for text, line in cell:
                try:
                    elements.append(parse_resistance("" if text is None else text))
                except UnitError as exc:
                    problem = _Problem(row, str(exc), line)
                    break
            values.append(tuple(elements))
        if problem is not None:
            problems.add("values", problem, order["values"])
            break
    problems.raise_first()
    parts: list[NetworkPart] = []
    for row in range(len(ids)):
        try:
            parts.append(
                NetworkPart(
                    part_id=str(ids[row]),
                    values_ohm=values[row],
                    abs_tolerance=float(numbers["tolerance"][row]),
                    ratio_tolerance=float(numbers["ratio_tolerance"][row]),
                    abs_tempco_per_k=float(numbers["tempco"][row]),
                    tracking_tempco_per_k=float(numbers["tracking"][row]),
                    power_per_element_w=float(numbers["power"][row]),
                    max_voltage_v=float(numbers["max_voltage"][row]),
                    unit_cost=float(numbers["cost"][row]),
                    stock_qty=int(stock[row]),
                    size=str(packages[row]),
                    drift_1000h=float(numbers["drift"][row]),
                    ratio_drift_1000h=float(numbers["ratio_drift"][row]),
                )
            )
        except ModelError as exc:  # pragma: no cover - the column checks mirror the model's
            raise CatalogError(
                f"{exc.field}: {exc.message}", path=table.path, row=int(table.row_lines[row])
            ) from None
    return tuple(parts)


_YAML_SECTIONS: Final = ("discrete", "networks")


def _load_yaml(
    path: str, data: bytes
) -> tuple[pd.DataFrame, IntArray, tuple[NetworkPart, ...], IntArray]:
    from .inputs import MAX_DEPTH, yaml_too_deep

    try:
        text = data.decode("utf-16" if data[:2] in (b"\xff\xfe", b"\xfe\xff") else "utf-8-sig")
    except UnicodeDecodeError as exc:
        raise CatalogError(
            f"cannot read the file as UTF-8 text ({exc.reason} at byte {exc.start})", path=path
        ) from None
    deep = yaml_too_deep(text)
    if deep is not None:
        raise CatalogError(
            f"mappings and lists nest deeper than {MAX_DEPTH} levels; a catalog needs 3",
            path=path,
            row=deep,
        )
    try:
        root = yaml.compose(text, Loader=yaml.SafeLoader)
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        line = mark.line + 1 if mark is not None else None
        raise CatalogError(
            f"not valid YAML: {exc.problem or exc.context}", path=path, row=line
        ) from None
    except yaml.reader.ReaderError as exc:  # a control character (found by tests/test_fuzz.py)
        line = text[: exc.position].count("\n") + 1
        raise CatalogError(
            f"not valid YAML: character #x{exc.character:04x} is not allowed", path=path, row=line
        ) from None
    expected = "a mapping with a discrete: list and/or a networks: list"
    if root is None:
        raise CatalogError(f"the file is empty: expected {expected}", path=path)
    if not isinstance(root, yaml.MappingNode):
        raise CatalogError(f"expected {expected}", path=path, row=root.start_mark.line + 1)
    sections: dict[str, yaml.Node] = {}
    for key_node, value_node in root.value:
        key = str(key_node.value)
        if key not in _YAML_SECTIONS:
            raise CatalogError(
                _did_you_mean(key, _YAML_SECTIONS, "key"),
                path=path,
                row=key_node.start_mark.line + 1,
                column=key,
            )
        if key in sections:
            raise CatalogError(
                "the key appears twice", path=path, row=key_node.start_mark.line + 1, column=key
            )
        sections[key] = value_node
    if not sections:
        raise CatalogError(f"the file is empty: expected {expected}", path=path)
    discrete, discrete_lines = empty_discrete_frame(), np.zeros(0, dtype=np.int64)
    if "discrete" in sections:
        table = _yaml_table(path, sections["discrete"], "discrete", CSV_REQUIRED, CSV_OPTIONAL)
        discrete, discrete_lines = _discrete_from_table(table), table.row_lines
    networks: tuple[NetworkPart, ...] = ()
    network_lines = np.zeros(0, dtype=np.int64)
    if "networks" in sections:
        table = _yaml_table(
            path, sections["networks"], "networks", NETWORK_REQUIRED, NETWORK_OPTIONAL
        )
        networks, network_lines = _networks_from_table(table), table.row_lines
    return discrete, discrete_lines, networks, network_lines


# ---------------------------------------------------------------------------------------------
# Loading and combining
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class _Located:
    """A loaded catalog with the file line of each discrete row and each network."""

    catalog: Catalog
    discrete_lines: IntArray
    network_lines: IntArray

    def ids(self) -> npt.NDArray[np.object_]:
        return np.asarray(self.catalog.all_ids(), dtype=object)

    def lines(self) -> IntArray:
        return np.concatenate([self.discrete_lines, self.network_lines])

    def where(self, part_id: str) -> tuple[str, int | None]:
        ids = self.ids()
        position = int(np.flatnonzero(ids == part_id)[0])
        lines = self.lines()
        source = (
            str(self.catalog.discrete["source"].iloc[position])
            if position < self.catalog.discrete_count
            else self.catalog.network_sources[position - self.catalog.discrete_count]
        )
        return source, (int(lines[position]) if position < len(lines) else None)


def _load_located(path: str) -> _Located:
    import pandas as pd

    from .inputs import CATALOG_MAX_BYTES, read_bounded

    file = Path(path)
    suffix = file.suffix.lower()
    if suffix not in (".csv", *_YAML_SUFFIXES):
        raise CatalogError(
            f"unknown catalog type {suffix or '(no extension)'!r}: expected a .csv, .yaml or "
            ".yml file",
            path=path,
        )
    data = read_bounded(
        path, CATALOG_MAX_BYTES, lambda message: CatalogError(message, path=path), "catalog"
    )
    if suffix == ".csv":
        discrete, lines, notes = _load_csv(path, data)
        catalog = Catalog(discrete, (), (path,), notes=notes)
        return _Located(catalog, lines, np.zeros(0, dtype=np.int64))
    if suffix in _YAML_SUFFIXES:
        discrete, discrete_lines, networks, network_lines = _load_yaml(path, data)
        ids = pd.Series(
            np.concatenate(
                [
                    discrete["part_id"].to_numpy(dtype=object),
                    np.array([n.part_id for n in networks], dtype=object),
                ]
            )
        )
        clash = ids.duplicated().to_numpy()
        if clash.any():  # a network id equal to a discrete id in the same file
            row = int(np.flatnonzero(clash)[0])
            first = int(np.flatnonzero(ids.to_numpy() == ids[row])[0])
            all_lines = np.concatenate([discrete_lines, network_lines])
            raise CatalogError(
                f"duplicate part id {ids[row]!r} (first at line {int(all_lines[first])})",
                path=path,
                row=int(all_lines[row]),
                column="part_id",
            )
        catalog = Catalog(discrete, networks, (path,), (path,) * len(networks))
        return _Located(catalog, discrete_lines, network_lines)
    raise CatalogError(
        f"unknown catalog type {suffix or '(no extension)'!r}: expected a .csv, .yaml or .yml file",
        path=path,
    )


def load_catalog(path: str) -> Catalog:
    """Load one user catalog file (``.csv``, ``.yaml`` or ``.yml``), every row validated."""
    return _load_located(path).catalog


def load_catalogs(
    paths: Sequence[str], include_builtin: bool = True, *, check_builtin: bool = False
) -> Catalog:
    """The built-in catalog (unless ``include_builtin`` is False) and every file of ``paths``,
    combined in order. A part id that appears in two places raises :class:`CatalogError`
    naming both (file and line); ``check_builtin`` compares the ids with the built-in
    catalog's even when it is not included."""
    located: list[_Located] = []
    if include_builtin or check_builtin:
        builtin = builtin_catalog()
        none = np.full(builtin.discrete_count, -1, dtype=np.int64)
        located.append(_Located(builtin, none, np.full(builtin.network_count, -1, dtype=np.int64)))
    for path in paths:
        current = _load_located(str(path))
        new_ids = current.ids()
        for earlier in located:
            first = _first_common(new_ids, earlier.ids())
            if first is None:
                continue
            _, line = current.where(first)
            old_source, old_line = earlier.where(first)
            at = f"{old_source}:{old_line}" if old_line is not None and old_line > 0 else old_source
            raise CatalogError(
                f"duplicate part id {first!r}: already defined in {at}",
                path=str(path),
                row=line,
                column="part_id",
            )
        located.append(current)
    if check_builtin and not include_builtin:
        located = located[1:]
    if not located:
        return Catalog(empty_discrete_frame())
    combined = located[0].catalog
    for item in located[1:]:
        combined = _concat(combined, item.catalog)
    return combined


def _first_common(ids: npt.NDArray[np.object_], others: npt.NDArray[np.object_]) -> str | None:
    """The first id of ``ids`` (in order) that is also in ``others``; None if there is none.
    The hash table is built on the smaller side."""
    import pandas as pd

    if len(ids) == 0 or len(others) == 0:
        return None
    if len(others) <= len(ids):
        found = pd.Index(others).get_indexer(pd.Index(ids)) >= 0
    else:
        found = np.isin(np.arange(len(ids)), pd.Index(ids).get_indexer(pd.Index(others)))
    hits = np.flatnonzero(found)
    return str(ids[hits[0]]) if len(hits) else None


def _concat(first: Catalog, second: Catalog) -> Catalog:
    """Two catalogs already known to share no id."""
    return Catalog(
        discrete=_concat_frames(first.discrete, second.discrete),
        networks=first.networks + second.networks,
        sources=first.sources + tuple(s for s in second.sources if s not in first.sources),
        network_sources=first.network_sources + second.network_sources,
        notes=first.notes + second.notes,
    )


def _concat_frames(first: pd.DataFrame, second: pd.DataFrame) -> pd.DataFrame:
    """Rows of both discrete tables; categorical columns are united without going through
    text, so adding a million-row file to the built-in catalog stays cheap."""
    from pandas.api.types import union_categoricals

    if len(first) == 0:
        return second
    if len(second) == 0:
        return first
    columns: dict[str, Any] = {}
    for name in DISCRETE_COLUMNS:
        if name in _CATEGORY_COLUMNS:
            columns[name] = union_categoricals(
                [_text_categorical(first[name]), _text_categorical(second[name])]
            )
        else:
            columns[name] = np.concatenate(
                [
                    first[name].to_numpy(dtype=object if name == "part_id" else None),
                    second[name].to_numpy(dtype=object if name == "part_id" else None),
                ]
            )
    return _frame(**columns)
