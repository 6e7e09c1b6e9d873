"""Engineering notation: parsing, formatting and the round trip.

Sources: the RKM code (letter as decimal point: 4k99, 0R1, 2M2) is IEC 60062:2016 clause 4;
SI prefixes are the BIPM SI Brochure (9th edition, 2019), table 7; everything else is common
practice of datasheets and schematics.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st

from optimizer.errors import UnitError
from optimizer.units import (
    format_fraction,
    format_resistance,
    format_tempco,
    format_temperature,
    parse_current,
    parse_current_noise,
    parse_db,
    parse_duration,
    parse_fraction,
    parse_frequency,
    parse_power,
    parse_resistance,
    parse_slew_rate,
    parse_tempco,
    parse_temperature,
    parse_voltage,
    parse_voltage_noise,
)

RESISTANCES = [  # (text, ohms) — IEC 60062 RKM code and SI-prefixed forms
    ("10k", 10e3),
    ("4k99", 4990.0),
    ("4.99k", 4990.0),
    ("2M2", 2.2e6),
    ("100R", 100.0),
    ("0R1", 0.1),
    ("1e3", 1000.0),
    ("4.99 kΩ", 4990.0),
    ("4.99 k\u2126", 4990.0),
    ("10 kohm", 10e3),
    ("470", 470.0),
    ("1M", 1e6),
    ("2.2 MΩ", 2.2e6),
    ("100 mΩ", 0.1),
    (1000, 1000.0),
    (49.9, 49.9),
]


@pytest.mark.parametrize(("text", "ohms"), RESISTANCES)
def test_parse_resistance(text: object, ohms: float) -> None:
    assert parse_resistance(text) == pytest.approx(ohms, rel=1e-15)


@pytest.mark.parametrize(
    ("parser", "text", "value"),
    [
        (parse_fraction, "0.1%", 0.001),
        (parse_fraction, "0.1 %", 0.001),
        (parse_fraction, "1000 ppm", 0.001),
        (parse_fraction, "0.001", 0.001),
        (parse_tempco, "25ppm/K", 25e-6),
        (parse_tempco, "25 ppm/°C", 25e-6),
        (parse_tempco, "25e-6", 25e-6),
        (parse_temperature, "-40 °C", -40.0),
        (parse_temperature, "125C", 125.0),
        (parse_temperature, "233.15 K", -40.0),
        (parse_temperature, -40, -40.0),
        (parse_voltage, "2.5 V", 2.5),
        (parse_voltage, "-12V", -12.0),
        (parse_voltage, "500 mV", 0.5),
        (parse_frequency, "1 MHz", 1e6),
        (parse_frequency, "10kHz", 1e4),
        (parse_slew_rate, "0.5 V/us", 5e5),
        (parse_slew_rate, "2 V/µs", 2e6),
        (parse_voltage_noise, "28 nV/rtHz", 28e-9),
        (parse_voltage_noise, "28 nV/√Hz", 28e-9),
        (parse_current_noise, "0.5 pA/rtHz", 0.5e-12),
        (parse_current, "10 nA", 10e-9),
        (parse_power, "63 mW", 0.063),
        (parse_duration, "1000 h", 3.6e6),
        (parse_duration, "10 years", 10 * 365.25 * 86400),
        (parse_db, "80 dB", 80.0),
    ],
)
def test_parse_quantities(parser: object, text: str, value: float) -> None:
    assert callable(parser)
    assert parser(text) == pytest.approx(value, rel=1e-12)


@pytest.mark.parametrize(
    ("ohms", "text"),
    [
        (4990.0, "4.99 kΩ"),
        (0.1, "100 mΩ"),
        (2.2e6, "2.2 MΩ"),
        (100.0, "100 Ω"),
        (1e7, "10 MΩ"),
        (999.9999999999999, "1 kΩ"),
    ],
)
def test_format_resistance(ohms: float, text: str) -> None:
    assert format_resistance(ohms) == text


def test_format_other() -> None:
    assert format_fraction(0.001) == "0.1 %"
    assert format_fraction(5e-6) == "5 ppm"
    assert format_tempco(25e-6) == "25 ppm/K"
    assert format_temperature(-40.0) == "-40 °C"


@pytest.mark.parametrize(
    ("token", "message"),
    [
        (
            "0",
            "cannot read '0' (not above zero): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            "-1k",
            "cannot read '-1k' (not above zero): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            "nan",
            "cannot read 'nan' (no number at the start): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            "inf",
            "cannot read 'inf' (no number at the start): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            math.nan,
            "cannot read nan (not a finite number): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            math.inf,
            "cannot read inf (not a finite number): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            "10x",
            "cannot read '10x' (unknown suffix 'x'): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            "1e999",
            "cannot read '1e999' (not a finite number): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
        (
            True,
            "cannot read True (a yes/no value is not a number): expected a resistance above zero such as 4.99k, 4k99, 100R, 0R1 or 2.2 MΩ",
        ),
    ],
)
def test_resistance_refusals(token: object, message: str) -> None:
    with pytest.raises(UnitError) as info:
        parse_resistance(token)
    assert str(info.value) == message


@pytest.mark.parametrize(
    ("parser", "token", "message"),
    [
        (
            parse_fraction,
            "150%",
            "cannot read '150%' (outside 0 % to 100 %): expected a fraction such as 0.1%, 1000 ppm or 0.001",
        ),
        (
            parse_fraction,
            "0.1 pct",
            "cannot read '0.1 pct' (unknown suffix 'pct'): expected a fraction such as 0.1%, 1000 ppm or 0.001",
        ),
        (
            parse_tempco,
            25,
            "cannot read 25 (larger than 10,000 ppm/K; did you mean ppm/K?): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        ),
        (
            parse_tempco,
            "-5ppm/K",
            "cannot read '-5ppm/K' (a tempco bound is a magnitude, not below zero): expected a tempco such as 25 ppm/K, 25ppm/°C or 25e-6",
        ),
        (
            parse_temperature,
            "-300 °C",
            "cannot read '-300 °C' (below absolute zero): expected a temperature such as -40 °C, 125C or 233.15 K",
        ),
        (
            parse_temperature,
            "20 F",
            "cannot read '20 F' (unknown suffix 'F'): expected a temperature such as -40 °C, 125C or 233.15 K",
        ),
        (
            parse_frequency,
            "0 Hz",
            "cannot read '0 Hz' (zero is not allowed): expected a frequency above zero such as 1 MHz or 10 kHz",
        ),
        (
            parse_voltage,
            "5 A",
            "cannot read '5 A' (unknown suffix 'A'): expected a voltage such as 2.5 V, -12V or 500 mV",
        ),
    ],
)
def test_other_refusals(parser: object, token: object, message: str) -> None:
    assert callable(parser)
    with pytest.raises(UnitError) as info:
        parser(token)
    assert str(info.value) == message


_positive = st.floats(min_value=1e-3, max_value=1e12, allow_nan=False, allow_infinity=False)


@given(_positive)
def test_resistance_round_trip(ohms: float) -> None:
    """Property: format then parse returns the value (12 significant digits kept)."""
    assert parse_resistance(format_resistance(ohms)) == pytest.approx(ohms, rel=1e-11)


@given(st.floats(min_value=0.0, max_value=0.99, allow_nan=False))
def test_fraction_round_trip(fraction: float) -> None:
    assert parse_fraction(format_fraction(fraction)) == pytest.approx(
        fraction, rel=1e-11, abs=1e-18
    )


@given(st.floats(min_value=0.0, max_value=0.01, allow_nan=False))
def test_tempco_round_trip(per_k: float) -> None:
    assert parse_tempco(format_tempco(per_k)) == pytest.approx(per_k, rel=1e-11, abs=1e-18)


@given(st.floats(min_value=-273.15, max_value=1000.0, allow_nan=False))
def test_temperature_round_trip(celsius: float) -> None:
    assert parse_temperature(format_temperature(celsius)) == pytest.approx(
        celsius, rel=1e-11, abs=1e-9
    )
