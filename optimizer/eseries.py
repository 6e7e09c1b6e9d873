"""Preferred-number series E3 … E192 of IEC 60063 (resistor and capacitor values).

Values per decade follow 10^(i/N), rounded to two significant figures for E3–E24 and to three
for E48–E192, with the exceptions the standard fixes for historical reasons: in E24 (and so in
E12, E6, E3, which take every 2nd, 4th and 8th E24 value) 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7
and 8.2 replace the rounded 2.6, 2.9, 3.2, 3.5, 3.8, 4.2, 4.6 and 8.3; in E192, 9.20 replaces
the rounded 9.19. E48 and E96 take every 4th and 2nd E192 value (source: IEC 60063:2015,
clauses 4 and 5, and its tables).

Values are handled as integers of significant figures (``499`` for 4.99) so that series
membership and decade iteration are exact; floats appear only at the edge.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Iterator
from enum import IntEnum
from functools import cache

from .errors import UnitError

__all__ = [
    "ESeries",
    "decade_values",
    "is_member",
    "nearest",
    "next_above",
    "next_below",
    "series_for_name",
    "values_in_range",
]


class ESeries(IntEnum):
    """An E-series; the value is the number of values per decade."""

    E3 = 3
    E6 = 6
    E12 = 12
    E24 = 24
    E48 = 48
    E96 = 96
    E192 = 192


#: IEC 60063 values of E24 that differ from the rounded formula (index -> value in 1/10 units).
_E24_EXCEPTIONS = {10: 27, 11: 30, 12: 33, 13: 36, 14: 39, 15: 43, 16: 47, 22: 82}
#: IEC 60063 value of E192 that differs from the rounded formula (index -> value in 1/100 units).
_E192_EXCEPTIONS = {185: 920}


def series_for_name(name: str) -> ESeries:
    """``"E96"`` (any case) to :class:`ESeries`; an unknown name lists the valid ones."""
    try:
        return ESeries[name.strip().upper()]
    except KeyError:
        valid = ", ".join(s.name for s in ESeries)
        raise UnitError(name, f"one of {valid}", "unknown E-series") from None


def _formula(index: int, count: int, figures: int) -> int:
    """Rounded formula value 10^(index/count) as an integer of ``figures`` significant digits."""
    scaled: float = 10.0 ** (index / count) * 10.0 ** (figures - 1)
    return round(scaled)


@cache
def _significands(series: ESeries) -> tuple[int, ...]:
    """The significand integers of one decade: E24 gives (10, 11, …, 91), E96 (100, …, 976)."""
    if series <= ESeries.E24:
        e24 = tuple(_E24_EXCEPTIONS.get(i, _formula(i, 24, 2)) for i in range(24))
        return e24[:: 24 // series]
    e192 = tuple(_E192_EXCEPTIONS.get(i, _formula(i, 192, 3)) for i in range(192))
    return e192[:: 192 // series]


def _figures(series: ESeries) -> int:
    return 2 if series <= ESeries.E24 else 3


def decade_values(series: ESeries) -> tuple[float, ...]:
    """The values of one decade in [1, 10): E12 gives (1.0, 1.2, 1.5, …, 8.2)."""
    scale = 10 ** (_figures(series) - 1)
    return tuple(v / scale for v in _significands(series))


def _value(significand: int, exponent: int, series: ESeries) -> float:
    """significand × 10^(exponent − figures + 1), computed to the nearest float."""
    power = exponent - _figures(series) + 1
    return significand * 10.0**power if power >= 0 else significand / 10.0 ** (-power)


def _decade_of(value: float) -> int:
    return math.floor(math.log10(value))


def values_in_range(series: ESeries, low: float, high: float) -> Iterator[float]:
    """Every series value v with ``low <= v <= high`` (ohms, or any unit), ascending.

    Comparison uses a relative slack of 1e-9 so that 10 MΩ given as ``1e7`` is included."""
    if not (low > 0.0 and high >= low and math.isfinite(high)):
        raise UnitError((low, high), "a range 0 < low <= high < inf", "bad range")
    slack = 1e-9
    for exponent in range(_decade_of(low) - 1, _decade_of(high) + 1):
        for significand in _significands(series):
            value = _value(significand, exponent, series)
            if low * (1 - slack) <= value <= high * (1 + slack):
                yield value


def _neighbourhood(series: ESeries, value: float) -> tuple[float, ...]:
    if not (value > 0.0 and math.isfinite(value)):
        raise UnitError(value, "a finite value above zero", "cannot look up an E-series value")
    return _three_decades(series, _decade_of(value))


@cache
def _three_decades(series: ESeries, exponent: int) -> tuple[float, ...]:
    """The series values of decades ``exponent`` − 1 to + 1, ascending (cached: the ranking
    asks for the same decades many times)."""
    out: list[float] = []
    for e in (exponent - 1, exponent, exponent + 1):
        out.extend(_value(s, e, series) for s in _significands(series))
    return tuple(out)


def nearest(series: ESeries, value: float) -> float:
    """The series value nearest to ``value`` on a logarithmic scale (ratio distance; a tie goes
    to the smaller value). The values are ascending, so the nearest is one of the two around
    ``value``."""
    candidates = _neighbourhood(series, value)
    index = bisect.bisect_left(candidates, value)
    around = candidates[max(index - 1, 0) : index + 1]
    return min(around, key=lambda v: (abs(math.log(v / value)), v))


def next_above(series: ESeries, value: float) -> float:
    """The smallest series value strictly above ``value``."""
    candidates = _neighbourhood(series, value)
    index = bisect.bisect_right(candidates, value * (1 + 1e-12))
    return candidates[index]


def next_below(series: ESeries, value: float) -> float:
    """The largest series value strictly below ``value``."""
    candidates = _neighbourhood(series, value)
    index = bisect.bisect_left(candidates, value * (1 - 1e-12))
    return candidates[index - 1]


def is_member(series: ESeries, value: float, rel: float = 1e-9) -> bool:
    """True when ``value`` equals a value of the series within relative ``rel``."""
    return abs(nearest(series, value) / value - 1.0) <= rel
