"""Engineering notation of the trade: parse ``4k99``, ``0.1%``, ``25 ppm/°C``; format ``4.99 kΩ``.

Every parser takes a string (or a plain number, already in SI units) and returns a float in SI
units: ohms, volts, hertz, volts per second, V/√Hz, A/√Hz, amperes, watts, seconds, and plain
fractions for tolerances (0.001 = 0.1 %) and tempcos (25e-6 per kelvin = 25 ppm/K).
Temperatures are the one exception: they stay in degrees Celsius, the unit every datasheet and
spec uses, and are converted to kelvin only inside the noise formula.

Every failure raises :class:`~optimizer.errors.UnitError`, quoting the bad token and saying
what was expected.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Final

from .errors import UnitError

__all__ = [
    "NUMBER_REL_TOL",
    "exceeds",
    "format_fraction",
    "format_quantity",
    "format_resistance",
    "format_tempco",
    "format_temperature",
    "parse_current",
    "parse_current_noise",
    "parse_db",
    "parse_duration",
    "parse_fraction",
    "parse_frequency",
    "parse_power",
    "parse_resistance",
    "parse_slew_rate",
    "parse_tempco",
    "parse_temperature",
    "parse_voltage",
    "parse_voltage_noise",
]

#: SI prefixes accepted in front of a unit. ``u`` stands for micro where ``µ`` is awkward.
PREFIXES: Final[Mapping[str, float]] = {
    "f": 1e-15,
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "µ": 1e-6,
    "μ": 1e-6,
    "m": 1e-3,
    "": 1.0,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "G": 1e9,
    "T": 1e12,
}

#: Relative tolerance of the comparisons between user numbers that allow equality (a limit met
#: exactly, two legs that may differ by the whole span): a value passes when it is within
#: 1e-9 of the limit, relative to the numbers compared. Far below any meaningful difference
#: of engineering inputs (nine digits), far above float64 rounding of unit conversions and
#: differences (about 1e-16 relative): ``0.3 - 0.1`` is ``0.19999999999999998``.
NUMBER_REL_TOL: Final = 1e-9


def exceeds(value: float, limit: float, scale: float | None = None) -> bool:
    """True when ``value > limit + NUMBER_REL_TOL·s``: ``value`` is beyond ``limit`` by more than
    rounding. ``s`` is ``scale`` when given (the size of the numbers a computed limit came
    from, e.g. ``max(|low|, |high|)`` for ``limit = high − low``), else ``max(|value|,
    |limit|)``. Use it for every check of user numbers that should allow equality."""
    size = max(abs(value), abs(limit)) if scale is None else abs(scale)
    return value > limit + NUMBER_REL_TOL * size


_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_NUMBER_RE: Final = re.compile(rf"^\s*({_NUMBER})\s*(.*?)\s*$")
# RKM code (IEC 60062): the multiplier letter stands in place of the decimal point: 4k99, 0R1, 2M2.
_RKM_RE: Final = re.compile(r"^\s*(\d+)([RrKkMGm])(\d+)\s*$")
_RKM_SCALE: Final[Mapping[str, float]] = {
    "R": 1.0,
    "r": 1.0,
    "m": 1e-3,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "G": 1e9,
}

_OHM_UNITS: Final[Mapping[str, float]] = {
    "": 1.0,
    "Ω": 1.0,
    "Ω": 1.0,
    "R": 1.0,
    "ohm": 1.0,
    "ohms": 1.0,
    "Ohm": 1.0,
    "Ohms": 1.0,
}
_FRACTION_UNITS: Final[Mapping[str, float]] = {"": 1.0, "%": 1e-2, "ppm": 1e-6, "ppb": 1e-9}
_TEMPCO_UNITS: Final[Mapping[str, float]] = {
    "": 1.0,
    "/K": 1.0,
    "/°C": 1.0,
    "/C": 1.0,
    "ppm": 1e-6,
    "ppm/K": 1e-6,
    "ppm/°C": 1e-6,
    "ppm/degC": 1e-6,
    "ppm/C": 1e-6,
    "%/K": 1e-2,
    "%/°C": 1e-2,
}
_SLEW_UNITS: Final[Mapping[str, float]] = {
    "V/s": 1.0,
    "V/ms": 1e3,
    "V/us": 1e6,
    "V/µs": 1e6,
    "V/μs": 1e6,
    "V/ns": 1e9,
}
_VNOISE_UNITS: Final[Mapping[str, float]] = {
    "V/rtHz": 1.0,
    "V/√Hz": 1.0,
    "V/sqrt(Hz)": 1.0,
    "V/sqrtHz": 1.0,
}
_INOISE_UNITS: Final[Mapping[str, float]] = {
    "A/rtHz": 1.0,
    "A/√Hz": 1.0,
    "A/sqrt(Hz)": 1.0,
    "A/sqrtHz": 1.0,
}
_DURATION_UNITS: Final[Mapping[str, float]] = {
    "s": 1.0,
    "h": 3600.0,
    "hour": 3600.0,
    "hours": 3600.0,
    "d": 86400.0,
    "day": 86400.0,
    "days": 86400.0,
    "y": 365.25 * 86400.0,
    "yr": 365.25 * 86400.0,
    "year": 365.25 * 86400.0,
    "years": 365.25 * 86400.0,
}
_TEMPERATURE_UNITS: Final[Mapping[str, float]] = {
    "": 0.0,
    "°C": 0.0,
    "C": 0.0,
    "degC": 0.0,
    "K": -273.15,
}


def _finite(token: object, value: float, expected: str) -> float:
    if math.isnan(value) or math.isinf(value):
        raise UnitError(token, expected, "not a finite number")
    return value


def _from_number(token: object, expected: str) -> float | None:
    """Accept a plain int/float (already SI); ``None`` when the token is a string."""
    if isinstance(token, bool):
        raise UnitError(token, expected, "a yes/no value is not a number")
    if isinstance(token, (int, float)):
        try:
            value = float(token)
        except OverflowError:  # an int beyond the float range (found by tests/test_fuzz.py);
            # described by its size: Python refuses to print an int of over 4300 digits.
            assert isinstance(token, int)
            digits = int(abs(token).bit_length() * math.log10(2)) + 1
            shown = token if digits < 4000 else f"<an integer of about {digits} digits>"
            raise UnitError(shown, expected, "not a finite number") from None
        return _finite(token, value, expected)
    if not isinstance(token, str):
        raise UnitError(token, expected, f"a {type(token).__name__} is not a number")
    return None


def _apply_scale(number: float, scale: float) -> float:
    """``number * scale``, dividing by the exact integer ``1/scale`` for sub-unit scales so that
    ``25 ppm`` gives exactly ``25e-6`` rather than ``2.4999999999999998e-05``."""
    if 0.0 < scale < 1.0:
        inverse = round(1.0 / scale)
        if abs(inverse * scale - 1.0) < 1e-12:
            return number / inverse
    return number * scale


def _parse(
    token: object,
    units: Mapping[str, float],
    expected: str,
    *,
    prefixed: bool,
) -> float:
    """Read ``<number> [prefix]<unit>`` where ``unit`` is a key of ``units`` (value = scale)."""
    plain = _from_number(token, expected)
    if plain is not None:
        return plain
    assert isinstance(token, str)
    match = _NUMBER_RE.match(token)
    if match is None:
        raise UnitError(token, expected, "no number at the start")
    number, suffix = float(match.group(1)), match.group(2)
    _finite(token, number, expected)
    if suffix in units:
        return _finite(token, _apply_scale(number, units[suffix]), expected)
    if prefixed:
        for unit, scale in sorted(units.items(), key=lambda kv: -len(kv[0])):
            if suffix.endswith(unit):
                prefix = suffix[: len(suffix) - len(unit)].strip()
                if prefix in PREFIXES:
                    return _finite(
                        token, _apply_scale(_apply_scale(number, PREFIXES[prefix]), scale), expected
                    )
    raise UnitError(token, expected, f"unknown suffix {suffix!r}")


def parse_resistance(token: object) -> float:
    """Resistance in ohms from ``10k``, ``4k99``, ``4.99k``, ``2M2``, ``100R``, ``0R1``, ``1e3``,
    ``4.99 kΩ``; plain numbers are ohms. Zero, negative, NaN and infinite values are refused."""
    expected = "a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ"
    if isinstance(token, str):
        rkm = _RKM_RE.match(token)
        if rkm is not None:
            value = _apply_scale(float(f"{rkm.group(1)}.{rkm.group(3)}"), _RKM_SCALE[rkm.group(2)])
            if value <= 0.0:
                raise UnitError(token, expected, "not above zero")
            return value
    value = _parse(token, _OHM_UNITS, expected, prefixed=True)
    if value <= 0.0:
        raise UnitError(token, expected, "not above zero")
    return value


def parse_fraction(token: object) -> float:
    """A tolerance or other fraction from ``0.1%``, ``1000 ppm``, ``0.001``; returns 0.001 for
    0.1 %. Must lie in [0, 1)."""
    expected = "a fraction such as 0.1%, 1000 ppm or 0.001"
    value = _parse(token, _FRACTION_UNITS, expected, prefixed=False)
    if not 0.0 <= value < 1.0:
        raise UnitError(token, expected, "outside 0 % to 100 %")
    return value


def parse_tempco(token: object) -> float:
    """A temperature-coefficient bound per kelvin from ``25ppm/K``, ``25 ppm/°C``, ``25e-6``.

    A plain number above 0.01 per kelvin (10,000 ppm/K) is refused: it is almost always ppm/K
    written without its unit."""
    expected = "a tempco such as 25 ppm/K, 25ppm/°C or 25e-6"
    value = _parse(token, _TEMPCO_UNITS, expected, prefixed=False)
    if value < 0.0:
        raise UnitError(token, expected, "a tempco bound is a magnitude, not below zero")
    if value > 0.01:
        raise UnitError(token, expected, "larger than 10,000 ppm/K; did you mean ppm/K?")
    return value


def parse_temperature(token: object) -> float:
    """A temperature in degrees Celsius from ``-40 °C``, ``-40C``, ``125``, ``233.15 K``.

    Plain numbers are degrees Celsius (the unit every spec uses). Below absolute zero is refused."""
    expected = "a temperature such as -40 °C, 125C or 233.15 K"
    value = _from_number(token, expected)
    if value is None:
        assert isinstance(token, str)
        match = _NUMBER_RE.match(token)
        if match is None:
            raise UnitError(token, expected, "no number at the start")
        suffix = match.group(2)
        if suffix not in _TEMPERATURE_UNITS:
            raise UnitError(token, expected, f"unknown suffix {suffix!r}")
        value = _finite(token, float(match.group(1)), expected) + _TEMPERATURE_UNITS[suffix]
    if value < -273.15:
        raise UnitError(token, expected, "below absolute zero")
    return value


def _positive(token: object, value: float, expected: str, *, allow_zero: bool) -> float:
    if value < 0.0 or (value == 0.0 and not allow_zero):
        raise UnitError(token, expected, "zero is not allowed" if value == 0.0 else "below zero")
    return value


def parse_voltage(token: object) -> float:
    """A voltage in volts from ``2.5 V``, ``-12V``, ``500mV``, ``3.3``; may be negative."""
    return _parse(
        token, {"V": 1.0, "": 1.0}, "a voltage such as 2.5 V, -12V or 500 mV", prefixed=True
    )


def parse_frequency(token: object) -> float:
    """A frequency in hertz from ``1 MHz``, ``10kHz``, ``50``; must be above zero."""
    expected = "a frequency above zero such as 1 MHz or 10 kHz"
    value = _parse(token, {"Hz": 1.0, "": 1.0}, expected, prefixed=True)
    return _positive(token, value, expected, allow_zero=False)


def parse_slew_rate(token: object) -> float:
    """A slew rate in volts per second from ``0.5 V/us``, ``2V/µs``, ``5e5``; above zero."""
    expected = "a slew rate above zero such as 0.5 V/us"
    value = _parse(token, {**_SLEW_UNITS, "": 1.0}, expected, prefixed=True)
    return _positive(token, value, expected, allow_zero=False)


def parse_voltage_noise(token: object) -> float:
    """A voltage noise density in V/√Hz from ``28 nV/rtHz``, ``28nV/√Hz``, ``28e-9``; not below
    0."""
    expected = "a voltage noise density such as 28 nV/rtHz"
    value = _parse(token, {**_VNOISE_UNITS, "": 1.0}, expected, prefixed=True)
    return _positive(token, value, expected, allow_zero=True)


def parse_current_noise(token: object) -> float:
    """A current noise density in A/√Hz from ``0.5 pA/rtHz``, ``1fA/√Hz``; not below 0."""
    expected = "a current noise density such as 0.5 pA/rtHz"
    value = _parse(token, {**_INOISE_UNITS, "": 1.0}, expected, prefixed=True)
    return _positive(token, value, expected, allow_zero=True)


def parse_current(token: object) -> float:
    """A current in amperes from ``10 nA``, ``2pA``, ``1e-9``; may be negative (bias currents)."""
    return _parse(token, {"A": 1.0, "": 1.0}, "a current such as 10 nA", prefixed=True)


def parse_power(token: object) -> float:
    """A power in watts from ``0.1 W``, ``63mW``, ``0.25``; above zero."""
    expected = "a power above zero such as 0.1 W or 63 mW"
    value = _parse(token, {"W": 1.0, "": 1.0}, expected, prefixed=True)
    return _positive(token, value, expected, allow_zero=False)


def parse_duration(token: object) -> float:
    """A duration in seconds from ``10 years``, ``1000 h``, ``30 days``, ``3600``; not below 0."""
    expected = "a duration such as 10 years, 1000 h or 30 days"
    value = _parse(token, {**_DURATION_UNITS, "": 1.0}, expected, prefixed=False)
    return _positive(token, value, expected, allow_zero=True)


def parse_db(token: object) -> float:
    """A level in decibels from ``80 dB``, ``80dB``, ``80``; returned as dB (not a ratio)."""
    return _parse(token, {"dB": 1.0, "": 1.0}, "a level in decibels such as 80 dB", prefixed=False)


# --------------------------------------------------------------------------------------------
# Formatting
# --------------------------------------------------------------------------------------------

_FORMAT_PREFIXES: Final = (
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
)


def _mantissa(value: float, digits: int) -> str:
    text = f"{value:.{digits}g}"
    if "e" in text:  # never leave scientific notation inside an engineering string
        text = f"{value:.{digits}f}".rstrip("0").rstrip(".")
    return text


def format_quantity(value: float, unit: str, digits: int = 12) -> str:
    """Engineering form ``<mantissa> <prefix><unit>`` with the mantissa in [1, 1000):
    ``format_quantity(4990, "Ω") == "4.99 kΩ"``. ``digits`` significant digits at most;
    trailing zeros are dropped, so E-series values print as engineers write them."""
    if math.isnan(value) or math.isinf(value):
        return f"{value} {unit}".strip()
    if value == 0.0:
        return f"0 {unit}".strip()
    magnitude = abs(value)
    for scale, prefix in _FORMAT_PREFIXES:  # noqa: B007 (both are used after the loop)
        if magnitude >= scale * (1 - 1e-12):
            break
    mantissa = _mantissa(value / scale, digits)
    if abs(float(mantissa)) >= 1000.0 and scale < 1e12:  # rounding carried into the next prefix
        return _carry(value, unit, digits, scale)
    return f"{mantissa} {prefix}{unit}"


def _carry(value: float, unit: str, digits: int, scale: float) -> str:
    index = [s for s, _ in _FORMAT_PREFIXES].index(scale)
    bigger, prefix = _FORMAT_PREFIXES[index - 1]
    return f"{_mantissa(value / bigger, digits)} {prefix}{unit}"


def format_resistance(ohms: float, digits: int = 12) -> str:
    """``4990 -> "4.99 kΩ"``, ``0.1 -> "100 mΩ"``, ``2.2e6 -> "2.2 MΩ"``."""
    return format_quantity(ohms, "Ω", digits)


def format_fraction(fraction: float, digits: int = 12) -> str:
    """A tolerance in percent: ``0.001 -> "0.1 %"``; below 0.01 % in ppm: ``5e-6 -> "5 ppm"``."""
    if fraction != 0.0 and abs(fraction) < 1e-4:
        return f"{_mantissa(fraction * 1e6, digits)} ppm"
    return f"{_mantissa(fraction * 100.0, digits)} %"


def format_tempco(per_kelvin: float, digits: int = 12) -> str:
    """``25e-6 -> "25 ppm/K"``."""
    return f"{_mantissa(per_kelvin * 1e6, digits)} ppm/K"


def format_temperature(celsius: float, digits: int = 12) -> str:
    """``-40.0 -> "-40 °C"``."""
    return f"{_mantissa(celsius, digits)} °C"
