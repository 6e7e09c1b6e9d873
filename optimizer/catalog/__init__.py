"""Parts catalogs: the built-in generic catalog, user catalogs (CSV and YAML) and their union.

A :class:`Catalog` holds discrete resistors as one columnar :class:`pandas.DataFrame` (one row
per orderable part, SI units, see :data:`DISCRETE_COLUMNS`) and matched networks as a tuple of
:class:`~optimizer.parts.NetworkPart`. Discrete rows are validated column by column with
vectorised numpy/pandas operations and turned into :class:`~optimizer.parts.DiscretePart`
objects only on demand, so a catalog of a million rows loads in seconds.

File formats (names of our own; see docs/reference.md, "Parts catalogs"):

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

from .builtin import builtin_catalog, builtin_data_folder, generate_discrete
from .load import load_catalog, load_catalogs
from .networkrecipe import generate_networks
from .series import rkm_code, series_of_values
from .table import (
    BUILTIN_DISCRETE_SOURCE,
    BUILTIN_NETWORK_SOURCE,
    CSV_OPTIONAL,
    CSV_REQUIRED,
    DISCRETE_COLUMNS,
    NETWORK_OPTIONAL,
    NETWORK_REQUIRED,
    STOCK_UNCOUNTED,
    Catalog,
    catalog_from_parts,
    empty_discrete_frame,
)

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
