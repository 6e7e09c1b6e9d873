"""Loading catalog files by kind and combining catalogs (duplicate ids refused)."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import numpy.typing as npt

from ..errors import CatalogError
from .builtin import builtin_catalog
from .csvfile import _load_csv
from .series import IntArray
from .table import _YAML_SUFFIXES, Catalog, _concat, _first_common, empty_discrete_frame
from .yamlfile import _load_yaml


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

    from ..inputs import CATALOG_MAX_BYTES, read_bounded

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
