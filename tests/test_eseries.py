"""IEC 60063 preferred-number series, checked value by value against the `eseries` package
from PyPI (a general-purpose implementation of IEC 60063) over 1 Ω – 10 MΩ."""

from __future__ import annotations

import eseries as reference  # the `eseries` package from PyPI (IEC 60063), test-only
import pytest
from hypothesis import given
from hypothesis import strategies as st

from optimizer.errors import UnitError
from optimizer.eseries import (
    ESeries,
    decade_values,
    is_member,
    nearest,
    next_above,
    next_below,
    series_for_name,
    values_in_range,
)


@pytest.mark.parametrize("series", list(ESeries), ids=lambda s: s.name)
def test_every_value_matches_the_eseries_package(series: ESeries) -> None:
    ours = list(values_in_range(series, 1.0, 10e6))
    theirs = [
        v
        for v in reference.erange(reference.ESeries[series.name], 1.0, 10e6)
        if v <= 10e6 * (1 + 1e-9)
    ]
    assert len(ours) == len(theirs) == 7 * series + 1  # seven decades 1 Ω … 9.x MΩ, plus 10 MΩ
    for mine, ref in zip(ours, theirs, strict=True):
        assert mine == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("value", [2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2])
def test_e24_values_that_differ_from_the_formula(value: float) -> None:
    """IEC 60063: these E24 values are not the rounded 10^(i/24)."""
    assert value in decade_values(ESeries.E24)
    assert round(value - 0.1, 1) not in decade_values(ESeries.E24) or value == 3.0


def test_e192_exception() -> None:
    """IEC 60063: E192 has 9.20 where the formula gives 9.19."""
    assert 9.20 in decade_values(ESeries.E192)
    assert 9.19 not in decade_values(ESeries.E192)


def test_lookups() -> None:
    assert nearest(ESeries.E96, 4950.0) == 4990.0
    assert next_above(ESeries.E24, 10.0) == 11.0
    assert next_below(ESeries.E24, 10.0) == 9.1
    assert next_above(ESeries.E12, 8200.0) == 10000.0
    assert is_member(ESeries.E192, 9.2e3)
    assert not is_member(ESeries.E96, 9.2e3)


@given(st.sampled_from(list(ESeries)), st.floats(min_value=1.0, max_value=1e7))
def test_nearest_lies_between_neighbours(series: ESeries, value: float) -> None:
    below, above = next_below(series, value), next_above(series, value)
    assert below < value < above or is_member(series, value)
    assert nearest(series, value) in (below, above) or is_member(series, value)
    # Ours is nearest by ratio (log scale, as the series is geometric); the reference package
    # is nearest by difference. They may only disagree between the geometric and the
    # arithmetic mean of the two neighbours.
    ref = reference.find_nearest(reference.ESeries[series.name], value)
    if not is_member(series, value) and abs(nearest(series, value) / ref - 1.0) > 1e-12:
        assert (below * above) ** 0.5 * (1 - 1e-12) <= value <= (below + above) / 2 * (1 + 1e-12)


def test_unknown_series_name() -> None:
    with pytest.raises(UnitError) as info:
        series_for_name("E25")
    assert (
        str(info.value)
        == "cannot read 'E25' (unknown E-series): expected one of E3, E6, E12, E24, E48, E96, E192"
    )
