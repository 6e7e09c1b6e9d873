# ruff: noqa: RUF002  (Greek letters and symbols are the formulas' own notation)
"""Monte-Carlo yield of a design: the fraction of builds that meet the CMRR floor and the gain
accuracy at every corner of the environment.

Method
------
* Builds are drawn with a seeded numpy ``Generator`` (PCG64, seed ``Preferences.seed``);
  ``Preferences.samples`` builds by default (100,000). Every part variable of the model in
  :mod:`~optimizer.analysis.variation` (own initial error, tempco and drift of each part or
  network element; shared initial error, tempco and drift of each network package or
  same-lot reel) is drawn independently: uniform within its bound, or normal with the bound
  at ``k·σ`` (``k = Preferences.sigma_k``, default 3; the normal is not truncated).
* Each build is judged at its worst environment corner: both ends of the temperature range,
  every vertex of the source-impedance polygon, both ends of the REF impedance range, the
  amplifier's minimum CMRR at the worse sign; for the gain the open-loop gain at its minimum
  (smallest gain) and infinite (largest gain: the differential gain rises with ``A``). For a
  fixed build the CMRR and the gain are monotone or quasi-linear in the source and REF
  impedances and in the amplifier terms (see :mod:`~optimizer.analysis.worstcase`), so these
  corners are exact for them; in temperature the ends of the range are used (a build whose
  tempco errors cancel to first order could be marginally worse inside the range, by a term of
  order ``(α·ΔT)²``).
* A build passes when its worst CMRR is at or above ``cmrr_floor_db`` **and** its gain error
  stays within ``±gain_accuracy`` of the target gain at every corner.
* A build drawn so far into the tail of a normal distribution that a resistance is zero or
  negative is not physical; it counts as a failure with CMRR ``−inf`` and gain error ``+inf``.

Samples are processed in chunks (default 262,144) so that 10⁷ builds need well under 1 GiB;
the random stream is laid out build by build, so the result does not depend on the chunk size.

The kernel (:func:`kernel`) evaluates an ``(n, 4)`` resistance array at one environment corner
and returns per-build CMRR in dB and differential gain; it is what the benchmark times.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..spec import Distribution, Requirements, Spec
from .variation import (
    Environment,
    Variation,
    environment_from_spec,
    sample_values,
    static_and_tempco,
    variation_from_design,
)
from .worstcase import (
    bridge_terms,
    common_mode_error_from_terms,
    differential_gain_from_terms,
    rejection_db,
)

__all__ = [
    "CMRR_PERCENTS",
    "DEFAULT_CHUNK",
    "GAIN_PERCENTS",
    "HISTOGRAM_BINS",
    "MonteCarloResult",
    "kernel",
    "monte_carlo",
    "monte_carlo_from_variation",
    "quantile_for_yield",
    "worst_signed_error",
]

Array = NDArray[np.float64]

#: Percentiles (%) of the per-build worst CMRR reported (low tail: the CMRR most builds meet).
CMRR_PERCENTS = (0.1, 1.0, 5.0, 50.0)
#: Percentiles (%) of the per-build worst signed gain error reported.
GAIN_PERCENTS = (0.1, 50.0, 99.9)
#: Bins of the CMRR histogram.
HISTOGRAM_BINS = 40
#: Builds per chunk.
DEFAULT_CHUNK = 262_144


# --------------------------------------------------------------------------------------------
# Formulas
# --------------------------------------------------------------------------------------------


def quantile_for_yield(yield_target: float) -> float:
    """The quantile of the per-build worst CMRR that ``yield_target`` of the builds meet or
    beat: ``1 − yield_target`` (e.g. 0.001 for a 99.9 % yield)."""
    if not 0.0 < yield_target < 1.0:
        raise ModelError(
            "monte carlo", "yield", f"expected a fraction between 0 and 1, got {yield_target!r}"
        )
    return 1.0 - yield_target


def worst_signed_error(low: ArrayLike, high: ArrayLike) -> Array:
    """Per build, the signed gain error of larger magnitude among its lowest and highest
    (``high`` where ``|high| ≥ |low|``, else ``low``)."""
    lo = np.asarray(low, dtype=float)
    hi = np.asarray(high, dtype=float)
    return np.where(np.abs(hi) >= np.abs(lo), hi, lo)


def kernel(
    r: ArrayLike,
    rs1: float = 0.0,
    rs3: float = 0.0,
    rref: float = 0.0,
    amp_cmrr: float = math.inf,
    cmrr_sign: float = 1.0,
    open_loop_gain: float = math.inf,
) -> tuple[Array, Array]:
    """CMRR in dB and differential gain ``Adm`` of ``n`` builds at one environment corner.

    ``r``: ``(n, 4)`` resistances R1..R4 in ohms (columns contiguous for speed: an ``(4, n)``
    array transposed); ``rs1``, ``rs3``, ``rref``: source and REF impedances (ohms);
    ``amp_cmrr`` (ratio), ``cmrr_sign`` (±1) and ``open_loop_gain`` (ratio) describe the
    amplifier. Uses the closed forms of :mod:`~optimizer.analysis.transfer` through
    :func:`~optimizer.analysis.worstcase.bridge_terms`."""
    res = np.asarray(r, dtype=float)
    a, c = bridge_terms(res[:, 0] + rs1, res[:, 1], res[:, 2] + rs3, res[:, 3] + rref)
    eps = cmrr_sign / (2.0 * amp_cmrr)
    cm = common_mode_error_from_terms(a, c, eps)
    return rejection_db(cm), differential_gain_from_terms(a, c, eps, 1.0 / open_loop_gain)


# --------------------------------------------------------------------------------------------
# Result
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class MonteCarloResult:
    """Outcome of a Monte-Carlo run.

    ``yield_fraction``: builds meeting both the CMRR floor and the gain accuracy at every
    corner; ``cmrr_pass_fraction`` and ``gain_pass_fraction``: each alone;
    ``cmrr_percentiles_db``: ``(percent, dB)`` pairs of the per-build worst CMRR at
    :data:`CMRR_PERCENTS`; ``gain_error_percentiles``: ``(percent, error)`` pairs of the
    per-build worst signed relative gain error at :data:`GAIN_PERCENTS`;
    ``cmrr_at_yield_db``: the CMRR that ``yield_target`` of the builds meet (the
    ``1 − yield_target`` quantile); ``histogram_counts`` over ``histogram_edges_db``: the
    distribution of per-build worst CMRR (finite values only)."""

    samples: int
    seed: int
    distribution: str
    sigma_k: float
    yield_fraction: float
    cmrr_pass_fraction: float
    gain_pass_fraction: float
    cmrr_percentiles_db: tuple[tuple[float, float], ...]
    gain_error_percentiles: tuple[tuple[float, float], ...]
    cmrr_at_yield_db: float
    yield_target: float
    cmrr_floor_db: float
    gain_accuracy: float
    histogram_counts: tuple[int, ...]
    histogram_edges_db: tuple[float, ...]

    def cmrr_percentile_db(self, percent: float) -> float:
        """The reported CMRR percentile (dB) for ``percent`` (one of :data:`CMRR_PERCENTS`)."""
        return _lookup(self.cmrr_percentiles_db, percent, "cmrr percentile")

    def gain_error_percentile(self, percent: float) -> float:
        """The reported gain-error percentile for ``percent`` (one of :data:`GAIN_PERCENTS`)."""
        return _lookup(self.gain_error_percentiles, percent, "gain error percentile")


def _lookup(pairs: tuple[tuple[float, float], ...], percent: float, what: str) -> float:
    for p, value in pairs:
        if p == percent:
            return value
    raise ModelError(
        "monte carlo", what, f"no {percent!r} %; reported: {', '.join(f'{p:g}' for p, _ in pairs)}"
    )


# --------------------------------------------------------------------------------------------
# Engine
# --------------------------------------------------------------------------------------------


def _judge(base: Array, alpha: Array, environment: Environment) -> tuple[Array, Array, Array]:
    """Per build: worst common-mode error ``|Acm/Adm|`` and the lowest and highest
    differential gain over the environment corners. ``base`` and ``alpha``: ``(n, 4)`` from
    :func:`~optimizer.analysis.variation.static_and_tempco`."""
    n = base.shape[0]
    worst_cm = np.zeros(n)
    gain_low = np.full(n, np.inf)
    gain_high = np.full(n, -np.inf)
    physical = np.ones(n, dtype=bool)
    r = np.empty((4, n)).T  # columns contiguous
    eps_values = (
        (0.0,)
        if math.isinf(environment.amp_cmrr)
        else (0.5 / environment.amp_cmrr, -0.5 / environment.amp_cmrr)
    )
    inv_low = 1.0 / environment.open_loop_gain
    for dt in environment.delta_t_k:
        np.multiply(alpha, dt, out=r)
        r += 1.0
        r *= base
        physical &= r.min(axis=1) > 0.0
        r1, r2, r3, r4 = r[:, 0], r[:, 1], r[:, 2], r[:, 3]
        for rs1, rs3 in environment.source_ohm:
            for rref in environment.ref_ohm:
                a, c = bridge_terms(r1 + rs1, r2, r3 + rs3, r4 + rref)
                for eps in eps_values:
                    np.maximum(worst_cm, common_mode_error_from_terms(a, c, eps), out=worst_cm)
                    g_low = differential_gain_from_terms(a, c, eps, inv_low)
                    np.minimum(gain_low, g_low, out=gain_low)
                    g_high = (
                        g_low if inv_low == 0.0 else differential_gain_from_terms(a, c, eps, 0.0)
                    )
                    np.maximum(gain_high, g_high, out=gain_high)
    if not physical.all():
        worst_cm[~physical] = np.inf
        gain_low[~physical] = np.inf
        gain_high[~physical] = np.inf
    return worst_cm, gain_low, gain_high


def monte_carlo_from_variation(
    variation: Variation,
    environment: Environment,
    requirements: Requirements,
    *,
    samples: int = 100_000,
    seed: int = 1,
    distribution: Distribution = Distribution.NORMAL,
    sigma_k: float = 3.0,
    chunk: int = DEFAULT_CHUNK,
) -> MonteCarloResult:
    """Monte-Carlo yield of a :class:`~optimizer.analysis.variation.Variation` in an
    :class:`~optimizer.analysis.variation.Environment` against ``requirements`` (target gain,
    gain accuracy, CMRR floor, yield target). Module docstring for the method."""
    if isinstance(samples, bool) or not isinstance(samples, int) or samples < 1:
        raise ModelError(
            "monte carlo",
            "samples",
            f"expected a whole number of builds of 1 or more, got {samples!r}",
        )
    if isinstance(seed, bool) or not isinstance(seed, int) or seed < 0:
        raise ModelError(
            "monte carlo", "seed", f"expected a whole number of zero or more, got {seed!r}"
        )
    if isinstance(chunk, bool) or not isinstance(chunk, int) or chunk < 1:
        raise ModelError(
            "monte carlo", "chunk", f"expected a whole number of 1 or more, got {chunk!r}"
        )
    target = requirements.gain
    rng = np.random.Generator(np.random.PCG64(seed))
    cm_db = np.empty(samples)
    gain_err = np.empty(samples)
    cm_limit = 10.0 ** (-requirements.cmrr_floor_db / 20.0)
    cm_pass = 0
    gain_pass = 0
    both_pass = 0
    for start in range(0, samples, chunk):
        count = min(chunk, samples - start)
        values = sample_values(variation, rng, count, distribution, sigma_k)
        base, alpha = static_and_tempco(variation, values)
        worst_cm, gain_low, gain_high = _judge(base, alpha, environment)
        ok_cm = worst_cm <= cm_limit
        err_low = gain_low / target - 1.0
        err_high = gain_high / target - 1.0
        ok_gain = (err_low >= -requirements.gain_accuracy) & (
            err_high <= requirements.gain_accuracy
        )
        cm_pass += int(ok_cm.sum())
        gain_pass += int(ok_gain.sum())
        both_pass += int((ok_cm & ok_gain).sum())
        cm_db[start : start + count] = rejection_db(worst_cm)
        gain_err[start : start + count] = worst_signed_error(err_low, err_high)
    # Linear interpolation between order statistics; with non-physical builds (±inf) present
    # the inverted empirical CDF, which never interpolates towards an infinity.
    method: Literal["linear", "inverted_cdf"] = (
        "linear" if np.isfinite(cm_db).all() else "inverted_cdf"
    )
    cm_percentiles = np.percentile(cm_db, CMRR_PERCENTS, method=method)
    gain_percentiles = np.percentile(gain_err, GAIN_PERCENTS, method=method)
    at_yield = float(
        np.quantile(cm_db, quantile_for_yield(requirements.yield_target), method=method)
    )
    finite = cm_db[np.isfinite(cm_db)]
    if finite.size:
        low, high = float(finite.min()), float(finite.max())
        if high <= low:
            low, high = low - 0.5, high + 0.5
        counts, edges = np.histogram(finite, bins=HISTOGRAM_BINS, range=(low, high))
    else:
        counts, edges = np.zeros(0, dtype=np.int64), np.zeros(0)
    return MonteCarloResult(
        samples=samples,
        seed=seed,
        distribution=distribution.value,
        sigma_k=float(sigma_k),
        yield_fraction=both_pass / samples,
        cmrr_pass_fraction=cm_pass / samples,
        gain_pass_fraction=gain_pass / samples,
        cmrr_percentiles_db=tuple(
            (p, float(v)) for p, v in zip(CMRR_PERCENTS, cm_percentiles, strict=True)
        ),
        gain_error_percentiles=tuple(
            (p, float(v)) for p, v in zip(GAIN_PERCENTS, gain_percentiles, strict=True)
        ),
        cmrr_at_yield_db=at_yield,
        yield_target=requirements.yield_target,
        cmrr_floor_db=requirements.cmrr_floor_db,
        gain_accuracy=requirements.gain_accuracy,
        histogram_counts=tuple(int(x) for x in counts),
        histogram_edges_db=tuple(float(x) for x in edges),
    )


def monte_carlo(
    design: Design, spec: Spec, samples: int | None = None, seed: int | None = None
) -> MonteCarloResult:
    """Monte-Carlo yield of ``design`` under ``spec``; ``samples`` and ``seed`` default to
    ``spec.preferences.samples`` and ``spec.preferences.seed``."""
    prefs = spec.preferences
    req = spec.requirements
    variation = variation_from_design(design, req.life_s, prefs.same_lot_tracking)
    return monte_carlo_from_variation(
        variation,
        environment_from_spec(spec),
        req,
        samples=prefs.samples if samples is None else samples,
        seed=prefs.seed if seed is None else seed,
        distribution=prefs.distribution,
        sigma_k=prefs.sigma_k,
    )
