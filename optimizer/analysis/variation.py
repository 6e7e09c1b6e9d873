"""How the parts of a design vary: the variables of the exact error model, their corners and
their Monte-Carlo samples.

Model (docs/explanation.md, "How parts vary")
--------------------------------
A **discrete part** at temperature ``T`` (°C) and end of life has the resistance::

    r = R0·(1 + e)·(1 + α·ΔT)·(1 + d),      ΔT = T − 25 °C

with ``e ∈ [−t, t]`` (initial tolerance at 25 °C), ``α ∈ [−TC, TC]`` (tempco bound, per K)
and ``d ∈ [−D, D]`` (life drift; ``d ∈ [0, D]`` with the one-sided drift model, below).
``D = drift_1000h·√(life_h/1000)``: the square-root-of-time growth of resistor drift (common
practice, from memory). Each discrete part is independent.
With same-lot tracking (``Preferences.same_lot_tracking``, off by default) discrete parts that
have the same ``part_id`` share one ``α`` (same reel/lot) but keep their own ``e`` and ``d``.

A **network package** shares, between all of its elements, ``e_abs ∈ [−abs_tol, abs_tol]``,
``α_abs ∈ [−abs_tc, abs_tc]`` and ``d_abs ∈ [−D_abs, D_abs]``; element ``i`` deviates from the
package by ``e_i ∈ [−ratio_tol/2, ratio_tol/2]``, ``τ_i ∈ [−track/2, track/2]`` and
``δ_i ∈ [−D_ratio/2, D_ratio/2]``::

    r_i = R0_i·(1 + e_abs)(1 + e_i)·(1 + (α_abs + τ_i)·ΔT)·(1 + d_abs)(1 + δ_i)

so every element ratio stays within the ratio tolerance (to first order) and tracks within the
tracking tempco. ``D_abs`` and ``D_ratio`` follow the same square-root-of-time law from the
part's ``drift_1000h`` and ``ratio_drift_1000h``.

**Drift model** (``Requirements.drift_model``, :func:`~optimizer.analysis.drift.drift_interval`).
``symmetric`` (the default): every drift variable lies in ``[−D, D]``. ``one_sided``: a
discrete part's ``d`` and a package's shared ``d_abs`` lie in ``[0, D]`` (load-life drift of
film resistors is mostly one-signed, common practice, from memory); a network element's ``δ_i``
is a mismatch inside the package and stays in ``[−D_ratio/2, D_ratio/2]``. The worst case
takes every one-sided drift anywhere in ``[0, D]``, independently (a bound holds for any
correlation). The Monte Carlo draws each one-sided drift as a component shared by every part of
the same kind (same ``part_id``: the discrete parts of one kind, the packages of one network
kind) plus an individual one, with :data:`~optimizer.analysis.drift.DRIFT_SHARED_VARIANCE` of
the variance shared (:func:`~optimizer.analysis.drift.one_sided_drift_draw`). The drift
formulas are :mod:`optimizer.analysis.drift`.

In code every design reduces to a :class:`Variation`: per position (R1..R4) the bounds of its
*own* variables ``(e, α, d)`` and, for positions that share variables (one network package or
one same-lot reel), a :class:`SharedGroup` with the bounds of the shared ``(e, α, d)``. The one
formula :func:`resistances` turns values of all variables into resistances; the worst case
feeds it the corners (:func:`vertex_values`) and the Monte Carlo the random draws
(:func:`sample_values`).

The environment (temperature, source and REF impedance, the amplifier) is
:mod:`optimizer.analysis.environment`; ``analysis.corners.passive_corners`` combines the two.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..design import Design
from ..errors import ModelError
from ..parts import NetworkPart
from ..spec import Distribution, DriftModel
from .drift import (
    DRIFT_SHARED_VARIANCE,
    drift_bound,
    drift_factor_bounds,
    drift_interval,
    one_sided_drift_draw,
)

__all__ = [
    "SharedGroup",
    "VariableValues",
    "Variation",
    "discrete_factor_bounds",
    "resistances",
    "sample_values",
    "sign_matrix",
    "static_and_tempco",
    "variation_from_design",
    "vertex_values",
]

Array = NDArray[np.float64]


#: Builds drawn per block in :func:`sample_values` (a block of draws stays in cache).
_DRAW_BLOCK = 8192


# --------------------------------------------------------------------------------------------
# Small pure formulas
# --------------------------------------------------------------------------------------------


def discrete_factor_bounds(
    tolerance: ArrayLike,
    tempco_per_k: ArrayLike,
    drift: ArrayLike,
    max_abs_delta_t_k: float,
    drift_model: DriftModel = DriftModel.SYMMETRIC,
) -> tuple[Array, Array]:
    """Bounds ``(low, high)`` of ``r/R0`` for independent discrete parts over a temperature
    range whose largest ``|ΔT|`` is ``max_abs_delta_t_k``:
    ``low = (1 − t)(1 − TC·|ΔT|)·d_low``, ``high = (1 + t)(1 + TC·|ΔT|)·d_high`` with
    ``(d_low, d_high)`` from :func:`drift_factor_bounds` (``(1 − D, 1 + D)`` symmetric,
    ``(1, 1 + D)`` one-sided): the ends of ``r = R0·(1+e)(1+α·ΔT)(1+d)``; the range of
    ``α·ΔT`` only widens with ``|ΔT|``."""
    t = np.asarray(tolerance, dtype=float)
    tc = np.asarray(tempco_per_k, dtype=float) * abs(float(max_abs_delta_t_k))
    if drift_model is DriftModel.SYMMETRIC:  # the original expression, bit for bit
        d = np.asarray(drift, dtype=float)
        return (1.0 - t) * (1.0 - tc) * (1.0 - d), (1.0 + t) * (1.0 + tc) * (1.0 + d)
    d_low, d_high = drift_factor_bounds(drift, drift_model)
    return (1.0 - t) * (1.0 - tc) * d_low, (1.0 + t) * (1.0 + tc) * d_high


def sign_matrix(count: int) -> Array:
    """All ``2**count`` vectors of ±1 as the rows of a ``(2**count, count)`` array (the
    vertices of the cube ``[−1, 1]**count``)."""
    if count < 0:
        raise ModelError("corners", "count", f"expected zero or more dimensions, got {count}")
    index = np.arange(2**count)[:, None]
    bits = (index >> np.arange(count)[None, :]) & 1
    return 2.0 * bits.astype(float) - 1.0


# --------------------------------------------------------------------------------------------
# The variables of a design
# --------------------------------------------------------------------------------------------


def _check_bound(owner: str, field: str, value: float) -> None:
    if (
        isinstance(value, bool)
        or not isinstance(value, (int, float))
        or not math.isfinite(value)
        or value < 0.0
    ):
        raise ModelError(owner, field, f"expected a finite bound of zero or more, got {value!r}")


@dataclass(frozen=True)
class SharedGroup:
    """Variables shared by the positions of one network package or one same-lot reel.

    ``tolerance`` bounds the shared initial error (fraction), ``tempco_per_k`` the shared
    tempco (per K), ``drift`` the shared end-of-life drift (fraction): it lies in
    ``[drift_low, drift]``, ``drift_low = −drift`` unless given (``0`` for one-sided drift).
    ``drift_kind`` (Monte Carlo, one-sided drift): the index of the part kind whose shared
    drift component the group's drift draws, ``−1`` for none."""

    label: str
    positions: tuple[int, ...]
    tolerance: float
    tempco_per_k: float
    drift: float
    drift_low: float | None = None
    drift_kind: int = -1

    @property
    def drift_min(self) -> float:
        """Lower end of the shared drift (fraction): ``drift_low``, or ``−drift``."""
        return -self.drift if self.drift_low is None else self.drift_low

    def __post_init__(self) -> None:
        owner = f"shared group {self.label}"
        if self.drift_low is not None and not -self.drift <= self.drift_low <= self.drift:
            raise ModelError(
                owner, "drift_low", f"expected −drift to drift, got {self.drift_low!r}"
            )
        if not self.positions or any(p not in (0, 1, 2, 3) for p in self.positions):
            raise ModelError(
                owner, "positions", f"expected position indices 0..3, got {self.positions!r}"
            )
        if len(set(self.positions)) != len(self.positions):
            raise ModelError(owner, "positions", f"a position appears twice in {self.positions!r}")
        for field in ("tolerance", "tempco_per_k", "drift"):
            _check_bound(owner, field, getattr(self, field))
        if self.tolerance >= 0.5 or self.drift >= 0.5:
            raise ModelError(owner, "tolerance", "expected tolerance and drift bounds below 0.5")


Quad = tuple[float, float, float, float]


@dataclass(frozen=True)
class Variation:
    """How the four resistors R1..R4 of a design vary.

    ``nominal_ohm``: nominal values; ``tolerance``, ``tempco_per_k``, ``drift``: bounds of each
    position's *own* variables (for a network element: half the ratio tolerance, half the
    tracking tempco, half the ratio drift); ``groups``: the shared variables (at most one group
    per position). Own drift ``i`` lies in ``[drift_low[i], drift[i]]``, ``drift_low = −drift``
    unless given (``0`` for one-sided drift, :func:`drift_interval`). ``drift_kind`` (Monte
    Carlo, one-sided drift): per position the index of the part kind whose shared drift
    component its own drift draws (:func:`one_sided_drift_draw`), ``−1`` for none.
    """

    nominal_ohm: Quad
    tolerance: Quad = (0.0, 0.0, 0.0, 0.0)
    tempco_per_k: Quad = (0.0, 0.0, 0.0, 0.0)
    drift: Quad = (0.0, 0.0, 0.0, 0.0)
    groups: tuple[SharedGroup, ...] = ()
    drift_low: Quad | None = None
    drift_kind: tuple[int, int, int, int] = (-1, -1, -1, -1)

    @property
    def own_drift_low(self) -> Quad:
        """Lower ends of the own drifts (fractions): ``drift_low``, or ``−drift``."""
        if self.drift_low is None:
            d = self.drift
            return -d[0], -d[1], -d[2], -d[3]
        return self.drift_low

    def __post_init__(self) -> None:
        for field in ("nominal_ohm", "tolerance", "tempco_per_k", "drift"):
            values = getattr(self, field)
            if not isinstance(values, tuple) or len(values) != 4:
                raise ModelError("variation", field, "expected four values (R1, R2, R3, R4)")
            for index, value in enumerate(values):
                _check_bound("variation", f"{field}[R{index + 1}]", value)
        if any(v <= 0.0 for v in self.nominal_ohm):
            raise ModelError("variation", "nominal_ohm", "expected resistances above zero")
        if any(v >= 0.5 for v in self.tolerance + self.drift):
            raise ModelError(
                "variation", "tolerance", "expected tolerance and drift bounds below 0.5"
            )
        if self.drift_low is not None and (
            len(self.drift_low) != 4
            or not all(-d <= lo <= d for lo, d in zip(self.drift_low, self.drift, strict=True))
        ):
            raise ModelError(
                "variation", "drift_low", "expected four values, each from −drift to drift"
            )
        seen: set[int] = set()
        for group in self.groups:
            if seen.intersection(group.positions):
                raise ModelError(
                    "variation", "groups", f"position in more than one group ({group.label})"
                )
            seen.update(group.positions)

    @property
    def nominal(self) -> Array:
        """Nominal resistances as a ``(4,)`` array in ohms."""
        return np.array(self.nominal_ohm, dtype=float)

    @property
    def membership(self) -> Array:
        """``(G, 4)`` array: 1 where position ``i`` belongs to group ``g``, else 0."""
        matrix = np.zeros((len(self.groups), 4))
        for g, group in enumerate(self.groups):
            matrix[g, list(group.positions)] = 1.0
        return matrix

    @property
    def group_of(self) -> tuple[int, int, int, int]:
        """For each position the index of its group, −1 when it shares nothing."""
        owner = [-1, -1, -1, -1]
        for g, group in enumerate(self.groups):
            for position in group.positions:
                owner[position] = g
        return owner[0], owner[1], owner[2], owner[3]

    def with_nominal(self, nominal_ohm: Quad) -> Variation:
        """The same variation around other nominal values."""
        return replace(self, nominal_ohm=nominal_ohm)

    def only(
        self, *, tolerance: bool = False, tempco: bool = False, drift: bool = False
    ) -> Variation:
        """The variation with only the chosen kinds of variable left active (others zero)."""

        def keep(values: Quad, flag: bool) -> Quad:
            return values if flag else (0.0, 0.0, 0.0, 0.0)

        groups = tuple(
            SharedGroup(
                g.label,
                g.positions,
                g.tolerance if tolerance else 0.0,
                g.tempco_per_k if tempco else 0.0,
                g.drift if drift else 0.0,
                g.drift_low if drift else None,
                g.drift_kind,
            )
            for g in self.groups
        )
        return Variation(
            self.nominal_ohm,
            keep(self.tolerance, tolerance),
            keep(self.tempco_per_k, tempco),
            keep(self.drift, drift),
            groups,
            self.drift_low if drift else None,
            self.drift_kind,
        )


def variation_from_design(
    design: Design,
    life_s: float = 0.0,
    same_lot_tracking: bool = False,
    drift_model: DriftModel = DriftModel.SYMMETRIC,
) -> Variation:
    """The :class:`Variation` of a design at the end of ``life_s`` seconds (module docstring
    for the model). Network packages become shared groups; with ``same_lot_tracking`` so do
    discrete parts used more than once under the same ``part_id`` (shared tempco only). With
    the one-sided ``drift_model`` a discrete part's drift and a package's shared drift lie in
    ``[0, D]`` and carry the index of their part kind (same ``part_id``) for the Monte Carlo;
    a network element's ratio drift stays symmetric."""
    one_sided = drift_model is DriftModel.ONE_SIDED
    kinds: dict[str, int] = {}

    def kind_of(part_id: str) -> int:
        return kinds.setdefault(part_id, len(kinds)) if one_sided else -1

    nominal: list[float] = []
    tolerance: list[float] = []
    tempco: list[float] = []
    drift: list[float] = []
    drift_low: list[float] = []
    drift_kind: list[int] = []
    packages: dict[tuple[str, int], list[int]] = {}
    package_parts: dict[tuple[str, int], NetworkPart] = {}
    lots: dict[str, list[int]] = {}
    for index, placement in enumerate(design.placements):
        part = placement.part
        nominal.append(placement.resistance_ohm)
        if isinstance(part, NetworkPart):
            key = placement.package_key
            assert key is not None
            packages.setdefault(key, []).append(index)
            package_parts[key] = part
            tolerance.append(part.ratio_tolerance / 2.0)
            tempco.append(part.tracking_tempco_per_k / 2.0)
            drift.append(drift_bound(part.ratio_drift_1000h, life_s) / 2.0)
            drift_low.append(-drift[-1])  # a mismatch: symmetric in both models
            drift_kind.append(-1)
        else:
            lots.setdefault(part.part_id, []).append(index)
            tolerance.append(part.tolerance)
            tempco.append(part.tempco_per_k)
            drift.append(drift_bound(part.drift_1000h, life_s))
            drift_low.append(drift_interval(drift[-1], drift_model)[0])
            drift_kind.append(kind_of(part.part_id))
    groups: list[SharedGroup] = []
    for key, positions in packages.items():
        part = package_parts[key]
        package_drift = drift_bound(part.drift_1000h, life_s)
        groups.append(
            SharedGroup(
                f"{key[0]} package {key[1] + 1}",
                tuple(positions),
                part.abs_tolerance,
                part.abs_tempco_per_k,
                package_drift,
                drift_interval(package_drift, drift_model)[0] if one_sided else None,
                kind_of(part.part_id),
            )
        )
    if same_lot_tracking:
        for part_id, positions in lots.items():
            shared_tc = tempco[positions[0]]
            if len(positions) < 2 or shared_tc == 0.0:
                continue
            for position in positions:
                tempco[position] = 0.0
            groups.append(SharedGroup(f"lot {part_id}", tuple(positions), 0.0, shared_tc, 0.0))

    def quad(values: list[float]) -> Quad:
        return values[0], values[1], values[2], values[3]

    return Variation(
        quad(nominal),
        quad(tolerance),
        quad(tempco),
        quad(drift),
        tuple(groups),
        quad(drift_low) if one_sided else None,
        (drift_kind[0], drift_kind[1], drift_kind[2], drift_kind[3]),
    )


@dataclass(frozen=True)
class VariableValues:
    """Values of every part variable for ``n`` builds (or corners).

    ``own_*``: ``(n, 4)`` arrays, one column per position; ``shared_*``: ``(n, G)`` arrays, one
    column per :class:`SharedGroup`. Errors and drifts are fractions, tempcos per kelvin."""

    own_error: Array
    own_tempco: Array
    own_drift: Array
    shared_error: Array
    shared_tempco: Array
    shared_drift: Array

    @property
    def count(self) -> int:
        return int(self.own_error.shape[0])


def static_and_tempco(variation: Variation, values: VariableValues) -> tuple[Array, Array]:
    """Split ``r = base·(1 + α_total·ΔT)`` into its temperature-independent part and its tempco.

    ``base_i = R0_i·(1 + e_i)(1 + e_g)·(1 + d_i)(1 + d_g)`` (ohms) and
    ``α_total,i = α_i + α_g`` (per K), where ``g`` is the group of position ``i`` (shared terms
    are zero for positions without a group). Returns two ``(n, 4)`` arrays, evaluated as
    ``((1 + e_i)(1 + d_i))·((1 + e_g)(1 + d_g))·R0_i``."""
    base = (1.0 + values.own_error) * (1.0 + values.own_drift)
    alpha = values.own_tempco.copy()
    if variation.groups:
        shared = (1.0 + values.shared_error) * (1.0 + values.shared_drift)
        for i, g in enumerate(variation.group_of):
            if g >= 0:
                base[:, i] *= shared[:, g]
                alpha[:, i] += values.shared_tempco[:, g]
    base *= variation.nominal
    return base, alpha


def resistances(variation: Variation, values: VariableValues, delta_t_k: ArrayLike) -> Array:
    """Resistances ``(n, 4)`` in ohms of ``n`` builds at ``ΔT = T − 25 °C``:
    ``r_i = R0_i·(1+e_i)(1+e_g)·(1 + (α_i + α_g)·ΔT)·(1+d_i)(1+d_g)`` (module docstring).
    ``delta_t_k`` is a scalar or an ``(n,)`` array in kelvin."""
    base, alpha = static_and_tempco(variation, values)
    dt = np.asarray(delta_t_k, dtype=float)
    if dt.ndim == 1:
        dt = dt[:, None]
    r: Array = base * (1.0 + alpha * dt)
    return r


def _empty_values(count: int, groups: int) -> VariableValues:
    def own() -> Array:
        return np.zeros((4, count)).T  # columns contiguous

    def shared() -> Array:
        return np.zeros((count, groups))

    return VariableValues(own(), own(), own(), shared(), shared(), shared())


def _drift_end(sign: Array, low: float, high: float) -> Array:
    """The drift at the corner of sign ``±1``: ``high`` for +1, ``low`` for −1 (``sign·high``
    when the interval is symmetric, the original expression)."""
    if low == -high:
        return sign * high
    return np.where(sign > 0.0, high, low)


def vertex_values(variation: Variation, delta_t_k: float) -> VariableValues:
    """The corners of the part variables at one temperature offset ``ΔT`` (kelvin).

    Each position's own variables ``(e, α·ΔT, d)`` move its resistance the same way, so they
    take their extremes together under one sign per position; a group's shared ``e`` and ``d``
    only act through their product (one common scale of the group), so they take one sign
    together too; the group's shared ``α`` takes its own sign. Dimensions whose bounds are
    zero are left out. Returns the values of all ``2**k`` sign combinations."""
    dims: list[tuple[str, int]] = []
    tc_sign = 1.0 if delta_t_k >= 0.0 else -1.0
    warm = delta_t_k != 0.0
    for i in range(4):
        if (
            variation.tolerance[i] > 0.0
            or variation.drift[i] > 0.0
            or (warm and variation.tempco_per_k[i] > 0.0)
        ):
            dims.append(("own", i))
    for g, group in enumerate(variation.groups):
        if group.tolerance > 0.0 or group.drift > 0.0:
            dims.append(("scale", g))
        if warm and group.tempco_per_k > 0.0:
            dims.append(("tempco", g))
    signs = sign_matrix(len(dims))
    values = _empty_values(signs.shape[0], len(variation.groups))
    for column, (kind, index) in enumerate(dims):
        s = signs[:, column]
        if kind == "own":
            values.own_error[:, index] = s * variation.tolerance[index]
            values.own_drift[:, index] = _drift_end(
                s, variation.own_drift_low[index], variation.drift[index]
            )
            values.own_tempco[:, index] = s * (tc_sign * variation.tempco_per_k[index])
        elif kind == "scale":
            values.shared_error[:, index] = s * variation.groups[index].tolerance
            group = variation.groups[index]
            values.shared_drift[:, index] = _drift_end(s, group.drift_min, group.drift)
        else:
            values.shared_tempco[:, index] = s * variation.groups[index].tempco_per_k
    return values


def _spread(distribution: Distribution, sigma_k: float) -> tuple[bool, float]:
    if sigma_k <= 0.0 or not math.isfinite(sigma_k):
        raise ModelError("monte carlo", "sigma_k", f"expected a number above zero, got {sigma_k!r}")
    return distribution is Distribution.NORMAL, 1.0 / sigma_k


def sample_values(
    variation: Variation,
    rng: np.random.Generator,
    count: int,
    distribution: Distribution = Distribution.NORMAL,
    sigma_k: float = 3.0,
) -> VariableValues:
    """``count`` random builds: every variable with a non-zero bound ``b`` is drawn
    independently, uniform on ``[−b, b]`` or normal with standard deviation ``σ = b/k``
    (``k = sigma_k``; the bound is the ``k·σ`` point; the normal is *not* truncated).

    A drift whose interval ``[low, high]`` is not symmetric (the one-sided model) is
    ``low + d`` with ``d`` from :func:`one_sided_drift_draw` on ``[0, high − low]``: its
    shared component is the draw of its part kind (``Variation.drift_kind``,
    ``SharedGroup.drift_kind``; one draw per kind and build), or none (``ρ = 0``) when it has no
    kind.

    Draws are made one row per build in a fixed variable order (own e, α, d of R1..R4, then
    e, α, d of each group, then one column per part kind of one-sided drift), so a seed gives
    the same builds whatever the chunking."""
    normal, inv_k = _spread(distribution, sigma_k)
    bounds: list[float] = []
    slots: list[tuple[str, int]] = []
    # One-sided slots: slot column -> (low, span, kind).
    skewed: dict[int, tuple[float, float, int]] = {}

    def add(kind: str, index: int, bound: float, low: float | None = None, part: int = -1) -> None:
        if bound <= 0.0:
            return
        if low is not None and low != -bound:
            skewed[len(slots)] = (low, bound - low, part)
        bounds.append(bound)
        slots.append((kind, index))

    for i in range(4):
        add("own_error", i, variation.tolerance[i])
        add("own_tempco", i, variation.tempco_per_k[i])
        add("own_drift", i, variation.drift[i], variation.own_drift_low[i], variation.drift_kind[i])
    for g, group in enumerate(variation.groups):
        add("shared_error", g, group.tolerance)
        add("shared_tempco", g, group.tempco_per_k)
        add("shared_drift", g, group.drift, group.drift_min, group.drift_kind)
    values = _empty_values(count, len(variation.groups))
    if not slots:
        return values
    kinds = sorted({part for _, _, part in skewed.values() if part >= 0})
    kind_column = {part: len(slots) + j for j, part in enumerate(kinds)}
    targets = [getattr(values, kind)[:, index] for kind, index in slots]
    # Normal: σ = b/k; uniform on [0, 1) mapped to [−b, b) as u·2b − b.
    factors = [b * inv_k if normal else 2.0 * b for b in bounds]
    # Rows are drawn in blocks that stay in cache while their columns are scattered; the
    # generator fills row by row, so the builds are the same as from one bulk draw.
    for start in range(0, count, _DRAW_BLOCK):
        stop = min(count, start + _DRAW_BLOCK)
        shape = (stop - start, len(slots) + len(kinds))
        draws = rng.standard_normal(shape) if normal else rng.random(shape)
        for column, target in enumerate(targets):
            out = target[start:stop]
            if column in skewed:
                low, span, part = skewed[column]
                own = draws[:, column]
                if part >= 0:
                    shared, rho = draws[:, kind_column[part]], DRIFT_SHARED_VARIANCE
                else:
                    shared, rho = own, 0.0
                out[:] = low + one_sided_drift_draw(shared, own, span, distribution, sigma_k, rho)
                continue
            np.multiply(draws[:, column], factors[column], out=out)
            if not normal:
                out -= bounds[column]
    return values
