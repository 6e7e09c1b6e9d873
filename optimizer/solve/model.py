"""The CP-SAT model of the pick: an exact cover of R1..R4 by options under linear requirements.

Linearisation (first order, in logs of effective resistances; see ``options``):

* CMRR. CMRR⁻¹ of the resistors equals 2·tanh(|ln x|/2) with ln x = g(y₁) − g(y₂),
  y₁ = ln(R2/R1'), y₂ = ln(R4'/R3'), g(y) = −ln(1 + e^−y) (exact algebra of the transfer in
  ``optimizer.analysis.transfer``). Since g' = 1/(1+e^y) lies between 1/(1+G_hi) and 1 for every
  design whose gain stays below G_hi, a design meeting a floor C with an amplifier of CMRR C_a
  has |δ| = |y₂ − y₁| ≤ B = 2·atanh(X/2)·(1 + G_hi) with X = 1/C − 1/C_a. Worst case over the
  parts: |δ_nom,v| + Wδ,v ≤ B at every environment vertex v; yield basis: (B − |δ_nom,v|)² ≥
  z²·Sδ,v with z the one-sided normal quantile of the yield (a necessary condition).
* Gain. ln Adm ≈ γ = Σ cg·φ, and finite open-loop gain A lowers it by ln(1 + (1+G)/A):
  ln(1 − acc) ≤ γ_v − ln G ± Wg,v (− the A term) ≤ ln(1 + acc).
* Input impedance: R1 + R3 (differential, ideal amplifier), R1 + R2 and R3 + R4 (each bounds the
  common-mode impedance from above) at least the minimum.
* Noise: Σ per-position output noise power density ≤ limit²/bandwidth − the amplifier's floor.
* Ratings: options are pre-filtered per position by voltage and derated power.

Every bound is taken on its optimistic side and widened by a small relative slack, so the
linear model is a relaxation of the exact check: it never rejects a design the exact check
accepts. The search (``optimizer.solve.search``) verifies each candidate exactly and cuts the
ones the relaxation let through.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

from ..design import Topology
from ..spec import CmrrBasis, Objective, Spec
from .discrete import DiscreteBlock, value_constants
from .environment import LinearEnvironment
from .limits import COUPLING_BUDGET, SLACK, Limits, limits_for
from .options import (
    ALL_SHAPES,
    C_DELTA,
    DIVIDER_SHAPES,
    EQUAL_SHAPES,
    PAIR,
    QUAD,
    OptionTable,
    gain_coefficients,
)

__all__ = ["Limits", "ModelVariant", "build_model", "limits_for"]

LOG_SCALE = 1e7  # integer units per natural-log unit (0.1 ppm resolution)
COST_SCALE = 1e4  # integer units per relative cost unit
OHM_SCALE = 1.0  # integer units per ohm
NOISE_SCALE = 1e24  # integer units per V²/Hz


@dataclass(frozen=True)
class ModelVariant:
    """Which requirements the model enforces and what it optimises (for diagnosis and for the
    best-of-each-kind searches)."""

    cmrr: bool = True
    gain: bool = True
    impedance: bool = True
    noise: bool = True
    objective: Objective = Objective.COST
    cost_cap: float | None = None
    topologies: frozenset[Topology] | None = None  # None: the spec's
    maximise: str | None = None  # "cmrr": optimise the worst-case CMRR margin instead of cost
    pair_shape: int | None = (
        None  # pair_plus_discrete only: the one pair shape (index into ALL_SHAPES)
    )


@dataclass
class BuiltModel:
    """A CP-SAT model with handles to its literals: ``x`` network options, ``value[i][k]`` and
    ``grade[i][c]`` the discrete value and class chosen at position i (dicts by index)."""

    model: cp_model.CpModel
    x: list[cp_model.IntVar]
    value: list[dict[int, cp_model.IntVar]]
    grade: list[dict[int, cp_model.IntVar]]
    options: OptionTable
    cuts: int = 0
    #: Proven infeasible while building (the model holds an empty clause): no solve is needed.
    infeasible: bool = False
    #: The objective expression and its sense (+1 minimise, −1 maximise), for ``no_better``.
    goal: cp_model.LinearExprT | None = None
    sense: int = 1

    def literals(self) -> list[cp_model.IntVar]:
        """Every decision literal (for reading a solution)."""
        out = list(self.x)
        for position in range(4):
            out.extend(self.value[position].values())
            out.extend(self.grade[position].values())
        return out

    def no_better(self, optimum: float) -> None:
        """After an optimal solve: every design still allowed is at best as good as the one just
        found (cuts only remove designs), so the objective can be bounded by that optimum. The
        bound removes nothing and gives the next solve its LP bound from the start."""
        if self.goal is None:
            return
        if self.sense > 0:
            self.model.add(self.goal >= round(optimum))
        else:
            self.model.add(self.goal <= round(optimum))

    def at_most(self, cost: float) -> None:
        """Bound a lowest-cost objective from above by ``cost`` (relative units), widened by the
        rounding of every cost term to integer units so no design of that cost is removed."""
        if self.goal is None or self.sense <= 0:
            return
        slack = 4 * len(self.literals()) + 1  # each term rounds by at most half a unit
        self.model.add(self.goal <= math.ceil(cost * COST_SCALE) + slack)

    def exclude(self, chosen: list[cp_model.IntVar]) -> None:
        """No-good cut: forbid this exact set of decisions from appearing together again."""
        self.model.add_bool_or([lit.Not() for lit in chosen])
        self.cuts += 1


class _Sum:
    """Accumulates terms (literal, float coefficient) of one linear form before scaling."""

    def __init__(self) -> None:
        self.literals: list[cp_model.IntVar] = []
        self.chunks: list[NDArray[np.float64]] = []

    def add(
        self, literals: list[cp_model.IntVar], coefficients: NDArray[np.float64] | list[float]
    ) -> None:
        self.literals.extend(literals)
        self.chunks.append(np.asarray(coefficients, dtype=float).reshape(-1))

    def expr(self, scale: float, rounding: str = "nearest") -> cp_model.LinearExpr:
        values = (np.concatenate(self.chunks) if self.chunks else np.zeros(0)) * scale
        if rounding == "floor":
            ints = _as_ints(np.floor(values))
        elif rounding == "ceil":
            ints = _as_ints(np.ceil(values))
        else:
            ints = _as_ints(np.rint(values))
        return cp_model.LinearExpr.weighted_sum(self.literals, ints)


def _total(literals: list[cp_model.IntVar]) -> cp_model.LinearExpr | int:
    """Σ literals (0 when there are none, as Python's ``sum`` gives), built in one call."""
    return cp_model.LinearExpr.sum(literals) if literals else 0


def _as_ints(values: NDArray[np.float64]) -> list[int]:
    """Whole-valued floats as Python ints (the coefficients CP-SAT takes)."""
    ints: list[int] = values.astype(np.int64).tolist()
    return ints


def build_model(
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
    env: LinearEnvironment,
    limits: Limits,
    variant: ModelVariant,
    constants: tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]] | None = None,
) -> BuiltModel:
    """The CP-SAT model for network ``options`` and discrete ``block`` under ``limits``."""
    model = cp_model.CpModel()
    n = len(options)
    allowed = set(
        variant.topologies if variant.topologies is not None else spec.preferences.topologies
    )
    discrete_allowed = bool(allowed & {Topology.DISCRETE, Topology.PAIR_PLUS_DISCRETE})
    usable_options = _usable_options(options, allowed)
    if variant.pair_shape is not None:
        usable_options &= (options.positions == PAIR) & (options.shape == variant.pair_shape)
    if constants is None:
        constants = value_constants(block, spec, env)
    usable, classes = _prune(
        options, block, spec, env, limits, usable_options, discrete_allowed, constants[1]
    )
    options = options.subset(usable)
    usable = np.ones(len(options), dtype=bool)
    n = len(options)
    if any(not classes[i] and not options.covers[:, i].any() for i in range(4)):
        # A position nothing can fill after pruning: the stream is infeasible; skip the rest.
        return _infeasible(model, options)
    req = spec.requirements
    sides = extreme_vertices(env.vertices, req.gain)
    value_sets = [
        np.unique(np.concatenate([block.avail[position][c] for c in classes[position]]))
        if classes[position]
        else np.zeros(0, dtype=np.int64)
        for position in range(4)
    ]

    # The half coupling's analysis needs only the value and class sets: run it before any
    # literal exists, so that a stream it proves infeasible costs no further building (its
    # constraints are added later, in their usual place).
    halves = _halves(allowed, variant)
    coupling: _HalfPairs | None = None
    if (
        halves is not None
        and variant.cmrr
        and variant.gain
        and limits.cmrr_budget <= COUPLING_BUDGET
    ):
        coupling = _half_pairs(
            halves,
            [{int(k): None for k in ks} for ks in value_sets],
            options,
            constants[0],
            _LeastSpread(
                block,
                [{c: None for c in cs} for cs in classes],
                constants[1],
                req.cmrr_basis is CmrrBasis.YIELD,
            ),
            spec,
            limits,
            sides,
            np.ones(len(options), dtype=bool),
        )
        if coupling.infeasible if coupling is not None else False:
            return _infeasible(model, options)

    x = [model.new_bool_var(f"o{i}") for i in range(n)]
    positions = options.positions
    value: list[dict[int, cp_model.IntVar]] = []
    grade: list[dict[int, cp_model.IntVar]] = []
    placed: list[cp_model.LinearExpr | int] = []  # 1 when position i holds a discrete part
    for position in range(4):
        cs = classes[position]
        ks = value_sets[position]
        value.append({int(k): model.new_bool_var(f"v{position}_{k}") for k in ks})
        grade.append({c: model.new_bool_var(f"g{position}_{c}") for c in cs})
        values_sum = _total(list(value[position].values()))
        model.add(_total(list(grade[position].values())) == values_sum)
        offered: dict[int, list[cp_model.IntVar]] = {}
        for c, lit in grade[position].items():
            model.add(
                lit <= _total([value[position][k] for k in block.avail[position][c].tolist()])
            )
            for k in block.avail[position][c].tolist():
                offered.setdefault(k, []).append(lit)
        # And the other way: a value needs one of the classes that offer it (tightens the LP).
        for k, lit in value[position].items():
            model.add(lit <= _total(offered[k]))
        placed.append(values_sum)

    # Topology selection and exact cover.
    t = {top: model.new_bool_var(top.value) for top in Topology if top in allowed}
    model.add_exactly_one(t.values())
    for position in range(4):
        covering = [x[i] for i in np.flatnonzero(options.covers[:, position])]
        model.add(_total(covering) + placed[position] == 1)
    quads = [x[i] for i in np.flatnonzero(positions == QUAD)]
    model.add(_total(quads) == t.get(Topology.QUAD, 0))
    mixed = {s: model.new_bool_var(f"mixed{s}") for s in range(len(ALL_SHAPES))}
    if Topology.PAIR_PLUS_DISCRETE in t:
        model.add(_total(list(mixed.values())) == t[Topology.PAIR_PLUS_DISCRETE])
    else:
        for var in mixed.values():
            model.add(var == 0)
    for s, shape in enumerate(ALL_SHAPES):
        pairs = [x[i] for i in np.flatnonzero((positions == PAIR) & (options.shape == s))]
        fixed = t.get(Topology.EQUAL_PAIRS, 0) if shape in EQUAL_SHAPES else 0
        fixed = t.get(Topology.DIVIDER_PAIRS, 0) if shape in DIVIDER_SHAPES else fixed
        model.add(_total(pairs) == fixed + mixed[s])
    model.add(
        sum(placed) == 4 * t.get(Topology.DISCRETE, 0) + 2 * t.get(Topology.PAIR_PLUS_DISCRETE, 0)
    )

    phi, fraction, value_noise = constants
    cg = gain_coefficients(req.gain)

    def linear(coef: NDArray[np.float64], v: int) -> _Sum:
        """Σ coefᵢ·φᵢ,v over the chosen values and network options (δ for C_DELTA, else γ)."""
        is_delta = coef is C_DELTA
        acc = _Sum()
        acc.add(x, options.delta[:, v] if is_delta else options.gain[:, v])
        for position in range(4):
            ks = list(value[position])
            if ks:
                acc.add([value[position][k] for k in ks], coef[position] * phi[ks, v, position])
        return acc

    bands: dict[tuple[int, bytes], cp_model.IntVar] = {}

    def band_literal(
        position: int,
        ks: list[int],
        members_at: NDArray[np.int64],
        values: list[cp_model.IntVar],
    ) -> cp_model.IntVar:
        """The literal "the value at ``position`` is one of these" (made once per set)."""
        key = (position, np.asarray(ks, dtype=np.int64)[members_at].tobytes())
        if key not in bands:
            lit = model.new_bool_var(f"band{position}_{len(bands)}")
            model.add(lit == _total([values[m] for m in members_at.tolist()]))
            bands[key] = lit
        return bands[key]

    def spread(
        coef: NDArray[np.float64], v: int | tuple[int, ...], of_variance: bool, scale: float
    ) -> cp_model.LinearExpr:
        """Worst-case deviation (or variance) of Σ coefᵢ·φᵢ,v from the chosen grades, in integer
        units of ``scale``. A discrete position contributes |coefᵢ|·f·own (or coefᵢ²·f²·var),
        the product of a class term X and a value term Y = f (f²) = R/(R + rs). The values are
        split into bands of Y (BAND_EDGES); for the chosen band, X·Y ≥ X·Y_band,min, enforced
        by one constraint per band that is vacuous unless a value of that band is chosen
        (a disjunctive bound: linear in the literals, never above the true product)."""
        is_delta = coef is C_DELTA
        vs = list(v) if isinstance(v, tuple) else [v]
        acc = _Sum()
        if of_variance:
            acc.add(x, (options.s_delta if is_delta else options.s_gain)[:, vs].min(axis=1))
        else:
            acc.add(x, (options.w_delta if is_delta else options.w_gain)[:, vs].min(axis=1))
        terms: list[cp_model.LinearExpr] = [acc.expr(scale, "floor")]
        for position in range(4):
            cs = list(grade[position])
            if not cs or coef[position] == 0.0:
                continue
            ks = list(value[position])
            f = fraction[np.ix_(ks, vs, [position])].min(axis=(1, 2)) ** (2 if of_variance else 1)
            class_term = (
                (block.var[cs] * coef[position] ** 2)
                if of_variance
                else (block.own[cs] * abs(coef[position]))
            )
            x_hi = float(class_term.max())
            y_lo, y_hi = float(f.min()), float(f.max())
            grades = [grade[position][c] for c in cs]
            values = [value[position][k] for k in ks]
            if y_hi - y_lo <= 1e-12 * y_hi:
                terms.append(
                    cp_model.LinearExpr.weighted_sum(
                        grades, _as_ints(np.floor(class_term * y_lo * scale))
                    )
                )
                continue
            bound = model.new_int_var(
                0, 10**15, f"w{position}_{'_'.join(map(str, vs))}_{int(of_variance)}"
            )
            band_of = np.digitize(f, BAND_EDGES)
            order = np.argsort(band_of, kind="stable")  # members keep their value order
            _, starts = np.unique(band_of[order], return_index=True)
            groups = np.split(order, starts[1:])
            # One literal per band (shared by every bound that splits the values alike): "a
            # value of this band is chosen". The bands partition the values, so their sum is
            # "a part is placed here", and each bound has one term per band, not per value.
            in_band = [band_literal(position, ks, members_at, values) for members_at in groups]
            placed_here = _total(in_band)
            for members_at, chosen in zip(groups, in_band, strict=True):
                y_band = float(f[members_at].min())
                # bound ≥ X·y_band when a value of this band is chosen (vacuous otherwise).
                relax = math.ceil(x_hi * y_band * scale)
                model.add(
                    bound
                    >= cp_model.LinearExpr.weighted_sum(
                        grades, _as_ints(np.floor(class_term * y_band * scale))
                    )
                    + relax * chosen
                    - relax * placed_here
                )
            terms.append(bound)
        return _total(terms)  # type: ignore[return-value,arg-type]

    budget = math.floor(limits.cmrr_budget * LOG_SCALE) if limits.cmrr_budget > 0 else -1
    worst_margin = model.new_int_var(-(10**13), 10**13, "worst_margin")
    log_g = round(math.log(req.gain) * LOG_SCALE)
    upper = math.floor(limits.gain_upper * LOG_SCALE)
    lower = math.ceil(limits.gain_lower * LOG_SCALE)
    open_loop = round(limits.open_loop_term * LOG_SCALE)
    if req.cmrr_basis is CmrrBasis.WORST_CASE or variant.maximise == "cmrr":
        for sign, vertices in ((1, sides.delta_high), (-1, sides.delta_low)):
            for v in vertices:
                delta = linear(C_DELTA, v).expr(LOG_SCALE)
                w_delta = spread(C_DELTA, v, False, LOG_SCALE)
                model.add(worst_margin <= budget - (sign * delta + w_delta))
        if variant.cmrr:
            model.add(worst_margin >= 0)
    if req.cmrr_basis is CmrrBasis.WORST_CASE and variant.gain:
        for v in sides.gain_high:
            model.add(
                linear(cg, v).expr(LOG_SCALE) - log_g + spread(cg, v, False, LOG_SCALE) <= upper
            )
        for v in sides.gain_low:
            model.add(
                linear(cg, v).expr(LOG_SCALE) - log_g - spread(cg, v, False, LOG_SCALE) - open_loop
                >= lower
            )
    if req.cmrr_basis is CmrrBasis.YIELD:
        z2 = limits.z**2
        if variant.cmrr:
            for v in sorted(set(sides.delta_high + sides.delta_low)):
                delta = linear(C_DELTA, v).expr(LOG_SCALE)
                s_delta = spread(C_DELTA, v, True, QUAD_SCALE**2 * z2)
                _quadratic_margin(model, budget - _abs(model, delta, f"ad{v}"), s_delta, f"c{v}")
            if limits.z_two_sided > 0.0 and sides.delta_high and sides.delta_low:
                # A build must pass at the high and at the low vertex: δ_s ≤ B − D_h and
                # δ_s ≥ −B − D_l. For normal δ_s, P ≤ Φ(u) + Φ(w) − 1 ≤ 2·Φ((u + w)/2) − 1
                # (Φ is concave on u, w ≥ 0), so B − (D_h − D_l)/2 ≥ z₂·σ with z₂ = Φ⁻¹((1+Y)/2).
                vh, vl = sides.delta_high[0], sides.delta_low[0]
                swing = linear(C_DELTA, vh).expr(LOG_SCALE) - linear(C_DELTA, vl).expr(LOG_SCALE)
                variance = spread(
                    C_DELTA, (vh, vl), True, QUAD_SCALE**2 * 4.0 * limits.z_two_sided**2
                )
                _quadratic_margin(model, 2 * budget - swing, variance, "c_both")
        if variant.gain:
            for v in sides.gain_high:
                gain = linear(cg, v).expr(LOG_SCALE) - log_g
                _quadratic_margin(
                    model, upper - gain, spread(cg, v, True, QUAD_SCALE**2 * z2), f"gu{v}"
                )
            for v in sides.gain_low:
                gain = linear(cg, v).expr(LOG_SCALE) - log_g
                _quadratic_margin(
                    model,
                    gain - open_loop - lower,
                    spread(cg, v, True, QUAD_SCALE**2 * z2),
                    f"gl{v}",
                )

    if coupling is not None:
        yield_basis = req.cmrr_basis is CmrrBasis.YIELD
        scale = QUAD_SCALE**2 if yield_basis else LOG_SCALE
        _couple_halves(
            model,
            coupling,
            x,
            value,
            lambda vs: spread(C_DELTA, vs, yield_basis, scale),
            lambda vs: spread(cg, vs, yield_basis, scale),
        )

    if variant.impedance and limits.min_impedance_ohm > 0.0:
        z_min = limits.min_impedance_ohm
        t_max = float(block.tolerance.max()) if block.tolerance.size else 0.0
        for a, b, factor in (
            (0, 2, 1.0),
            (0, 1, 1.0 - 2.0 * req.gain_accuracy - 0.01),
            (2, 3, 1.0),
        ):
            acc = _Sum()
            acc.add(x, options.ohms[:, a] + options.ohms[:, b])
            for position in (a, b):
                keys = list(value[position])
                acc.add([value[position][k] for k in keys], block.values[keys] * (1.0 + t_max))
            model.add(
                acc.expr(OHM_SCALE, "ceil")
                >= math.floor(z_min * factor * (1.0 - SLACK) * OHM_SCALE)
            )
        # Common-mode impedance Zcm = R1·(R3 + R4')/(R1 + R3) (analysis.checks). With
        # R1 + R3 ≥ 2·√(R1·R3) (AM-GM) and R3 + R4' = R3·(1 + R4'/R3) ≤ R3·(1 + G_hi):
        # Zcm ≤ √(R1·R3)·(1 + G_hi)/2, so ln R1 + ln R3 ≥ 2·ln Zmin − 2·ln((1 + G_hi)/2).
        g_hi = req.gain * (1.0 + req.gain_accuracy) * math.exp(max(limits.cmrr_budget, 0.0) + 0.05)
        acc = _Sum()
        with np.errstate(divide="ignore"):
            acc.add(
                x,
                np.log(np.where(options.ohms[:, 0] > 0, options.ohms[:, 0], 1.0))
                * options.covers[:, 0],
            )
            acc.add(
                x,
                np.log(np.where(options.ohms[:, 2] > 0, options.ohms[:, 2], 1.0))
                * options.covers[:, 2],
            )
        for position in (0, 2):
            keys = list(value[position])
            acc.add([value[position][k] for k in keys], np.log(block.values[keys]))
            cs = list(grade[position])
            acc.add([grade[position][c] for c in cs], np.log1p(block.swing[cs]))
        floor = 2.0 * math.log(z_min * (1.0 - SLACK)) - 2.0 * math.log((1.0 + g_hi) / 2.0)
        model.add(acc.expr(LOG_SCALE, "ceil") >= math.floor(floor * LOG_SCALE))
    if variant.noise and limits.noise_budget is not None:
        acc = _Sum()
        acc.add(x, options.noise * (1.0 - SLACK))
        for position in range(4):
            keys = list(value[position])
            acc.add([value[position][k] for k in keys], value_noise[keys, position] * (1.0 - SLACK))
        noise = acc.expr(NOISE_SCALE, "floor")
        model.add(
            noise
            <= (math.floor(limits.noise_budget * NOISE_SCALE) if limits.noise_budget > 0 else -1)
        )

    cost = _cost_expression(model, x, value, grade, options, block, spec)
    prefs = spec.preferences
    objective = variant.objective
    goal: cp_model.LinearExprT
    if variant.maximise == "cmrr" or objective is Objective.CMRR_MARGIN:
        cap = variant.cost_cap if variant.cost_cap is not None else prefs.cost_cap
        if cap is not None and variant.maximise is None:
            model.add(cost <= math.floor(cap * COST_SCALE))
        goal = worst_margin * 1000 - cost if variant.maximise is None else worst_margin
        model.maximize(goal)
        sense = -1
    elif objective is Objective.PLACEMENTS:
        placements = _total(x) + sum(placed)
        goal = placements * 10**9 + cost
        model.minimize(goal)
        sense = 1
    else:
        goal = cost
        model.minimize(goal)
        sense = 1
    return BuiltModel(
        model=model,
        x=x,
        value=value,
        grade=grade,
        options=options,
        goal=goal,
        sense=sense,
    )


#: Edges of the bands of f = R/(R + rs) (or f²) used to bound the spread of discrete parts.
BAND_EDGES = 1.0 - np.array(
    [
        0.8,
        0.5,
        0.3,
        0.2,
        0.1,
        0.07,
        0.05,
        0.04,
        0.03,
        0.02,
        0.015,
        0.01,
        0.005,
        3e-3,
        2e-3,
        1e-3,
        3e-4,
        1e-4,
    ]
)

#: Most value pairs the half coupling keeps per half; beyond it the coupling (a tightening
#: only) is skipped so that model building stays bounded.
MAX_HALF_PAIRS = 300_000


def _halves(allowed: set[Topology], variant: ModelVariant) -> tuple[object, tuple[int, int]] | None:
    """How the positions split into two halves whose mismatch contributions must cancel: for
    four discrete parts, the discrete pairs (R1, R2) and (R3, R4); for one network pair of a
    given shape plus two discrete parts, the network options and the discrete pair on the other
    two positions. None for the all-network topologies (their options fix every value)."""
    if allowed == {Topology.DISCRETE}:
        return (0, 1), (2, 3)
    if allowed == {Topology.PAIR_PLUS_DISCRETE} and variant.pair_shape is not None:
        shape = ALL_SHAPES[variant.pair_shape]
        rest = tuple(i for i in range(4) if i not in shape)
        return variant.pair_shape, (rest[0], rest[1])
    return None


#: Most (a, b) pairs the half coupling's join evaluates at once (bounds its memory).
JOIN_CHUNK = 500_000

#: Absolute allowance (natural-log units) when comparing a pair's need plus its least spread
#: with the budget: keeps rounding from removing a pair that sits exactly at the limit.
FLOOR_TOLERANCE = 1e-9


class _LeastSpread:
    """The least spread a choice of one half can bring, whatever grades are picked.

    For a discrete part of value k at position p the worst-case deviation of a linear form
    Σ cᵢ·φᵢ is |c_p|·f·own_c (variance: c_p²·f²·var_c), with f = R/(R + rs) at the vertex
    (``options``: own = Σ ln(1 + xₖ), var = Σ (xₖ/k)² or xₖ²/3). Its least value over the
    classes c the model keeps at p for value k, and over the vertices ``vs`` (f is smallest
    there), is a lower bound on that part's term in ``spread`` at any of those vertices. For a
    network option it is the option's own least spread over ``vs`` (its w or s constants)."""

    def __init__(
        self,
        block: DiscreteBlock,
        grade: Sequence[Mapping[int, object]],
        fraction: NDArray[np.float64],
        of_variance: bool,
    ) -> None:
        self.fraction = fraction
        self.of_variance = of_variance
        per_class = block.var if of_variance else block.own
        self.least: list[NDArray[np.float64]] = []
        for position in range(4):
            least = np.full(block.values.size, np.inf)
            for c in grade[position]:
                ks = block.avail[position][c]
                np.minimum.at(least, ks, per_class[c])
            self.least.append(least)

    def pairs(
        self,
        keys: NDArray[np.int64],
        positions: tuple[int, int],
        coef: NDArray[np.float64],
        vs: tuple[int, ...],
    ) -> NDArray[np.float64]:
        """Per value pair (k_i, k_j) (rows of ``keys``) at ``positions``: the least spread of
        the two parts."""
        index = keys.reshape(-1, 2)
        total = np.zeros(index.shape[0])
        if not vs:
            return total
        for column, position in enumerate(positions):
            f = self.fraction[:, list(vs), position].min(axis=1)
            if self.of_variance:
                term = coef[position] ** 2 * f**2 * self.least[position]
            else:
                term = abs(coef[position]) * f * self.least[position]
            total += term[index[:, column]]
        return total

    def options(
        self, options: OptionTable, members: NDArray[np.int64], delta: bool, vs: tuple[int, ...]
    ) -> NDArray[np.float64]:
        """Per network option in ``members``: its least spread over the vertices ``vs``."""
        if not vs:
            return np.zeros(members.size)
        if self.of_variance:
            table = options.s_delta if delta else options.s_gain
        else:
            table = options.w_delta if delta else options.w_gain
        least: NDArray[np.float64] = table[np.ix_(members, np.asarray(vs, dtype=np.int64))].min(
            axis=1
        )
        return least


@dataclass(frozen=True)
class _HalfPairs:
    """The half coupling's analysis (:func:`_half_pairs`): the choices of each half ((n, 2) value
    index pairs; for a network half, option indices in ``a_members`` with −1 beside them), each
    choice's least needed mismatch ``m`` and largest gain room ``r`` (inf / −inf: reaches no
    partner), the vertices the spreads are taken over, and the budget and yield factor z."""

    first: object
    second: tuple[int, int]
    a_keys: NDArray[np.int64]
    b_keys: NDArray[np.int64]
    a_members: NDArray[np.int64] | None
    m_a: NDArray[np.float64]
    r_a: NDArray[np.float64]
    m_b: NDArray[np.float64]
    r_b: NDArray[np.float64]
    vertices: tuple[int, ...]
    gain_vertices: tuple[int, ...]
    z: float
    budget: float
    yield_basis: bool

    @property
    def infeasible(self) -> bool:
        """No choice of one of the halves reaches a partner."""
        return not (np.isfinite(self.m_a).any() and np.isfinite(self.m_b).any())

    @staticmethod
    def none_reachable() -> _HalfPairs:
        empty = np.zeros(0)
        keys = np.zeros((0, 2), dtype=np.int64)
        return _HalfPairs(
            (0, 1), (2, 3), keys, keys, None, empty, empty, empty, empty, (), (), 1.0, 0.0, False
        )


def _half_pairs(
    halves: tuple[object, tuple[int, int]],
    value: Sequence[Mapping[int, object]],
    options: OptionTable,
    phi: NDArray[np.float64],
    least: _LeastSpread,
    spec: Spec,
    limits: Limits,
    sides: ExtremeVertices,
    usable: NDArray[np.bool_],
) -> _HalfPairs | None:
    """What each half can reach given the best partner in the other half (the analysis behind
    :func:`_couple_halves`, which turns it into constraints; nothing is added to a model here).

    For a choice a of one half, m_a = min over partners b of the mismatch the pair needs,
    need(a, b) = max(δ_v(a, b) over the high vertices, −δ_v(a, b) over the low ones), and
    r_a = max over b of the gain room min(U − γ(a, b), γ(a, b) − A − L). Then, exactly for the
    chosen a (a necessary condition, so the model stays a relaxation):
    worst case: spread ≤ B − Σ m_a·[a]  and  gain spread ≤ Σ r_a·[a];
    yield:      variance ≤ Σ ((B − m_a)/z)²·[a]  and  gain variance ≤ Σ (r_a/z)²·[a];
    and likewise for the other half. Unlike the sum constraint |Σ δ| + spread ≤ B, whose LP
    relaxation can average mismatches of opposite sign to zero, these bound the spread by the
    chosen choice's own best case, which keeps the LP bound close to the integer optimum.
    Value pairs that reach no partner within the budget are removed. Returns None when a half
    has too many choices to couple (MAX_HALF_PAIRS); ``infeasible`` is set when no choice of a
    half reaches a partner (the stream has no solution).

    A pair (a, b) only counts as reachable when its mismatch leaves room for the least spread
    its own values allow (``_LeastSpread``): need(a, b) + W_a + W_b ≤ B and W'_a + W'_b ≤ room
    (worst case), or z²·(S_a + S_b) ≤ (B − need)² and z²·(S'_a + S'_b) ≤ room² (yield), with W
    (S) the least worst-case deviation (variance) of the pair's parts over the model's vertices.
    The model's own spread constraints imply these, so the model stays a relaxation; checking
    them here removes pairs (and often whole streams) before CP-SAT sees them."""
    req = spec.requirements
    cg = gain_coefficients(req.gain)
    high, low = list(sides.delta_high), list(sides.delta_low)
    gain_high, gain_low = list(sides.gain_high), list(sides.gain_low)
    upper = math.log(req.gain) + limits.gain_upper
    lower = math.log(req.gain) + limits.gain_lower + limits.open_loop_term
    budget = limits.cmrr_budget
    first, second = halves

    ref = high[0] if high else 0
    n_vertices = phi.shape[1]

    def discrete_side(
        positions: tuple[int, int],
        keep: Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]],
        coarse: Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]]
        | None = None,
    ) -> tuple[NDArray[np.int64], NDArray[np.float64], NDArray[np.float64]]:
        """Value pairs (ki, kj) that ``keep`` accepts, given their δ and γ contributions at
        every vertex (arrays (n, V)); returns the pairs ((n, 2) value indices) and those
        contributions. ``coarse``, when given, sees only each pair's δ at the reference vertex
        and an upper bound on its vertex-to-vertex swing (the sum of the two parts' swings,
        which bounds the swing of their sum) and must accept every pair ``keep`` accepts; the
        full contributions are then computed for its survivors only."""
        i, j = positions
        ki = np.array(sorted(value[i]), dtype=np.int64)
        kj = np.array(sorted(value[j]), dtype=np.int64)
        empty = np.zeros((0, n_vertices))
        if ki.size == 0 or kj.size == 0:
            return np.zeros((0, 2), dtype=np.int64), empty, empty
        phi_i, phi_j = phi[ki, :, i], phi[kj, :, j]
        swing_i = abs(C_DELTA[i]) * spread_of(phi_i)
        swing_j = abs(C_DELTA[j]) * spread_of(phi_j)
        width = kj.size * (1 if coarse is not None else n_vertices)
        rows = max(1, int(2_000_000 // width))
        firsts: list[NDArray[np.int64]] = []
        seconds: list[NDArray[np.int64]] = []
        deltas: list[NDArray[np.float64]] = []
        gains: list[NDArray[np.float64]] = []
        for start in range(0, ki.size, rows):
            block_i = phi_i[start : start + rows]
            if coarse is not None:
                q = (C_DELTA[i] * block_i[:, None, ref] + C_DELTA[j] * phi_j[None, :, ref]).reshape(
                    -1
                )
                bound = (swing_i[start : start + rows, None] + swing_j[None, :]).reshape(-1)
                flat = np.flatnonzero(coarse(q, bound))
                if flat.size == 0:
                    continue
                first_at, second_at = start + flat // kj.size, flat % kj.size
                dl = C_DELTA[i] * phi_i[first_at] + C_DELTA[j] * phi_j[second_at]
                gm = cg[i] * phi_i[first_at] + cg[j] * phi_j[second_at]
            else:
                dl = (C_DELTA[i] * block_i[:, None, :] + C_DELTA[j] * phi_j[None, :, :]).reshape(
                    -1, n_vertices
                )
                gm = (cg[i] * block_i[:, None, :] + cg[j] * phi_j[None, :, :]).reshape(
                    -1, n_vertices
                )
                flat = np.arange(dl.shape[0])
                first_at, second_at = start + flat // kj.size, flat % kj.size
            mask = keep(dl, gm)
            if not mask.any():
                continue
            firsts.append(ki[first_at[mask]])
            seconds.append(kj[second_at[mask]])
            deltas.append(dl[mask])
            gains.append(gm[mask])
        if not firsts:
            return np.zeros((0, 2), dtype=np.int64), empty, empty
        keys = np.column_stack([np.concatenate(firsts), np.concatenate(seconds)])
        return keys, np.concatenate(deltas), np.concatenate(gains)

    def spread_of(contributions: NDArray[np.float64]) -> NDArray[np.float64]:
        return np.asarray(contributions.max(axis=1) - contributions.min(axis=1), dtype=float)

    def b_keep(
        a_delta: NDArray[np.float64],
    ) -> tuple[
        Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]],
        Callable[[NDArray[np.float64], NDArray[np.float64]], NDArray[np.bool_]],
    ]:
        """Second half: some a must satisfy need(a, b) ≤ B, which requires δ_ref = q_a + q_b in
        [−B − swing_a − swing_b, B] at the reference (high) vertex (see the join below)."""
        centres = np.sort(a_delta[:, ref])
        swing_a_max = float(spread_of(a_delta).max())

        def window(q: NDArray[np.float64], swing: NDArray[np.float64]) -> NDArray[np.bool_]:
            lo = np.searchsorted(centres, -q - budget - swing_a_max - swing - 1e-12, side="left")
            hi = np.searchsorted(centres, -q + budget + 1e-12, side="right")
            return np.asarray(hi > lo)

        def keep(dl: NDArray[np.float64], gm: NDArray[np.float64]) -> NDArray[np.bool_]:
            return window(dl[:, ref], spread_of(dl))

        return keep, window

    h = 1.0 / (2.0 * (1.0 + req.gain))
    a_members: NDArray[np.int64] | None = None
    i2, j2 = second
    # Largest vertex-to-vertex swing of the second half's δ contribution (refined below).
    swing_b = (
        float(spread_of(phi[:, :, i2]).max() + spread_of(phi[:, :, j2]).max()) if phi.size else 0.0
    )
    b_keys = np.zeros((0, 2), dtype=np.int64)
    b_delta = b_gain = np.zeros((0, n_vertices))
    for _ in range(3):
        if isinstance(first, tuple):
            # (R1, R2): the gain at a vertex is γ = −q_a + h·δ with |δ| ≤ B + the design's swing,
            # so −q_a at the gain vertices must lie within the gain window widened by h·(B + swing).
            def a_keep(
                dl: NDArray[np.float64], gm: NDArray[np.float64], swing_b: float = swing_b
            ) -> NDArray[np.bool_]:
                widen = h * (budget + spread_of(dl) + swing_b) + 1e-12
                mask = np.ones(dl.shape[0], dtype=bool)
                for v in gain_high:
                    mask &= -dl[:, v] <= upper + widen
                for v in gain_low:
                    mask &= -dl[:, v] >= lower - widen
                return mask

            a_keys, a_delta, a_gain = discrete_side(first, a_keep)
            if len(a_keys) > MAX_HALF_PAIRS:
                return None
        else:
            members = np.flatnonzero(
                usable & (options.positions == PAIR) & (options.shape == first)
            )
            a_keys = np.column_stack([members, np.full(members.size, -1)])
            a_delta, a_gain = options.delta[members], options.gain[members]
            a_members = members
        if len(a_keys) == 0:
            return _HalfPairs.none_reachable()
        b_keys, b_delta, b_gain = discrete_side(second, *b_keep(a_delta))
        if len(b_keys) > MAX_HALF_PAIRS:
            return None
        if len(b_keys) == 0:
            return _HalfPairs.none_reachable()
        new_swing = float(spread_of(b_delta).max())
        if not isinstance(first, tuple) or new_swing >= 0.9 * swing_b:
            break
        swing_b = new_swing
    swing_a = spread_of(a_delta)
    swing_b = new_swing  # the final second half's largest swing, taken in the loop
    yield_basis = req.cmrr_basis is CmrrBasis.YIELD
    z = limits.z if yield_basis else 1.0
    vertices = tuple(sorted(set(high + low)))
    gain_vertices = tuple(sorted(set(gain_high + gain_low)))
    if a_members is None:
        floor_a = least.pairs(a_keys, first, C_DELTA, vertices)  # type: ignore[arg-type]
        gain_floor_a = least.pairs(a_keys, first, cg, gain_vertices)  # type: ignore[arg-type]
    else:
        floor_a = least.options(options, a_members, True, vertices)
        gain_floor_a = least.options(options, a_members, False, gain_vertices)
    floor_b = least.pairs(b_keys, second, C_DELTA, vertices)
    gain_floor_b = least.pairs(b_keys, second, cg, gain_vertices)

    m_a = np.full(len(a_keys), np.inf)
    r_a = np.full(len(a_keys), -np.inf)
    m_b = np.full(len(b_keys), np.inf)
    r_b = np.full(len(b_keys), -np.inf)
    # Sorted-window join: a choice can only pair with choices of the other half whose δ
    # contribution at the reference vertex lies within the budget (plus vertex slack).
    order = np.argsort(b_delta[:, ref], kind="stable")
    sorted_q = b_delta[order, ref]
    # need ≥ δ_ref (ref is a high vertex) and need ≥ −δ_ref − swing: δ_ref ∈ [−B − swing, B].
    centre = -a_delta[:, ref]
    window_lo = np.searchsorted(sorted_q, centre - budget - swing_a - swing_b - 1e-12, side="left")
    window_hi = np.searchsorted(sorted_q, centre + budget + 1e-12, side="right")
    counts = np.maximum(window_hi - window_lo, 0)

    # Each side's contribution at each vertex that matters as its own contiguous column (the
    # per-pair gathers below read one column at a time).
    def columns(
        a: NDArray[np.float64], b: NDArray[np.float64], vs: list[int]
    ) -> list[tuple[NDArray[np.float64], NDArray[np.float64]]]:
        return [(np.ascontiguousarray(a[:, v]), np.ascontiguousarray(b[:, v])) for v in vs]

    high_cols = columns(a_delta, b_delta, high)
    low_cols = columns(a_delta, b_delta, low)
    up_cols = columns(a_gain, b_gain, gain_high)
    down_cols = columns(a_gain, b_gain, gain_low)
    # Every (a, b) pair inside a's window, a few hundred thousand pairs at a time.
    ends = np.cumsum(counts)
    start = 0
    while start < len(a_keys):
        stop = int(np.searchsorted(ends, ends[start] - counts[start] + JOIN_CHUNK, side="right"))
        stop = max(stop, start + 1)
        block = np.arange(start, stop)
        start = stop
        sizes = counts[block]
        if not sizes.any():
            continue
        a_at = np.repeat(block, sizes)
        within = np.arange(a_at.size) - np.repeat(np.cumsum(sizes) - sizes, sizes)
        b_at = order[np.repeat(window_lo[block], sizes) + within]
        need = np.full(a_at.size, -np.inf)
        for a_col, b_col in high_cols:
            np.maximum(need, a_col[a_at] + b_col[b_at], out=need)
        for a_col, b_col in low_cols:
            np.maximum(need, -(a_col[a_at] + b_col[b_at]), out=need)
        room = np.full(a_at.size, np.inf)
        for a_col, b_col in up_cols:
            np.minimum(room, upper - (a_col[a_at] + b_col[b_at]), out=room)
        for a_col, b_col in down_cols:
            np.minimum(room, (a_col[a_at] + b_col[b_at]) - lower, out=room)
        floor = floor_a[a_at] + floor_b[b_at]
        gain_floor = gain_floor_a[a_at] + gain_floor_b[b_at]
        if yield_basis:
            ok = (
                (need <= budget)
                & (room >= 0.0)
                & (z * np.sqrt(floor) <= budget - need + FLOOR_TOLERANCE)
                & (z * np.sqrt(gain_floor) <= room + FLOOR_TOLERANCE)
            )
        else:
            ok = (need + floor <= budget + FLOOR_TOLERANCE) & (
                room - gain_floor >= -FLOOR_TOLERANCE
            )
        if not ok.any():
            continue
        need_ok = np.where(ok, need, np.inf)
        room_ok = np.where(ok, room, -np.inf)
        np.minimum.at(m_a, a_at, need_ok)
        np.maximum.at(r_a, a_at, room_ok)
        np.minimum.at(m_b, b_at, need_ok)
        np.maximum.at(r_b, b_at, room_ok)

    return _HalfPairs(
        first=first,
        second=second,
        a_keys=a_keys,
        b_keys=b_keys,
        a_members=a_members,
        m_a=m_a,
        r_a=r_a,
        m_b=m_b,
        r_b=r_b,
        vertices=vertices,
        gain_vertices=gain_vertices,
        z=z,
        budget=budget,
        yield_basis=yield_basis,
    )


def _couple_halves(
    model: cp_model.CpModel,
    pairs: _HalfPairs,
    x: list[cp_model.IntVar],
    value: list[dict[int, cp_model.IntVar]],
    spread_delta: Callable[[tuple[int, ...]], cp_model.LinearExpr],
    spread_gain: Callable[[tuple[int, ...]], cp_model.LinearExpr],
) -> None:
    """Tighten the model with the analysis of :func:`_half_pairs`: one literal per live value
    pair of a discrete half (linked to its two value literals), dead network options fixed to
    false, and per half: spread ≤ Σ cap(choice)·[choice] (worst case: cap = B − m; yield:
    ((B − m)/z)²; gain: r or (r/z)²)."""
    first, second = pairs.first, pairs.second
    a_keys, b_keys = pairs.a_keys, pairs.b_keys
    m_a, r_a, m_b, r_b = pairs.m_a, pairs.r_a, pairs.m_b, pairs.r_b
    budget, z, yield_basis = pairs.budget, pairs.z, pairs.yield_basis
    vertices, gain_vertices = pairs.vertices, pairs.gain_vertices
    a_lits = None if pairs.a_members is None else [x[i] for i in pairs.a_members.tolist()]

    def side_literals(
        keys: NDArray[np.int64], positions: tuple[int, int], alive: NDArray[np.bool_]
    ) -> list[cp_model.IntVar | None]:
        """One literal per live value pair, linked to the value literals of its two positions;
        value literals with no live pair are fixed to false."""
        i, j = positions
        lits: list[cp_model.IntVar | None] = [None] * len(keys)
        live_at = np.flatnonzero(alive)
        made = [model.new_bool_var(f"h{i}{j}_{ki}_{kj}") for ki, kj in keys[live_at].tolist()]
        for at, lit in zip(live_at.tolist(), made, strict=True):
            lits[at] = lit
        for column, position in enumerate(positions):
            owner = keys[live_at, column]
            order = np.argsort(owner, kind="stable")  # pairs keep their order within a value
            owners, starts = np.unique(owner[order], return_index=True)
            groups = (
                dict(zip(owners.tolist(), np.split(order, starts[1:]), strict=True))
                if owner.size
                else {}
            )
            for k, var in value[position].items():
                members = groups.get(k)
                chosen = [] if members is None else [made[m] for m in members.tolist()]
                model.add(var == _total(chosen))
        return lits

    alive_a = np.isfinite(m_a)
    alive_b = np.isfinite(m_b)
    if a_lits is None:
        a_side = side_literals(a_keys, first, alive_a)  # type: ignore[arg-type]
    else:
        a_side = [lit if live else None for lit, live in zip(a_lits, alive_a, strict=False)]
        for lit, live in zip(a_lits, alive_a, strict=False):
            if not live:
                model.add(lit == 0)
    b_side = side_literals(b_keys, second, alive_b)
    for lits, m, r in ((a_side, m_a, r_a), (b_side, m_b, r_b)):
        live = [(lit, mi, ri) for lit, mi, ri in zip(lits, m, r, strict=False) if lit is not None]
        if not live:  # _half_pairs reports this case as infeasible before any build
            model.add_bool_or([])
            return
        literals = [lit for lit, _, _ in live]
        if yield_basis:
            delta_cap = [((budget - mi) / z) ** 2 * QUAD_SCALE**2 for _, mi, _ in live]
            gain_cap = [(ri / z) ** 2 * QUAD_SCALE**2 for _, _, ri in live]
        else:
            delta_cap = [(budget - mi) * LOG_SCALE for _, mi, _ in live]
            gain_cap = [ri * LOG_SCALE for _, _, ri in live]
        model.add(
            spread_delta(vertices)
            <= cp_model.LinearExpr.weighted_sum(literals, [math.ceil(c) for c in delta_cap])
        )
        model.add(
            spread_gain(gain_vertices)
            <= cp_model.LinearExpr.weighted_sum(literals, [math.ceil(c) for c in gain_cap])
        )


def _infeasible(model: cp_model.CpModel, options: OptionTable) -> BuiltModel:
    """The model of a stream found infeasible while building: one empty clause, no literals."""
    model.add_bool_or([])
    return BuiltModel(
        model=model,
        x=[],
        value=[{} for _ in range(4)],
        grade=[{} for _ in range(4)],
        options=options.subset(np.zeros(len(options), dtype=bool)),
        infeasible=True,
    )


def _usable_options(options: OptionTable, allowed: set[Topology]) -> NDArray[np.bool_]:
    """Network options that some allowed topology can use."""
    shapes: set[int] = set()
    if Topology.EQUAL_PAIRS in allowed:
        shapes.update(ALL_SHAPES.index(s) for s in EQUAL_SHAPES)
    if Topology.DIVIDER_PAIRS in allowed:
        shapes.update(ALL_SHAPES.index(s) for s in DIVIDER_SHAPES)
    if Topology.PAIR_PLUS_DISCRETE in allowed:
        shapes.update(range(len(ALL_SHAPES)))
    pair_ok = (options.positions == PAIR) & np.isin(options.shape, sorted(shapes))
    quad_ok = (options.positions == QUAD) & (Topology.QUAD in allowed)
    return np.asarray(pair_ok | quad_ok, dtype=bool)


def _prune(
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
    env: LinearEnvironment,
    limits: Limits,
    usable: NDArray[np.bool_],
    discrete_allowed: bool,
    fraction: NDArray[np.float64],
) -> tuple[NDArray[np.bool_], list[list[int]]]:
    """Drop network options and discrete classes that cannot meet the CMRR or gain budget even
    if every other position got its least-varying choice (a necessary condition, so nothing
    feasible is lost). Lower bound per position j: the least spread of any class usable at j, or
    of any usable option covering j divided by the positions it covers. Quads, which fix every
    value, are also dropped when their nominal mismatch or gain alone breaks the budget."""
    req = spec.requirements
    yield_basis = req.cmrr_basis is CmrrBasis.YIELD
    classes = [block.usable(i) if discrete_allowed else [] for i in range(4)]
    keep = usable.copy()
    if yield_basis and limits.z <= 0:
        return keep, classes
    spread = block.var if yield_basis else block.own
    cg = gain_coefficients(req.gain)
    gain_room = (limits.gain_upper - limits.gain_lower - limits.open_loop_term) / 2.0
    if yield_basis:
        checks = [
            (C_DELTA, options.s_delta, (limits.cmrr_budget / limits.z) ** 2),
            (cg, options.s_gain, (gain_room / limits.z) ** 2),
        ]
    else:
        checks = [(C_DELTA, options.w_delta, limits.cmrr_budget), (cg, options.w_gain, gain_room)]
    covers = options.covers.sum(axis=1)
    for coef, option_spread, budget in checks:
        for v in range(env.vertices.shape[0]):
            changed = True
            while changed:
                changed = False
                weights = []
                for position in range(4):
                    cs = classes[position]
                    ks = (
                        np.unique(np.concatenate([block.avail[position][c] for c in cs]))
                        if cs
                        else None
                    )
                    f = float(fraction[ks, v, position].min()) if ks is not None else 1.0
                    w = abs(coef[position]) * f
                    weights.append(w**2 if yield_basis else w)
                lows = []
                for j in range(4):
                    candidates = [weights[j] * spread[c] for c in classes[j]]
                    covering = keep & options.covers[:, j]
                    if covering.any():
                        candidates.append(
                            float((option_spread[covering, v] / covers[covering]).min())
                        )
                    lows.append(min(candidates, default=np.inf))
                total = sum(lows)
                for i in range(4):
                    rest = total - lows[i]
                    kept = [c for c in classes[i] if weights[i] * spread[c] + rest <= budget]
                    if len(kept) != len(classes[i]):
                        classes[i] = kept
                        changed = True
                if keep.any():
                    rest_of = total - options.covers.astype(float) @ np.where(
                        np.isfinite(lows), lows, 0.0
                    )
                    bad = keep & (option_spread[:, v] + rest_of > budget)
                    if bad.any():
                        keep &= ~bad
                        changed = True
    if not yield_basis:
        quads = keep & (options.positions == QUAD)
        log_g = math.log(req.gain)
        for v in range(env.vertices.shape[0]):
            mismatch = np.abs(options.delta[:, v]) + options.w_delta[:, v] > limits.cmrr_budget
            high = options.gain[:, v] - log_g + options.w_gain[:, v] > limits.gain_upper
            low = (
                options.gain[:, v] - log_g - options.w_gain[:, v] - limits.open_loop_term
                < limits.gain_lower
            )
            keep &= ~(quads & (mismatch | high | low))
    return keep, classes


@dataclass(frozen=True)
class ExtremeVertices:
    """Indices of the environment vertices at which each side of each requirement is tightest
    for the balanced circuit at the target gain (enforcing a subset of vertices keeps the model
    a relaxation; these are the ones that bind)."""

    delta_high: tuple[int, ...]
    delta_low: tuple[int, ...]
    gain_high: tuple[int, ...]
    gain_low: tuple[int, ...]


def extreme_vertices(vertices: NDArray[np.float64], gain: float) -> ExtremeVertices:
    """Vertices (Rs1, Rs3, Rref) that maximise and minimise δ ∝ Rs1 − Rs3 + Rref/G and
    γ ∝ −(1−h)·Rs1 − h·Rs3 + h·Rref/G (first-order sensitivities with R3 = R1, R4 = G·R1)."""
    h = 1.0 / (2.0 * (1.0 + gain))
    delta_score = vertices[:, 0] - vertices[:, 1] + vertices[:, 2] / gain
    gain_score = -(1.0 - h) * vertices[:, 0] - h * vertices[:, 1] + h * vertices[:, 2] / gain

    def arg(score: NDArray[np.float64], best: float) -> tuple[int, ...]:
        return tuple(
            int(i) for i in np.flatnonzero(np.abs(score - best) <= 1e-9 * (1.0 + abs(best)))
        )

    return ExtremeVertices(
        delta_high=arg(delta_score, float(delta_score.max())),
        delta_low=arg(delta_score, float(delta_score.min())),
        gain_high=arg(gain_score, float(gain_score.max())),
        gain_low=arg(gain_score, float(gain_score.min())),
    )


def _abs(model: cp_model.CpModel, expr: cp_model.LinearExpr, name: str) -> cp_model.IntVar:
    var = model.new_int_var(0, 10**12, name)
    model.add(var >= expr)
    model.add(var >= -expr)
    return var


#: Coarser integer units per log unit for the yield basis' quadratic constraint: small domains
#: let CP-SAT propagate the product well; the margin is rounded up, so it stays a relaxation.
QUAD_SCALE = 1e5


def _quadratic_margin(
    model: cp_model.CpModel, margin: cp_model.LinearExprT, variance: cp_model.LinearExpr, name: str
) -> None:
    """margin ≥ 0 and margin² ≥ variance, with ``margin`` in LOG_SCALE units and ``variance``
    in QUAD_SCALE² units (the margin is carried over rounded up: optimistic)."""
    ratio = round(LOG_SCALE / QUAD_SCALE)
    m = model.new_int_var(0, 10**7, f"m_{name}")
    model.add(margin >= 0)
    model.add(ratio * m >= margin)
    model.add(ratio * m <= margin + ratio - 1)
    square = model.new_int_var(0, 10**14, f"m2_{name}")
    model.add_multiplication_equality(square, [m, m])
    model.add(square >= variance)


def _cost_expression(
    model: cp_model.CpModel,
    x: list[cp_model.IntVar],
    value: list[dict[int, cp_model.IntVar]],
    grade: list[dict[int, cp_model.IntVar]],
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
) -> cp_model.LinearExpr:
    """Σ option and class costs, plus the line cost per distinct part number: network lines by
    part id, discrete lines counted as positions minus those that repeat an earlier position's
    (value, class) pair."""
    prefs = spec.preferences
    acc = _Sum()
    acc.add(x, options.cost)
    for position in range(4):
        cs = list(grade[position])
        acc.add([grade[position][c] for c in cs], block.cost[cs])
    expr = acc.expr(COST_SCALE)
    if prefs.line_cost <= 0.0:
        return expr
    line_cost = round(prefs.line_cost * COST_SCALE)
    lines: dict[int, list[int]] = {}
    for i, line in enumerate(options.line):
        lines.setdefault(int(line), []).append(i)
    network_lines = []
    for line, members in lines.items():
        y = model.new_bool_var(f"line{line}")
        for i in members:
            model.add_implication(x[i], y)
        network_lines.append(y)
    used = [_total(list(value[position].values())) for position in range(4)]
    repeats = []
    for i in range(1, 4):
        same_any = []
        for j in range(i):
            shared_values = sorted(set(value[i]) & set(value[j]))
            shared_classes = sorted(set(grade[i]) & set(grade[j]))
            if not shared_values or not shared_classes:
                continue
            # Positions j and i hold the same part (one line) only if they share a value and a
            # class: same ≤ Σ_k both_k and same ≤ Σ_c both_c, with both_k ≤ either value
            # literal (a tight linear form; an equality of index sums is weak in the LP).
            same = model.new_bool_var(f"same{j}{i}")
            for kind, shared, lits in (
                ("v", shared_values, value),
                ("g", shared_classes, grade),
            ):
                both = []
                for key in shared:
                    lit = model.new_bool_var(f"both{kind}{j}{i}_{key}")
                    model.add_implication(lit, lits[i][key])
                    model.add_implication(lit, lits[j][key])
                    both.append(lit)
                model.add(same <= _total(both))
            same_any.append(same)
        if same_any:
            repeat = model.new_bool_var(f"repeat{i}")
            model.add(repeat <= _total(same_any))
            repeats.append(repeat)
    discrete_lines = sum(used) - _total(repeats)
    return expr + line_cost * (_total(network_lines) + discrete_lines)
