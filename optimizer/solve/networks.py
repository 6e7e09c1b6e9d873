"""Exact cost-ordered search for quad networks and pairs of duals (one dual with two discrete
parts: ``optimizer.solve.mixed``).

Quad networks are few (hundreds of options): each element order is a candidate; they are sorted
by exact cost and screened at their nominal values (a point of every variable's range, so the
nominal error never exceeds the worst case) before the exact check.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterator, Sequence

import numpy as np
from numpy.typing import NDArray

from ..analysis.drift import drift_factor_bounds
from ..catalog import Catalog
from ..cost import design_cost, parts_cost
from ..design import Design, Placement, Topology
from ..parts import NetworkPart
from ..spec import Spec, StockPolicy
from .environment import LinearEnvironment, life_drift
from .frontier import JOIN_CHUNK
from .screen import RATING_SCREEN, ScreenLimits, corner_screen, screen_limits, stress_floor
from .yieldbox import box_factor, element_box, package_centre

__all__ = [
    "element_bounds",
    "element_ratings",
    "network_frontier",
    "package_extremes",
    "usable_networks",
]

Array = NDArray[np.float64]
IntArray = NDArray[np.int64]


def element_bounds(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> tuple[float, float]:
    """``(low, high)`` factors of one element's own variables as the CMRR and gain conditions
    take them: :func:`_element_range`, or on the yield basis the box of
    ``optimizer.solve.yieldbox``."""
    kappa = box_factor(spec)
    if kappa is None:
        return _element_range(network, env)
    return element_box(network, spec, env, kappa)


def _element_range(network: NetworkPart, env: LinearEnvironment) -> tuple[float, float]:
    """``(low, high)`` factors of one element's own variables (ratio tolerance, tracking tempco
    and ratio drift, each half the pair figure: ``analysis.variation``), the package at 0."""
    t = network.ratio_tolerance / 2.0
    tc = network.tracking_tempco_per_k / 2.0 * env.delta_t_k
    d = float(life_drift(network.ratio_drift_1000h, env.life_h)) / 2.0
    return (1.0 - t) * (1.0 - tc) * (1.0 - d), (1.0 + t) * (1.0 + tc) * (1.0 + d)


def package_extremes(network: NetworkPart, spec: Spec, env: LinearEnvironment) -> tuple[
    float, float
]:  # fmt: skip
    """The package's shared factor ``(1 + e_abs)(1 + α_abs·ΔT)(1 + d_abs)`` at its two ends
    (``analysis.variation``): points of the exact check's range, so a design must pass the
    screen at each. On the yield basis both are its mean (``optimizer.solve.yieldbox``)."""
    if box_factor(spec) is not None:
        centre = package_centre(network, spec, env)
        return centre, centre
    swing = network.abs_tempco_per_k * env.delta_t_k
    d_lo, d_hi = drift_factor_bounds(
        float(life_drift(network.drift_1000h, env.life_h)), spec.requirements.drift_model
    )
    t = network.abs_tolerance
    return (1.0 - t) * (1.0 - swing) * float(d_lo), (1.0 + t) * (1.0 + swing) * float(d_hi)


def usable_networks(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, elements: int
) -> list[NetworkPart]:
    prefs = spec.preferences
    low = prefs.resistance_min_ohm * (1 - 1e-9)
    high = prefs.resistance_max_ohm * (1 + 1e-9)
    stress = float(np.max(env.stress_v))
    found = []
    for network in catalog.networks:
        if network.elements != elements:
            continue
        if prefs.stock is StockPolicy.ONLY and not network.in_stock:
            continue
        values = network.values_ohm
        if min(values) < low or max(values) > high:
            continue
        if network.max_voltage_v < RATING_SCREEN * stress:
            continue
        found.append(network)
    return found


def network_frontier(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, topology: Topology
) -> Iterator[Design]:
    """Every design of ``topology`` (a quad in each distinct element order, or two duals each in
    either order for equal or divider pairs; the same dual twice is two packages) that passes
    :func:`corner_screen`, in nondecreasing exact cost (ties by part ids and element order). On
    the yield basis the screen takes the box of ``optimizer.solve.yieldbox`` (element ranges
    and package factor), which every design meeting the yield passes."""
    lim = screen_limits(spec, env)
    if lim.balance < 0.0:
        return
    if topology is not Topology.QUAD:
        yield from _pair_frontier(spec, catalog, env, topology, lim)
        return
    layouts = _quad_layouts(spec, catalog, env, lim)
    if not layouts:
        return
    nominal = np.array([layout[1] for layout in layouts])
    low = np.array([layout[2] for layout in layouts])
    high = np.array([layout[3] for layout in layouts])
    ends = np.array([package_extremes(_network_of(layout[0]), spec, env) for layout in layouts])
    ok = corner_screen(nominal * ends[:, :1], low, high, lim)
    ok &= corner_screen(nominal * ends[:, 1:], low, high, lim)
    kept: list[tuple[float, tuple[str, ...], tuple[int, ...], Design]] = []
    for layout, good in zip(layouts, ok.tolist(), strict=True):
        if good:
            design = layout[0]
            ids = tuple(p.part.part_id for p in design.placements)
            order = tuple(p.element if p.element is not None else -1 for p in design.placements)
            kept.append((design_cost(design, spec.preferences).total, ids, order, design))
    kept.sort(key=lambda item: (item[0], item[1], item[2]))
    for item in kept:
        yield item[3]


def _network_of(design: Design) -> NetworkPart:
    part = design.placements[0].part
    assert isinstance(part, NetworkPart)
    return part


_Layout = tuple[Design, tuple[float, ...], tuple[float, ...], tuple[float, ...]]


def element_ratings(
    network: NetworkPart, env: LinearEnvironment, floors: Sequence[float], lim: ScreenLimits
) -> dict[tuple[float, int], bool]:
    """Per (element value, position): whether an element of ``network`` with that value can
    take that position, its ratings against the estimated stress (loosely,
    :data:`RATING_SCREEN`) and against the least voltage any passing design puts across the
    position (:func:`stress_floor` times the element's share at its lowest resistance,
    :func:`stress_share`). Each element is judged alone, so a placement is rated when each of
    its elements is."""
    power = network.power_per_element_w * env.derating
    lo, hi = _element_range(network, env)
    shared = (1.0 - network.abs_tolerance) * (1.0 - network.abs_tempco_per_k * env.delta_t_k)
    shared *= 1.0 - float(life_drift(network.drift_1000h, env.life_h))
    series = (float(lim.rs1.max()), 0.0, float(lim.rs3.max()), float(lim.rref.max()))
    stresses = [float(v) for v in env.stress_v]
    table: dict[tuple[float, int], bool] = {}
    for r in set(network.values_ohm):
        for p in range(4):
            stress = stresses[p]
            r_low = r * lo * shared
            least = floors[p] * (r_low / (r_low + series[p])) * (1.0 - 1e-9)
            top = r * hi * (2.0 - shared)
            table[r, p] = not (
                power * r < RATING_SCREEN * stress**2
                or network.max_voltage_v < least
                or power * top < least**2
            )
    return table


def _quad_layouts(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, lim: ScreenLimits
) -> list[_Layout]:
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    layouts: list[_Layout] = []
    for network in usable_networks(spec, catalog, env, 4):
        lo, hi = element_bounds(network, spec, env)
        rated = element_ratings(network, env, floors, lim)
        seen: set[tuple[float, ...]] = set()
        for order in itertools.permutations(range(4)):
            values = tuple(network.values_ohm[e] for e in order)
            if values in seen or not all(rated[v, p] for p, v in enumerate(values)):
                continue
            seen.add(values)
            placements = tuple(Placement(f"R{i + 1}", network, order[i]) for i in range(4))
            layouts.append((Design(placements), values, (lo,) * 4, (hi,) * 4))  # type: ignore[arg-type]
    return layouts


#: One dual in one element order at one slot: the network, the order, its element bounds.
_Slot = tuple[NetworkPart, tuple[int, int], float, float]


def _pair_frontier(
    spec: Spec, catalog: Catalog, env: LinearEnvironment, topology: Topology, lim: ScreenLimits
) -> Iterator[Design]:
    """Two duals: (R1, R3) and (R2, R4) for equal pairs, (R1, R2) and (R3, R4) for divider
    pairs; each dual in either element order (an order that repeats values is kept once). Every
    combination is screened at once (:func:`corner_screen`, in chunks); the survivors are sorted
    by exact cost (``optimizer.cost``, one evaluation per pair of part ids), then ids and orders."""
    first, second = ((0, 2), (1, 3)) if topology is Topology.EQUAL_PAIRS else ((0, 1), (2, 3))
    slots = _pair_slots(spec, catalog, env, lim, (first, second))
    if not (slots[0] and slots[1]):
        return
    kept = _screened_pairs(spec, env, lim, slots, (first, second))
    yield from _pair_designs(spec, kept, slots, (first, second))


def _pair_slots(
    spec: Spec,
    catalog: Catalog,
    env: LinearEnvironment,
    lim: ScreenLimits,
    sides: tuple[tuple[int, int], tuple[int, int]],
) -> list[list[_Slot]]:
    """Per slot (the positions of ``sides``), every usable dual in each element order whose
    elements bear the least stress at their positions (``element_ratings``); an order that
    repeats the other's values is kept once."""
    duals = usable_networks(spec, catalog, env, 2)
    floors = [stress_floor(spec, lim, p) for p in range(4)]
    slots: list[list[_Slot]] = [[], []]
    ratings: dict[str, dict[tuple[float, int], bool]] = {}
    for slot, positions in enumerate(sides):
        for network in duals:
            lo, hi = element_bounds(network, spec, env)
            if network.part_id not in ratings:
                ratings[network.part_id] = element_ratings(network, env, floors, lim)
            rated = ratings[network.part_id]
            seen: set[tuple[float, ...]] = set()
            for order in ((0, 1), (1, 0)):
                values = tuple(network.values_ohm[e] for e in order)
                if values in seen or not all(
                    rated[v, p] for v, p in zip(values, positions, strict=True)
                ):
                    continue
                seen.add(values)
                slots[slot].append((network, (order[0], order[1]), lo, hi))
    return slots


def _slot_arrays(options: list[_Slot]) -> tuple[Array, Array, Array]:
    """The slot's element values (n, 2) and element bounds (n,) as arrays."""
    values = np.array([[n.values_ohm[o[0]], n.values_ohm[o[1]]] for n, o, _, _ in options])
    return values, np.array([lo for *_, lo, _ in options]), np.array([h for *_, h in options])


def _screened_pairs(
    spec: Spec,
    env: LinearEnvironment,
    lim: ScreenLimits,
    slots: list[list[_Slot]],
    sides: tuple[tuple[int, int], tuple[int, int]],
) -> IntArray:
    """The flat indices ``a·len(slots[1]) + b`` of the slot combinations that pass the corner
    screen with each package's shared factor at either end (four sets of points of the exact
    range, each screening only what the sets before it kept), :data:`JOIN_CHUNK` at a time."""
    first, second = sides
    va, la, ha = _slot_arrays(slots[0])
    vb, lb, hb = _slot_arrays(slots[1])
    sa = np.array([package_extremes(n, spec, env) for n, *_ in slots[0]])
    sb = np.array([package_extremes(n, spec, env) for n, *_ in slots[1]])
    nb = len(slots[1])
    survivors: list[IntArray] = []
    total = len(slots[0]) * nb
    step = max(1, JOIN_CHUNK)
    for start in range(0, total, step):
        flat = np.arange(start, min(total, start + step))
        ia, ib = flat // nb, flat % nb
        nominal = np.empty((flat.size, 4))
        low = np.empty((flat.size, 4))
        high = np.empty((flat.size, 4))
        for k, p in enumerate(first):
            nominal[:, p], low[:, p], high[:, p] = va[ia, k], la[ia], ha[ia]
        for k, p in enumerate(second):
            nominal[:, p], low[:, p], high[:, p] = vb[ib, k], lb[ib], hb[ib]
        alive = np.arange(flat.size)
        for end_a in (0, 1):
            for end_b in (0, 1):
                scaled = nominal[alive].copy()
                scaled[:, list(first)] *= sa[ia[alive], end_a][:, None]
                scaled[:, list(second)] *= sb[ib[alive], end_b][:, None]
                alive = alive[corner_screen(scaled, low[alive], high[alive], lim)]
        survivors.append(flat[alive])
    kept: IntArray = np.concatenate(survivors)
    return kept


def _pair_designs(
    spec: Spec,
    kept: IntArray,
    slots: list[list[_Slot]],
    sides: tuple[tuple[int, int], tuple[int, int]],
) -> Iterator[Design]:
    """The designs of the screened combinations ``kept`` sorted by exact cost (one evaluation
    per pair of part ids), then ids and orders; the same dual twice is packages 1 and 2."""
    first, second = sides
    nb = len(slots[1])
    costs: dict[tuple[str, str], float] = {}
    keyed: list[tuple[float, str, str, tuple[int, int], tuple[int, int], int, int]] = []
    for flat_index in kept.tolist():
        a, b = divmod(flat_index, nb)
        net_a, order_a, _, _ = slots[0][a]
        net_b, order_b, _, _ = slots[1][b]
        pair = (net_a.part_id, net_b.part_id)
        if pair not in costs:
            costs[pair] = parts_cost([net_a, net_b], spec.preferences).total
        keyed.append((costs[pair], pair[0], pair[1], order_a, order_b, a, b))
    keyed.sort()
    for *_, a, b in keyed:
        net_a, order_a, _, _ = slots[0][a]
        net_b, order_b, _, _ = slots[1][b]
        package_b = 1 if net_b.part_id == net_a.part_id else 0
        placed: dict[int, Placement] = {}
        for positions, net, order, package in (
            (first, net_a, order_a, 0),
            (second, net_b, order_b, package_b),
        ):
            for p, e in zip(positions, order, strict=True):
                placed[p] = Placement(f"R{p + 1}", net, e, package)
        yield Design((placed[0], placed[1], placed[2], placed[3]))
