"""The k cheapest distinct designs a spec allows from a catalog: an exact reference for tests.

It is written apart from the pick: nothing here comes from ``optimizer.solve``. It takes from
the package only the catalog (the parts list), the spec, the design objects, the cost rule
(``optimizer.cost``, only to assert that the cost it recomputes itself from the README's rule
agrees) and the exact check (``optimizer.verify``), which is the final gate of every design it
returns. Its own circuit formulas (below) serve only to *skip* designs that the exact check
must fail.

What the spec allows (README, "The spec file" and "How the pick is checked")
----------------------------------------------------------------------------
Discrete parts whose value lies in the resistance window (ends included, relative slack
1e-9), in stock for ``stock: only``; networks whose every element lies in the window. Four
discrete parts (repeats allowed); a quad in every element order; two duals, (R1, R3) + (R2, R4)
or (R1, R2) + (R3, R4), each in either order, the same dual possibly twice (packages 1 and 2);
one dual in either order on any two positions with discrete parts on the other two. Element
orders that give the same values at the same positions are one design (every element of a
package has the same bounds).

Cost (README, ``optimizer/cost.py`` docstring): part costs (a package once) + placement cost ×
placements + line cost × distinct part ids + stock penalty × distinct unstocked part ids
(``stock: prefer``).

Search
------
Discrete parts are grouped into *classes*: all attributes but the value and the id (tolerance,
tempco, drift, size, ratings, technology, cost, stocked). Inside a class cost and every bound
are the same. A *skeleton* fixes a class (or a network element) at every position; its cost
lower bound counts one line per distinct class. Skeletons are scanned in numpy, the ones no
design of which can pass are dropped (test 1 below), the rest are expanded in ascending lower
bound: their value quads inside the gain and balance windows (test 2) are screened at a few
corners (test 3), and the survivors enter a single priority queue keyed by their exact cost.
Designs leave the queue cheapest first and run the exact check; the search stops when k
designs have passed and the queue holds nothing cheaper than the k-th. Network designs are
few enough to list whole and go through test 3 directly.

Why the tests only drop designs the exact check fails (the relaxation)
----------------------------------------------------------------------
The exact worst case is a maximum over a set of *feasible points* (README, "How parts vary"):
every part variable in its interval, the temperature in its range, the source legs in their
polygon, the REF impedance in its range, the amplifier CMRR at its minimum with either sign,
the open-loop gain at its minimum or above. At any one feasible point the common-mode error
cannot exceed the worst case, and the gain lies between the worst-case extremes. So a design
whose error at *some* feasible point exceeds the floor, or whose gain there is outside the
accuracy, fails the exact check. All three tests use only such points: every part variable at
zero or at an end of its interval, all parts at the end of the temperature range farthest from
25 °C, the network packages' shared variables at zero, a source vertex, a REF end, ε = ±1/(2·
CMRR), A = A_min or ∞. With same-lot tracking the tempcos are set to zero (two placements of
one id share one tempco, so they cannot sit at opposite ends).

A resistor at such a point is ``R·f`` with ``f`` in ``[L, H]``:
``L = (1 − t)(1 − TC·|ΔT|)(1 − D)`` and ``H = (1 + t)(1 + TC·|ΔT|)(1 + D)`` for a discrete part
(``1`` for ``1 − D`` with one-sided drift), and half the ratio tolerance, tracking tempco and
ratio drift for a network element.

The circuit (nodal analysis of the op-amp with ``Vout = A·((V+ − V−) + (V+ + V−)/(2·CMRR))``,
Rs1, Rs3 in series with R1, R3, Rref with R4): with ``c = R2/(R1' + R2)``,
``a = R4'/(R3' + R4')``, ``u = a(1 + ε)``, ``v = c(1 − ε)``::

    Acm/Adm = 2(u − v)/(u + v),      Adm = (u + v) / (2(1/A + (1 − c)(1 − ε)))

so with ``ρ = u/v`` the error is ``2|tanh(ln ρ / 2)|``, and it meets the floor ``F = 10^(−dB/20)``
iff ``|ln ρ| ≤ Y = 2·artanh(F/2)``. Since ``ln ρ = ln(a/c) ± η``, ``η = ln((1 + e)/(1 − e))``,
the worse sign gives ``|ln(a/c)| + η``: a design needs ``|ln(c/a)| ≤ Y' = Y − η`` at every point.

Test 2 (windows, nominal parts, source legs at their minimum ``s``, REF at its minimum ``r``,
A = ∞). With ``k = R2/(R1 + s)`` the gain is ``k(1 + ρ)/2``, so ``|ln ρ| ≤ Y`` and the gain
accuracy give ``k ∈ [G(1 − acc)·2/(1 + e^Y), G(1 + acc)·2/(1 + e^−Y)]``; with
``m = (R4 + r)/(R3 + s)`` and ``ℓ(z) = ln(z/(1 + z))``, ``ln(c/a) = ℓ(k) − ℓ(m)``.

Test 1 and the narrowed balance window. Move every part to the corner that raises ``x = c/a``
(R1, R4 to L; R2, R3 to H) and to the one that lowers it. Write ``q = (R1 f1 + s)/(R2 f2)`` so
``ln c = −ln(1 + q)``; ``ln(1 + e^z)`` has the increasing slope ``q/(1 + q)``, and
``ln(R1 e^y + s)`` the increasing slope ``R1 e^y/(R1 e^y + s)``, so by the mean value theorem
the rise of ``ln x`` from the nominal point is at least
``S↑ = w1·(ln H2 − λ1 ln L1) + w2·(λ3 ln H3 − λ4 ln L4)`` and its fall at least
``S↓ = w1·(λ1 ln H1 − ln L2) + w2·(λ4 ln H4 − λ3 ln L3)``, with
``w1 = ω(Lmin/(Hmax·k_max))``, ``w2 = ω(Lmin/(Hmax·m_max))``, ``ω(q) = q/(1 + q)``,
``λ1 = λ3 = Rmin·Lmin/(Rmin·Lmin + s)``, ``λ4 = Rmin·Lmin/(Rmin·Lmin + r)`` (``Lmin``, ``Hmax``,
``Rmin`` over every allowed part). Both corners must keep ``|ln x| ≤ Y'``, hence
``ℓ(m) ∈ [ℓ(k) − Y' + S↑, ℓ(k) + Y' − S↓]`` and, as a bound on the classes alone,
``S↑ + S↓ ≤ 2Y'``. For four equal parts of log width ``h`` this is the handbook
``CMRR ≈ (1 + G)/(4t)`` form: ``w ≈ 1/(1 + G)``, ``S ≈ 4h/(1 + G)``.

Test 3 evaluates the two ``x`` corners and the two gain corners (R2, R4 high and R1, R3 low, and
the reverse) exactly at every listed source vertex and REF end, with ε = ±e and A ∈ {A_min, ∞}.
A design is dropped only when it misses a limit by more than a tiny relative slack (1e-8 of
the error ratio, 1e-10 of the gain), far above float rounding, far below any stated limit.

On the yield basis none of this holds (a design can fail a corner and still reach the target
yield), so with ``screen=False`` nothing is dropped: every design is listed and checked in
cost order (use a small catalog).
"""

from __future__ import annotations

import heapq
import itertools
import math
import time
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from optimizer.catalog import Catalog
from optimizer.cost import design_cost
from optimizer.design import Design, Placement, Topology
from optimizer.parts import DiscretePart, NetworkPart
from optimizer.spec import CmrrBasis, DriftModel, Spec, StockPolicy
from optimizer.verify import verify

Array = np.ndarray[Any, Any]
POSITIONS = ("R1", "R2", "R3", "R4")
WINDOW_SLACK = 1e-9
CM_SLACK = 1e-8
GAIN_SLACK = 1e-10
LOG_SLACK = 1e-9
#: Cheapest skeletons kept per scan; a longer search scans again past the last one.
KEEP = 40_000
#: Quads expanded at a time when a skeleton's designs all cost the same.
BLOCK = 100_000


# ---------------------------------------------------------------------------------------------
# Formulas (module docstring for the derivations)
# ---------------------------------------------------------------------------------------------


def feedback_term(r1_eff: Array, r2: Array) -> Array:
    """``c = R2/(R1' + R2)`` (ohms in), ``R1' = R1 + Rs1``: the fraction of the output–input
    difference seen at the inverting node (nodal analysis, textbook divider)."""
    return np.asarray(r2 / (r1_eff + r2))


def divider_term(r3_eff: Array, r4_eff: Array) -> Array:
    """``a = R4'/(R3' + R4')`` (ohms in): the non-inverting divider (textbook)."""
    return np.asarray(r4_eff / (r3_eff + r4_eff))


def cm_error(a: Array, c: Array, eps: float) -> Array:
    """``|Acm/Adm| = 2|u − v|/(u + v)``, ``u = a(1 + ε)``, ``v = c(1 − ε)``, ``ε = ±1/(2·CMRR)``
    (module docstring; nodal analysis of the standard op-amp CMRR model)."""
    u = a * (1.0 + eps)
    v = c * (1.0 - eps)
    return np.asarray(2.0 * np.abs(u - v) / (u + v))


def diff_gain(a: Array, c: Array, eps: float, inv_a: float) -> Array:
    """``Adm = (u + v)/(2(1/A + (1 − c)(1 − ε)))`` (module docstring), ``inv_a = 1/A``."""
    u = a * (1.0 + eps)
    v = c * (1.0 - eps)
    return np.asarray((u + v) / (2.0 * (inv_a + (1.0 - c) * (1.0 - eps))))


def drift_end(drift_1000h: float, life_s: float) -> float:
    """``D = drift_1000h·√(life_h/1000 h)`` (README, "How parts vary": square-root-of-time law,
    common practice)."""
    return drift_1000h * math.sqrt(life_s / 3600.0 / 1000.0)


def log_limit(floor_db: float) -> float:
    """``Y = 2·artanh(F/2)``, ``F = 10^(−floor/20)``: ``2|tanh(y/2)| ≤ F ⟺ |y| ≤ Y``."""
    f = 10.0 ** (-floor_db / 20.0)
    return 2.0 * math.atanh(f / 2.0) if f < 2.0 else math.inf


def sign_spread(eps: float) -> float:
    """``η = ln((1 + e)/(1 − e))``: how far the amplifier's CMRR sign moves ``ln ρ``."""
    return math.log((1.0 + eps) / (1.0 - eps))


def ell(z: Array) -> Array:
    """``ℓ(z) = ln(z/(1 + z))`` (increasing; ``ln c = ℓ(k)``, ``ln a = ℓ(m)``)."""
    return np.asarray(np.log(z / (1.0 + z)))


def ell_inverse(y: float) -> float:
    """``z`` with ``ℓ(z) = y``: ``e^y/(1 − e^y)`` (``∞`` for ``y ≥ 0``)."""
    return math.inf if y >= 0.0 else math.exp(y) / (1.0 - math.exp(y))


def omega(q: float) -> float:
    """``q/(1 + q)``."""
    return q / (1.0 + q)


# ---------------------------------------------------------------------------------------------
# The spec, as the reference reads it
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Conditions:
    """The feasible points the screens use and the limits they test (module docstring)."""

    delta_t: float
    life_s: float
    one_sided: bool
    same_lot: bool
    sources: tuple[tuple[float, float], ...]
    refs: tuple[float, ...]
    eps: float
    inv_gains: tuple[float, ...]
    s0: float
    r0: float
    gain: float
    accuracy: float
    cm_limit: float
    y_full: float
    y_balance: float
    k_low: float
    k_high: float


def source_points(low: float, high: float, imbalance: float) -> tuple[tuple[float, float], ...]:
    """Points ``(Rs1, Rs3)`` of the polygon ``low ≤ Rs ≤ high``, ``|Rs1 − Rs3| ≤ imbalance``:
    the two ends of the diagonal and, with an imbalance, the four points at the imbalance from
    them along each leg (plane geometry)."""
    points = [(low, low), (high, high)]
    width = min(imbalance, high - low)
    if width > 0.0:
        points += [
            (low, low + width),
            (low + width, low),
            (high - width, high),
            (high, high - width),
        ]
    unique: list[tuple[float, float]] = []
    for point in points:
        if point not in unique:
            unique.append(point)
    return tuple(unique)


def conditions(spec: Spec) -> Conditions:
    req = spec.requirements
    amp = spec.amplifier
    src = spec.signal.source
    ref = spec.reference
    eps = 0.0 if math.isinf(amp.cmrr_db) else 1.0 / (2.0 * 10.0 ** (amp.cmrr_db / 20.0))
    inv_gains = (0.0,) if math.isinf(amp.open_loop_gain_db) else (
        0.0, 10.0 ** (-amp.open_loop_gain_db / 20.0))  # fmt: skip
    y_full = log_limit(req.cmrr_floor_db)
    y_balance = y_full - sign_spread(eps)
    g, acc = req.gain, req.gain_accuracy
    k_low = g * (1.0 - acc) * 2.0 / (1.0 + math.exp(y_full)) if math.isfinite(y_full) else 0.0
    k_high = (
        g * (1.0 + acc) * 2.0 / (1.0 + math.exp(-y_full)) if math.isfinite(y_full) else math.inf
    )
    return Conditions(
        delta_t=max(abs(req.temp_min_c - 25.0), abs(req.temp_max_c - 25.0)),
        life_s=req.life_s,
        one_sided=req.drift_model is DriftModel.ONE_SIDED,
        same_lot=spec.preferences.same_lot_tracking,
        sources=source_points(src.min_ohm, src.max_ohm, src.imbalance_ohm),
        refs=tuple(sorted({ref.impedance_min_ohm, ref.impedance_max_ohm})),
        eps=eps,
        inv_gains=inv_gains,
        s0=src.min_ohm,
        r0=ref.impedance_min_ohm,
        gain=g,
        accuracy=acc,
        cm_limit=10.0 ** (-req.cmrr_floor_db / 20.0) * (1.0 + CM_SLACK),
        y_full=y_full,
        y_balance=y_balance * (1.0 + LOG_SLACK) + LOG_SLACK,
        k_low=k_low * (1.0 - WINDOW_SLACK),
        k_high=k_high * (1.0 + WINDOW_SLACK),
    )


def corner_screen(r: Array, low: Array, high: Array, cond: Conditions, full: bool) -> Array:
    """Mask of the designs (rows of ``r``, ohms, with factor bounds ``low``, ``high``; shape
    ``(n, 4)``) that meet the floor and the accuracy at every tested point (test 3). With
    ``full`` every listed source vertex and REF end, else only the minimum ones."""
    lo, hi = r * low, r * high
    pick = {
        "x_up": (lo[:, 0], hi[:, 1], hi[:, 2], lo[:, 3]),
        "x_down": (hi[:, 0], lo[:, 1], lo[:, 2], hi[:, 3]),
        "gain_up": (lo[:, 0], hi[:, 1], lo[:, 2], hi[:, 3]),
        "gain_down": (hi[:, 0], lo[:, 1], hi[:, 2], lo[:, 3]),
    }
    g_high = cond.gain * (1.0 + cond.accuracy) * (1.0 + GAIN_SLACK)
    g_low = cond.gain * (1.0 - cond.accuracy) * (1.0 - GAIN_SLACK)
    signs = (cond.eps, -cond.eps) if cond.eps > 0.0 else (0.0,)
    envs = [(s1, s3, rr) for s1, s3 in cond.sources for rr in cond.refs]
    if not full:
        envs = [(cond.s0, cond.s0, cond.r0)]
    ok = np.ones(r.shape[0], dtype=bool)
    for s1, s3, rr in envs:
        for name, (r1, r2, r3, r4) in pick.items():
            c = feedback_term(r1 + s1, r2)
            a = divider_term(r3 + s3, r4 + rr)
            for eps in signs:
                if name.startswith("x"):
                    ok &= cm_error(a, c, eps) <= cond.cm_limit
                    continue
                for inv in cond.inv_gains:
                    gain = diff_gain(a, c, eps, inv)
                    ok &= (gain <= g_high) & (gain >= g_low)
    return ok


# ---------------------------------------------------------------------------------------------
# What may sit at a position
# ---------------------------------------------------------------------------------------------


@dataclass
class Slot:
    """A discrete class (many values) or one network element (one value) at a position.

    ``values`` sorted (ohms), ``rows`` the catalog row of each value (discrete) or −1;
    ``low``/``high`` the factor bounds; ``vid`` names the value list (for caches)."""

    values: Array
    rows: Array
    low: float
    high: float
    vid: object
    #: With same-lot tracking: the bounds with the tempco, for a placement whose id is not
    #: placed twice (its tempco is its own); ``low``/``high`` leave the tempco out.
    own: tuple[float, float] | None = None


@dataclass
class Classes:
    slots: list[Slot]
    cost: Array
    stocked: Array
    row_cost: Array
    row_stocked: Array


def _allowed(value: float, spec: Spec) -> bool:
    p = spec.preferences
    return bool(
        p.resistance_min_ohm * (1.0 - WINDOW_SLACK)
        <= value
        <= p.resistance_max_ohm * (1.0 + WINDOW_SLACK)
    )


_GROUPS: dict[tuple[int, float, float, bool], tuple[list[Array], Array]] = {}


def class_members(catalog: Catalog, spec: Spec) -> tuple[list[Array], Array]:
    """Rows of each class (sorted by value) among the allowed discrete rows, and each class's
    first row; cached per catalog, window and stock policy (spec-independent otherwise)."""
    p = spec.preferences
    only = p.stock is StockPolicy.ONLY
    key = (id(catalog), p.resistance_min_ohm, p.resistance_max_ohm, only)
    if key in _GROUPS:
        return _GROUPS[key]
    frame = catalog.discrete
    values = frame["resistance_ohm"].to_numpy(dtype=float)
    stock = frame["stock_qty"].to_numpy() > 0
    keep = (values >= p.resistance_min_ohm * (1.0 - WINDOW_SLACK)) & (
        values <= p.resistance_max_ohm * (1.0 + WINDOW_SLACK)
    )
    if only:
        keep &= stock
    rows = np.flatnonzero(keep)
    columns = ["tolerance", "tempco_per_k", "drift_1000h", "size", "power_w", "max_voltage_v",
               "unit_cost", "technology"]  # fmt: skip
    codes = []
    for column in columns:
        series = frame[column]
        if hasattr(series, "cat"):
            codes.append(series.cat.codes.to_numpy()[rows].astype(np.int64))
        else:
            codes.append(np.unique(series.to_numpy()[rows], return_inverse=True)[1].ravel())
    codes.append(stock[rows].astype(np.int64))
    inverse = np.unique(np.stack(codes, axis=1), axis=0, return_inverse=True)[1].ravel()
    order = np.lexsort((values[rows], inverse))
    rows, inverse = rows[order], inverse[order]
    cuts = np.flatnonzero(np.diff(inverse)) + 1
    members = np.split(rows, cuts) if len(rows) else []
    for m in members:
        if len(np.unique(values[m])) != len(m):
            raise AssertionError(f"two parts of one class share a value: rows {m[:3]}")
    out = (members, np.array([int(m[0]) for m in members], dtype=np.int64))
    _GROUPS[key] = out
    return out


def discrete_classes(catalog: Catalog, spec: Spec, cond: Conditions) -> Classes:
    """The allowed discrete rows grouped into classes (module docstring), with their bounds."""
    frame = catalog.discrete
    values = frame["resistance_ohm"].to_numpy(dtype=float)
    stock = frame["stock_qty"].to_numpy() > 0
    members, firsts = class_members(catalog, spec)
    tol = frame["tolerance"].to_numpy(dtype=float)
    tco = frame["tempco_per_k"].to_numpy(dtype=float)
    dri = frame["drift_1000h"].to_numpy(dtype=float)
    unit = frame["unit_cost"].to_numpy(dtype=float)
    slots: list[Slot] = []
    lists: dict[bytes, int] = {}
    for m, first in zip(members, firsts, strict=True):
        vals = values[m]
        t = float(tol[first])
        d = drift_end(float(dri[first]), cond.life_s)
        bounds = []
        for tc in (float(tco[first]), 0.0):
            low = (1.0 - t) * (1.0 - tc * cond.delta_t) * (1.0 if cond.one_sided else 1.0 - d)
            high = (1.0 + t) * (1.0 + tc * cond.delta_t) * (1.0 + d)
            bounds.append((low, high))
        vid = lists.setdefault(vals.tobytes(), len(lists))
        if cond.same_lot:
            slots.append(Slot(vals, m, *bounds[1], ("list", vid), own=bounds[0]))
        else:
            slots.append(Slot(vals, m, *bounds[0], ("list", vid)))
    return Classes(slots, unit[firsts], stock[firsts], unit, stock)


def element_bounds(net: NetworkPart, cond: Conditions) -> tuple[float, float]:
    """Factor bounds of one element with the package's shared variables at zero."""
    t = net.ratio_tolerance / 2.0
    tc = net.tracking_tempco_per_k / 2.0
    d = drift_end(net.ratio_drift_1000h, cond.life_s) / 2.0
    return (1.0 - t) * (1.0 - tc * cond.delta_t) * (1.0 - d), (1.0 + t) * (
        1.0 + tc * cond.delta_t
    ) * (1.0 + d)


def allowed_networks(catalog: Catalog, spec: Spec) -> list[NetworkPart]:
    only = spec.preferences.stock is StockPolicy.ONLY
    return [
        n for n in catalog.networks
        if all(_allowed(v, spec) for v in n.values_ohm) and (n.in_stock or not only)
    ]  # fmt: skip


def orders(net: NetworkPart, size: int) -> list[tuple[int, ...]]:
    """Element orders of ``net`` on ``size`` positions, one per distinct value layout."""
    seen: set[tuple[float, ...]] = set()
    out: list[tuple[int, ...]] = []
    for perm in itertools.permutations(range(net.elements), size):
        layout = tuple(net.values_ohm[i] for i in perm)
        if layout not in seen:
            seen.add(layout)
            out.append(perm)
    return out


# ---------------------------------------------------------------------------------------------
# Cost, independently of optimizer.cost (README rule), and the design identity
# ---------------------------------------------------------------------------------------------


def discrete_cost(rows: Array, classes: Classes, spec: Spec) -> Array:
    """Cost of the discrete positions (columns of ``rows``): parts, placements, one line per
    distinct row, the stock penalty per distinct unstocked row (``stock: prefer``)."""
    p = spec.preferences
    s = np.sort(rows, axis=1)
    first = np.concatenate([np.ones((len(s), 1), dtype=bool), s[:, 1:] != s[:, :-1]], axis=1)
    lines = first.sum(axis=1)
    unstocked = (first & ~classes.row_stocked[s]).sum(axis=1)
    penalty = p.stock_penalty if p.stock is StockPolicy.PREFER else 0.0
    return np.asarray(
        classes.row_cost[rows].sum(axis=1) + p.placement_cost * rows.shape[1]
        + p.line_cost * lines + penalty * unstocked
    )  # fmt: skip


def network_cost(packages: Sequence[NetworkPart], spec: Spec) -> float:
    """Cost of network packages (each package placed once; one line per distinct id)."""
    p = spec.preferences
    ids = {n.part_id: n.in_stock for n in packages}
    penalty = p.stock_penalty if p.stock is StockPolicy.PREFER else 0.0
    return (
        sum(n.unit_cost for n in packages) + p.placement_cost * len(packages)
        + p.line_cost * len(ids) + penalty * sum(1 for s in ids.values() if not s)
    )  # fmt: skip


def identity(design: Design) -> tuple[object, ...]:
    """What makes a design distinct: per position the part id, the value and which positions
    share its package."""
    groups: dict[tuple[str, int], list[str]] = {}
    for pl in design.placements:
        if pl.package_key is not None:
            groups.setdefault(pl.package_key, []).append(pl.position)
    return tuple(
        (pl.part.part_id, pl.resistance_ohm,
         tuple(groups[pl.package_key]) if pl.package_key is not None else (pl.position,))
        for pl in design.placements
    )  # fmt: skip


# ---------------------------------------------------------------------------------------------
# Candidate streams
# ---------------------------------------------------------------------------------------------


@dataclass
class Stream:
    """Designs in ascending exact cost: ``costs`` sorted, ``build(i)`` makes design ``i``;
    ``more`` yields further blocks (each no cheaper than the last) when this one is used up."""

    costs: Array
    build: Callable[[int], Design]
    position: int = 0
    more: Iterator[tuple[Array, Callable[[int], Design]]] | None = None

    def advance(self) -> bool:
        """Step past the current design; False when the stream is used up."""
        self.position += 1
        while self.position >= len(self.costs):
            if self.more is None:
                return False
            block = next(self.more, None)
            if block is None:
                return False
            self.costs, self.build = block
            self.position = 0
        return True


@dataclass
class Result:
    """``designs``: (cost, design), cheapest first; ``complete``: the search ran to its proof
    (nothing left that could be cheaper than the k-th, or nothing left at all)."""

    designs: list[tuple[float, Design]]
    complete: bool
    checked: int
    skeletons: int
    seconds: float
    notes: list[str] = field(default_factory=list)

    @property
    def costs(self) -> list[float]:
        return [c for c, _ in self.designs]


class Search:
    """One run of the reference (module docstring)."""

    def __init__(self, spec: Spec, catalog: Catalog, *, screen: bool | None = None) -> None:
        self.spec = spec
        self.catalog = catalog
        self.screen = (
            spec.requirements.cmrr_basis is CmrrBasis.WORST_CASE if screen is None else screen
        )
        if self.screen and spec.requirements.cmrr_basis is CmrrBasis.YIELD:
            raise ValueError("the corner screens are no relaxation on the yield basis")
        self.cond = conditions(spec)
        self.topologies = set(spec.preferences.topologies)
        self.classes = discrete_classes(catalog, spec, self.cond)
        self.networks = allowed_networks(catalog, spec)
        self.duals = [n for n in self.networks if n.elements == 2]
        self.quads = [n for n in self.networks if n.elements == 4]
        self._parts: dict[int, DiscretePart] = {}
        self._halves: dict[tuple[object, object, int], tuple[Array, Array, Array]] = {}
        self._barren: set[tuple[object, ...]] = set()
        self.layouts = self._mixed_layouts()
        self.catalog_values = catalog.discrete["resistance_ohm"].to_numpy(dtype=float)
        self._weights()

    # -- bounds ------------------------------------------------------------------------------

    def _weights(self) -> None:
        cond = self.cond
        lows = [s.low for s in self.classes.slots]
        highs = [s.high for s in self.classes.slots]
        r_min = [float(s.values[0]) for s in self.classes.slots]
        for n in self.networks:
            lo, hi = element_bounds(n, cond)
            lows.append(lo)
            highs.append(hi)
            r_min.append(min(n.values_ohm))
        if not lows or not self.screen or not math.isfinite(cond.y_full):
            self.beta = np.zeros(4)
            self.gamma = np.zeros(4)
            self.m_high = math.inf
            return
        l_min, h_max, rr = min(lows), max(highs), min(r_min)
        self.m_high = ell_inverse(float(ell(np.array(cond.k_high))) + cond.y_balance)
        w1 = omega(l_min / (h_max * cond.k_high))
        w2 = omega(l_min / (h_max * self.m_high)) if math.isfinite(self.m_high) else 0.0
        lam_s = rr * l_min / (rr * l_min + cond.s0)
        lam_r = rr * l_min / (rr * l_min + cond.r0)
        self.beta = np.array([w1 * lam_s, w1, w2 * lam_s, w2 * lam_r])
        # The gain's slope in R2's log factor: with A = ∞, ln Adm = ln k + ln(1 + ρ) − ln 2
        # (module docstring), ∂ ln k = 1, ∂ ln ρ = −∂ ln c = −1/(1 + k), so the slope is
        # 1 − ρ/((1 + ρ)(1 + k)) ≥ 1 − σ/(1 + k_min), σ = e^Y/(1 + e^Y) (a design that meets
        # the floor keeps |ln ρ| ≤ Y at every point), k_min = k_low·Lmin/Hmax; R1's slope is
        # the same times λ1 (its share of R1 + Rs1).
        sigma = math.exp(cond.y_full) / (1.0 + math.exp(cond.y_full))
        g1 = 1.0 - sigma / (1.0 + l_min / h_max * cond.k_low)
        theta = 1.0 / (1.0 + (h_max / l_min) ** 2 * math.exp(cond.y_balance))
        self.gamma = np.array([g1 * lam_s, g1, theta * w2 * lam_s, theta * w2 * lam_r])
        self.gain_limit = (
            math.log((1.0 + cond.accuracy) / (1.0 - cond.accuracy)) * (1.0 + LOG_SLACK) + LOG_SLACK
        )

    def _spreads(
        self, lows: Sequence[float], highs: Sequence[float], weights: Array | None = None
    ) -> tuple[float, float]:
        """``(S↑, S↓)`` of a skeleton with factor bounds ``lows``/``highs`` at R1..R4 (with the
        gain weights ``γ``: the least rise and fall of ``ln Adm`` at its corners)."""
        b = self.beta if weights is None else weights
        ln_l = [math.log(v) for v in lows]
        ln_h = [math.log(v) for v in highs]
        if weights is not None:  # gain: up with R1, R3 low and R2, R4 high
            up = b[1] * ln_h[1] - b[0] * ln_l[0] - b[2] * ln_l[2] + b[3] * ln_h[3]
            down = b[0] * ln_h[0] - b[1] * ln_l[1] + b[2] * ln_h[2] - b[3] * ln_l[3]
            return float(up), float(down)
        up = b[1] * ln_h[1] - b[0] * ln_l[0] + b[2] * ln_h[2] - b[3] * ln_l[3]
        down = b[0] * ln_h[0] - b[1] * ln_l[1] + b[3] * ln_h[3] - b[2] * ln_l[2]
        return float(up), float(down)

    # -- value expansion ---------------------------------------------------------------------

    def _pairs(self, a: Slot, b: Slot, half: int) -> tuple[Array, Array, Array]:
        """Value pairs of one half inside the window of test 2: ``(ia, ib, ℓ)`` with
        ``ℓ = ℓ(k)`` for (R1, R2) and ``ℓ(m)`` for (R3, R4), sorted by ``ℓ``."""
        key = (a.vid, b.vid, half)
        if key in self._halves:
            return self._halves[key]
        cond = self.cond
        if half == 1:
            base, offset = a.values + cond.s0, 0.0
            low, high = cond.k_low, cond.k_high
        else:
            base, offset = a.values + cond.s0, cond.r0
            low = ell_inverse(float(ell(np.array(max(cond.k_low, 1e-300)))) - cond.y_balance)
            high = self.m_high
        if not self.screen:
            low, high = 0.0, math.inf
        start = np.searchsorted(b.values + offset, base * low, side="left")
        stop = (
            np.searchsorted(b.values + offset, base * high, side="right")
            if math.isfinite(high)
            else np.full(len(base), len(b.values))
        )
        count = np.maximum(stop - start, 0)
        ia = np.repeat(np.arange(len(base)), count)
        ib = _ranges(start, count)
        ratio = (b.values[ib] + offset) / base[ia]
        lv = ell(ratio)
        order = np.argsort(lv, kind="stable")
        out = (ia[order], ib[order], lv[order])
        self._halves[key] = out
        return out

    def _gain_corners(self, slots: Sequence[Slot], i1: Array, i2: Array) -> Array:
        """Mask of the (R1, R2) value pairs that pass test 2 at two corners of their own: with
        A = ∞ the gain is ``k(1 + ρ)/2``, ``k = R2/R1'`` (module docstring), and a design that
        meets the floor has ``|ln ρ| ≤ Y`` at every point, so at the point R1·L1, R2·H2 (R1·H1,
        R2·L2), Rs1 at its minimum, its gain is at least ``k(1 + e^−Y)/2`` (at most
        ``k(1 + e^Y)/2``): the same window ``[k_low, k_high]`` as test 2 holds for ``k`` at
        these points. Any ε: ρ carries it."""
        cond = self.cond
        r1, r2 = slots[0].values[i1], slots[1].values[i2]
        k_up = r2 * slots[1].high / (r1 * slots[0].low + cond.s0)
        k_down = r2 * slots[1].low / (r1 * slots[0].high + cond.s0)
        keep: Array = (k_up <= cond.k_high) & (k_down >= cond.k_low)
        return keep

    def _quads(self, slots: Sequence[Slot]) -> Iterator[Array]:
        """Indices ``(n, 4)`` into the slots' value lists of the quads that pass test 2, in
        blocks of about :data:`BLOCK` quads."""
        i1, i2, lk = self._pairs(slots[0], slots[1], 1)
        i3, i4, lm = self._pairs(slots[2], slots[3], 2)
        if self.screen and len(i1):
            keep = self._gain_corners(slots, i1, i2)
            i1, i2, lk = i1[keep], i2[keep], lk[keep]
        if not len(i1) or not len(i3):
            return
        if self.screen:
            lows, highs = [s.low for s in slots], [s.high for s in slots]
            up, down = self._spreads(lows, highs)
            g_up, g_down = self._spreads(lows, highs, self.gamma)
            cond = self.cond
            k_min = (
                cond.gain
                * (1.0 - cond.accuracy)
                * math.exp(g_down)
                * 2.0
                / (1.0 + math.exp(cond.y_full))
            )
            k_max = (
                cond.gain
                * (1.0 + cond.accuracy)
                * math.exp(-g_up)
                * 2.0
                / (1.0 + math.exp(-cond.y_full))
            )
            a = np.searchsorted(lk, float(ell(np.array(k_min * (1.0 - WINDOW_SLACK)))), side="left")
            b = np.searchsorted(
                lk, float(ell(np.array(k_max * (1.0 + WINDOW_SLACK)))), side="right"
            )
            i1, i2, lk = i1[a:b], i2[a:b], lk[a:b]
            y = cond.y_balance
            # Nominal gain (A = ∞, ε = +e) = (a' + c)/(2(1 − c)), a' = a(1 + ε)/(1 − ε); its
            # corners move it by at least g_up, g_down (module docstring, test 2).
            c = np.exp(lk)
            shrink = (1.0 - cond.eps) / (1.0 + cond.eps)
            g_lo = cond.gain * (1.0 - cond.accuracy) * math.exp(g_down) * (1.0 - WINDOW_SLACK)
            g_hi = cond.gain * (1.0 + cond.accuracy) * math.exp(-g_up) * (1.0 + WINDOW_SLACK)
            a_lo = (2.0 * (1.0 - c) * g_lo - c) * shrink
            a_hi = (2.0 * (1.0 - c) * g_hi - c) * shrink
            with np.errstate(divide="ignore", invalid="ignore"):
                la_lo = np.where(a_lo > 0.0, np.log(np.maximum(a_lo, 1e-300)), -np.inf)
                la_hi = np.where(a_hi > 0.0, np.log(np.maximum(a_hi, 1e-300)), -np.inf)
            start = np.searchsorted(lm, np.maximum(lk - y + up, la_lo), side="left")
            stop = np.searchsorted(lm, np.minimum(lk + y - down, la_hi), side="right")
        else:
            start = np.zeros(len(i1), dtype=np.int64)
            stop = np.full(len(i1), len(i3))
        count = np.maximum(stop - start, 0)
        cum = np.cumsum(count)
        lo = 0
        while lo < len(i1):
            base = cum[lo - 1] if lo else 0
            hi = max(int(np.searchsorted(cum, base + BLOCK, side="right")), lo + 1)
            first = np.repeat(np.arange(lo, hi), count[lo:hi])
            second = _ranges(start[lo:hi], count[lo:hi])
            lo = hi
            if len(first):
                yield np.stack([i1[first], i2[first], i3[second], i4[second]], axis=1)

    def _survivors(self, slots: Sequence[Slot], idx: Array) -> tuple[Array, Array]:
        """Nominal values ``(n, 4)`` and the mask of test 3."""
        r = np.stack([slots[j].values[idx[:, j]] for j in range(4)], axis=1)
        if not self.screen or not len(r):
            return r, np.ones(len(r), dtype=bool)
        low = np.array([s.low for s in slots])[None, :].repeat(len(r), 0)
        high = np.array([s.high for s in slots])[None, :].repeat(len(r), 0)
        if any(
            s.own is not None for s in slots
        ):  # same-lot: a part id placed once keeps its tempco
            rows = np.stack([slots[j].rows[idx[:, j]] for j in range(4)], axis=1)
            for j, slot in enumerate(slots):
                if slot.own is None:
                    continue
                alone = np.ones(len(r), dtype=bool)
                for i in range(4):
                    if i != j:
                        alone &= rows[:, i] != rows[:, j]
                low[alone, j], high[alone, j] = slot.own
        ok = corner_screen(r, low, high, self.cond, full=False)
        keep = np.flatnonzero(ok)
        ok[keep] = corner_screen(r[keep], low[keep], high[keep], self.cond, full=True)
        return r, ok

    def discrete_part(self, row: int) -> DiscretePart:
        if row not in self._parts:
            self._parts[row] = self.catalog.discrete_part(row)
        return self._parts[row]

    # -- skeletons ---------------------------------------------------------------------------

    def _scan_discrete(self) -> Iterator[tuple[Array, Array]]:
        """Skeleton lower bounds and codes (``((c1·K + c2)·K + c3)·K + c4``) of four classes
        that pass test 1, one array pair per first class."""
        cls = self.classes
        k = len(cls.slots)
        if not k or Topology.DISCRETE not in self.topologies:
            return
        p = self.spec.preferences
        penalty = p.stock_penalty if p.stock is StockPolicy.PREFER else 0.0
        width = np.array([math.log(s.high / s.low) for s in cls.slots])
        t = [self.beta[j] * width for j in range(4)]
        g = [self.gamma[j] * width for j in range(4)]
        c2, c3, c4 = (
            x.ravel() for x in np.meshgrid(np.arange(k), np.arange(k), np.arange(k), indexing="ij")
        )
        rest_t = t[1][c2] + t[2][c3] + t[3][c4]
        rest_g = g[1][c2] + g[2][c3] + g[3][c4]
        s = np.sort(np.stack([c2, c3, c4], axis=1), axis=1)
        first = np.concatenate([np.ones((len(s), 1), dtype=bool), s[:, 1:] != s[:, :-1]], axis=1)
        rest_cost = (cls.cost[c2] + cls.cost[c3] + cls.cost[c4] + 4 * p.placement_cost
                     + p.line_cost * first.sum(1) + penalty * (first & ~cls.stocked[s]).sum(1))  # fmt: skip
        limit = 2.0 * self.cond.y_balance
        for c1 in range(k):
            ok = (np.flatnonzero((t[0][c1] + rest_t <= limit) & (g[0][c1] + rest_g <= self.gain_limit))
                  if self.screen else np.arange(len(c2)))  # fmt: skip
            if not len(ok):
                continue
            new = (c2[ok] != c1) & (c3[ok] != c1) & (c4[ok] != c1)
            lb = (
                cls.cost[c1] + rest_cost[ok] + new * (p.line_cost + penalty * (not cls.stocked[c1]))
            )
            yield lb, c1 * k**3 + ok  # ok indexes the (c2, c3, c4) grid in C order

    def _expand_discrete(self, code: int) -> Stream | None:
        k = len(self.classes.slots)
        cs = []
        for _ in range(4):
            code, r = divmod(code, k)
            cs.append(r)
        cs.reverse()
        slots = [self.classes.slots[c] for c in cs]

        def block(idx: Array) -> tuple[Array, Callable[[int], Design]] | None:
            _, ok = self._survivors(slots, idx)
            idx = idx[ok]
            if not len(idx):
                return None
            rows = np.stack([slots[j].rows[idx[:, j]] for j in range(4)], axis=1)
            costs = discrete_cost(rows, self.classes, self.spec)
            # equal costs: larger least value first (ratings fail low values; any order is exact)
            order = np.lexsort((-self.catalog_values[rows].min(axis=1), costs))
            rows, costs = rows[order], costs[order]

            def build(i: int) -> Design:
                return Design(
                    tuple(
                        Placement(POSITIONS[j], self.discrete_part(int(rows[i, j])))
                        for j in range(4)
                    )
                )  # type: ignore[arg-type]

            return costs, build

        # Classes that differ only in what the screens ignore (size, technology, cost, stock)
        # give the same quads and the same screen results: a skeleton found barren once is
        # barren for all of them (same value lists, same factor bounds).
        key = tuple((s.vid, s.low, s.high, s.own, id(s) if s.own else None) for s in slots)
        if key in self._barren:
            return None
        stream = self._stream(self._quads(slots), block)
        if stream is None:
            self._barren.add(key)
        return stream

    def _stream(
        self,
        blocks: Iterator[Array],
        block: Callable[[Array], tuple[Array, Callable[[int], Design]] | None],
    ) -> Stream | None:
        """A stream over quad blocks: lazily when every design of the skeleton costs the same
        (no line cost, no stock penalty), else all blocks merged and sorted first."""
        p = self.spec.preferences
        constant = p.line_cost == 0.0 and (
            p.stock is not StockPolicy.PREFER or p.stock_penalty == 0.0
        )
        made = (b for b in (block(idx) for idx in blocks) if b is not None)
        if constant:
            head = next(made, None)
            return None if head is None else Stream(head[0], head[1], more=made)
        parts = list(made)
        if not parts:
            return None
        costs = np.concatenate([c for c, _ in parts])
        owner = np.concatenate([np.full(len(c), j) for j, (c, _) in enumerate(parts)])
        local = np.concatenate([np.arange(len(c)) for c, _ in parts])
        order = np.argsort(costs, kind="stable")
        costs, owner, local = costs[order], owner[order], local[order]

        def build(i: int) -> Design:
            return parts[int(owner[i])][1](int(local[i]))

        return Stream(costs, build)

    def _mixed_layouts(self) -> list[tuple[NetworkPart, tuple[int, int], tuple[int, ...]]]:
        """(dual, positions, element order) of every dual placement of ``pair_plus_discrete``."""
        out = []
        for net in self.duals:
            for pos in itertools.combinations(range(4), 2):
                for order in orders(net, 2):
                    out.append((net, pos, order))
        return out

    def _scan_mixed(self) -> Iterator[tuple[Array, Array]]:
        cls = self.classes
        k = len(cls.slots)
        if not k or Topology.PAIR_PLUS_DISCRETE not in self.topologies or not self.duals:
            return
        p = self.spec.preferences
        penalty = p.stock_penalty if p.stock is StockPolicy.PREFER else 0.0
        width = np.array([math.log(s.high / s.low) for s in cls.slots])
        ca, cb = np.meshgrid(np.arange(k), np.arange(k), indexing="ij")
        ca, cb = ca.ravel(), cb.ravel()
        same = ca == cb
        disc_cost = cls.cost[ca] + cls.cost[cb] + 2 * p.placement_cost + p.line_cost * (2 - same) + penalty * (
            (~cls.stocked[ca]).astype(int) + ((~cls.stocked[cb]) & ~same))  # fmt: skip
        limit = 2.0 * self.cond.y_balance
        for li, (net, pos, _) in enumerate(self.layouts):
            free = [j for j in range(4) if j not in pos]
            lo, hi = element_bounds(net, self.cond)
            fixed_t = sum(self.beta[j] for j in pos) * math.log(hi / lo)
            tt = fixed_t + self.beta[free[0]] * width[ca] + self.beta[free[1]] * width[cb]
            fixed_g = sum(self.gamma[j] for j in pos) * math.log(hi / lo)
            tg = fixed_g + self.gamma[free[0]] * width[ca] + self.gamma[free[1]] * width[cb]
            ok = (
                (tt <= limit) & (tg <= self.gain_limit)
                if self.screen
                else np.ones(len(ca), dtype=bool)
            )
            if not ok.any():
                continue
            lb = network_cost([net], self.spec) + disc_cost[ok]
            yield lb, li * k * k + ca[ok] * k + cb[ok]

    def _expand_mixed(self, code: int) -> Stream | None:
        k = len(self.classes.slots)
        li, rest = divmod(code, k * k)
        ca, cb = divmod(rest, k)
        net, pos, order = self.layouts[li]
        lo, hi = element_bounds(net, self.cond)
        free = [j for j in range(4) if j not in pos]
        slots: list[Slot] = [None] * 4  # type: ignore[list-item]
        for j, e in zip(pos, order, strict=True):
            value = net.values_ohm[e]
            slots[j] = Slot(np.array([value]), np.array([-1]), lo, hi, ("value", value))
        slots[free[0]] = self.classes.slots[ca]
        slots[free[1]] = self.classes.slots[cb]
        element = dict(zip(pos, order, strict=True))

        def block(idx: Array) -> tuple[Array, Callable[[int], Design]] | None:
            _, ok = self._survivors(slots, idx)
            idx = idx[ok]
            if not len(idx):
                return None
            rows = np.stack([slots[j].rows[idx[:, j]] for j in free], axis=1)
            costs = discrete_cost(rows, self.classes, self.spec) + network_cost([net], self.spec)
            order_ = np.lexsort((-self.catalog_values[rows].min(axis=1), costs))
            rows, costs = rows[order_], costs[order_]

            def build(i: int) -> Design:
                placements = []
                for j in range(4):
                    if j in element:
                        placements.append(Placement(POSITIONS[j], net, element=element[j]))
                    else:
                        part = self.discrete_part(int(rows[i, free.index(j)]))
                        placements.append(Placement(POSITIONS[j], part))
                return Design(tuple(placements))  # type: ignore[arg-type]

            return costs, build

        return self._stream(self._quads(slots), block)

    # -- networks listed whole ---------------------------------------------------------------

    def _network_stream(self, topology: Topology) -> Stream | None:
        """Every quad in each element order, or every pair of dual layouts, screened by test 3
        and sorted by cost."""
        if topology is Topology.QUAD:
            lay = [(net, perm) for net in self.quads for perm in orders(net, 4)]
            if not lay:
                return None
            r = np.array([[net.values_ohm[e] for e in perm] for net, perm in lay])
            bounds = np.array([element_bounds(net, self.cond) for net, _ in lay])
            costs = np.array([network_cost([net], self.spec) for net, _ in lay])
            low = np.repeat(bounds[:, :1], 4, axis=1)
            high = np.repeat(bounds[:, 1:], 4, axis=1)

            def make(i: int) -> Design:
                net, perm = lay[i]
                return Design(
                    tuple(Placement(POSITIONS[j], net, element=perm[j]) for j in range(4))
                )  # type: ignore[arg-type]

        else:
            duals = [(n, o) for n in self.duals for o in orders(n, 2)]
            if not duals:
                return None
            first, second = (
                ((0, 2), (1, 3)) if topology is Topology.EQUAL_PAIRS else ((0, 1), (2, 3))
            )
            net_of = np.array([self.duals.index(n) for n, _ in duals])
            v = np.array([[n.values_ohm[o[0]], n.values_ohm[o[1]]] for n, o in duals])
            bd = np.array([element_bounds(n, self.cond) for n, _ in duals])
            unit = np.array([n.unit_cost for n, _ in duals])
            stocked = np.array([n.in_stock for n, _ in duals])
            ia, ib = (
                x.ravel()
                for x in np.meshgrid(np.arange(len(duals)), np.arange(len(duals)), indexing="ij")
            )
            same = net_of[ia] == net_of[ib]
            r = np.zeros((len(ia), 4))
            low = np.zeros((len(ia), 4))
            high = np.zeros((len(ia), 4))
            for half, pick in ((first, ia), (second, ib)):
                for k, j in enumerate(half):
                    r[:, j] = v[pick, k]
                    low[:, j] = bd[pick, 0]
                    high[:, j] = bd[pick, 1]
            p = self.spec.preferences
            penalty = p.stock_penalty if p.stock is StockPolicy.PREFER else 0.0
            costs = (unit[ia] + unit[ib] + 2 * p.placement_cost + p.line_cost * (2 - same)
                     + penalty * ((~stocked[ia]).astype(int) + ((~stocked[ib]) & ~same)))  # fmt: skip

            def make(i: int) -> Design:
                (na, oa), (nb, ob) = duals[int(ia[i])], duals[int(ib[i])]
                pkg = 1 if nb is na else 0
                slot: dict[int, Placement] = {}
                for (n, o, q), half in (((na, oa, 0), first), ((nb, ob, pkg), second)):
                    for k, j in enumerate(half):
                        slot[j] = Placement(POSITIONS[j], n, element=o[k], package=q)
                return Design(tuple(slot[j] for j in range(4)))  # type: ignore[arg-type]

        ok = np.ones(len(r), dtype=bool)
        if self.screen:
            ok = corner_screen(r, low, high, self.cond, full=False)
            keep = np.flatnonzero(ok)
            ok[keep] = corner_screen(r[keep], low[keep], high[keep], self.cond, full=True)
        keep = np.flatnonzero(ok)
        keep = keep[np.argsort(costs[keep], kind="stable")]
        if not len(keep):
            return None

        def build(i: int) -> Design:
            return make(int(keep[i]))

        return Stream(costs[keep], build)

    # -- the search --------------------------------------------------------------------------

    def run(self, k: int = 10, max_checks: int = 5000) -> Result:
        started = time.perf_counter()
        spec = self.spec
        if self.cond.y_balance < 0.0 and self.screen:  # the amplifier alone misses the floor
            return Result(
                [], True, 0, 0, time.perf_counter() - started, ["amplifier below the floor"]
            )
        heap: list[tuple[float, int, int, object]] = []
        tick = itertools.count()
        for topology in (Topology.QUAD, Topology.EQUAL_PAIRS, Topology.DIVIDER_PAIRS):
            if topology in self.topologies:
                stream = self._network_stream(topology)
                if stream is not None:
                    heapq.heappush(heap, (float(stream.costs[0]), 0, next(tick), stream))
        scans = [
            _Skeletons(self._scan_discrete, self._expand_discrete),
            _Skeletons(self._scan_mixed, self._expand_mixed),
        ]
        for scan in scans:
            key = scan.peek()
            if key is not None:
                heapq.heappush(heap, (key, 1, next(tick), scan))
        found: list[tuple[float, Design]] = []
        seen: set[tuple[object, ...]] = set()
        checked = 0
        complete = True
        while heap:
            key = heap[0][0]
            if len(found) >= k and key >= found[k - 1][0] * (1.0 - 1e-12):
                break
            _, _, _, item = heapq.heappop(heap)
            if isinstance(item, _Skeletons):
                stream = item.expand_next()
                if stream is not None:
                    heapq.heappush(heap, (float(stream.costs[0]), 0, next(tick), stream))
                nxt = item.peek()
                if nxt is not None:
                    heapq.heappush(heap, (nxt, 1, next(tick), item))
                continue
            assert isinstance(item, Stream)
            i, build, cost = item.position, item.build, float(item.costs[item.position])
            if item.advance():
                heapq.heappush(heap, (float(item.costs[item.position]), 0, next(tick), item))
            design = build(i)
            ident = identity(design)
            if ident in seen:
                continue
            seen.add(ident)
            if checked >= max_checks:
                complete = False
                break
            checked += 1
            if not verify(design, spec).passed:
                continue
            theirs = design_cost(design, spec.preferences).total
            if not math.isclose(cost, theirs, rel_tol=1e-9, abs_tol=1e-12):
                raise AssertionError(
                    f"cost rule disagrees: reference {cost!r}, optimizer.cost {theirs!r}"
                )
            found.append((cost, design))
        skeletons = sum(s.expanded for s in scans)
        return Result(found[:k], complete, checked, skeletons, time.perf_counter() - started)


class _Skeletons:
    """Skeletons in ascending (lower bound, code): each scan keeps the :data:`KEEP` cheapest
    after the last one expanded, so memory stays small however many pass test 1."""

    def __init__(
        self,
        scan: Callable[[], Iterator[tuple[Array, Array]]],
        expand: Callable[[int], Stream | None],
    ) -> None:
        self.scan = scan
        self.expand = expand
        self.lb = np.zeros(0)
        self.code = np.zeros(0, dtype=np.int64)
        self.position = 0
        self.last: tuple[float, int] | None = None
        self.more = True
        self.expanded = 0

    def _refill(self) -> None:
        lbs: list[Array] = []
        codes: list[Array] = []
        held = 0
        total = 0
        for lb, code in self.scan():
            if self.last is not None:
                after = (lb > self.last[0]) | ((lb == self.last[0]) & (code > self.last[1]))
                lb, code = lb[after], code[after]
            total += len(lb)
            lbs.append(lb)
            codes.append(code.astype(np.int64))
            held += len(lb)
            if held > 2 * KEEP:  # keep every skeleton that can be among the KEEP first
                lb_all, code_all = np.concatenate(lbs), np.concatenate(codes)
                cut = np.partition(lb_all, KEEP - 1)[KEEP - 1]
                mask = lb_all <= cut
                lbs, codes = [lb_all[mask]], [code_all[mask]]
                held = int(mask.sum())
        lb_all = np.concatenate(lbs) if lbs else np.zeros(0)
        code_all = np.concatenate(codes) if codes else np.zeros(0, dtype=np.int64)
        order = np.lexsort((code_all, lb_all))[:KEEP]
        self.lb, self.code, self.position = lb_all[order], code_all[order], 0
        self.more = total > KEEP

    def peek(self) -> float | None:
        if self.position >= len(self.lb):
            if not self.more:
                return None
            self._refill()
            if self.position >= len(self.lb):
                return None
        return float(self.lb[self.position])

    def expand_next(self) -> Stream | None:
        lb, code = float(self.lb[self.position]), int(self.code[self.position])
        self.position += 1
        self.last = (lb, code)
        self.expanded += 1
        return self.expand(code)


def _ranges(start: Array, count: Array) -> Array:
    """``concatenate([arange(s, s + n) for s, n in zip(start, count)])`` without a loop."""
    total = int(count.sum())
    if not total:
        return np.zeros(0, dtype=np.int64)
    offsets = np.repeat(np.cumsum(count) - count, count)
    return np.asarray(np.repeat(start, count) + np.arange(total) - offsets, dtype=np.int64)


def cheapest(
    spec: Spec, catalog: Catalog, k: int = 10, *, screen: bool | None = None, max_checks: int = 5000
) -> Result:
    """The ``k`` cheapest distinct designs of ``spec`` from ``catalog`` that pass the exact check
    (module docstring). ``screen=False`` lists every design (required on the yield basis)."""
    return Search(spec, catalog, screen=screen).run(k, max_checks)
