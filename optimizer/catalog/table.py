"""The catalog table: discrete parts as one columnar pandas frame, networks as parts; the
columns, units and constants every catalog module shares."""

from __future__ import annotations

import difflib
import functools
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Final

import numpy as np
import numpy.typing as npt

from ..errors import CatalogError, DesignError, ModelError
from ..parts import DiscretePart, NetworkPart, Technology
from .series import _text_categorical, series_of_values

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import pandas as pd


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


def _concat(first: Catalog, second: Catalog) -> Catalog:
    """Two catalogs already known to share no id."""
    return Catalog(
        discrete=_concat_frames(first.discrete, second.discrete),
        networks=first.networks + second.networks,
        sources=first.sources + tuple(s for s in second.sources if s not in first.sources),
        network_sources=first.network_sources + second.network_sources,
        notes=first.notes + second.notes,
    )


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
