"""Monte-Carlo yield of a design: the fraction of builds that meet the CMRR floor and the gain
accuracy at every corner of the environment.

Method
------
* Builds are drawn with a seeded numpy ``Generator`` (PCG64, seed ``Preferences.seed``);
  ``Preferences.samples`` builds by default (100,000). Every part variable of the model in
  :mod:`~optimizer.analysis.variation` (own initial error, tempco and drift of each part or
  network element; shared initial error, tempco and drift of each network package or
  same-lot reel) is drawn independently: uniform within its bound, or normal with the bound
  at ``k·σ`` (``k = Preferences.sigma_k``, default 3; the normal is not truncated). With the
  one-sided drift model (``Requirements.drift_model``) each drift lies on ``[0, D]`` and is a
  component shared by the parts of one kind plus its own
  (:func:`~optimizer.analysis.drift.one_sided_drift_draw`).
* Each build is judged at its worst environment corner: both ends of the temperature range,
  the vertices of the source-impedance polygon, both ends of the REF impedance range, the
  amplifier's minimum CMRR at the worse sign; for the gain the open-loop gain at its minimum
  (smallest gain) and infinite (largest gain: the differential gain rises with ``A``). For a
  fixed build the CMRR and the gain are monotone or quasi-linear in the source and REF
  impedances and in the amplifier terms (see :mod:`~optimizer.analysis.worstcase`), so these
  corners are exact for them; in temperature the ends of the range are used (a build whose
  tempco errors cancel to first order could be marginally worse inside the range, by a term of
  order ``(α·ΔT)²``).
* Only the corners that can be the worst for *some* build are evaluated
  (:func:`judging_corners`). With ``a = R4'/(R3'+R4')`` and ``c = R2/(R1'+R2)``, ``a`` falls
  with ``Rs3`` and rises with ``Rref``, ``c`` falls with ``Rs1``, whatever the resistances.
  The common-mode error at the worse sign of the amplifier's CMRR is a quasi-convex function
  of the balance ``x = c/a``
  (:func:`~optimizer.analysis.balance.common_mode_error_worst_sign`), so over all corners it
  is largest at the largest ``x`` (``Rs1`` low, ``Rs3`` high, ``Rref`` low) or the smallest
  (the opposite): each build keeps its largest ``x`` over the corners where ``x`` can be
  largest and its smallest over those where it can be smallest, at both temperatures, and the
  error is evaluated at those two. The gain rises with ``a``, ``c`` and ``A``, so it is largest at
  ``Rs1``, ``Rs3`` low, ``Rref`` high, ``A = ∞`` and smallest at the opposite corner with
  ``A = A_min``. Of the source-polygon vertices only those that no other vertex beats in both
  coordinates can hold such an extreme
  (:func:`~optimizer.analysis.environment.dominant_vertices`). The gain is monotone in ``ε``:
  at ``A = ∞`` it rises with ``ε`` for every build (``Adm = (a(1+ε) + c(1−ε))/(2β(1−ε))``,
  ``β = 1 − c``, has ``dAdm/dε = a/(β(1−ε)²) > 0``), so the largest gain takes ``ε = +e``
  only; at ``A_min`` the direction depends on the build, so the smallest gain takes both
  signs. The result is that of judging every corner: a corner left out is never worse than
  one kept, except by float rounding.
* A build passes when its worst CMRR is at or above ``cmrr_floor_db`` **and** its gain error
  stays within ``±gain_accuracy`` of the target gain at every corner.
* A build drawn so far into the tail of a normal distribution that a resistance is zero or
  negative is not physical; it counts as a failure with CMRR ``−inf`` and gain error ``+inf``.

Samples are processed in chunks (default 16,384 builds) so that 10⁷ builds need well under
1 GiB and a chunk's working arrays (a few dozen of 128 KiB) stay in the processor's cache,
which makes the arithmetic about a third faster than on chunks of 10⁵ builds; the random
stream is laid out build by build, so the result does not depend on the chunk size.

The kernel (:func:`kernel`) evaluates an ``(n, 4)`` resistance array at one environment corner
and returns per-build CMRR in dB and differential gain; it is what the benchmark times.
"""

from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass, replace
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..spec import Distribution, Requirements, Spec
from .balance import (
    bridge_terms,
    common_mode_error_from_terms,
    common_mode_error_worst_sign,
    differential_gain_from_terms,
    feedback_complement,
    rejection_db,
)
from .environment import Environment, dominant_vertices, environment_from_spec
from .transfer import divider_ratio
from .variation import (
    VariableValues,
    Variation,
    sample_values,
    static_and_tempco,
    variation_from_design,
)

__all__ = [
    "CMRR_PERCENTS",
    "DEFAULT_CHUNK",
    "GAIN_PERCENTS",
    "HISTOGRAM_BINS",
    "JudgingCorners",
    "MonteCarloResult",
    "build_factors",
    "judging_corners",
    "kernel",
    "monte_carlo",
    "monte_carlo_from_variation",
    "quantile_for_yield",
    "worst_signed_error",
    "yield_fractions",
]

Array = NDArray[np.float64]
#: An environment corner ``(Rs1, Rs3, Rref)`` in ohms.
Corner = tuple[float, float, float]

#: Percentiles (%) of the per-build worst CMRR reported (low tail: the CMRR most builds meet).
CMRR_PERCENTS = (0.1, 1.0, 5.0, 50.0)
#: Percentiles (%) of the per-build worst signed gain error reported.
GAIN_PERCENTS = (0.1, 50.0, 99.9)
#: Bins of the CMRR histogram.
HISTOGRAM_BINS = 40
#: Builds per chunk (small enough for a chunk's working arrays to stay in cache).
DEFAULT_CHUNK = 16_384


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
    :func:`~optimizer.analysis.balance.bridge_terms`."""
    res = np.asarray(r, dtype=float)
    a, c = bridge_terms(res[:, 0] + rs1, res[:, 1], res[:, 2] + rs3, res[:, 3] + rref)
    eps = cmrr_sign / (2.0 * amp_cmrr)
    cm = common_mode_error_from_terms(a, c, eps)
    return rejection_db(cm), differential_gain_from_terms(a, c, eps, 1.0 / open_loop_gain)


# --------------------------------------------------------------------------------------------
# The corners that decide a build
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class JudgingCorners:
    """The environment corners at which a build is judged (module docstring).

    ``x_high`` and ``x_low``: corners ``(Rs1, Rs3, Rref)`` (ohms) where ``x = c/a`` can be
    largest and smallest, for the common-mode error at the worse sign of ``ε``,
    ``eps_abs = 1/(2·CMRR)``; ``gain_high``: corners of the largest gain (``A = ∞``,
    ``ε = +eps_abs``); ``gain_low``: corners of the smallest gain
    (``1/A = inv_open_loop_gain``, ``ε`` in ``eps_low``: both signs, or ``(0,)`` for an ideal
    amplifier)."""

    x_high: tuple[Corner, ...]
    x_low: tuple[Corner, ...]
    gain_high: tuple[Corner, ...]
    gain_low: tuple[Corner, ...]
    eps_abs: float
    eps_low: tuple[float, ...]
    inv_open_loop_gain: float


def judging_corners(environment: Environment) -> JudgingCorners:
    """The corners that can decide a build's worst CMRR and gain (module docstring): ``x``
    largest at ``Rs1`` low, ``Rs3`` high, ``Rref`` low and smallest at the opposite; the gain
    largest at ``Rs1``, ``Rs3`` low, ``Rref`` high and smallest at the opposite."""
    source = environment.source_ohm
    ref_low, ref_high = min(environment.ref_ohm), max(environment.ref_ohm)

    def corners(rs1_way: float, rs3_way: float, rref: float) -> tuple[Corner, ...]:
        return tuple((v[0], v[1], rref) for v in dominant_vertices(source, rs1_way, rs3_way))

    eps_abs = 0.0 if math.isinf(environment.amp_cmrr) else 0.5 / environment.amp_cmrr
    return JudgingCorners(
        x_high=corners(-1.0, 1.0, ref_low),
        x_low=corners(1.0, -1.0, ref_high),
        gain_high=corners(-1.0, -1.0, ref_high),
        gain_low=corners(1.0, 1.0, ref_low),
        eps_abs=eps_abs,
        eps_low=(0.0,) if eps_abs == 0.0 else (eps_abs, -eps_abs),
        inv_open_loop_gain=1.0 / environment.open_loop_gain,
    )


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


def _plus(resistance: Array, impedance_ohm: float) -> Array:
    """``R + Z`` in ohms: a resistance in series with a source or REF impedance (the array
    itself when ``Z`` is zero, which adds nothing)."""
    return resistance if impedance_ohm == 0.0 else resistance + impedance_ohm


def _judge(base: Array, alpha: Array, environment: Environment) -> tuple[Array, Array, Array]:
    """Per build: worst common-mode error ``|Acm/Adm|`` and the lowest and highest
    differential gain over the environment corners (:func:`judging_corners`). ``base`` and
    ``alpha``: ``(n, 4)`` from :func:`~optimizer.analysis.variation.static_and_tempco`."""
    n = base.shape[0]
    corners = judging_corners(environment)
    every = corners.x_high + corners.x_low + corners.gain_high + corners.gain_low
    rs1_values = tuple(dict.fromkeys(rs1 for rs1, _, _ in every))
    a_keys = tuple(dict.fromkeys((rs3, rref) for _, rs3, rref in every))
    x_high = np.full(n, -np.inf)
    x_low = np.full(n, np.inf)
    gain_low = np.full(n, np.inf)
    gain_high = np.full(n, -np.inf)
    physical = np.ones(n, dtype=bool)
    r = np.empty((4, n)).T  # columns contiguous
    for dt in environment.delta_t_k:
        np.multiply(alpha, dt, out=r)
        r += 1.0
        r *= base
        r1, r2, r3, r4 = r[:, 0], r[:, 1], r[:, 2], r[:, 3]
        if not r.min() > 0.0:  # rare: find the builds with a resistance at or below zero
            physical &= np.minimum(np.minimum(r1, r2), np.minimum(r3, r4)) > 0.0
        # c depends on Rs1 only, a on (Rs3, Rref) only: each is computed once per value.
        c_of = {rs1: feedback_complement(_plus(r1, rs1), r2) for rs1 in rs1_values}
        a_of = {key: divider_ratio(_plus(r3, key[0]), _plus(r4, key[1])) for key in a_keys}
        for rs1, rs3, rref in corners.x_high:
            np.maximum(x_high, c_of[rs1] / a_of[rs3, rref], out=x_high)
        for rs1, rs3, rref in corners.x_low:
            np.minimum(x_low, c_of[rs1] / a_of[rs3, rref], out=x_low)
        for rs1, rs3, rref in corners.gain_high:
            g = differential_gain_from_terms(a_of[rs3, rref], c_of[rs1], corners.eps_abs, 0.0)
            np.maximum(gain_high, g, out=gain_high)
        for rs1, rs3, rref in corners.gain_low:
            for eps in corners.eps_low:
                g = differential_gain_from_terms(
                    a_of[rs3, rref], c_of[rs1], eps, corners.inv_open_loop_gain
                )
                np.minimum(gain_low, g, out=gain_low)
    worst_cm = np.maximum(
        common_mode_error_worst_sign(x_high, corners.eps_abs),
        common_mode_error_worst_sign(x_low, corners.eps_abs),
    )
    if not physical.all():
        worst_cm[~physical] = np.inf
        gain_low[~physical] = np.inf
        gain_high[~physical] = np.inf
    return worst_cm, gain_low, gain_high


def _passes(
    worst_cm: Array, gain_low: Array, gain_high: Array, requirements: Requirements
) -> tuple[NDArray[np.bool_], NDArray[np.bool_], Array, Array]:
    """Per build: CMRR floor met (worst ``|Acm/Adm|`` at most ``10^(−floor/20)``), gain inside
    ``G(1 ± accuracy)`` at both extremes, and the two relative gain errors."""
    cm_limit = 10.0 ** (-requirements.cmrr_floor_db / 20.0)
    ok_cm = worst_cm <= cm_limit
    err_low = gain_low / requirements.gain - 1.0
    err_high = gain_high / requirements.gain - 1.0
    ok_gain = (err_low >= -requirements.gain_accuracy) & (err_high <= requirements.gain_accuracy)
    return ok_cm, ok_gain, err_low, err_high


#: The builds of the latest few variations, kept for re-use (key: :func:`_draw_key`): a search
#: checks many designs whose parts vary alike (other values of the same parts), and the draws
#: do not depend on the values. Runs of more than :data:`CACHED_SAMPLES_MAX` builds are not
#: kept (memory).
_DRAWS: OrderedDict[tuple[object, ...], list[VariableValues]] = OrderedDict()
DRAW_CACHE_SIZE = 4
CACHED_SAMPLES_MAX = 200_000


def _draw_key(
    variation: Variation,
    samples: int,
    seed: int,
    chunk: int,
    distribution: Distribution,
    sigma_k: float,
) -> tuple[object, ...]:
    """Everything ``variation.sample_values`` reads, with the run's count, seed and chunking:
    equal keys give equal builds."""
    groups = tuple(
        (g.tolerance, g.tempco_per_k, g.drift, g.drift_min, g.drift_kind) for g in variation.groups
    )
    return (
        variation.tolerance,
        variation.tempco_per_k,
        variation.drift,
        variation.own_drift_low,
        variation.drift_kind,
        groups,
        samples,
        seed,
        chunk,
        distribution,
        sigma_k,
    )


def _builds(
    variation: Variation,
    samples: int,
    seed: int,
    chunk: int,
    distribution: Distribution,
    sigma_k: float,
) -> list[VariableValues]:
    """The run's builds chunk by chunk (``sample_values`` on one seeded generator), from the
    cache when the same bounds were drawn lately; the arrays are read-only."""
    key = _draw_key(variation, samples, seed, chunk, distribution, sigma_k)
    known = _DRAWS.get(key)
    if known is not None:
        _DRAWS.move_to_end(key)
        return known
    rng = np.random.Generator(np.random.PCG64(seed))
    drawn = []
    for start in range(0, samples, chunk):
        values = sample_values(variation, rng, min(chunk, samples - start), distribution, sigma_k)
        for array in vars(values).values():
            array.flags.writeable = False
        drawn.append(values)
    if samples <= CACHED_SAMPLES_MAX:
        _DRAWS[key] = drawn
        while len(_DRAWS) > DRAW_CACHE_SIZE:
            _DRAWS.popitem(last=False)
    return drawn


def build_factors(
    variation: Variation,
    *,
    samples: int,
    seed: int,
    distribution: Distribution = Distribution.NORMAL,
    sigma_k: float = 3.0,
) -> tuple[Array, Array]:
    """``(f, α)``, each ``(samples, 4)``: the builds :func:`monte_carlo_from_variation` draws
    for ``variation`` (the same seed and stream; builds are laid out one by one, so chunking
    does not change them) without the nominal values: a build's resistance at ``ΔT`` is
    ``f·R0·(1 + α·ΔT)``. The draws do not read ``variation.nominal_ohm``, so one call serves
    every design that differs from ``variation`` in its nominal values only."""
    rng = np.random.Generator(np.random.PCG64(seed))
    values = sample_values(variation, rng, samples, distribution, sigma_k)
    return static_and_tempco(replace(variation, nominal_ohm=(1.0, 1.0, 1.0, 1.0)), values)


def yield_fractions(
    factors: tuple[Array, Array],
    nominals: Array,
    environment: Environment,
    requirements: Requirements,
    chunk: int = DEFAULT_CHUNK,
    target: float | None = None,
) -> Array:
    """For each row of ``nominals`` (``(M, 4)``, ohms), the ``yield_fraction`` that
    :func:`monte_carlo_from_variation` gives for the variation of ``factors``
    (:func:`build_factors`) with that row as its nominal values: the same builds
    (``f·R0``, the product the Monte Carlo forms) judged by the same code, so equal to it
    exactly (each build is judged on its own; the chunks only bound the memory).

    ``target``: a row is stopped as soon as its builds passed so far plus those left fall
    below ``target`` of all; its entry is then the builds passed so far over all builds, below
    ``target``. So ``fraction >= target`` decides exactly as the Monte Carlo's yield does."""
    f, alpha = factors
    n = f.shape[0]
    rows = np.asarray(nominals, dtype=float).reshape(-1, 4)
    out = np.empty(rows.shape[0])
    width = min(n, chunk)  # builds per step
    per = max(1, chunk // width)  # rows per step
    for first in range(0, rows.shape[0], per):
        block = rows[first : first + per]
        passed = np.zeros(block.shape[0], dtype=np.int64)
        alive = np.ones(block.shape[0], dtype=bool)
        for start in range(0, n, width):
            live = np.flatnonzero(alive)
            if live.size == 0:
                break
            stop = min(n, start + width)
            part_f, part_alpha = f[start:stop], alpha[start:stop]
            base = (part_f[None, :, :] * block[live][:, None, :]).reshape(-1, 4)
            tempco = np.broadcast_to(part_alpha, (live.size, stop - start, 4)).reshape(-1, 4)
            worst_cm, gain_low, gain_high = _judge(base, tempco, environment)
            ok_cm, ok_gain, _, _ = _passes(worst_cm, gain_low, gain_high, requirements)
            passed[live] += (ok_cm & ok_gain).reshape(live.size, stop - start).sum(axis=1)
            if target is not None:
                alive[live] = (passed[live] + (n - stop)) / n >= target
        out[first : first + block.shape[0]] = passed / n
    return out


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
    :class:`~optimizer.analysis.environment.Environment` against ``requirements`` (target gain,
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
    drawn = _builds(variation, samples, seed, chunk, distribution, sigma_k)
    cm_db = np.empty(samples)
    gain_err = np.empty(samples)
    cm_pass = 0
    gain_pass = 0
    both_pass = 0
    for start, values in zip(range(0, samples, chunk), drawn, strict=True):
        count = min(chunk, samples - start)
        base, alpha = static_and_tempco(variation, values)
        worst_cm, gain_low, gain_high = _judge(base, alpha, environment)
        ok_cm, ok_gain, err_low, err_high = _passes(worst_cm, gain_low, gain_high, requirements)
        cm_pass += int(ok_cm.sum())
        gain_pass += int(ok_gain.sum())
        both_pass += int((ok_cm & ok_gain).sum())
        cm_db[start : start + count] = rejection_db(worst_cm)
        gain_err[start : start + count] = worst_signed_error(err_low, err_high)
    # Linear interpolation between order statistics; with non-physical builds (±inf) present
    # the inverted empirical CDF, which never interpolates towards an infinity.
    all_finite = bool(np.isfinite(cm_db).all())
    method: Literal["linear", "inverted_cdf"] = "linear" if all_finite else "inverted_cdf"
    # One partial sort for the CMRR percentiles and the yield quantile together.
    cm_quantiles = np.quantile(
        cm_db,
        [*(np.asarray(CMRR_PERCENTS) / 100.0), quantile_for_yield(requirements.yield_target)],
        method=method,
    )
    cm_percentiles, at_yield = cm_quantiles[:-1], float(cm_quantiles[-1])
    gain_percentiles = np.percentile(gain_err, GAIN_PERCENTS, method=method)
    finite = cm_db if all_finite else cm_db[np.isfinite(cm_db)]
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
    variation = variation_from_design(design, req.life_s, prefs.same_lot_tracking, req.drift_model)
    return monte_carlo_from_variation(
        variation,
        environment_from_spec(spec),
        req,
        samples=prefs.samples if samples is None else samples,
        seed=prefs.seed if seed is None else seed,
        distribution=prefs.distribution,
        sigma_k=prefs.sigma_k,
    )
