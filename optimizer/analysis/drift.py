"""Life drift of resistors: the end-of-life bound from the 1000-hour figure, the interval of a
drift variable under each drift model, and the one-sided drift draw of the Monte Carlo.

The model (``docs/explanation.md``, "How parts vary"; :mod:`optimizer.analysis.variation`):
a part's drift ``d`` lies in ``[−D, D]`` (symmetric, the default) or ``[0, D]`` (one-sided:
a discrete part's drift and a package's shared drift; a network element's ratio drift is a
mismatch and stays symmetric), ``D = drift_1000h·√(life_h/1000)``.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..errors import ModelError
from ..spec import Distribution, DriftModel

__all__ = [
    "DRIFT_SHARED_VARIANCE",
    "drift_bound",
    "drift_factor_bounds",
    "drift_interval",
    "drift_model_summary",
    "one_sided_drift_draw",
]

Array = NDArray[np.float64]

_HOURS_PER_SECOND = 1.0 / 3600.0
_DRIFT_REFERENCE_H = 1000.0
#: One-sided drift model, Monte Carlo only: the fraction ρ of each part's drift variance that
#: is shared by all parts of the same kind (same ``part_id``), the rest being the part's own.
#: It is the correlation between the drifts of two parts of one kind. Our assumption, stated:
#: "similar between parts of one kind" (common practice, from memory) gives no number, and an
#: even split is the middle ground between independent (0) and identical (1) drift.
DRIFT_SHARED_VARIANCE = 0.5


def drift_bound(drift_1000h: float, life_s: float) -> float:
    """End-of-life drift bound ``D = drift_1000h·√(life_h / 1000 h)`` (fraction).

    ``drift_1000h`` is the drift bound after a 1000 h load-life test (fraction), ``life_s`` the
    operating life in seconds. Drift of film resistors grows roughly with the square root of
    time (common practice, from memory); it is the model Quartet uses to extrapolate the
    1000 h figure to the required life.
    """
    if (
        drift_1000h < 0.0
        or life_s < 0.0
        or not (math.isfinite(drift_1000h) and math.isfinite(life_s))
    ):
        raise ModelError(
            "drift",
            "value",
            f"expected finite values of zero or more, got {drift_1000h!r}, {life_s!r}",
        )
    return drift_1000h * math.sqrt(life_s * _HOURS_PER_SECOND / _DRIFT_REFERENCE_H)


def drift_interval(bound: float, model: DriftModel) -> tuple[float, float]:
    """The interval ``(low, high)`` of a drift variable with bound ``D = bound`` (fraction):
    ``(−D, D)`` for :attr:`DriftModel.SYMMETRIC`, ``(0, D)`` for :attr:`DriftModel.ONE_SIDED`
    (``optimizer.analysis.variation``, module docstring, "Drift model")."""
    if model is DriftModel.ONE_SIDED:
        return 0.0, float(bound)
    return -float(bound), float(bound)


def drift_model_summary(model: DriftModel, monte_carlo: bool = False) -> str:
    """One line (for reports) saying how life drift is modelled: the interval of ``d`` in the
    worst case and, with ``monte_carlo``, how it is drawn."""
    if model is DriftModel.ONE_SIDED:
        text = "one-sided: each part's drift d in [0, D] (a network's ratio drift stays ±D_ratio/2)"
        if monte_carlo:
            text += (
                f"; drawn with {DRIFT_SHARED_VARIANCE:.0%} of its variance shared by the parts "
                "of one kind (same part id) and the rest their own (assumed)"
            )
        return text
    text = "symmetric: each part's drift d in [-D, D]"
    if monte_carlo:
        text += ", drawn independently, centred on zero"
    return text


def drift_factor_bounds(drift: ArrayLike, model: DriftModel) -> tuple[Array, Array]:
    """Bounds ``(low, high)`` of the drift factor ``1 + d`` of parts with drift bounds ``D``
    (fractions, array): ``(1 − D, 1 + D)`` symmetric, ``(1, 1 + D)`` one-sided
    (:func:`drift_interval`). The end-of-life resistance of a part lies in
    ``R·(1 + e)(1 + α·ΔT)·[low, high]``."""
    d = np.asarray(drift, dtype=float)
    low = np.ones_like(d) if model is DriftModel.ONE_SIDED else 1.0 - d
    return low, 1.0 + d


def one_sided_drift_draw(
    shared: ArrayLike,
    own: ArrayLike,
    bound: float,
    distribution: Distribution,
    sigma_k: float,
    shared_variance: float = DRIFT_SHARED_VARIANCE,
) -> Array:
    """One-sided drift values (fractions) from standard draws of a kind's shared component and
    a part's own component, bound ``D = bound``, shared fraction ``ρ = shared_variance``.

    Normal (``shared``, ``own`` standard normal): ``d = D/2 + (D/(2k))·(√ρ·z_s + √(1−ρ)·z_o)``,
    i.e. ``d ~ N(D/2, (D/(2k))²)`` with the interval ``[0, D]`` at ``±k·σ`` (as the symmetric
    model puts ``±D`` at ``±k·σ``, ``k = sigma_k``) and correlation ``ρ`` between two parts of
    one kind. Uniform (``shared``, ``own`` on ``[0, 1)``): ``d = D·(w·u_s + (1 − w)·u_o)``
    with ``w = √ρ/(√ρ + √(1−ρ))``, which stays in ``[0, D]``, has mean ``D/2``, variance
    ``D²·(w² + (1 − w)²)/12`` and correlation ``w²/(w² + (1 − w)²) = ρ`` (sums of independent
    variables; for ρ = 1/2 the marginal is triangular, variance ``D²/24``)."""
    rho = float(shared_variance)
    if not 0.0 <= rho <= 1.0:
        raise ModelError(
            "monte carlo", "drift shared variance", f"expected 0 to 1, got {shared_variance!r}"
        )
    z_s = np.asarray(shared, dtype=float)
    z_o = np.asarray(own, dtype=float)
    if distribution is Distribution.NORMAL:
        half = float(bound) / 2.0
        mixed = math.sqrt(rho) * z_s + math.sqrt(1.0 - rho) * z_o
        return np.asarray(half + half / sigma_k * mixed, dtype=float)
    w = math.sqrt(rho) / (math.sqrt(rho) + math.sqrt(1.0 - rho))
    return np.asarray(float(bound) * (w * z_s + (1.0 - w) * z_o), dtype=float)
