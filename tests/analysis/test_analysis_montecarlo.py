"""Monte-Carlo yield (optimizer.analysis.montecarlo) against sources outside it.

Sources named beside each check:
- Derived (sums of independent normals): with normal parts and t = 3σ the bridge error
  δ = e1 − e2 − e3 + e4 has standard deviation 2σ; for G = 1, |Acm/Adm| ≈ |δ|/2 to first order,
  whose median is 0.67449·(2σ/2) (half-normal distribution; the constant from scipy.stats).
- Irwin–Hall distribution (sum of independent uniforms; CDF written out below, checked against
  scipy's convolution-free formula at one point): the CMRR pass fraction of uniform parts.
- Definition of the worst case (derived): builds drawn uniformly inside the bounds can never be
  worse than the exact worst case, so they all pass a floor set at the worst case.
- Empirical quantile definition: the CMRR at the yield target is met by that fraction of builds.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from optimizer.analysis.environment import IDEAL_ENVIRONMENT, Environment, source_vertices
from optimizer.analysis.montecarlo import (
    CMRR_PERCENTS,
    GAIN_PERCENTS,
    HISTOGRAM_BINS,
    kernel,
    monte_carlo,
    monte_carlo_from_variation,
)
from optimizer.analysis.transfer import coefficients, common_mode_gain, differential_gain
from optimizer.analysis.variation import SharedGroup, Variation, resistances, sample_values
from optimizer.analysis.worstcase import worst_case_from_variation
from optimizer.design import Design, Placement
from optimizer.errors import ModelError
from optimizer.parts import Amplifier, DiscretePart, RailSpan
from optimizer.spec import (
    Distribution,
    Preferences,
    Rails,
    Reference,
    Requirements,
    Signal,
    SourceImpedance,
    Spec,
)

POSITIONS = ("R1", "R2", "R3", "R4")
HALF_NORMAL_MEDIAN = float(stats.halfnorm.median())  # 0.6744897501960817 (scipy.stats)


def requirements(
    gain: float, floor_db: float, accuracy: float = 0.01, yield_target: float = 0.999
) -> Requirements:
    return Requirements(
        gain=gain, gain_accuracy=accuracy, cmrr_floor_db=floor_db, yield_target=yield_target
    )


def full_environment() -> Environment:
    return Environment(
        temperatures_c=(-40.0, 85.0),
        source_ohm=tuple((float(a), float(b)) for a, b in source_vertices(0.0, 200.0, 50.0)),
        ref_ohm=(0.0, 20.0),
        amp_cmrr=10 ** (100 / 20),
        open_loop_gain=10 ** (110 / 20),
    )


# ---------------------------------------------------------------------------------------------
# Normal parts: δ = e1 − e2 − e3 + e4 has σ_δ = 2σ
# ---------------------------------------------------------------------------------------------


def test_bridge_error_of_normal_parts_has_twice_sigma() -> None:
    """Derived: normal parts with t = 3σ; δ = e1 − e2 − e3 + e4 is normal with standard
    deviation 2σ (variances add). Sample value within 1 % at N = 1e6 (seeded)."""
    tol = 0.001
    variation = Variation((1e4, 1e4, 1e4, 1e4), (tol,) * 4)
    rng = np.random.Generator(np.random.PCG64(11))
    values = sample_values(variation, rng, 1_000_000, Distribution.NORMAL, 3.0)
    e = resistances(variation, values, 0.0) / 1e4 - 1.0
    delta = e[:, 0] - e[:, 1] - e[:, 2] + e[:, 3]
    assert float(np.std(delta)) == pytest.approx(2 * tol / 3, rel=0.01)


def test_median_cmrr_of_normal_parts_matches_the_half_normal() -> None:
    """Derived: for G = 1, |Acm/Adm| ≈ |δ|/2 with δ normal of σ_δ = 2σ, so the median error is
    0.67449·σ (half-normal median from scipy.stats). The engine's median CMRR agrees within 1 %
    of the ratio at N = 1e6 (seeded)."""
    tol = 0.001
    variation = Variation((1e4, 1e4, 1e4, 1e4), (tol,) * 4)
    result = monte_carlo_from_variation(
        variation, IDEAL_ENVIRONMENT, requirements(1.0, 60.0), samples=1_000_000, seed=3
    )
    median_error = 10 ** (-result.cmrr_percentile_db(50.0) / 20)
    assert median_error == pytest.approx(HALF_NORMAL_MEDIAN * (2 * tol / 3) / 2, rel=0.01)


# ---------------------------------------------------------------------------------------------
# Uniform parts: Irwin–Hall
# ---------------------------------------------------------------------------------------------


def irwin_hall_cdf(x: float, n: int) -> float:
    """Irwin–Hall distribution (sum of n independent U(0, 1)):
    F(x) = (1/n!) Σ_{k=0}^{⌊x⌋} (−1)^k C(n, k) (x − k)^n for 0 ≤ x ≤ n."""
    if x <= 0:
        return 0.0
    if x >= n:
        return 1.0
    return sum(
        (-1) ** k * math.comb(n, k) * (x - k) ** n for k in range(math.floor(x) + 1)
    ) / math.factorial(n)


def test_irwin_hall_cdf_against_scipy() -> None:
    """The formula above against a numerical convolution of four uniforms (scipy.signal)."""
    from scipy.signal import fftconvolve

    step = 1e-4
    box = np.ones(int(1 / step))
    density = box
    for _ in range(3):
        density = fftconvolve(density, box) * step
    cdf = np.cumsum(density) * step
    for x in (0.5, 1.3, 2.0, 2.7):
        assert irwin_hall_cdf(x, 4) == pytest.approx(cdf[int(x / step)], abs=2e-3)


@pytest.mark.parametrize("floor_db", [60.0, 66.0])
def test_cmrr_pass_fraction_of_uniform_parts_matches_irwin_hall(floor_db: float) -> None:
    """Irwin–Hall: with uniform e_i ∈ [−t, t] and G = 1, a build meets the floor when
    |δ|/2 ≤ 10^(−floor/20) (first order; second-order terms are ~t² relative). δ/(2t) + 2 is
    Irwin–Hall with n = 4, so P(pass) = F(2 + L) − F(2 − L), L = 2·10^(−floor/20)/(2t).
    Binomial tolerance: 5 standard errors at N = 2e5."""
    tol = 0.001
    n = 200_000
    variation = Variation((1e4, 1e4, 1e4, 1e4), (tol,) * 4)
    result = monte_carlo_from_variation(
        variation,
        IDEAL_ENVIRONMENT,
        requirements(1.0, floor_db),
        samples=n,
        seed=5,
        distribution=Distribution.UNIFORM,
    )
    half_width = 2 * 10 ** (-floor_db / 20) / (2 * tol)
    expected = irwin_hall_cdf(2 + half_width, 4) - irwin_hall_cdf(2 - half_width, 4)
    assert result.cmrr_pass_fraction == pytest.approx(
        expected, abs=5 * math.sqrt(expected * (1 - expected) / n)
    )


# ---------------------------------------------------------------------------------------------
# Against the worst case
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "variation",
    [
        Variation((1e4, 2e4, 1e4, 2e4), (0.001,) * 4, (25e-6,) * 4, (0.0005,) * 4),
        Variation(
            (1e4, 2e4, 1e4, 2e4),
            (5e-5,) * 4,
            (1e-6,) * 4,
            (1e-4,) * 4,
            (SharedGroup("quad", (0, 1, 2, 3), 0.005, 25e-6, 0.001),),
        ),
        Variation(
            (1e4, 2e4, 1e4, 2e4),
            (5e-5,) * 4,
            (1e-6,) * 4,
            (1e-4,) * 4,
            (
                SharedGroup("a", (0, 2), 0.005, 25e-6, 0.001),
                SharedGroup("b", (1, 3), 0.005, 25e-6, 0.001),
            ),
        ),
    ],
    ids=["discrete", "quad", "equal_pairs"],
)
def test_uniform_builds_never_beat_the_worst_case(variation: Variation) -> None:
    """Definition of the worst case: uniform builds stay inside the bounds, so with the floor
    and the gain accuracy set at the exact worst case every build passes, and the lowest
    CMRR percentile is no lower than the worst case."""
    env = full_environment()
    wc = worst_case_from_variation(variation, env, 2.0)
    accuracy = wc.gain_error_worst * (1 + 1e-9)
    req = requirements(2.0, wc.cmrr_db - 1e-9, accuracy)
    result = monte_carlo_from_variation(
        variation, env, req, samples=20_000, seed=9, distribution=Distribution.UNIFORM
    )
    assert result.yield_fraction == 1.0
    assert result.cmrr_percentile_db(0.1) >= wc.cmrr_db - 1e-9
    assert wc.gain_error_min - 1e-12 <= result.gain_error_percentile(0.1)
    assert result.gain_error_percentile(99.9) <= wc.gain_error_max + 1e-12


def test_yield_quantile_and_pass_fractions_agree() -> None:
    """Empirical quantile definition: with the floor set at cmrr_at_yield_db the CMRR pass
    fraction equals the yield target (to one build in the sample); the yield is the fraction
    passing both checks, so it is at most each single fraction."""
    variation = Variation((1e4, 1e4, 1e4, 1e4), (0.001,) * 4, (25e-6,) * 4)
    env = full_environment()
    first = monte_carlo_from_variation(
        variation, env, requirements(1.0, 60.0, 0.02, 0.99), samples=50_000, seed=2
    )
    again = monte_carlo_from_variation(
        variation,
        env,
        requirements(1.0, first.cmrr_at_yield_db, 0.02, 0.99),
        samples=50_000,
        seed=2,
    )
    assert again.cmrr_pass_fraction == pytest.approx(0.99, abs=2 / 50_000)
    assert first.yield_fraction <= min(first.cmrr_pass_fraction, first.gain_pass_fraction)
    assert 0.0 < first.gain_pass_fraction < 1.0
    assert sum(first.histogram_counts) == first.samples
    assert (
        len(first.histogram_counts) == HISTOGRAM_BINS
        and len(first.histogram_edges_db) == HISTOGRAM_BINS + 1
    )
    assert tuple(p for p, _ in first.cmrr_percentiles_db) == CMRR_PERCENTS
    assert tuple(p for p, _ in first.gain_error_percentiles) == GAIN_PERCENTS
    values = [v for _, v in first.cmrr_percentiles_db]
    assert values == sorted(values)


# ---------------------------------------------------------------------------------------------
# Kernel, determinism, entry point
# ---------------------------------------------------------------------------------------------


def test_kernel_matches_transfer_coefficients() -> None:
    """The kernel against transfer.coefficients (whose closed forms the sympy nodal analysis
    checks): CMRR in dB and differential gain at one environment corner."""
    rng = np.random.default_rng(4)
    r = np.array([1e4, 3e4, 1e4, 3e4]) * (1 + 0.002 * rng.standard_normal((5000, 4)))
    cmrr_db, gain = kernel(r, 50.0, 80.0, 10.0, 1e5, -1.0, 3e5)
    k = coefficients(r[:, 0], r[:, 1], r[:, 2], r[:, 3], 50.0, 80.0, 10.0, 3e5, 1e5, -1.0)
    np.testing.assert_allclose(gain, differential_gain(k), rtol=1e-13)
    np.testing.assert_allclose(
        cmrr_db, 20 * np.log10(np.abs(differential_gain(k) / common_mode_gain(k))), atol=1e-6
    )


def test_same_seed_gives_identical_results_whatever_the_chunking() -> None:
    """Determinism: the same seed gives an identical MonteCarloResult, also with another chunk
    size; another seed gives another result."""
    variation = Variation(
        (1e4, 2e4, 1e4, 2e4),
        (5e-5,) * 4,
        (1e-6,) * 4,
        (1e-4,) * 4,
        (SharedGroup("quad", (0, 1, 2, 3), 0.005, 25e-6, 0.001),),
    )
    env = full_environment()
    req = requirements(2.0, 70.0, 0.01)
    a = monte_carlo_from_variation(variation, env, req, samples=30_000, seed=42)
    b = monte_carlo_from_variation(variation, env, req, samples=30_000, seed=42, chunk=7_000)
    c = monte_carlo_from_variation(variation, env, req, samples=30_000, seed=43)
    assert a == b
    assert a != c


def test_the_build_cache_changes_nothing() -> None:
    """The Monte Carlo keeps the builds of its latest variations (``_DRAWS``): a run from the
    cache equals the same run with the cache emptied, for the same bounds at other nominal
    values (a hit), for other bounds (a miss) and for a one-sided drift with part kinds."""
    from optimizer.analysis import montecarlo

    env = full_environment()
    req = requirements(2.0, 60.0, 0.01)
    base = Variation((1e4, 2e4, 1e4, 2e4), (1e-3,) * 4, (25e-6,) * 4, (5e-4,) * 4)
    variations = [
        base,
        Variation((3e4, 6e4, 1e4, 2e4), (1e-3,) * 4, (25e-6,) * 4, (5e-4,) * 4),
        Variation((1e4, 2e4, 1e4, 2e4), (2e-3,) + (1e-3,) * 3, (25e-6,) * 4, (5e-4,) * 4),
        Variation((1e4, 2e4, 1e4, 2e4), (1e-3,) * 4, (25e-6,) * 4, (5e-4,) * 4,
                  drift_low=(0.0,) * 4, drift_kind=(0, 0, 1, 1)),
    ]  # fmt: skip
    cached = []
    for v in variations:
        monte_carlo_from_variation(v, env, req, samples=5_000, seed=3)  # fills the cache
        cached.append(monte_carlo_from_variation(v, env, req, samples=5_000, seed=3))
    for v, result in zip(variations, cached, strict=True):
        montecarlo._DRAWS.clear()
        assert monte_carlo_from_variation(v, env, req, samples=5_000, seed=3) == result
    assert cached[0] != cached[2] and cached[0] != cached[3]


def _spec(prefs: Preferences) -> Spec:
    amp = Amplifier(
        "amp", 100.0, 110.0, 1e6, 1e6, 0.0, 0.0, 0.0, 0.0, RailSpan(0.0, 0.0), RailSpan(0.0, 0.0)
    )
    return Spec(
        amplifier=amp,
        rails=Rails(15.0, -15.0),
        signal=Signal(-1.0, 1.0, -5.0, 5.0, 1e3, SourceImpedance(0.0, 100.0, 20.0)),
        reference=Reference(),
        requirements=Requirements(
            gain=2.0,
            gain_accuracy=0.005,
            cmrr_floor_db=55.0,
            temp_min_c=0.0,
            temp_max_c=70.0,
            life_s=8760 * 3600.0,
        ),
        preferences=prefs,
    )


def test_monte_carlo_entry_point_uses_the_preferences() -> None:
    """Preferences.samples, seed, distribution and sigma_k drive the run; arguments override
    samples and seed."""
    parts = [
        DiscretePart(f"P{i}", v, 0.001, 25e-6, "0603", 0.1, 75.0, 1.0, drift_1000h=0.0005)
        for i, v in enumerate((10e3, 20e3, 10e3, 20e3))
    ]
    design = Design(tuple(Placement(n, p) for n, p in zip(POSITIONS, parts, strict=True)))  # type: ignore[arg-type]
    prefs = Preferences(samples=5_000, seed=8, distribution=Distribution.UNIFORM, sigma_k=2.0)
    result = monte_carlo(design, _spec(prefs))
    assert (result.samples, result.seed, result.distribution, result.sigma_k) == (
        5_000,
        8,
        "uniform",
        2.0,
    )
    override = monte_carlo(design, _spec(prefs), samples=1_000, seed=9)
    assert (override.samples, override.seed) == (1_000, 9)
    assert 0.0 <= result.yield_fraction <= 1.0
    with pytest.raises(ModelError):
        monte_carlo(design, _spec(prefs), samples=0)
    with pytest.raises(ModelError):
        result.cmrr_percentile_db(2.0)


def test_non_physical_normal_draws_fail() -> None:
    """Model rule: an untruncated normal with a wide tolerance (t = 40 % at k = 1) can draw a
    non-positive resistance; such builds count as failures with CMRR −inf. Expected fraction
    from the normal CDF (scipy.stats): 1 − (1 − Φ(−1/0.4))⁴."""
    variation = Variation((1e4, 1e4, 1e4, 1e4), (0.4,) * 4)
    result = monte_carlo_from_variation(
        variation,
        IDEAL_ENVIRONMENT,
        requirements(1.0, -200.0, 0.999),
        samples=20_000,
        seed=1,
        sigma_k=1.0,
    )
    expected_fail = 1 - (1 - stats.norm.cdf(-1 / 0.4)) ** 4  # any of four factors (1+e) ≤ 0
    # With a −200 dB floor every physical build passes the CMRR check (|Acm/Adm| ≤ 2 for
    # positive resistances), so the CMRR failures are exactly the non-physical builds.
    assert 1 - result.cmrr_pass_fraction == pytest.approx(
        expected_fail, abs=5 * math.sqrt(expected_fail / 20_000)
    )
    assert result.cmrr_percentile_db(0.1) == -math.inf


# ---------------------------------------------------------------------------------------------
# Which figure the gain-error percentiles use (README, issue 15 item 6)
# ---------------------------------------------------------------------------------------------


def test_gain_error_percentiles_are_of_each_builds_worst_signed_error() -> None:
    """Only R2 varies, by its tempco α uniform on [−TC, TC] (scipy.stats.uniform quantiles),
    over 0 °C to 125 °C (ΔT = −25 K and +100 K). Textbook ideal-amplifier transfer:
    Adm = (a + G'·(1 + a))/2 with a = R4/(R3 + R4) = 10/11 fixed and G' = 10·(1 + α·ΔT), so
    Adm = 10 + (105/11)·α·ΔT and the gain error is (21/22)·α·ΔT exactly: −(21/22)·25α and
    +(21/22)·100α. A build's worst signed error (the one of larger magnitude) is
    (21/22)·100α, uniform on ±(21/22)·100·TC. Its lowest error, min of the two, would put the
    99.9 % point at only a quarter of that, and its highest the 0.1 % point near 0."""
    tc = 1e-4
    variation = Variation((1e3, 10e3, 1e3, 10e3), tempco_per_k=(0.0, tc, 0.0, 0.0))
    env = Environment(temperatures_c=(0.0, 125.0))
    n = 100_000
    result = monte_carlo_from_variation(
        variation,
        env,
        requirements(10.0, 40.0, accuracy=0.05),
        samples=n,
        seed=3,
        distribution=Distribution.UNIFORM,
    )
    half = 21.0 / 22.0 * 100.0 * tc
    dist = stats.uniform(loc=-half, scale=2 * half)
    for percent in GAIN_PERCENTS:
        p = percent / 100.0
        # standard error of a sample quantile: sqrt(p(1−p)/n)/f(x), f = 1/(2·half)
        se = math.sqrt(p * (1 - p) / n) * 2 * half
        assert result.gain_error_percentile(percent) == pytest.approx(
            float(dist.ppf(p)), abs=6 * se + 1e-12
        )
