"""E-series membership of catalog values (IEC 60063) and RKM value codes (IEC 60062)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any, Final

import numpy as np
import numpy.typing as npt

from ..errors import ModelError
from ..eseries import ESeries, decade_values

if TYPE_CHECKING:  # pandas is imported where a table is built (it takes a third of a second)
    import pandas as pd


BoolArray = npt.NDArray[np.bool_]
IntArray = npt.NDArray[np.int64]
FloatArray = npt.NDArray[np.float64]
#: Series a user part's value is tested against, in order (common practice: the grade's own
#: series first, see :func:`_grade_series_code`).
_CATALOG_SERIES: Final = (ESeries.E24, ESeries.E96, ESeries.E192)


def _decade_mantissa(values: FloatArray) -> tuple[FloatArray, BoolArray]:
    """``values / 10^floor(log10(values))`` in [1, 10), and the mask of values that have one
    (finite and above zero)."""
    valid = np.isfinite(values) & (values > 0.0)
    safe = np.where(valid, values, 1.0)
    scale = 10.0 ** np.floor(np.log10(safe))
    # a subnormal value (below about 1e-308) has a decade that underflows to zero: it is
    # above zero, so a valid resistance, but no E-series value
    valid &= scale > 0.0
    return safe / np.where(scale > 0.0, scale, 1.0), valid


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
