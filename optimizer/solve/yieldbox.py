"""The yield basis as a box: per-position ranges whose corner conditions are necessary for a
Monte-Carlo yield, so that the exact cost-ordered enumeration of networks
(``optimizer.solve.frontier.network_frontier``) serves the yield basis with the corner screen it
uses for the worst case.

Why the box is necessary
------------------------
The Monte Carlo (``optimizer.analysis.montecarlo``) passes a build when, at its worst
environment corner, ``|ln x| ≤ Λ`` (``x = c/a``, ``Λ`` from the floor and the amplifier's CMRR
at the worse sign: ``frontier.log_balance_limit``) and the gain stays within its window. Fix one
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

Margins: the yield is taken :data:`SAMPLING_SIGMAS` standard errors of the Monte Carlo's
estimate below the target (a design whose true yield is that low can still pass the sampled
check), and :data:`YIELD_SLACK` narrows ``κ`` against the first-order step.

What the box holds
------------------
A network element: its own ratio tolerance, tracking tempco over the largest excursion from
25 °C and ratio drift (half the pair figures, symmetric in both drift models:
``analysis.variation``), each with the variance of its distribution (``options.variance``). The
package's shared factor sits at its mean (its variance is left out: a lower bound), ``1 + D/2``
for a one-sided package drift ``D``, else 1. Ratings keep the true ranges.

Discrete parts stay with the CP-SAT search on the yield basis: measured on the ADC driver
example, even a tighter form of these conditions (per half of the bridge, with the two-sided
tail across the vertices) leaves about two thousand four-discrete designs of about 98 % yield
(target 99 %) below the cheapest one that passes, each a Monte Carlo run of the exact check;
the enumeration then took as long as the CP-SAT search (28 s against 26 s).
Same-lot tracking correlates parts the box treats as independent, and a yield of one half or
less has no positive quantile: those cases also stay with CP-SAT.
"""

from __future__ import annotations

import math

from ..parts import NetworkPart
from ..spec import CmrrBasis, Distribution, DriftModel, Spec
from .environment import LinearEnvironment, life_drift
from .options import variance, z_score

__all__ = [
    "SAMPLING_SIGMAS",
    "YIELD_SLACK",
    "box_factor",
    "element_box",
    "package_centre",
    "quantiles",
    "serves",
]

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


def quantiles(spec: Spec) -> float | None:
    """``z`` of the module docstring (dimensionless) at the yield ``Y' = Y −
    SAMPLING_SIGMAS·√(Y(1 − Y)/N)`` (at least just above one half): ``Φ⁻¹(Y')`` for normal
    parts, ``min(Φ⁻¹(Y'), (2Y' − 1)·√3)`` for uniform parts (the rule of ``solve.limits``).
    None on the worst-case basis."""
    req, prefs = spec.requirements, spec.preferences
    if req.cmrr_basis is not CmrrBasis.YIELD:
        return None
    y = req.yield_target
    y = max(y - SAMPLING_SIGMAS * math.sqrt(y * (1.0 - y) / prefs.samples), 0.5 + 1e-9)
    z = z_score(y)
    if prefs.distribution is Distribution.UNIFORM:
        z = min(z, (2.0 * y - 1.0) * math.sqrt(3.0))
    return z


def box_factor(spec: Spec) -> float | None:
    """The box's ``κ = (z/2)·(1 − YIELD_SLACK)`` (dimensionless: half-width per standard
    deviation), ``z`` from :func:`quantiles`; None on the worst-case basis (no box)."""
    z = quantiles(spec)
    return None if z is None else z / 2.0 * (1.0 - YIELD_SLACK)


def element_box(
    network: NetworkPart, spec: Spec, env: LinearEnvironment, kappa: float
) -> tuple[float, float]:
    """Factor bounds ``(exp(−κσ), exp(κσ))`` of one network element's own variables, ``σ²``
    the variance of half the ratio tolerance, half the tracking tempco times the largest
    excursion from 25 °C and half the ratio drift over the life (fractions;
    ``analysis.variation``)."""
    prefs = spec.preferences
    own = (
        network.ratio_tolerance / 2.0,
        network.tracking_tempco_per_k / 2.0 * env.delta_t_k,
        float(life_drift(network.ratio_drift_1000h, env.life_h)) / 2.0,
    )
    sigma = math.sqrt(float(variance(prefs.distribution, prefs.sigma_k, *own)))
    return math.exp(-kappa * sigma), math.exp(kappa * sigma)


def package_centre(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> float:
    """The mean of a package's shared factor: ``1 + D/2`` for a one-sided package drift ``D``
    over the life, else 1 (the shared tolerance and tempco are symmetric)."""
    if spec.requirements.drift_model is DriftModel.ONE_SIDED:
        return 1.0 + float(life_drift(network.drift_1000h, env.life_h)) / 2.0
    return 1.0
