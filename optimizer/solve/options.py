"""Assignment options: the ways a catalog can fill positions R1..R4, with the constants the
linear model needs for each.

An *option* covers one or more positions: a discrete part at one position, a dual network on
two positions (in one orientation), or a quad network on all four (in one element order). A
design is an exact cover of R1..R4 by options. Every requirement of the linear model is a sum of
per-option constants, because each constant depends only on the values and grades at the
positions that option covers (``optimizer.solve.model`` explains the linearisation).

Per option and per environment vertex v (a combination of source and REF impedances):

* φᵢ = ln(Rᵢ + rsᵢ,v), the log of the effective resistance at position i (rs: Rs1 at R1, Rs3 at
  R3, Rref at R4, none at R2);
* δ = Σ cδᵢ·φᵢ with cδ = (+1, −1, −1, +1): the ratio mismatch ln(R4'/R3') − ln(R2/R1');
* γ = Σ cgᵢ·φᵢ with cg = (−1+h, 1−h, −h, +h), h = 1/(2(1+G)): the log differential gain;
* Wδ, Wg: worst-case deviation of δ and γ from the parts' tolerance, tempco and drift;
* Sδ, Sg: variance of δ and γ for the yield basis.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from ..analysis.formulas import BOLTZMANN_J_PER_K as BOLTZMANN
from ..catalog import Catalog
from ..design import Topology
from ..parts import NetworkPart
from ..spec import Distribution, DriftModel, Spec, StockPolicy
from .environment import LinearEnvironment, life_drift, series_impedance

#: A rating must cover this fraction of the estimated stress (a relaxation: the exact check
#: verifies the real stress of the chosen design).
RATING_RELAXATION = 0.97

__all__ = ["C_DELTA", "PAIR", "QUAD", "OptionTable", "build_options", "gain_coefficients"]

#: ``OptionTable.positions`` of a pair network option and of a quad network option.
PAIR = 2
QUAD = 4

C_DELTA = np.array([1.0, -1.0, -1.0, 1.0])

#: Pair shapes (0-based position pairs) allowed for each pair topology.
EQUAL_SHAPES = ((0, 2), (1, 3))
DIVIDER_SHAPES = ((0, 1), (2, 3))
ALL_SHAPES = tuple(itertools.combinations(range(4), 2))


def gain_coefficients(gain: float) -> NDArray[np.float64]:
    """cg = (−1+h, 1−h, −h, +h) with h = 1/(2(1+G)): first-order sensitivity of ln Adm to the
    log of each effective resistance (derived from Adm = [b + (1+b)·ρ/(1+ρ)]/2 with b = R2/R1',
    ρ = R4'/R3' at balance ρ = b = G)."""
    h = 1.0 / (2.0 * (1.0 + gain))
    return np.array([-1.0 + h, 1.0 - h, -h, h])


def log_deviation(*fractions: NDArray[np.float64] | float) -> NDArray[np.float64]:
    """Σ ln(1 + xₖ): the smaller (upward) side of the log deviation of a product of
    independent ±xₖ factors; −ln(1 − x) ≥ ln(1 + x), so this side never overstates a deviation."""
    total: NDArray[np.float64] = np.zeros(np.broadcast(*[np.asarray(f) for f in fractions]).shape)
    for fraction in fractions:
        total = total + np.log1p(np.asarray(fraction, dtype=float))
    return total


def variance(
    distribution: Distribution, sigma_k: float, *bounds: NDArray[np.float64] | float
) -> NDArray[np.float64]:
    """Σ var of independent variables bounded by ±xₖ: (xₖ/k)² for normal with bound = k·σ,
    xₖ²/3 for uniform on [−xₖ, xₖ]."""
    total: NDArray[np.float64] = np.zeros(np.broadcast(*[np.asarray(b) for b in bounds]).shape)
    for bound in bounds:
        b = np.asarray(bound, dtype=float)
        total = total + ((b / sigma_k) ** 2 if distribution is Distribution.NORMAL else b**2 / 3.0)
    return total


@dataclass(frozen=True)
class OptionTable:
    """Options with their constants; arrays of length n (options) or shape (n, V) (vertices).

    ``positions``: how many of R1..R4 the package covers (:data:`PAIR` or :data:`QUAD`);
    ``covers``: (n, 4) booleans; ``shape``: index into :data:`ALL_SHAPES` for pairs, else −1;
    ``line``: an id per part number (for line cost); ``cost``: part cost plus placement cost
    plus stock penalty (relative units)."""

    positions: NDArray[np.int64]
    covers: NDArray[np.bool_]
    shape: NDArray[np.int64]
    line: NDArray[np.int64]
    cost: NDArray[np.float64]
    delta: NDArray[np.float64]
    gain: NDArray[np.float64]
    w_delta: NDArray[np.float64]
    w_gain: NDArray[np.float64]
    s_delta: NDArray[np.float64]
    s_gain: NDArray[np.float64]
    noise: NDArray[np.float64]
    ohms: NDArray[np.float64]
    makers: tuple[tuple[tuple[int, str, int, int | None], ...], ...]
    line_names: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.positions.shape[0])

    def subset(self, mask: NDArray[np.bool_]) -> OptionTable:
        """The options where ``mask`` is true (same line ids and names)."""
        index = np.flatnonzero(mask)
        return OptionTable(
            positions=self.positions[index],
            covers=self.covers[index],
            shape=self.shape[index],
            line=self.line[index],
            cost=self.cost[index],
            delta=self.delta[index],
            gain=self.gain[index],
            w_delta=self.w_delta[index],
            w_gain=self.w_gain[index],
            s_delta=self.s_delta[index],
            s_gain=self.s_gain[index],
            noise=self.noise[index],
            ohms=self.ohms[index],
            makers=tuple(self.makers[i] for i in index),
            line_names=self.line_names,
        )


@dataclass
class _Rows:
    """Accumulator of per-option rows before they are stacked into an :class:`OptionTable`."""

    positions: list[int]
    covers: list[tuple[bool, bool, bool, bool]]
    shape: list[int]
    line: list[int]
    cost: list[float]
    resist: list[list[float]]  # (4,) values, nan where not covered
    own: list[list[float]]  # (4,) own log deviation
    own_var: list[list[float]]  # (4,) own variance
    shared: list[float]
    shared_var: list[float]
    upper: list[list[float]]  # (4,) R·(1 + own tolerance) for impedance bounds
    makers: list[tuple[tuple[int, str, int, int | None], ...]]


def _effective_cost(
    cost: NDArray[np.float64], stocked: NDArray[np.bool_], spec: Spec
) -> NDArray[np.float64]:
    prefs = spec.preferences
    penalty = prefs.line_penalty
    return cost + prefs.placement_cost + np.where(stocked, 0.0, penalty)


def _network_rows(
    catalog: Catalog, spec: Spec, env: LinearEnvironment, rows: _Rows, lines: dict[str, int]
) -> None:
    """Pair and quad options from the catalog's networks, for the allowed topologies.

    The per-network constants (cost, own and shared log deviation and variance) are computed
    for all networks at once (:func:`_network_constants`); the loop over element orders only
    places them (:func:`_place_network`)."""
    prefs = spec.preferences
    topologies = set(prefs.topologies)
    pair_shapes = _pair_shapes(topologies)
    want_quads = Topology.QUAD in topologies
    networks = catalog.networks
    if not networks:
        return
    constants = _network_constants(networks, spec, env)
    low = prefs.resistance_min_ohm * (1 - 1e-9)
    high = prefs.resistance_max_ohm * (1 + 1e-9)
    pair_list = sorted(pair_shapes)
    quad_orders = list(itertools.permutations(range(4)))
    for index, network in enumerate(networks):
        if prefs.stock is StockPolicy.ONLY and not network.in_stock:
            continue
        values = [float(v) for v in network.values_ohm]
        if min(values) < low or max(values) > high:
            continue
        shapes: list[tuple[int, ...]]
        orders: list[tuple[int, ...]]
        if network.elements == 2 and pair_shapes:
            shapes, orders = list(pair_list), [(0, 1), (1, 0)]
        elif network.elements == 4 and want_quads:
            shapes, orders = [(0, 1, 2, 3)], quad_orders
        else:
            continue
        line = lines.setdefault(network.part_id, len(lines))
        _place_network(rows, network, index, values, (shapes, orders), line, constants, env)


def _pair_shapes(topologies: set[Topology]) -> set[tuple[int, int]]:
    """The position pairs a dual may take under the allowed topologies."""
    pair_shapes: set[tuple[int, int]] = set()
    if Topology.EQUAL_PAIRS in topologies:
        pair_shapes.update(EQUAL_SHAPES)
    if Topology.DIVIDER_PAIRS in topologies:
        pair_shapes.update(DIVIDER_SHAPES)
    if Topology.PAIR_PLUS_DISCRETE in topologies:
        pair_shapes.update(ALL_SHAPES)
    return pair_shapes


@dataclass(frozen=True)
class _NetworkConstants:
    """Per network of the catalog (lists in catalog order): its effective cost, its elements'
    own log deviation and variance (half the ratio figures) and the package's shared ones."""

    costs: list[float]
    own_devs: list[float]
    own_vars: list[float]
    shareds: list[float]
    shared_vars: list[float]


def _network_constants(
    networks: Sequence[NetworkPart], spec: Spec, env: LinearEnvironment
) -> _NetworkConstants:
    """:class:`_NetworkConstants` of every network at once (``log_deviation``, ``variance``;
    a one-sided package drift taken as none: a subset of its range, a relaxation)."""
    prefs = spec.preferences
    dist, k = prefs.distribution, prefs.sigma_k

    def column(name: str) -> NDArray[np.float64]:
        return np.array([float(getattr(n, name)) for n in networks])

    ratio = (
        column("ratio_tolerance") / 2.0,
        column("tracking_tempco_per_k") / 2.0 * env.delta_t_k,
        life_drift(column("ratio_drift_1000h"), env.life_h) / 2.0,
    )
    absolute = (
        column("abs_tolerance"),
        column("abs_tempco_per_k") * env.delta_t_k,
        # One-sided package drift taken as none: a subset of its range (a relaxation).
        life_drift(column("drift_1000h"), env.life_h)
        * (0.0 if spec.requirements.drift_model is DriftModel.ONE_SIDED else 1.0),
    )
    in_stock = np.array([n.in_stock for n in networks], dtype=bool)
    return _NetworkConstants(
        costs=_effective_cost(column("unit_cost"), in_stock, spec).tolist(),
        own_devs=log_deviation(*ratio).tolist(),
        own_vars=variance(dist, k, *ratio).tolist(),
        shareds=log_deviation(*absolute).tolist(),
        shared_vars=variance(dist, k, *absolute).tolist(),
    )


def _place_network(
    rows: _Rows,
    network: NetworkPart,
    index: int,
    values: list[float],
    layouts: tuple[list[tuple[int, ...]], list[tuple[int, ...]]],
    line: int,
    constants: _NetworkConstants,
    env: LinearEnvironment,
) -> None:
    """The options of one network (catalog ``index``, element ``values``): one per shape and
    element order of ``layouts`` whose elements bear the relaxed stress at their positions, an
    order that puts the same values at the same positions kept once."""
    shapes, orders = layouts
    stress = [float(s) for s in env.stress_v]
    own_dev, own_var = constants.own_devs[index], constants.own_vars[index]
    grow = 1.0 + network.abs_tolerance + network.ratio_tolerance / 2.0
    volt_ok = [network.max_voltage_v >= RATING_RELAXATION * s for s in stress]
    power = network.power_per_element_w * env.derating
    for shape in shapes:
        seen: set[tuple[float, ...]] = set()
        for order in orders:
            elements = order[: len(shape)]
            # Elements of one package vary alike (same bounds), so two element orders that put
            # the same values at the same positions are the same design electrically: keep one.
            layout = tuple(values[e] for e in elements)
            if layout in seen:
                continue
            seen.add(layout)
            if not all(
                volt_ok[p] and power >= RATING_RELAXATION * stress[p] ** 2 / r
                for p, r in zip(shape, layout, strict=True)
            ):
                continue
            resist = [math.nan] * 4
            own = [0.0] * 4
            own_v = [0.0] * 4
            upper = [0.0] * 4
            for p, r in zip(shape, layout, strict=True):
                resist[p], own[p], own_v[p], upper[p] = r, own_dev, own_var, r * grow
            rows.positions.append(len(shape))
            rows.covers.append(tuple(i in shape for i in range(4)))  # type: ignore[arg-type]
            rows.shape.append(ALL_SHAPES.index(shape) if len(shape) == 2 else -1)  # type: ignore[arg-type,unused-ignore]
            rows.line.append(line)
            rows.cost.append(constants.costs[index])
            rows.resist.append(resist)
            rows.own.append(own)
            rows.own_var.append(own_v)
            rows.shared.append(constants.shareds[index])
            rows.shared_var.append(constants.shared_vars[index])
            rows.upper.append(upper)
            rows.makers.append(
                tuple(
                    (pos, network.part_id, index, el)
                    for pos, el in zip(shape, elements, strict=False)
                )
            )


def build_options(catalog: Catalog, spec: Spec, env: LinearEnvironment) -> OptionTable:
    """Every network option (pair or quad) the pick may use for ``spec`` from ``catalog``, with
    its constants; discrete parts are handled by ``optimizer.solve.discrete``."""
    rows = _Rows([], [], [], [], [], [], [], [], [], [], [], [])
    lines: dict[str, int] = {}
    blocks: list[dict[str, NDArray[np.float64] | NDArray[np.int64] | NDArray[np.bool_]]] = []
    _network_rows(catalog, spec, env, rows, lines)
    if rows.positions:
        m = len(rows.positions)
        blocks.append(
            {
                "positions": np.array(rows.positions, dtype=np.int64),
                "covers": np.array(rows.covers, dtype=bool).reshape(m, 4),
                "shape": np.array(rows.shape, dtype=np.int64),
                "line": np.array(rows.line, dtype=np.int64),
                "cost": np.array(rows.cost, dtype=float),
                "resist": np.array(rows.resist).reshape(m, 4),
                "own": np.array(rows.own).reshape(m, 4),
                "own_var": np.array(rows.own_var).reshape(m, 4),
                "shared": np.array(rows.shared, dtype=float),
                "shared_var": np.array(rows.shared_var, dtype=float),
                "upper": np.array(rows.upper).reshape(m, 4),
            }
        )
    makers = tuple(rows.makers)
    if not blocks:
        empty = {
            "positions": np.zeros(0, dtype=np.int64),
            "covers": np.zeros((0, 4), dtype=bool),
            "shape": np.zeros(0, dtype=np.int64),
            "line": np.zeros(0, dtype=np.int64),
            "cost": np.zeros(0),
            "resist": np.zeros((0, 4)),
            "own": np.zeros((0, 4)),
            "own_var": np.zeros((0, 4)),
            "shared": np.zeros(0),
            "shared_var": np.zeros(0),
            "upper": np.zeros((0, 4)),
        }
        blocks.append(empty)
    merged = {key: np.concatenate([b[key] for b in blocks]) for key in blocks[0]}
    return _stack(merged, makers, spec, env, tuple(lines))


def _stack(
    rows: dict[str, NDArray[np.float64] | NDArray[np.int64] | NDArray[np.bool_]],
    makers: tuple[tuple[tuple[int, str, int, int | None], ...], ...],
    spec: Spec,
    env: LinearEnvironment,
    line_names: tuple[str, ...],
) -> OptionTable:
    resist = np.asarray(rows["resist"], dtype=float)
    covered = ~np.isnan(resist)
    series = series_impedance(env)  # (V, 4)
    values = np.where(covered, resist, 1.0)[:, None, :]  # (n, 1, 4)
    effective = values + series[None, :, :]
    phi = np.where(covered[:, None, :], np.log(effective), 0.0)  # (n, V, 4)
    fraction = np.where(covered[:, None, :], values / effective, 0.0)
    cg = gain_coefficients(spec.requirements.gain)
    own = np.asarray(rows["own"], dtype=float)[:, None, :]
    own_var = np.asarray(rows["own_var"], dtype=float)[:, None, :]
    shared = np.asarray(rows["shared"], dtype=float)[:, None]
    shared_var = np.asarray(rows["shared_var"], dtype=float)[:, None]

    def project(c: NDArray[np.float64]) -> tuple[NDArray[np.float64], ...]:
        lin = (phi * c).sum(axis=2)
        weights = fraction * c
        worst = (np.abs(weights) * own).sum(axis=2) + np.abs(weights.sum(axis=2)) * shared
        var = (weights**2 * own_var).sum(axis=2) + weights.sum(axis=2) ** 2 * shared_var
        return lin, worst, var

    delta, w_delta, s_delta = project(C_DELTA)
    gain, w_gain, s_gain = project(cg)
    noise = _noise_terms(resist, covered, spec, env)
    return OptionTable(
        positions=np.asarray(rows["positions"], dtype=np.int64),
        covers=np.asarray(rows["covers"], dtype=bool),
        shape=np.asarray(rows["shape"], dtype=np.int64),
        line=np.asarray(rows["line"], dtype=np.int64),
        cost=np.asarray(rows["cost"], dtype=float),
        delta=delta,
        gain=gain,
        w_delta=w_delta,
        w_gain=w_gain,
        s_delta=s_delta,
        s_gain=s_gain,
        noise=noise,
        ohms=np.asarray(rows["upper"], dtype=float),
        makers=makers,
        line_names=line_names,
    )


def lowest_gain(spec: Spec) -> float:
    """The lowest R2/R1 an accepted design can have, G·(1 − accuracy), less 2 % for the source
    impedance and rounding: noise is priced at it so that the noise bound never overstates."""
    req = spec.requirements
    return req.gain * (1.0 - req.gain_accuracy) * 0.98


def position_noise(
    values: NDArray[np.float64], spec: Spec, env: LinearEnvironment
) -> NDArray[np.float64]:
    """Output noise power density (V²/Hz) of a resistor of each value (n, 4) at each position,
    at the lowest gain G (:func:`lowest_gain`) and the hottest temperature: R1 → 4kT·R1·G²,
    R2 → 4kT·R2 + in²·R2², R3 → 4kT·R3·G² + in²·R3²·G², R4 → 4kT·R4 (the balanced circuit:
    R1 seen through gain G, R2 directly, R3 and R4 through the divider times the noise gain
    1+G; R3∥R4 = R3·G/(1+G) for the current noise). A lower estimate: the exact check adds the
    source impedances and the amplifier's voltage noise."""
    g = lowest_gain(spec)
    four_kt = 4.0 * BOLTZMANN * env.hottest_k
    i_n = spec.amplifier.current_noise_a_rthz
    r = values
    return np.stack(
        [
            four_kt * r[:, 0] * g**2,
            four_kt * r[:, 1] + (i_n * r[:, 1]) ** 2,
            four_kt * r[:, 2] * g**2 + (i_n * r[:, 2] * g) ** 2,
            four_kt * r[:, 3],
        ],
        axis=1,
    )


def _noise_terms(
    resist: NDArray[np.float64], covered: NDArray[np.bool_], spec: Spec, env: LinearEnvironment
) -> NDArray[np.float64]:
    """Output noise power density (V²/Hz) each option adds (:func:`position_noise` summed over
    the positions it covers)."""
    return np.asarray(
        position_noise(np.where(covered, resist, 0.0), spec, env).sum(axis=1), dtype=float
    )


def noise_floor(spec: Spec, env: LinearEnvironment) -> float:
    """Output noise power density (V²/Hz) no choice of resistors can remove: the amplifier's
    voltage noise times the noise gain, en²·(1+G)², plus the source impedances' Johnson noise
    through gain G, 4kT·(Rs1,min + Rs3,min)·G², with G the lowest gain (:func:`lowest_gain`)."""
    g = lowest_gain(spec)
    four_kt = 4.0 * BOLTZMANN * env.hottest_k
    src = spec.signal.source
    return (
        spec.amplifier.voltage_noise_v_rthz * (1.0 + g)
    ) ** 2 + four_kt * 2.0 * src.min_ohm * g**2


def noise_bandwidth(spec: Spec) -> float:
    """Band (Hz) over which the output noise requirement integrates: high − low."""
    req = spec.requirements
    high = (
        req.noise_band_high_hz
        if req.noise_band_high_hz is not None
        else spec.signal.max_frequency_hz
    )
    return max(high - req.noise_band_low_hz, 0.0)


def z_score(yield_target: float) -> float:
    """One-sided standard-normal quantile Φ⁻¹(Y) (statistics.NormalDist; exact to double)."""
    from statistics import NormalDist

    return NormalDist().inv_cdf(yield_target)


def yield_quantile(yield_target: float, distribution: Distribution) -> float:
    """The one-sided quantile a yield ``Y`` needs of a sum of independent part deviations, per
    standard deviation: ``Φ⁻¹(Y)`` (:func:`z_score`) for normal parts, and for uniform parts
    the smaller of that and ``(2Y − 1)·√3``, the ``Y``-quantile of a uniform law of unit
    variance (``solve.limits``, ``solve.yieldbox``)."""
    z = z_score(yield_target)
    if distribution is Distribution.UNIFORM:
        z = min(z, (2.0 * yield_target - 1.0) * math.sqrt(3.0))
    return z
