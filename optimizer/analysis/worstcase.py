"""Worst case of the difference amplifier: the exact extremes of CMRR and gain over every
bounded variable, and the error budget.

What is bounded (see :mod:`optimizer.analysis.variation` for the model): each part's initial
error, tempco and life drift, the shared variables of network packages (and same-lot reels),
the temperature range, the source impedances ``(Rs1, Rs3)`` inside their polygon, the REF
impedance, the sign of the amplifier's (minimum) CMRR and its open-loop gain ``A ≥ A_min``.

Why corners give the exact extreme
----------------------------------
With ``a = R4'/(R3'+R4')``, ``c = R2/(R1'+R2)`` (primes include ``Rs1``, ``Rs3``, ``Rref``) and
``ε = s/(2·CMRR)`` the closed forms of :mod:`~optimizer.analysis.transfer` give::

    Acm/Adm = 2·(y − 1)/(y + 1),   y = (1 + ε)/((1 − ε)·x),   x = c/a = (R3'+R4')/R4' · R2/(R1'+R2)

so ``|Acm/Adm|`` is a function of ``x`` (and ``ε``) that falls towards ``y = 1`` and rises
beyond it: its maximum over any set lies where ``x`` is smallest or largest. ``x`` rises with
R2 and R3 and falls with R1 and R4, whatever the other values (monotone in each resistance);
it does not depend on ``A``; it is monotone in ``ε`` through ``y``; it falls with ``Rref``; and
in ``(Rs1, Rs3)`` it is a ratio of two affine functions, so it is monotone along every line and
its extremes over the source polygon are at vertices. The differential gain
``Adm = (a(1+ε) + c(1−ε)) / (2(1/A + (1−c)(1−ε)))`` rises with R2, R4, Rref and A, falls with
R1, R3, Rs1, Rs3, and is a ratio of affine functions of ``ε``. Hence:

* for independent parts the reachable resistances at one temperature form a box and the
  extremes are at its vertices; each part's own variables ``(e, α·ΔT, d)`` move its resistance
  the same way, so one sign per part suffices;
* the reachable set at any temperature inside the range is contained in the set at the end
  with the larger ``|ΔT|`` (the tempco terms are ``α·ΔT`` with ``α`` in a symmetric box), so
  the two ends of the temperature range suffice;
* the environment extremes are at the polygon vertices, the ends of the REF range, ``±`` the
  minimum amplifier CMRR and ``A ∈ {A_min, ∞}``.

Shared variables (network packages, same-lot reels) can put an extreme inside the range of a
group's common scale; :mod:`~optimizer.analysis.scalesearch` says when and finds it, and the
result here is the larger of it and the corners. Every value reported is that of a feasible
point, so the result never overstates the worst case.

Public entry points: :func:`worst_case` (a design and a spec), :func:`worst_case_from_variation`
(a :class:`~optimizer.analysis.variation.Variation` and an environment) and
:func:`worst_case_from_bounds` (independent parts given as per-resistor bounds, vectorised over
many designs: a plain 16-corner box enumeration, which the tests hold :func:`worst_case` to; no
search uses it).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..spec import Spec
from .balance import (
    above_rounding,
    budget_shares,
    common_mode_error,
    nominal_common_mode_error,
    rejection_db,
)
from .corners import passive_corners
from .environment import (
    IDEAL_ENVIRONMENT,
    Environment,
    amplifier_corners,
    environment_from_spec,
)
from .scalesearch import Extremes, refine
from .transfer import (
    coefficients,
    common_mode_gain,
    differential_gain,
)
from .variation import Variation, variation_from_design

__all__ = [
    "BUDGET_NAMES",
    "BoundsWorstCase",
    "BudgetItem",
    "WorstCase",
    "worst_case",
    "worst_case_from_bounds",
    "worst_case_from_variation",
]

Array = NDArray[np.float64]

#: Error-budget contributors, in report order.
BUDGET_NAMES = (
    "value_quantisation",
    "tolerance",
    "tempco",
    "life_drift",
    "source_imbalance",
    "ref_impedance",
    "amplifier_cmrr",
    "open_loop_gain",
)


def _relative_gain_error(gain: ArrayLike, target_gain: float) -> Array:
    """Signed relative gain error ``Adm/G_target − 1``."""
    return np.asarray(gain, dtype=float) / target_gain - 1.0


# --------------------------------------------------------------------------------------------
# Results
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class BudgetItem:
    """One contributor of the error budget, evaluated with only it active.

    ``cmrr_error``: worst ``|Acm/Adm|`` (ratio) from this contributor alone; ``gain_error``:
    worst ``|Adm/G − 1|`` from it alone; the shares are fractions of the sums over all items."""

    name: str
    cmrr_error: float
    gain_error: float
    cmrr_share: float
    gain_share: float

    @property
    def cmrr_db(self) -> float:
        """This contributor's CMRR in dB (``inf`` when it adds nothing)."""
        return float(rejection_db(self.cmrr_error))


@dataclass(frozen=True)
class WorstCase:
    """Exact worst case of a design over every bounded variable.

    ``cmrr_db``: worst CMRR including the amplifier; ``cmrr_resistors_db``: worst CMRR with an
    ideal amplifier (resistors, source and REF impedance); ``gain_min``/``gain_max``: range of
    the differential gain ``|Adm|``; ``gain_error_min``/``gain_error_max``: the same as signed
    errors relative to ``target_gain``; ``nominal_gain``/``nominal_cmrr_db``: nominal values,
    no source or REF impedance, ideal amplifier; ``budget``: one :class:`BudgetItem` per entry
    of :data:`BUDGET_NAMES`, worked out on first use (the search's exact checks of designs it
    rejects never read it); ``corner_count``: corners evaluated."""

    cmrr_db: float
    cmrr_resistors_db: float
    gain_min: float
    gain_max: float
    gain_error_min: float
    gain_error_max: float
    nominal_gain: float
    nominal_cmrr_db: float
    target_gain: float
    corner_count: int
    #: What :attr:`budget` is worked out from: the variation, the environment, the target gain.
    budget_inputs: tuple[Variation, Environment, float] = field(repr=False, compare=False)

    @cached_property
    def budget(self) -> tuple[BudgetItem, ...]:
        """Each contributor alone (:func:`_budget`), computed once, on first use."""
        return _budget(*self.budget_inputs)

    @property
    def gain_error_worst(self) -> float:
        """Largest magnitude of the relative gain error."""
        return max(abs(self.gain_error_min), abs(self.gain_error_max))

    def budget_item(self, name: str) -> BudgetItem:
        for item in self.budget:
            if item.name == name:
                return item
        raise ModelError(
            "worst case",
            "budget",
            f"no contributor {name!r}; expected one of {', '.join(BUDGET_NAMES)}",
        )


@dataclass(frozen=True)
class BoundsWorstCase:
    """Worst case of a batch of designs with independent parts (arrays of the batch shape)."""

    cmrr_db: Array
    cmrr_resistors_db: Array
    gain_min: Array
    gain_max: Array


# --------------------------------------------------------------------------------------------
# Corner enumeration
# --------------------------------------------------------------------------------------------


def _enumerate(variation: Variation, environment: Environment) -> Extremes:
    """Evaluate every corner at once (one call of ``coefficients`` with the amplifier corners
    broadcast against the passive corners) and return the extremes."""
    pc = passive_corners(variation, environment)
    ac = amplifier_corners(environment)
    r = pc.r
    passive = coefficients(r[:, 0], r[:, 1], r[:, 2], r[:, 3], pc.rs1, pc.rs3, pc.rref)
    cm_passive = float(
        np.max(common_mode_error(common_mode_gain(passive), differential_gain(passive)))
    )
    col = (slice(None), None)
    k = coefficients(
        r[:, 0][col],
        r[:, 1][col],
        r[:, 2][col],
        r[:, 3][col],
        pc.rs1[col],
        pc.rs3[col],
        pc.rref[col],
        ac.open_loop_gain[None, :],
        ac.cmrr[None, :],
        ac.sign[None, :],
    )
    adm = differential_gain(k)
    cm = float(np.max(common_mode_error(common_mode_gain(k), adm)))
    gain = np.abs(adm)
    return Extremes(cm, cm_passive, float(gain.min()), float(gain.max()), pc.count * ac.count)


def _extremes(variation: Variation, environment: Environment) -> Extremes:
    corners = _enumerate(variation, environment)
    refined = refine(variation, environment)
    if refined is None:
        return corners
    return Extremes(
        max(corners.cm_error, refined.cm_error),
        max(corners.cm_error_passive, refined.cm_error_passive),
        min(corners.gain_min, refined.gain_min),
        max(corners.gain_max, refined.gain_max),
        corners.corners,
    )


# --------------------------------------------------------------------------------------------
# Budget
# --------------------------------------------------------------------------------------------


def _nominal_common_mode_error(variation: Variation) -> float:
    """:func:`nominal_common_mode_error` of the nominal values (0 for a balanced bridge)."""
    return nominal_common_mode_error(*variation.nominal_ohm)


def _budget(
    variation: Variation, environment: Environment, target_gain: float
) -> tuple[BudgetItem, ...]:
    """Each contributor alone. Value quantisation compares the nominal values with the target
    gain (nominal values, ideal environment); every other contributor is evaluated on the
    *balanced* version of the design (R2 = G·R1, R4 = G·R3 exactly) with everything else ideal,
    so that each figure is that contributor's effect alone."""
    r1, r2, r3, r4 = variation.nominal_ohm
    k = coefficients(r1, r2, r3, r4)
    adm = differential_gain(k)
    errors: dict[str, tuple[float, float]] = {
        "value_quantisation": (
            above_rounding(_nominal_common_mode_error(variation)),
            above_rounding(float(abs(_relative_gain_error(adm, target_gain)))),
        )
    }
    balanced = variation.with_nominal((r1, target_gain * r1, r3, target_gain * r3))
    still = balanced.only()
    cases: dict[str, tuple[Variation, Environment]] = {
        "tolerance": (balanced.only(tolerance=True), IDEAL_ENVIRONMENT),
        "tempco": (
            balanced.only(tempco=True),
            Environment(temperatures_c=environment.temperatures_c),
        ),
        "life_drift": (balanced.only(drift=True), IDEAL_ENVIRONMENT),
        "source_imbalance": (still, Environment(source_ohm=environment.source_ohm)),
        "ref_impedance": (still, Environment(ref_ohm=environment.ref_ohm)),
        "amplifier_cmrr": (still, Environment(amp_cmrr=environment.amp_cmrr)),
        "open_loop_gain": (still, Environment(open_loop_gain=environment.open_loop_gain)),
    }
    for name, (var, env) in cases.items():
        ext = _enumerate(var, env)
        gain_error = max(
            abs(ext.gain_min / target_gain - 1.0), abs(ext.gain_max / target_gain - 1.0)
        )
        errors[name] = (above_rounding(ext.cm_error), above_rounding(gain_error))
    cm_shares = budget_shares([errors[n][0] for n in BUDGET_NAMES])
    gain_shares = budget_shares([errors[n][1] for n in BUDGET_NAMES])
    return tuple(
        BudgetItem(
            name, errors[name][0], errors[name][1], float(cm_shares[i]), float(gain_shares[i])
        )
        for i, name in enumerate(BUDGET_NAMES)
    )


# --------------------------------------------------------------------------------------------
# Entry points
# --------------------------------------------------------------------------------------------


def worst_case_from_variation(
    variation: Variation, environment: Environment, target_gain: float
) -> WorstCase:
    """Exact worst case of a :class:`Variation` in an :class:`Environment` against the target
    differential gain ``target_gain`` (module docstring for the method)."""
    if not math.isfinite(target_gain) or target_gain <= 0.0:
        raise ModelError(
            "worst case", "gain", f"expected a target gain above zero, got {target_gain!r}"
        )
    ext = _extremes(variation, environment)
    r1, r2, r3, r4 = variation.nominal_ohm
    adm = differential_gain(coefficients(r1, r2, r3, r4))
    return WorstCase(
        cmrr_db=float(rejection_db(ext.cm_error)),
        cmrr_resistors_db=float(rejection_db(ext.cm_error_passive)),
        gain_min=ext.gain_min,
        gain_max=ext.gain_max,
        gain_error_min=float(_relative_gain_error(ext.gain_min, target_gain)),
        gain_error_max=float(_relative_gain_error(ext.gain_max, target_gain)),
        nominal_gain=float(abs(adm)),
        nominal_cmrr_db=float(rejection_db(_nominal_common_mode_error(variation))),
        target_gain=float(target_gain),
        corner_count=ext.corners,
        budget_inputs=(variation, environment, float(target_gain)),
    )


def worst_case(design: Design, spec: Spec) -> WorstCase:
    """Exact worst case of ``design`` under ``spec``: temperature range, life, source and REF
    impedance, the amplifier's minimum CMRR and open-loop gain, target gain
    ``spec.requirements.gain``, drift model ``spec.requirements.drift_model``; same-lot
    tracking from ``spec.preferences``."""
    req = spec.requirements
    variation = variation_from_design(
        design, req.life_s, spec.preferences.same_lot_tracking, req.drift_model
    )
    return worst_case_from_variation(variation, environment_from_spec(spec), req.gain)


def worst_case_from_bounds(
    nominal_ohm: ArrayLike,
    low_factor: ArrayLike,
    high_factor: ArrayLike,
    environment: Environment = IDEAL_ENVIRONMENT,
) -> BoundsWorstCase:
    """Worst case of designs whose four resistors vary independently within
    ``[R0·low, R0·high]`` (temperature and drift already folded in, e.g. by
    :func:`~optimizer.analysis.variation.discrete_factor_bounds`; ``environment.temperatures_c``
    is not used). ``nominal_ohm``, ``low_factor`` and ``high_factor`` have shape ``(..., 4)``;
    the results have the batch shape ``...``. All 16 resistor corners are combined with every
    source, REF and amplifier corner of ``environment``."""
    nominal = np.asarray(nominal_ohm, dtype=float)
    low = np.broadcast_to(np.asarray(low_factor, dtype=float), nominal.shape)
    high = np.broadcast_to(np.asarray(high_factor, dtype=float), nominal.shape)
    if nominal.shape[-1:] != (4,):
        raise ModelError(
            "worst case",
            "nominal",
            f"expected a last axis of 4 (R1..R4), got shape {nominal.shape}",
        )
    if np.any(nominal <= 0.0) or np.any(low <= 0.0) or np.any(high < low):
        raise ModelError("worst case", "bounds", "expected positive nominals and 0 < low ≤ high")
    signs = np.array([[(j >> i) & 1 for i in range(4)] for j in range(16)], dtype=bool)
    r = nominal[..., None, :] * np.where(
        signs, high[..., None, :], low[..., None, :]
    )  # (..., 16, 4)
    source = np.array(environment.source_ohm, dtype=float)
    ref = np.array(environment.ref_ohm, dtype=float)
    rs1 = np.repeat(source[:, 0], ref.size)
    rs3 = np.repeat(source[:, 1], ref.size)
    rref = np.tile(ref, source.shape[0])
    ac = amplifier_corners(environment)
    rr = [r[..., i][..., None, None] for i in range(4)]  # (..., 16, 1, 1)
    env = (rs1[:, None], rs3[:, None], rref[:, None])  # (E, 1)
    passive = coefficients(
        rr[0][..., 0], rr[1][..., 0], rr[2][..., 0], rr[3][..., 0], *(e[:, 0] for e in env)
    )
    cm_passive = common_mode_error(common_mode_gain(passive), differential_gain(passive)).max(
        axis=(-2, -1)
    )
    k = coefficients(
        rr[0], rr[1], rr[2], rr[3], env[0], env[1], env[2],
        ac.open_loop_gain[None, :], ac.cmrr[None, :], ac.sign[None, :],
    )  # fmt: skip
    adm = differential_gain(k)
    cm = common_mode_error(common_mode_gain(k), adm).max(axis=(-3, -2, -1))
    gain = np.abs(adm)
    return BoundsWorstCase(
        cmrr_db=rejection_db(cm),
        cmrr_resistors_db=rejection_db(cm_passive),
        gain_min=gain.min(axis=(-3, -2, -1)),
        gain_max=gain.max(axis=(-3, -2, -1)),
    )
