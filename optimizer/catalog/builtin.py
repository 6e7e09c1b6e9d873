"""The built-in generic catalog: its discrete parts expanded from their recipe (grades, series,
sizes, technologies), its networks from theirs (``catalog.networkrecipe``), the data folder
found in an install or a source tree."""

from __future__ import annotations

import functools
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import TYPE_CHECKING, Any, Final

import numpy as np
import yaml

from ..errors import CatalogError, ModelError, UnitError
from ..eseries import ESeries, series_for_name, values_in_range
from ..parts import Technology
from ..units import (
    parse_fraction,
    parse_power,
    parse_tempco,
    parse_voltage,
)
from .networkrecipe import generate_networks
from .recipe import RecipeReader
from .series import FloatArray, _from_codes, rkm_code
from .table import (
    BUILTIN_DISCRETE_SOURCE,
    BUILTIN_NETWORK_SOURCE,
    Catalog,
    _frame,
    empty_discrete_frame,
)

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import sys

    import pandas as pd

    if sys.version_info >= (3, 11):
        from importlib.resources.abc import Traversable
    else:
        from importlib.abc import Traversable


def _discrete_cost(grade_cost: float, size_factor: float, tempco_premium: float) -> float:
    """Relative unit cost of a generated discrete part, an ILLUSTRATIVE model of our own (not
    market data; relative units, not money)::

        unit_cost = grade_cost * size_factor + tempco_premium

    rounded to 4 decimals."""
    return round(grade_cost * size_factor + tempco_premium, 4)


@dataclass(frozen=True)
class _Grade:
    """One grade of a discrete recipe, read and checked: its tolerance, technology (name,
    id code and drift), grade cost, tempco classes, value range and sizes."""

    key: str
    tolerance: float
    technology: str
    tech_code: str
    drift: float
    cost: float
    tempcos: tuple[float, ...]
    value_range: tuple[float, float]
    sizes: tuple[str, ...]
    series: ESeries


@dataclass(frozen=True)
class _DiscreteRecipe:
    """A discrete recipe read and checked (every problem raised, located by key), before any
    part is made: sizes as (power, max voltage, cost factor), tempco premiums, grades."""

    sizes: Mapping[str, tuple[float, float, float]]
    premium: Mapping[float, float]
    grades: tuple[_Grade, ...]


def _series_rules(r: RecipeReader) -> list[tuple[float, ESeries]]:
    """``series_by_tolerance``: (lowest tolerance, series) in the recipe's order."""
    rules: list[tuple[float, ESeries]] = []
    for i, rule in enumerate(
        r.items(r.get(r.data, "series_by_tolerance", ""), "series_by_tolerance")
    ):
        key = f"series_by_tolerance[{i}]"
        rule = r.mapping(rule, key)
        start = r.parse(parse_fraction, r.get(rule, "from", key), f"{key}.from")
        try:
            rule_series = series_for_name(str(r.get(rule, "series", key)))
        except UnitError as exc:
            raise r.fail(f"{key}.series", str(exc)) from None
        rules.append((start, rule_series))
    return rules


def _sizes(r: RecipeReader) -> dict[str, tuple[float, float, float]]:
    """``sizes``: size code → (power at 70 °C in W, limiting voltage in V, cost factor)."""
    sizes: dict[str, tuple[float, float, float]] = {}
    for name, spec in r.mapping(r.get(r.data, "sizes", ""), "sizes").items():
        key = f"sizes.{name}"
        if not isinstance(name, str):
            raise r.fail(key, f'expected a size code as text (quote it: "{name}")')
        spec = r.mapping(spec, key)
        sizes[name] = (
            r.parse(parse_power, r.get(spec, "power", key), f"{key}.power"),
            r.parse(parse_voltage, r.get(spec, "max_voltage", key), f"{key}.max_voltage"),
            r.number(r.get(spec, "cost_factor", key), f"{key}.cost_factor", positive=True),
        )
    return sizes


def _technologies(r: RecipeReader) -> dict[str, tuple[str, float]]:
    """``technologies``: technology name → (id code, drift over 1000 h as a fraction)."""
    technologies: dict[str, tuple[str, float]] = {}
    for name, spec in r.mapping(r.get(r.data, "technologies", ""), "technologies").items():
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
    return technologies


def _premiums(r: RecipeReader) -> dict[float, float]:
    """``tempco_premium``: tempco bound (per K) → the cost added for it."""
    premium: dict[float, float] = {}
    for name, cost in r.mapping(r.get(r.data, "tempco_premium", ""), "tempco_premium").items():
        key = f"tempco_premium.{name}"
        premium[r.parse(parse_tempco, name, key)] = r.number(cost, key)
    return premium


def _grade(
    r: RecipeReader,
    index: int,
    raw: object,
    known: tuple[Mapping[str, tuple[str, float]], Mapping[float, float], Sequence[str]],
    rules: Sequence[tuple[float, ESeries]],
    full_range: tuple[float, float],
) -> _Grade:
    """Grade ``index`` of the recipe, checked against the known technologies, tempco
    premiums and sizes; its series is the first ``series_by_tolerance`` rule it meets."""
    technologies, premium, size_codes = known
    key = f"grades[{index}]"
    grade = r.mapping(raw, key)
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
    low, high = full_range
    g_low, g_high = (
        r.value_range(grade["range"], f"{key}.range") if "range" in grade else (low, high)
    )
    size_names = [str(s) for s in r.items(grade.get("sizes", list(size_codes)), f"{key}.sizes")]
    for j, size in enumerate(size_names):
        if size not in size_codes:
            raise r.fail(
                f"{key}.sizes[{j}]",
                f"expected one of the sizes {', '.join(size_codes)}, got {size!r}",
            )
    series = next((s for start, s in rules if tolerance >= start - 1e-12), None)
    if series is None:
        raise r.fail(f"{key}.tolerance", "no series_by_tolerance rule covers this tolerance")
    return _Grade(
        key,
        tolerance,
        tech_name,
        tech_code,
        drift,
        cost,
        tuple(tempcos),
        (max(low, g_low), min(high, g_high)),
        tuple(size_names),
        series,
    )


def _read_discrete_recipe(r: RecipeReader) -> _DiscreteRecipe:
    """Read and check every section of a discrete recipe (the first problem raises)."""
    full_range = r.value_range(r.get(r.data, "range", "range"), "range")
    rules = _series_rules(r)
    sizes = _sizes(r)
    technologies = _technologies(r)
    premium = _premiums(r)
    known = (technologies, premium, tuple(sizes))
    grades = tuple(
        _grade(r, i, raw, known, rules, full_range)
        for i, raw in enumerate(r.items(r.get(r.data, "grades", ""), "grades"))
    )
    return _DiscreteRecipe(sizes, premium, grades)


def _expand(r: RecipeReader, recipe: _DiscreteRecipe) -> list[_Block]:
    """One block of parts per grade, size and tempco class: every IEC 60063 value of the
    grade's series in its range, with the recipe's illustrative cost. Two grades that would
    make the same ids are refused."""
    blocks: list[_Block] = []
    seen: dict[str, str] = {}
    ladders: dict[tuple[ESeries, float, float], tuple[FloatArray, list[str]]] = {}
    code_of: dict[tuple[float, int], str] = {}  # ladders overlap: each code is worked out once
    for grade in recipe.grades:
        ladder = (grade.series, *grade.value_range)
        if ladder not in ladders:  # grades of one series and range share values and codes
            values = np.array(list(values_in_range(*ladder)), dtype=float)
            figures = 2 if grade.series <= ESeries.E24 else 3
            for v in values:
                if (v, figures) not in code_of:
                    code_of[v, figures] = rkm_code(v, figures)
            ladders[ladder] = values, [code_of[v, figures] for v in values]
        values, codes = ladders[ladder]
        grade_code = f"{grade.tech_code}{round(grade.tolerance * 1e4):d}"
        for size in grade.sizes:
            power, voltage, factor = recipe.sizes[size]
            for tempco in grade.tempcos:
                prefix = f"Q-{size}-{grade_code}-{round(tempco * 1e6):d}-"
                if prefix in seen:
                    raise r.fail(
                        grade.key,
                        f"grade repeats the ids of {seen[prefix]} "
                        "(same technology, tolerance, tempco and size)",
                    )
                seen[prefix] = grade.key
                blocks.append(
                    _Block(
                        prefix=prefix,
                        values=values,
                        codes=codes,
                        tolerance=grade.tolerance,
                        tempco_per_k=tempco,
                        size=size,
                        power_w=power,
                        max_voltage_v=voltage,
                        unit_cost=_discrete_cost(grade.cost, factor, recipe.premium[tempco]),
                        technology=grade.technology,
                        drift_1000h=grade.drift,
                        series=grade.series.name,
                    )
                )
    return blocks


def generate_discrete(
    recipe: Mapping[str, Any], source: str = BUILTIN_DISCRETE_SOURCE
) -> pd.DataFrame:
    """Expand a discrete recipe (the mapping of ``catalogs/discrete_recipe.yaml``) into the
    discrete table: for each grade, every IEC 60063 value of its series in its range * every
    tempco class * every size. Costs follow the recipe's illustrative model::

        unit_cost = grade cost * size cost factor + tempco premium

    The recipe is read and checked first (:func:`_read_discrete_recipe`), then expanded
    (:func:`_expand`)."""
    r = RecipeReader(recipe, source)
    blocks = _expand(r, _read_discrete_recipe(r))
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
    folder = Path(__file__).resolve().parents[2] / _SOURCE_TREE_FOLDER
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
