"""The yield basis as a box and a screen: per-position ranges whose corner conditions are
necessary for a Monte-Carlo yield, and the linearised yield conditions of whole designs, so that
the exact cost-ordered enumerations of networks (``optimizer.solve.networks.network_frontier``)
and of one dual with two discrete parts (``optimizer.solve.mixed``) serve the yield basis with
the corner conditions they use for the worst case.

Why the box is necessary
------------------------
The Monte Carlo (``optimizer.analysis.montecarlo``) passes a build when, at its worst
environment corner, ``|ln x| ≤ Λ`` (``x = c/a``, ``Λ`` from the floor and the amplifier's CMRR
at the worse sign: ``screen.log_balance_limit``) and the gain stays within its window. Fix one
environment vertex and linearise: ``ln x = ln x(μ) + Σᵢ sᵢ·εᵢ + (shared terms)``, where ``μ`` is
every variable at its mean, ``εᵢ`` the log deviation of position ``i``'s own variables from their
mean (independent across the four positions, variance ``σᵢ²``) and ``sᵢ`` the sensitivities of
``ln x``. The sum ``X`` is symmetric and unimodal (a sum of independent symmetric unimodal
variables; the package's shared terms only add variance), so its ``Y``-quantile is at least
``z·σ_X`` with ``z`` from :func:`quantiles` and ``σ_X² ≥ Σ sᵢ²σᵢ²``. A yield ``Y`` therefore
needs ``ln x(μ) + z·√(Σ sᵢ²σᵢ²) ≤ Λ`` (and the mirror condition). By Cauchy–Schwarz over the
four positions, ``Σ |sᵢ|·σᵢ ≤ 2·√(Σ sᵢ²σᵢ²)``, so with ``κ = z/2`` the largest ``ln x`` over
the box ``ln Rᵢ ∈ ln μᵢ ± κσᵢ`` — to first order ``ln x(μ) + κ·Σ |sᵢ|σᵢ`` — is at most ``Λ``:
every design that meets the yield passes the worst-case corner screen on this box. The same
holds for the gain window (its log sensitivities in place of ``sᵢ``).

The design screen
-----------------
The box is only a first cut (Cauchy–Schwarz loses up to a factor 2). Before its Monte Carlo,
each candidate design — in the one-dual search each electrical design, with every part
variant of it — meets the conditions themselves (:class:`DesignScreen`,
:func:`balance_conditions`): ``|m| + z·σ_X ≤ Λ`` at each vertex, with ``m = ln x(μ)`` and
``σ_X`` from the four positions' own spreads and exact sensitivities; and, since a passing
build has ``−Λ ≤ ln x ≤ Λ`` at every vertex at once, for normal parts the two tails together
hold at most ``1 − Y``: the normal tail ``Q`` is convex on the positive axis, so
``Q(α) + Q(β) ≥ 2·Q((α + β)/2)`` gives ``(m_max − m_min)/2 + z₂·σ_X ≤ Λ`` with
``z₂ = Φ⁻¹((1 + Y)/2)`` (as ``solve.model`` does; the variation taken as common to the
vertices, which the impedances move only by their ratio to the resistances).

Margins: the yield is taken :data:`SAMPLING_SIGMAS` standard errors of the Monte Carlo's
estimate below the target (a design whose true yield is that low can still pass the sampled
check); :data:`YIELD_SLACK` narrows the box's ``κ`` against the first-order step, and the
screen narrows its quantiles by :func:`first_order_slack` of the design's widest part.

What the box holds
------------------
* A network element: its own ratio tolerance, tracking tempco over the largest excursion from
  25 °C and ratio drift (half the pair figures, symmetric in both drift models:
  ``analysis.variation``), each with the variance of its distribution (``options.variance``).
  The package's shared factor sits at its mean (its variance is left out: a lower bound),
  ``1 + D/2`` for a one-sided package drift ``D``, else 1.
* A discrete part: tolerance and tempco over the largest excursion, each with the variance of
  its distribution; the symmetric drift likewise. A one-sided drift on ``[0, D]`` is partly
  shared by parts of one kind (``analysis.variation``), so its variance is left out (a lower
  bound) and the box is centred at its mean ``1 + D/2``.

Ratings keep the true ranges.

Measured on the ADC driver example: one dual with two discrete parts alone, CP-SAT ended at the
30 s limit with its best design unproven; the enumeration with the box alone found nothing in
30 s (about 90,000 candidates near the yield, each a Monte Carlo); with the design screen it
proves the same cheapest design in about 2.5 s. Four discrete parts stay with the CP-SAT search
on the yield basis: the four-discrete enumeration's half records on the box are too many (with
the design screen it still found nothing in 30 s; a tighter form per half of the bridge reached
the CP-SAT optimum in 28 s against CP-SAT's 26 s). Same-lot tracking correlates parts the box
treats as independent, and a yield of one half or less has no positive quantile: those cases
also stay with CP-SAT.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..design import Design
from ..parts import DiscretePart, NetworkPart
from ..spec import CmrrBasis, Distribution, DriftModel, Spec
from .environment import LinearEnvironment, life_drift
from .options import variance, yield_quantile, z_score

__all__ = [
    "SAMPLING_SIGMAS",
    "YIELD_SLACK",
    "DesignScreen",
    "balance_conditions",
    "box_factor",
    "element_box",
    "element_spread",
    "first_order_slack",
    "lowered_yield",
    "package_centre",
    "part_box",
    "part_spread",
    "quantiles",
    "serves",
    "two_sided_quantile",
]

Array = NDArray[np.float64]

#: Relative narrowing of the box's quantile (module docstring): the first-order step.
YIELD_SLACK = 0.05
#: Standard errors ``√(Y(1 − Y)/N)`` of the Monte Carlo's yield estimate (``N`` builds) that the
#: yield is lowered by before its quantile is taken.
SAMPLING_SIGMAS = 4.0


def serves(spec: Spec) -> bool:
    """Whether the box applies to ``spec``: the yield basis, no same-lot tracking, a yield above
    one half (the box argument needs the quantile to be positive)."""
    req = spec.requirements
    return (
        req.cmrr_basis is CmrrBasis.YIELD
        and not spec.preferences.same_lot_tracking
        and req.yield_target > 0.5
    )


def lowered_yield(spec: Spec) -> float:
    """``Y' = Y − SAMPLING_SIGMAS·√(Y(1 − Y)/N)`` (a fraction; ``N`` Monte Carlo builds), at
    least just above one half: the least true yield that can still pass the sampled check."""
    y = spec.requirements.yield_target
    spread = SAMPLING_SIGMAS * math.sqrt(y * (1.0 - y) / spec.preferences.samples)
    return max(y - spread, 0.5 + 1e-9)


def quantiles(spec: Spec) -> float | None:
    """``z`` of the module docstring (dimensionless) at :func:`lowered_yield`:
    ``options.yield_quantile`` (``Φ⁻¹(Y')``, for uniform parts at most ``(2Y' − 1)·√3``).
    None on the worst-case basis."""
    if spec.requirements.cmrr_basis is not CmrrBasis.YIELD:
        return None
    return yield_quantile(lowered_yield(spec), spec.preferences.distribution)


def two_sided_quantile(spec: Spec) -> float:
    """``z₂ = Φ⁻¹((1 + Y')/2)`` at :func:`lowered_yield` for normal parts; 0 for uniform parts
    (no two-sided bound is used for them) and on the worst-case basis."""
    req, prefs = spec.requirements, spec.preferences
    if req.cmrr_basis is not CmrrBasis.YIELD or prefs.distribution is Distribution.UNIFORM:
        return 0.0
    return z_score((1.0 + lowered_yield(spec)) / 2.0)


def box_factor(spec: Spec) -> float | None:
    """The box's ``κ = (z/2)·(1 − YIELD_SLACK)`` (dimensionless: half-width per standard
    deviation), ``z`` from :func:`quantiles`; None on the worst-case basis (no box)."""
    z = quantiles(spec)
    return None if z is None else z / 2.0 * (1.0 - YIELD_SLACK)


def part_spread(tolerance: Array, swing: Array, drift: Array, spec: Spec) -> tuple[Array, Array]:
    """``(μ, σ)`` of discrete parts' resistance factors: ``σ² = var(tolerance) + var(swing)
    [+ var(drift), symmetric drift]`` (fractions; ``swing`` = tempco times the largest
    excursion from 25 °C, K) by the spec's distribution (``options.variance``), and ``μ = 1``,
    or ``1 + D/2`` for a one-sided drift ``D``."""
    prefs = spec.preferences
    one_sided = spec.requirements.drift_model is DriftModel.ONE_SIDED
    parts = (tolerance, swing) if one_sided else (tolerance, swing, drift)
    sigma = np.sqrt(variance(prefs.distribution, prefs.sigma_k, *parts))
    centre = 1.0 + drift / 2.0 if one_sided else np.ones_like(sigma)
    return centre, sigma


def part_box(centre: Array, sigma: Array, kappa: float) -> tuple[Array, Array]:
    """Factor bounds ``(μ·exp(−κσ), μ·exp(κσ))`` of discrete parts on the box."""
    return centre * np.exp(-kappa * sigma), centre * np.exp(kappa * sigma)


def element_spread(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> float:
    """``σ`` of one network element's own log factor: the root of the summed variances of half
    the ratio tolerance, half the tracking tempco times the largest excursion from 25 °C and
    half the ratio drift over the life (fractions; ``analysis.variation``), by the spec's
    distribution (``options.variance``)."""
    prefs = spec.preferences
    own = (
        network.ratio_tolerance / 2.0,
        network.tracking_tempco_per_k / 2.0 * env.delta_t_k,
        float(life_drift(network.ratio_drift_1000h, env.life_h)) / 2.0,
    )
    return math.sqrt(float(variance(prefs.distribution, prefs.sigma_k, *own)))


def element_box(
    network: NetworkPart, spec: Spec, env: LinearEnvironment, kappa: float
) -> tuple[float, float]:
    """Factor bounds ``(exp(−κσ), exp(κσ))`` of one network element's own variables on the
    box, ``σ`` from :func:`element_spread`."""
    sigma = element_spread(network, spec, env)
    return math.exp(-kappa * sigma), math.exp(kappa * sigma)


def package_centre(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> float:
    """The mean of a package's shared factor: ``1 + D/2`` for a one-sided package drift ``D``
    over the life, else 1 (the shared tolerance and tempco are symmetric)."""
    if spec.requirements.drift_model is DriftModel.ONE_SIDED:
        return 1.0 + float(life_drift(network.drift_1000h, env.life_h)) / 2.0
    return 1.0


def first_order_slack(sigma: float) -> float:
    """The relative narrowing ``0.01 + 2·σ_max`` of the quantiles for a design whose parts'
    largest log-factor spread is ``σ_max``: the second-order terms of ``ln x`` in the parts'
    log deviations (Hessian entries at most 1/4 per pair) are of order ``σ`` relative to the
    first-order spread."""
    return 0.01 + 2.0 * sigma


def balance_conditions(
    r: Array, sigma: Array, vertices: Array, balance: float, z: float, z_two: float
) -> bool:
    """The linearised CMRR conditions of a yield for one design (module docstring): at each
    vertex ``(Rs1, Rs3, Rref)`` (rows of ``vertices``, ohms), with ``c = R2/(R1' + R2)``,
    ``a = R4'/(R3' + R4')`` at the mean resistances ``r`` (ohms, R1..R4), ``m = ln(c/a)`` and
    ``σ_X² = Σ sᵢ²σᵢ²`` with the log sensitivities ``s = (−(1−c)·R1/R1', 1−c, (1−a)·R3/R3',
    −(1−a)·R4/R4')`` (differentiation of ``ln c − ln a``): ``|m| + z·σ_X ≤ Λ`` and
    ``z₂·σ_X ≤ Λ`` at each vertex, and ``(m_max − m_min)/2 + z₂·min σ_X ≤ Λ`` across them (the
    two tails at once; ``z₂ = 0`` skips both). ``Λ = balance`` (log units); ``z``, ``z₂`` as
    narrowed by the caller."""
    r1, r2, r3, r4 = (float(x) for x in r)
    rs1, rs3, rref = vertices[:, 0], vertices[:, 1], vertices[:, 2]
    r1e, r3e, r4e = r1 + rs1, r3 + rs3, r4 + rref
    c = r2 / (r1e + r2)
    a = r4e / (r3e + r4e)
    m = np.log(c / a)
    s1 = (1.0 - c) * r1 / r1e
    s2 = 1.0 - c
    s3 = (1.0 - a) * r3 / r3e
    s4 = (1.0 - a) * r4 / r4e
    spread = np.sqrt(
        (s1 * sigma[0]) ** 2 + (s2 * sigma[1]) ** 2 + (s3 * sigma[2]) ** 2 + (s4 * sigma[3]) ** 2
    )
    if np.any(np.abs(m) + z * spread > balance) or np.any(z_two * spread > balance):
        return False
    swing = (float(m.max()) - float(m.min())) / 2.0
    return swing + z_two * float(spread.min()) <= balance


class DesignScreen:
    """The linearised yield conditions of :func:`balance_conditions` for whole designs, before
    their Monte Carlo: each position's mean resistance and own spread (``part_spread`` for a
    discrete part; for a network element half its pair figures, at its package's mean), the
    quantiles narrowed by :func:`first_order_slack` of the design's widest part. ``balance``:
    ``Λ`` of the spec (``screen.log_balance_limit``)."""

    def __init__(self, spec: Spec, env: LinearEnvironment, balance: float) -> None:
        z = quantiles(spec)
        self._spec = spec
        self._env = env
        self._z = 0.0 if z is None else z
        self._z_two = two_sided_quantile(spec)
        self._balance = balance
        self._known: dict[tuple[DiscretePart | NetworkPart, int | None], tuple[float, float]] = {}

    def position(
        self, part: DiscretePart | NetworkPart, element: int | None
    ) -> tuple[float, float]:
        """``(mean resistance, σ)`` of a position, worked out once per part and element."""
        key = (part, element)
        known = self._known.get(key)
        if known is None:
            known = self._known[key] = self._spread_of(part, element)
        return known

    def _spread_of(
        self, part: DiscretePart | NetworkPart, element: int | None
    ) -> tuple[float, float]:
        spec, env = self._spec, self._env
        if isinstance(part, DiscretePart):
            drift = np.array([float(life_drift(part.drift_1000h, env.life_h))])
            centre, sigma = part_spread(
                np.array([part.tolerance]),
                np.array([part.tempco_per_k * env.delta_t_k]),
                drift,
                spec,
            )
            return part.resistance_ohm * float(centre[0]), float(sigma[0])
        value = part.values_ohm[element if element is not None else 0]
        return value * package_centre(part, spec, env), element_spread(part, spec, env)

    def passes(self, design: Design) -> bool:
        """False only when the design cannot meet the yield (the Monte Carlo would fail it)."""
        placed = [self.position(p.part, p.element) for p in design.placements]
        return self.passes_values(
            np.array([p[0] for p in placed]), np.array([p[1] for p in placed])
        )

    def passes_values(self, r: Array, sigma: Array) -> bool:
        """:meth:`passes` for mean resistances ``r`` (ohms) and spreads ``sigma`` at R1..R4."""
        narrow = 1.0 - first_order_slack(float(sigma.max()))
        return balance_conditions(
            r, sigma, self._env.vertices, self._balance, self._z * narrow, self._z_two * narrow
        )
