"""The fast paths of the exact analysis (pruned environment corners, the closed-form worse
sign of the amplifier's CMRR, the look-ahead golden-section search, block-wise random draws)
against references outside them.

Sources named beside each check:
- Exact rational arithmetic (Python's ``fractions`` module) on the definition
  ``|Acm/Adm| = 2|y − 1|/(y + 1)``, ``y = (1 + ε)/((1 − ε)·x)``, with both signs of ``ε``.
- Plane geometry of the source-impedance polygon (derived): which vertices no other vertex
  beats in both coordinates.
- Brute force over every environment corner with ``transfer.coefficients`` (the closed forms
  that the sympy nodal analysis in test_analysis_worstcase checks): the Monte Carlo judged at
  the pruned corners gives the same builds' results.
- The sequential golden-section search (Kiefer 1953; the textbook algorithm, written out here
  from memory): the look-ahead search takes the same points, decisions and maximum.
- numpy's ``Generator`` fills an array in row-major order (numpy documentation): block-wise
  draws equal one bulk draw laid out one row per build.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from fractions import Fraction
from itertools import product

import numpy as np
import pytest

from optimizer.analysis.balance import common_mode_error_worst_sign
from optimizer.analysis.environment import Environment, dominant_vertices, source_vertices
from optimizer.analysis.montecarlo import (
    CMRR_PERCENTS,
    GAIN_PERCENTS,
    monte_carlo_from_variation,
)
from optimizer.analysis.scalesearch import _golden_max
from optimizer.analysis.transfer import coefficients, common_mode_gain, differential_gain
from optimizer.analysis.variation import SharedGroup, Variation, resistances, sample_values
from optimizer.errors import ModelError
from optimizer.spec import Distribution, Requirements

Vertices = tuple[tuple[float, float], ...]


def polygon(lo: float, hi: float, imbalance: float) -> Vertices:
    return tuple((float(a), float(b)) for a, b in source_vertices(lo, hi, imbalance))


# ---------------------------------------------------------------------------------------------
# The worse sign of the amplifier's CMRR in closed form
# ---------------------------------------------------------------------------------------------


def _exact_error(x: Fraction, eps: Fraction) -> Fraction:
    """The definition, in exact rational arithmetic."""
    y = (1 + eps) / ((1 - eps) * x)
    return 2 * abs(y - 1) / (y + 1)


@pytest.mark.parametrize(
    "x", [1.0, 1 + 2**-40, 1 - 2**-40, 1 + 1e-6, 1 - 1e-6, 1.001, 0.999, 0.5, 2.0, 1e-3, 30.0]
)
@pytest.mark.parametrize("eps", [0.0, 5e-6, 1e-3, 0.4])
def test_worst_sign_error_is_the_larger_of_both_signs(x: float, eps: float) -> None:
    """Exact rational arithmetic: the closed form equals max over ε = ±e of the definition, to
    float rounding (1e-14 relative)."""
    want = max(_exact_error(Fraction(x), Fraction(eps)), _exact_error(Fraction(x), -Fraction(eps)))
    got = float(common_mode_error_worst_sign(x, eps))
    if want == 0:
        assert got == 0.0
    else:
        assert abs(Fraction(got) - want) <= want * Fraction(1, 10**14)


# ---------------------------------------------------------------------------------------------
# Source-polygon vertices that can hold an extreme
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("vertices", "expected"),
    [
        # Hexagon: min 0, max 100, imbalance 20 (plane geometry, worked out by hand).
        (
            polygon(0.0, 100.0, 20.0),
            {
                (-1.0, 1.0): ((0.0, 20.0), (80.0, 100.0)),
                (1.0, -1.0): ((100.0, 80.0), (20.0, 0.0)),
                (-1.0, -1.0): ((0.0, 0.0),),
                (1.0, 1.0): ((100.0, 100.0),),
            },
        ),
        # Imbalance beyond the span: the whole square, one corner each way.
        (
            polygon(5.0, 50.0, 100.0),
            {
                (-1.0, 1.0): ((5.0, 50.0),),
                (1.0, -1.0): ((50.0, 5.0),),
                (-1.0, -1.0): ((5.0, 5.0),),
                (1.0, 1.0): ((50.0, 50.0),),
            },
        ),
        # No imbalance: the diagonal segment; neither end beats the other for x.
        (
            polygon(0.0, 10.0, 0.0),
            {
                (-1.0, 1.0): ((0.0, 0.0), (10.0, 10.0)),
                (1.0, -1.0): ((0.0, 0.0), (10.0, 10.0)),
                (-1.0, -1.0): ((0.0, 0.0),),
                (1.0, 1.0): ((10.0, 10.0),),
            },
        ),
        # A single point, listed twice.
        (((3.0, 3.0), (3.0, 3.0)), dict.fromkeys(product((-1.0, 1.0), repeat=2), ((3.0, 3.0),))),
    ],
    ids=["hexagon", "square", "segment", "point"],
)
def test_dominant_vertices_of_source_polygons(
    vertices: Vertices, expected: dict[tuple[float, float], Vertices]
) -> None:
    """Plane geometry: the vertices no other vertex beats in both coordinates."""
    for (rs1_way, rs3_way), want in expected.items():
        assert dominant_vertices(vertices, rs1_way, rs3_way) == want


def test_dominant_vertices_hold_the_maximum_of_monotone_functions() -> None:
    """Definition of the Pareto set: for random vertex sets and random functions that never
    fall as Rs1 and Rs3 move the given ways, the largest value over all vertices is reached at
    a returned vertex."""
    rng = np.random.default_rng(11)
    for _ in range(300):
        count = int(rng.integers(1, 8))
        grid = rng.integers(0, 4, size=(count, 2)).astype(float)  # ties on purpose
        vertices = tuple((float(a), float(b)) for a, b in grid)
        for rs1_way, rs3_way in product((-1.0, 1.0), repeat=2):
            w1, w3 = (float(w) for w in rng.random(2) + 0.01)
            p1, p3 = (int(p) for p in rng.choice([1, 3], 2))  # odd powers rise monotonically
            values = {
                v: w1 * (rs1_way * v[0]) ** p1 + w3 * (rs3_way * v[1]) ** p3 for v in vertices
            }
            kept = dominant_vertices(vertices, rs1_way, rs3_way)
            assert kept and set(kept) <= set(vertices)
            assert max(values[v] for v in kept) == max(values.values())


# ---------------------------------------------------------------------------------------------
# Monte Carlo at the pruned corners against every corner
# ---------------------------------------------------------------------------------------------

ENVIRONMENTS = {
    "hexagon": Environment(
        (-40.0, 85.0), polygon(0.0, 200.0, 50.0), (0.0, 20.0), 10 ** (100 / 20), 10 ** (110 / 20)
    ),
    "square_ideal_amp": Environment((0.0, 70.0), polygon(5.0, 50.0, 100.0), (3.0,)),
    "segment": Environment((25.0,), polygon(0.0, 80.0, 0.0), (0.0, 50.0), 10 ** (80 / 20)),
    # A polygon of our own (not from source_vertices) and a poor amplifier.
    "triangle": Environment(
        (-55.0, 125.0),
        ((0.0, 300.0), (400.0, 0.0), (100.0, 100.0)),
        (0.0, 5.0),
        10 ** (60 / 20),
        10 ** (50 / 20),
    ),
}

VARIATIONS = {
    "discrete": Variation((1e3, 1e4, 1.1e3, 1.1e4), (1e-3,) * 4, (25e-6,) * 4, (5e-4,) * 4),
    "quad": Variation(
        (2e3, 4e4, 2e3, 4e4),
        (5e-5,) * 4,
        (1e-6,) * 4,
        (1e-4,) * 4,
        (SharedGroup("quad", (0, 1, 2, 3), 0.005, 25e-6, 0.001),),
    ),
    "divider_pairs": Variation(
        (1e3, 5e3, 1e3, 5e3),
        (2e-4,) * 4,
        (2e-6,) * 4,
        (1e-4,) * 4,
        (
            SharedGroup("a", (0, 1), 0.002, 10e-6, 0.001),
            SharedGroup("b", (2, 3), 0.002, 10e-6, 0.001),
        ),
    ),
}


def _every_corner(
    variation: Variation, env: Environment, samples: int, seed: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per build, by brute force over every temperature end, source vertex, REF end, CMRR sign
    and open-loop gain end: the largest |Acm/Adm| and the smallest and largest gain."""
    rng = np.random.Generator(np.random.PCG64(seed))
    values = sample_values(variation, rng, samples, Distribution.NORMAL, 3.0)
    cm = np.zeros(samples)
    low, high = np.full(samples, np.inf), np.full(samples, -np.inf)
    for temperature in env.temperatures_c:
        r = resistances(variation, values, temperature - 25.0)
        for (rs1, rs3), rref, sign, aol in product(
            env.source_ohm, env.ref_ohm, (1.0, -1.0), (env.open_loop_gain, math.inf)
        ):
            k = coefficients(
                r[:, 0], r[:, 1], r[:, 2], r[:, 3], rs1, rs3, rref, aol, env.amp_cmrr, sign
            )
            adm = differential_gain(k)
            cm = np.maximum(cm, np.abs(common_mode_gain(k) / adm))
            low, high = np.minimum(low, adm), np.maximum(high, adm)
    return cm, low, high


@pytest.mark.parametrize("env_name", ENVIRONMENTS)
@pytest.mark.parametrize("var_name", VARIATIONS)
def test_monte_carlo_matches_every_corner(var_name: str, env_name: str) -> None:
    """Brute force over every corner with transfer.coefficients: the same pass fractions and
    the same percentiles to float rounding. The target gain sits in the middle of the builds'
    gain ranges and the floors at the brute-force medians, so that about half the builds pass
    each check and both the lowest and the highest gain decide some of them."""
    variation, env = VARIATIONS[var_name], ENVIRONMENTS[env_name]
    samples, seed = 12_000, 21
    cm, low, high = _every_corner(variation, env, samples, seed)
    target = float(np.median((low + high) / 2.0))
    cm_db = -20.0 * np.log10(cm)
    err_low, err_high = low / target - 1.0, high / target - 1.0
    worst_err = np.where(np.abs(err_high) >= np.abs(err_low), err_high, err_low)
    floor = float(np.median(cm_db))
    accuracy = float(np.median(np.abs(worst_err)))
    req = Requirements(gain=target, gain_accuracy=accuracy, cmrr_floor_db=floor, yield_target=0.99)
    result = monte_carlo_from_variation(variation, env, req, samples=samples, seed=seed)
    cm_ok = cm <= 10.0 ** (-floor / 20.0)
    gain_ok = (err_low >= -accuracy) & (err_high <= accuracy)
    assert 0.2 < cm_ok.mean() < 0.8 and 0.2 < gain_ok.mean() < 0.8
    assert (err_low < -accuracy).mean() > 0.05 and (err_high > accuracy).mean() > 0.05
    assert result.cmrr_pass_fraction == cm_ok.mean()
    assert result.gain_pass_fraction == gain_ok.mean()
    assert result.yield_fraction == (cm_ok & gain_ok).mean()
    np.testing.assert_allclose(
        [v for _, v in result.cmrr_percentiles_db],
        np.percentile(cm_db, CMRR_PERCENTS),
        rtol=1e-11,
    )
    np.testing.assert_allclose(result.cmrr_at_yield_db, np.quantile(cm_db, 1.0 - 0.99), rtol=1e-11)
    np.testing.assert_allclose(
        [v for _, v in result.gain_error_percentiles],
        np.percentile(worst_err, GAIN_PERCENTS),
        rtol=1e-9,
        atol=1e-15,
    )


# ---------------------------------------------------------------------------------------------
# Look-ahead golden-section search
# ---------------------------------------------------------------------------------------------

_GOLDEN = (math.sqrt(5.0) - 1.0) / 2.0


def _sequential_golden_max(
    f: Callable[[np.ndarray], np.ndarray], lo: np.ndarray, hi: np.ndarray, iterations: int
) -> np.ndarray:
    """The textbook search, one step at a time: keep the part of the bracket around the better
    interior point, place one new point at the golden section of the kept part."""
    a, b = lo.copy(), hi.copy()
    best: np.ndarray = np.maximum(f(a), f(b))
    c, d = b - _GOLDEN * (b - a), a + _GOLDEN * (b - a)
    fc, fd = f(c), f(d)
    best = np.maximum(best, np.maximum(fc, fd))
    for _ in range(iterations):
        left = fc >= fd
        b, a = np.where(left, d, b), np.where(left, a, c)
        kept, f_kept = np.where(left, c, d), np.where(left, fc, fd)
        new = np.where(left, b - _GOLDEN * (b - a), a + _GOLDEN * (b - a))
        f_new = f(new)
        best = np.maximum(best, f_new)
        c, d = np.where(left, new, kept), np.where(left, kept, new)
        fc, fd = np.where(left, f_new, f_kept), np.where(left, f_kept, f_new)
    return best


@pytest.mark.parametrize("lookahead", [1, 2, 3, 4, 5])
def test_look_ahead_search_takes_the_sequential_steps(lookahead: int) -> None:
    """The sequential golden-section search: identical maxima (bit for bit) on multimodal
    functions and on functions with plateaus (ties between the interior points), for problem
    arrays of one and two dimensions and any number of steps."""
    rng = np.random.default_rng(lookahead)
    for trial in range(60):
        shape = tuple(int(s) for s in rng.integers(1, 6, size=int(rng.integers(1, 3))))
        lo = rng.normal(size=shape)
        hi = lo + 3.0 * rng.random(shape)
        w = rng.normal(size=(3, *shape))
        plateaus = trial % 3 == 0

        def f(z: np.ndarray, w: np.ndarray = w, plateaus: bool = plateaus) -> np.ndarray:
            v: np.ndarray = np.sin(3.0 * w[0] * z) + w[1] * z - w[2] * z * z
            return np.round(v, 1) if plateaus else v

        iterations = int(rng.integers(0, 50))
        want = _sequential_golden_max(f, lo, hi, iterations)
        got = _golden_max(f, lo, hi, iterations, lookahead)
        assert got.shape == want.shape
        assert np.array_equal(got, want)


# ---------------------------------------------------------------------------------------------
# Draws in blocks
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("distribution", [Distribution.NORMAL, Distribution.UNIFORM])
def test_block_draws_equal_one_bulk_draw(distribution: Distribution) -> None:
    """numpy's Generator fills row by row: the builds equal one bulk draw of shape
    (builds, variables) in the documented order (own e, α, d of R1..R4, then the group's),
    normal with σ = b/k or uniform on [−b, b]."""
    own = [(1e-3 * (i + 1), 1e-5 * (i + 1), 1e-4 * (i + 1)) for i in range(4)]
    shared = (5e-3, 7e-6, 2e-3)
    variation = Variation(
        (1e3, 2e3, 3e3, 4e3),
        tuple(b[0] for b in own),  # type: ignore[arg-type]
        tuple(b[1] for b in own),  # type: ignore[arg-type]
        tuple(b[2] for b in own),  # type: ignore[arg-type]
        (SharedGroup("g", (0, 1), *shared),),
    )
    count, k = 20_001, 2.5
    values = sample_values(
        variation, np.random.Generator(np.random.PCG64(5)), count, distribution, k
    )
    bounds = np.array([b for triple in own for b in triple] + list(shared))
    bulk = np.random.Generator(np.random.PCG64(5))
    if distribution is Distribution.NORMAL:
        draws = bulk.standard_normal((count, bounds.size)) * (bounds / k)
    else:
        draws = bulk.random((count, bounds.size)) * (2.0 * bounds) - bounds
    for i in range(4):
        np.testing.assert_allclose(values.own_error[:, i], draws[:, 3 * i], rtol=1e-15)
        np.testing.assert_allclose(values.own_tempco[:, i], draws[:, 3 * i + 1], rtol=1e-15)
        np.testing.assert_allclose(values.own_drift[:, i], draws[:, 3 * i + 2], rtol=1e-15)
    np.testing.assert_allclose(values.shared_error[:, 0], draws[:, 12], rtol=1e-15)
    np.testing.assert_allclose(values.shared_tempco[:, 0], draws[:, 13], rtol=1e-15)
    np.testing.assert_allclose(values.shared_drift[:, 0], draws[:, 14], rtol=1e-15)


# ---------------------------------------------------------------------------------------------
# Environment
# ---------------------------------------------------------------------------------------------


def test_amplifier_cmrr_below_0_db_is_a_model_error() -> None:
    """An amplifier's CMRR is a level of 0 dB or more (as parts.Amplifier requires)."""
    with pytest.raises(ModelError, match="amp_cmrr"):
        Environment(amp_cmrr=0.9)
    assert Environment(amp_cmrr=1.0).amp_cmrr == 1.0
