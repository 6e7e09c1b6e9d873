"""The drift model (issue 15, item 4): symmetric ``d ∈ [−D, D]`` and one-sided ``d ∈ [0, D]``.

Sources of the expected values:

* **textbook ideal op-amp transfer** (superposition): ``Vout = V2·R4/(R3 + R4)·(1 + R2/R1) −
  V1·R2/R1``, so ``Adm = (a·(1 + G') + G')/2`` with ``G' = R2/R1``, ``a = R4/(R3 + R4)``; for a
  balanced bridge ``Adm = G'``. The common-mode error is ``2|1 − x|/(1 + x)`` with the balance
  ``x = (R3 + R4)/R4 · R2/(R1 + R2)`` (the same superposition, written out here), largest at
  R1 and R4 low, R2 and R3 high (or the opposite).
* **sums of independent random variables** (mean and variance add; the sample mean and sample
  variance have standard errors ``σ/√n`` and ``σ²·√(2/n)`` for a normal, the sample correlation
  ``(1 − ρ²)/√n``): the moments of the Monte-Carlo drift draw against the stated model.
* The square-root-of-time drift law is the model's own (common practice, from memory); the
  cases below use a life of exactly 1000 h so that ``D = drift_1000h``.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from helpers import ideal_spec_text

from optimizer.analysis.drift import (
    DRIFT_SHARED_VARIANCE,
    drift_factor_bounds,
    drift_interval,
    one_sided_drift_draw,
)
from optimizer.analysis.montecarlo import monte_carlo
from optimizer.analysis.variation import (
    discrete_factor_bounds,
    sample_values,
    variation_from_design,
)
from optimizer.analysis.worstcase import worst_case
from optimizer.design import Design, Placement
from optimizer.errors import ModelError, SpecError
from optimizer.parts import Amplifier, DiscretePart, NetworkPart, RailSpan
from optimizer.spec import (
    Distribution,
    DriftModel,
    Preferences,
    Rails,
    Reference,
    Requirements,
    Signal,
    Spec,
)
from optimizer.specfile import parse_spec_text

HOURS_1000_S = 1000.0 * 3600.0
SYMMETRIC, ONE_SIDED = DriftModel.SYMMETRIC, DriftModel.ONE_SIDED


def _part(ohms: float, drift: float, pid: str) -> DiscretePart:
    return DiscretePart(pid, ohms, 0.0, 0.0, "0603", 0.1, 75.0, 1.0, drift_1000h=drift)


def _design(values: tuple[float, ...], drifts: tuple[float, ...], ids: tuple[str, ...]) -> Design:
    names = ("R1", "R2", "R3", "R4")
    return Design(
        tuple(
            Placement(n, _part(v, d, pid))  # type: ignore[arg-type]
            for n, v, d, pid in zip(names, values, drifts, ids, strict=True)
        )
    )


def _spec(
    gain: float,
    model: DriftModel,
    *,
    distribution: Distribution = Distribution.NORMAL,
    samples: int = 100_000,
) -> Spec:
    amp = Amplifier(
        "ideal", math.inf, math.inf, 1e6, 1e6, 0.0, 0.0, 0.0, 0.0, RailSpan(0, 0), RailSpan(0, 0)
    )
    return Spec(
        amplifier=amp,
        rails=Rails(15.0, -15.0),
        signal=Signal(-1.0, 1.0, 0.0, 0.0, 1e3),
        reference=Reference(),
        requirements=Requirements(
            gain=gain,
            gain_accuracy=0.05,
            cmrr_floor_db=40.0,
            life_s=HOURS_1000_S,
            drift_model=model,
        ),
        preferences=Preferences(distribution=distribution, samples=samples, seed=7),
    )


def _balance_error(r1: float, r2: float, r3: float, r4: float) -> float:
    x = (r3 + r4) / r4 * r2 / (r1 + r2)
    return 2.0 * abs(1.0 - x) / (1.0 + x)


# ---------------------------------------------------------------------------------------------
# The intervals
# ---------------------------------------------------------------------------------------------


def test_drift_intervals_of_both_models() -> None:
    assert drift_interval(0.002, SYMMETRIC) == (-0.002, 0.002)
    assert drift_interval(0.002, ONE_SIDED) == (0.0, 0.002)
    low, high = drift_factor_bounds(np.array([0.001, 0.01]), ONE_SIDED)
    assert low.tolist() == [1.0, 1.0] and high.tolist() == [1.001, 1.01]
    low, high = drift_factor_bounds(np.array([0.001, 0.01]), SYMMETRIC)
    assert low.tolist() == [0.999, 0.99] and high.tolist() == [1.001, 1.01]
    # r/R0 = (1 ± t)(1 ± TC·|ΔT|)(1 + d): one-sided drift only widens the top.
    lo, hi = discrete_factor_bounds(0.001, 25e-6, 0.002, 100.0, ONE_SIDED)
    assert float(lo) == pytest.approx(0.999 * 0.9975) and float(hi) == pytest.approx(
        1.001 * 1.0025 * 1.002
    )


# ---------------------------------------------------------------------------------------------
# Worst case: closed forms for a drift-only bridge
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("gain", [1.0, 10.0, 100.0])
@pytest.mark.parametrize("drift", [0.001, 0.01])
def test_worst_case_gain_and_balance_of_both_models(gain: float, drift: float) -> None:
    """R1 = R3 = 1 kΩ, R2 = R4 = G·1 kΩ, four independent parts with drift D only.

    Symmetric: gain G·(1 ± D)/(1 ∓ D); the worst balance at R1, R4 = (1 − D)·R0 and
    R2, R3 = (1 + D)·R0. One-sided: gain from G/(1 + D) (R1, R3 drifted) to G·(1 + D) (R2, R4
    drifted); the worst balance with R2, R3 drifted and R1, R4 not (or the opposite)."""
    values = (1e3, gain * 1e3, 1e3, gain * 1e3)
    design = _design(values, (drift,) * 4, ("A", "B", "C", "E"))
    d = drift
    sym = worst_case(design, _spec(gain, SYMMETRIC))
    assert sym.gain_max == pytest.approx(gain * (1 + d) / (1 - d), rel=1e-12)
    assert sym.gain_min == pytest.approx(gain * (1 - d) / (1 + d), rel=1e-12)
    sym_error = _balance_error(1 - d, gain * (1 + d), 1 + d, gain * (1 - d))
    assert sym.cmrr_db == pytest.approx(-20 * math.log10(sym_error), rel=1e-9)
    one = worst_case(design, _spec(gain, ONE_SIDED))
    assert one.gain_max == pytest.approx(gain * (1 + d), rel=1e-12)
    assert one.gain_min == pytest.approx(gain / (1 + d), rel=1e-12)
    one_error = max(
        _balance_error(1.0, gain * (1 + d), 1 + d, gain),
        _balance_error(1 + d, gain, 1.0, gain * (1 + d)),
    )
    assert one.cmrr_db == pytest.approx(-20 * math.log10(one_error), rel=1e-9)
    # The drift budget item alone: gain error 2D/(1 − D) against D.
    assert sym.budget_item("life_drift").gain_error == pytest.approx(2 * d / (1 - d), rel=1e-9)
    assert one.budget_item("life_drift").gain_error == pytest.approx(d, rel=1e-9)
    # Half the mismatch: to first order the one-sided error is half the symmetric one.
    assert one_error == pytest.approx(sym_error / 2, rel=3 * d)


def test_network_ratio_drift_stays_symmetric() -> None:
    """A quad whose elements drift apart (ratio drift 0.2 %, no package drift): the element
    deviations are a mismatch inside the package and keep ±D_ratio/2 in both models, so the
    worst case is the same."""
    quad = NetworkPart("NQ", (1e3, 10e3, 1e3, 10e3), 0.0, 0.0, 0.0, 0.0, 0.05, 50.0, 1.0,
                       ratio_drift_1000h=0.002)  # fmt: skip
    design = Design(
        tuple(Placement(n, quad, element=i) for i, n in enumerate(("R1", "R2", "R3", "R4")))  # type: ignore[arg-type]
    )
    sym = worst_case(design, _spec(10.0, SYMMETRIC))
    one = worst_case(design, _spec(10.0, ONE_SIDED))
    assert (one.cmrr_db, one.gain_min, one.gain_max) == (sym.cmrr_db, sym.gain_min, sym.gain_max)
    variation = variation_from_design(design, HOURS_1000_S, False, ONE_SIDED)
    assert variation.own_drift_low == (-0.001, -0.001, -0.001, -0.001)
    assert variation.groups[0].drift_min == 0.0  # the package drift (zero here) is one-sided


# ---------------------------------------------------------------------------------------------
# Monte Carlo: the drift draw against the stated model
# ---------------------------------------------------------------------------------------------


def _drift_draws(distribution: Distribution, n: int = 200_000) -> tuple[np.ndarray, float]:
    # R1 and R3 are one kind ("A"), R2 and R4 another ("B" and "C" differ): 0.4 % drift.
    design = _design((1e3, 10e3, 1e3, 10e3), (0.004,) * 4, ("A", "B", "A", "C"))
    variation = variation_from_design(design, HOURS_1000_S, False, ONE_SIDED)
    assert variation.drift_kind == (0, 1, 0, 2)
    rng = np.random.Generator(np.random.PCG64(11))
    values = sample_values(variation, rng, n, distribution, 3.0)
    return values.own_drift, 0.004


def test_one_sided_normal_draw_moments() -> None:
    """Normal: d ~ N(D/2, (D/(2k))²), k = 3; correlation ρ = DRIFT_SHARED_VARIANCE (0.5)
    between the two parts of kind "A", none between parts of different kinds."""
    d, bound = _drift_draws(Distribution.NORMAL)
    n = d.shape[0]
    sigma = bound / 6.0
    assert DRIFT_SHARED_VARIANCE == 0.5
    for column in range(4):
        assert d[:, column].mean() == pytest.approx(bound / 2, abs=5 * sigma / math.sqrt(n))
        assert d[:, column].var() == pytest.approx(sigma**2, abs=5 * sigma**2 * math.sqrt(2 / n))
    rho_se = (1 - 0.5**2) / math.sqrt(n)
    assert np.corrcoef(d[:, 0], d[:, 2])[0, 1] == pytest.approx(0.5, abs=5 * rho_se)
    for a, b in ((0, 1), (1, 3), (2, 3)):
        assert np.corrcoef(d[:, a], d[:, b])[0, 1] == pytest.approx(0.0, abs=5 / math.sqrt(n))


def test_one_sided_uniform_draw_moments() -> None:
    """Uniform: d = D·(w·u_s + (1 − w)·u_o), w = √ρ/(√ρ + √(1 − ρ)) = 1/2 for ρ = 1/2: inside
    [0, D], mean D/2, variance D²·(w² + (1 − w)²)/12 = D²/24, correlation ρ within a kind."""
    d, bound = _drift_draws(Distribution.UNIFORM)
    n = d.shape[0]
    var = bound**2 / 24.0
    assert d.min() >= 0.0 and d.max() <= bound
    for column in range(4):
        assert d[:, column].mean() == pytest.approx(bound / 2, abs=5 * math.sqrt(var / n))
        # triangular variance: the sample variance's se is below σ²·√(2/n) (smaller kurtosis)
        assert d[:, column].var() == pytest.approx(var, abs=5 * var * math.sqrt(2 / n))
    assert np.corrcoef(d[:, 0], d[:, 2])[0, 1] == pytest.approx(0.5, abs=5 / math.sqrt(n))
    assert np.corrcoef(d[:, 0], d[:, 1])[0, 1] == pytest.approx(0.0, abs=5 / math.sqrt(n))


def test_one_sided_draw_formula() -> None:
    # The two forms of one_sided_drift_draw at chosen standard draws.
    assert float(one_sided_drift_draw(0.0, 0.0, 0.01, Distribution.NORMAL, 3.0)) == 0.005
    top = float(one_sided_drift_draw(3.0, 3.0, 0.01, Distribution.NORMAL, 3.0, 0.5))
    assert top == pytest.approx(0.005 + 0.005 * math.sqrt(2.0), rel=1e-12)
    assert float(one_sided_drift_draw(1.0, 0.0, 0.01, Distribution.UNIFORM, 3.0, 0.5)) == 0.005
    with pytest.raises(ModelError):
        one_sided_drift_draw(0.0, 0.0, 0.01, Distribution.NORMAL, 3.0, 1.5)


def test_symmetric_draws_are_unchanged() -> None:
    """The default model draws exactly as before: zero-mean, no kind columns."""
    design = _design((1e3, 10e3, 1e3, 10e3), (0.004,) * 4, ("A", "B", "A", "C"))
    variation = variation_from_design(design, HOURS_1000_S)
    assert variation.drift_low is None and variation.drift_kind == (-1, -1, -1, -1)
    a = sample_values(variation, np.random.Generator(np.random.PCG64(3)), 1000)
    rng = np.random.Generator(np.random.PCG64(3))
    expected = rng.standard_normal((1000, 4)) * (0.004 / 3.0)
    assert np.array_equal(a.own_drift, expected)


@pytest.mark.parametrize(("model", "median"), [(SYMMETRIC, 0.0), (ONE_SIDED, 0.5)])
def test_monte_carlo_follows_the_spec_drift_model(model: DriftModel, median: float) -> None:
    """Only R2 drifts (uniform, D = 1 %), G = 10: the textbook transfer gives the gain error
    (1 + a)/2·d = (21/22)·d exactly (a = 10/11). Symmetric: median 0, 0.1 % point near
    −(21/22)·D. One-sided: every build's error is ≥ 0, median (21/22)·D/2."""
    design = _design((1e3, 10e3, 1e3, 10e3), (0.0, 0.01, 0.0, 0.0), ("A", "B", "C", "E"))
    spec = _spec(10.0, model, distribution=Distribution.UNIFORM, samples=20_000)
    result = monte_carlo(design, spec)
    scale = 21.0 / 22.0 * 0.01
    assert result.gain_error_percentile(50.0) == pytest.approx(median * scale, abs=0.03 * scale)
    low = result.gain_error_percentile(0.1)
    if model is ONE_SIDED:
        assert low >= 0.0
    else:
        assert low == pytest.approx(-scale, abs=0.01 * scale)


# ---------------------------------------------------------------------------------------------
# Spec file
# ---------------------------------------------------------------------------------------------

SPEC = ideal_spec_text(
    "  gain: 10\n"
    "  gain_accuracy: 5 %\n"
    "  cmrr_floor: 60 dB\n"
    "  temperature: {min: 25 °C, max: 25 °C}\n"
    "  operating_life: 1000 h\n"
)


def test_spec_reads_the_drift_model() -> None:
    assert parse_spec_text(SPEC, "t.yaml").requirements.drift_model is SYMMETRIC
    text = SPEC + "  drift_model: one_sided\n"
    assert parse_spec_text(text, "t.yaml").requirements.drift_model is ONE_SIDED


def test_spec_refuses_an_unknown_drift_model_with_its_location() -> None:
    with pytest.raises(SpecError) as caught:
        parse_spec_text(SPEC + "  drift_model: upward\n", "t.yaml")
    assert str(caught.value) == (
        "t.yaml:26: requirements.drift_model: 'upward' is not one of symmetric, one_sided"
    )
