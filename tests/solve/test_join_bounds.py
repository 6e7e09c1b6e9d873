"""The join's gain bounds on the partner's term (``optimizer.solve.frontier.gain_room``) are
necessary conditions: on random terms and amplifiers, every pair that meets the gain
conditions of the frontier's corner theorem (checked with the differential-gain closed form
``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))``, ``analysis.worstcase``, a textbook
result for the four-resistor difference amplifier) has its ``ln a_lo`` inside the bounds, so
searching the partner only there drops nothing. The sample is seeded (numpy PCG64)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from optimizer.analysis.balance import differential_gain_from_terms
from optimizer.solve.frontier import gain_room
from optimizer.solve.screen import ScreenLimits


def _limits(rng: np.random.Generator) -> ScreenLimits:
    gain = float(10.0 ** rng.uniform(-1.0, 2.3))
    accuracy = float(10.0 ** rng.uniform(-4.0, -1.5))
    # Amplifier errors below the gain accuracy (else no pair can meet it): CMRR term e and
    # loop-gain term (1 + G)/A each at most a tenth of it.
    e = float(rng.choice([0.0, accuracy * 10.0 ** rng.uniform(-3.0, -1.0)]))
    inv_a = float(rng.choice([0.0, accuracy / (1.0 + gain) * 10.0 ** rng.uniform(-3.0, -1.0)]))
    zero = np.zeros(1)
    return ScreenLimits(
        balance=0.01,
        gain_max=gain * (1.0 + accuracy),
        gain_min=gain * (1.0 - accuracy),
        eps=(e, -e) if e > 0.0 else (0.0,),
        inv_a=inv_a,
        rs1=zero,
        rs3=zero,
        rref=zero,
        min_impedance=0.0,
    )


@pytest.mark.parametrize("seed", range(20))
def test_every_pair_that_meets_the_gain_lies_inside_the_bounds(seed: int) -> None:
    rng = np.random.Generator(np.random.PCG64(seed))
    lim = _limits(rng)
    g = (lim.gain_max + lim.gain_min) / 2.0
    # Terms near the balanced design c = a = G/(1 + G), spread wide enough that some pairs
    # fail the gain and some pass.
    centre = g / (1.0 + g)
    n = 20_000
    accuracy = (lim.gain_max - lim.gain_min) / (lim.gain_max + lim.gain_min)
    # A relative change of c moves the gain about 1/(1 − c) times as much, one of a about
    # once: widths of three accuracies so scaled reach past both ends of the gain window.
    width_c = 3.0 * accuracy * (1.0 - centre)
    width_a = 3.0 * accuracy
    c_lo = centre * np.exp(rng.uniform(-width_c, width_c, n))
    c_hi = c_lo * np.exp(rng.uniform(0.0, width_c, n))
    a_lo = centre * np.exp(rng.uniform(-width_a, width_a, n))
    a_hi = a_lo * np.exp(rng.uniform(0.0, width_a, n))
    keep = (c_hi < 1.0) & (a_hi < 1.0)
    c_lo, c_hi, a_lo, a_hi = c_lo[keep], c_hi[keep], a_lo[keep], a_hi[keep]
    ok = np.ones(c_lo.size, dtype=bool)
    for e in lim.eps:
        ok &= differential_gain_from_terms(a_hi, c_hi, e, 0.0) <= lim.gain_max
        ok &= differential_gain_from_terms(a_lo, c_lo, e, lim.inv_a) >= lim.gain_min
    least, most = gain_room(c_lo[:, None], c_hi[:, None], lim)
    inside = (np.log(a_lo) >= least) & (np.log(a_lo) <= most)
    assert ok.any()  # the sample reaches the condition
    assert not (ok & ~inside).any()  # no pair that meets the gain is outside the bounds
    assert (~inside).any()  # and the bounds do cut something


def test_the_bounds_hold_at_several_vertices_at_once() -> None:
    """With the ``c`` bounds of several vertices (columns), the bounds are the tightest of the
    vertices: each column alone gives bounds at least as wide."""
    rng = np.random.Generator(np.random.PCG64(99))
    lim = dataclasses.replace(_limits(rng), eps=(1e-4, -1e-4))
    c_lo = rng.uniform(0.6, 0.7, (500, 3))
    c_hi = c_lo * 1.001
    least, most = gain_room(c_lo, c_hi, lim)
    for v in range(3):
        l_v, m_v = gain_room(c_lo[:, v : v + 1], c_hi[:, v : v + 1], lim)
        assert np.all(least >= l_v) and np.all(most <= m_v)
