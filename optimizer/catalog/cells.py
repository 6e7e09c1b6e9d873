"""User catalogs: a raw table of cells, validated column by column (every problem collected)."""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Final

import numpy as np
import numpy.typing as npt

from ..bounds import PART_FIELDS
from ..errors import CatalogError, ModelError, UnitError
from ..parts import Technology
from ..units import (
    parse_fraction,
    parse_power,
    parse_resistance,
    parse_tempco,
    parse_voltage,
)
from .series import BoolArray, FloatArray, IntArray, _from_codes, _series_categorical
from .table import _STOCK_NO, _STOCK_YES, CSV_OPTIONAL, CSV_REQUIRED, STOCK_UNCOUNTED, _frame

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import pandas as pd


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


_QUANTITIES: Final[Mapping[str, _Quantity]] = {
    "resistance": _Quantity(
        parse_resistance,
        "a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        PART_FIELDS["resistance"].holds_all,
        "a resistance above zero",
    ),
    "tolerance": _Quantity(
        parse_fraction,
        "a tolerance such as 1%, 0.1% or 0.001",
        PART_FIELDS["tolerance"].holds_all,
        "a tolerance below 50 %",
    ),
    "ratio_tolerance": _Quantity(
        parse_fraction,
        "a ratio tolerance such as 0.05% or 0.0005",
        PART_FIELDS["ratio_tolerance"].holds_all,
        "a ratio tolerance below 50 %",
    ),
    "tempco": _Quantity(
        parse_tempco,
        "a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        PART_FIELDS["tempco"].holds_all,
        "a tempco of 0 to 10,000 ppm/K",
    ),
    "tracking": _Quantity(
        parse_tempco,
        "a tracking tempco such as 2 ppm/K or 2e-6",
        PART_FIELDS["tracking"].holds_all,
        "a tracking tempco of 0 to 10,000 ppm/K",
    ),
    "power": _Quantity(
        parse_power,
        "a power above zero such as 0.1 W or 63 mW",
        PART_FIELDS["power"].holds_all,
        "a power above zero",
    ),
    "max_voltage": _Quantity(
        parse_voltage,
        "a limiting voltage above zero such as 75 V",
        PART_FIELDS["max_voltage"].holds_all,
        "a limiting voltage above zero such as 75 V",
    ),
    "cost": _Quantity(
        _parse_cost,
        "a relative cost of zero or more such as 1.5",
        PART_FIELDS["cost"].holds_all,
        "a relative cost of zero or more",
    ),
    "drift": _Quantity(
        parse_fraction,
        "a drift bound over 1000 h such as 0.1% or 0.001",
        PART_FIELDS["drift"].holds_all,
        "a drift bound below 50 %",
    ),
    "ratio_drift": _Quantity(
        parse_fraction,
        "a ratio drift bound over 1000 h such as 0.02% or 0.0002",
        PART_FIELDS["ratio_drift"].holds_all,
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


#: Most problems listed for one catalog file (the count of the rest follows).
MAX_PROBLEMS: Final = 50
