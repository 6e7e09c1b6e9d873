"""The windows of the one-dual-two-discrete search (``optimizer.solve.mixed``, ``optimizer.solve.placements``) are necessary
conditions: property tests against the side term itself.

Source of the check values: the voltage divider ``term = (B + u)/(A + w + B + u)`` (Ohm's law
and Kirchhoff's current law on one side of the bridge, any circuits textbook), evaluated
directly on random resistances, and its derivative by central differences. The search's
exactness on whole designs is checked against the exhaustive enumerator in
``tests/solve/test_oracle.py`` (``test_one_dual_two_discrete_top_ten``) and against the independent
reference on the canonical battery (``tests/solve/test_battery.py``).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer.solve.halves import value_window
from optimizer.solve.placements import c_gain_room, least_sensitivity, side_term
from optimizer.solve.screen import ScreenLimits

ohms = st.floats(min_value=10.0, max_value=1e6)
small = st.floats(min_value=0.0, max_value=500.0)
spread = st.floats(min_value=0.0, max_value=0.05)


def _term(top: float, bottom: float, w: float, u: float) -> float:
    """The divider written out again, on plain floats (the check's own formula)."""
    return (bottom + u) / (top + w + bottom + u)


@settings(max_examples=400, deadline=None)
@given(ohms, ohms, spread, spread, small, small, st.booleans(), st.floats(0.0, 0.02))
def test_value_window_keeps_every_design_inside_the_window(
    fixed: float, free: float, d_fixed: float, d_free: float, w: float, u: float,
    free_is_bottom: bool, margin: float,
) -> None:  # fmt: skip
    """A free resistance whose side term stays inside a window (built around the design's own
    term range, widened by ``margin``) lies inside :func:`value_window`'s bounds."""
    f_lo, f_hi = fixed * (1 - d_fixed), fixed * (1 + d_fixed)
    r_lo, r_hi = free * (1 - d_free), free * (1 + d_free)
    if free_is_bottom:
        t_high, t_low = _term(f_lo, r_hi, w, u), _term(f_hi, r_lo, w, u)
    else:
        t_high, t_low = _term(r_lo, f_hi, w, u), _term(r_hi, f_lo, w, u)
    t_hi, t_lo = min(t_high * (1 + margin), 0.999999), t_low * (1 - margin)
    assert t_low <= t_high <= t_hi
    m_lo, m_hi = value_window(f_lo, f_hi, free_is_bottom, t_hi, t_lo, np.array([w]), np.array([u]))
    assert r_lo >= float(m_lo) * (1 - 1e-9)
    assert r_hi <= float(m_hi) * (1 + 1e-9)


def test_value_window_excludes_a_value_outside() -> None:
    """The bounds are not vacuous: G = 2 with no impedances gives a window around 20 kΩ for R2
    next to R1 = 10 kΩ when the term must stay within ±0.1 % of 2/3 (hand arithmetic:
    B ≤ t_hi·A/(1 − t_hi))."""
    t = 2.0 / 3.0
    zero = np.array([0.0])
    m_lo, m_hi = value_window(10e3, 10e3, True, t * 1.001, t * 0.999, zero, zero)
    assert 19.9e3 < m_lo < 20e3 < m_hi < 20.1e3
    assert m_hi / m_lo < 1.01


@settings(max_examples=400, deadline=None)
@given(ohms, ohms, small, small, st.integers(0, 3), st.floats(0.0, 0.2))
def test_least_sensitivity_is_below_the_true_slope(
    top: float, bottom: float, w: float, u: float, position: int, room: float
) -> None:
    """``∂ln term/∂ln R`` by central differences is never below :func:`least_sensitivity` for
    a term at most ``t_hi`` (set ``room`` above the design's own term)."""
    zero = np.zeros(1)
    side_w = w if position in (0, 2) else 0.0
    side_u = u if position == 3 else 0.0
    lim = ScreenLimits(
        balance=0.01, gain_max=1.0, gain_min=1.0, eps=(0.0,), inv_a=0.0,
        rs1=np.array([side_w]) if position == 0 else zero,
        rs3=np.array([side_w]) if position == 2 else zero,
        rref=np.array([side_u]) if position == 3 else zero, min_impedance=0.0,
    )  # fmt: skip
    a_w = side_w if position in (0, 2) else 0.0
    term = _term(top, bottom, a_w, side_u)
    t_hi = min(term + room, 1.0)
    h = 1e-6
    is_top = position in (0, 2)
    r = top if is_top else bottom

    def ln_term(scale: float) -> float:
        if is_top:
            return math.log(_term(top * scale, bottom, a_w, side_u))
        return math.log(_term(top, bottom * scale, a_w, side_u))

    slope = abs((ln_term(math.exp(h)) - ln_term(math.exp(-h))) / (2 * h))
    bound = float(least_sensitivity(position, np.array([r]), t_hi, lim)[0])
    assert bound <= slope * (1 + 1e-5) + 1e-9
    assert (
        side_term(np.array([top]), np.array([bottom]), np.array([a_w]), np.array([side_u]))[0]
        == term
    )


@settings(max_examples=400, deadline=None)
@given(
    st.floats(0.01, 0.99),
    st.floats(0.0, 0.02),
    st.floats(0.01, 0.99),
    st.floats(0.0, 0.02),
    st.floats(0.1, 200.0),
    st.floats(0.0, 0.05),
    st.sampled_from([0.0, 1e-5, -1e-5]),
    st.sampled_from([0.0, 1e-6]),
)
def test_c_gain_room_holds_every_gain_that_meets_the_limits(
    a: float, a_spread: float, c: float, c_spread: float, gain: float, accuracy: float,
    e: float, inv_a: float,
) -> None:  # fmt: skip
    """Terms whose differential gain, written out from the bridge (``Adm = (a(1+ε) + c(1−ε)) /
    (2(1/A + (1−c)(1−ε)))``, the superposition of the two inputs through an amplifier of
    finite gain A and common-mode error ε), meets both gain limits have ``ln c_lo`` inside
    :func:`c_gain_room`."""
    a_lo, a_hi = a * (1 - a_spread), min(a * (1 + a_spread), 0.999)
    c_lo, c_hi = c * (1 - c_spread), min(c * (1 + c_spread), 0.999)

    def adm(a_: float, c_: float, eps: float, inv: float) -> float:
        return (a_ * (1 + eps) + c_ * (1 - eps)) / (2 * (inv + (1 - c_) * (1 - eps)))

    eps = (e, -e) if e else (0.0,)
    g_top = max(adm(a_hi, c_hi, x, 0.0) for x in eps)
    g_bottom = min(adm(a_lo, c_lo, x, inv_a) for x in eps)
    if g_bottom > g_top:
        return
    g_min = min(gain * (1 - accuracy), g_bottom)
    g_max = max(gain * (1 + accuracy), g_top)
    zero = np.zeros(1)
    lim = ScreenLimits(
        balance=0.01, gain_max=g_max, gain_min=g_min, eps=eps, inv_a=inv_a,
        rs1=zero, rs3=zero, rref=zero, min_impedance=0.0,
    )  # fmt: skip
    low, high = c_gain_room(a_lo, a_hi, lim)
    assert low <= math.log(c_lo) + 1e-9
    assert math.log(c_lo) <= high + 1e-9


@pytest.mark.parametrize(
    ("example", "floor_db"),
    [("motor_shunt", 40.0), ("motor_shunt", 70.0), ("industrial_input", 50.0),
     ("bridge_front_end", None)],
)  # fmt: skip
def test_a_placement_dropped_before_the_merge_has_no_candidate(
    example: str, floor_db: float | None
) -> None:
    """The placements the search drops at once (:func:`placements.crossed_open`, the divider key
    ranges) are exactly those whose candidate list, worked out one placement at a time as the
    merge does, is empty or (a divider whose range holds only records too wide) holds no
    record whose high end fits: dropping them loses nothing."""
    from dataclasses import replace

    from helpers import EXAMPLES

    from optimizer.api import spec_catalogs
    from optimizer.solve import placements
    from optimizer.solve.environment import linear_environment
    from optimizer.solve.frontier import limits_and_parts
    from optimizer.specfile import load_spec

    spec = load_spec(EXAMPLES / f"{example}.yaml")
    if floor_db is not None:
        spec = replace(spec, requirements=replace(spec.requirements, cmrr_floor_db=floor_db))
    catalog = spec_catalogs(spec)
    env = linear_environment(spec)
    start = limits_and_parts(spec, catalog, env, None)
    assert start is not None
    lim, parts, shared = start
    duals = placements.dual_placements(spec, catalog, env, lim)
    halves = {
        side: placements.sorted_half(shared.half(parts, lim, side, vertex=0), parts, lim)
        for side in (1, 2)
    }
    cands = placements.PlacementCandidates(parts)
    opened = placements.crossed_open(duals, cands, lim)
    from_key, to_key = placements.divider_keys(duals, lim)
    dropped = 0
    for k, dual in enumerate(duals):
        window = (float(from_key[k]), float(to_key[k]))
        keys, _ = placements.placement_candidates(dual, window, parts, lim, cands, halves)
        if dual.positions in ((0, 1), (2, 3)):
            _, first, last = placements.divider_slice(dual, window, halves)
            kept = last > first
        else:
            kept = bool(opened[k])
        if not kept:
            dropped += 1
            assert keys.shape[0] == 0, (k, dual.positions, dual.values)
    assert dropped > 0  # the screen does drop placements here
