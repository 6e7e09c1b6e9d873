"""The CP-SAT model built step by step (:class:`ModelBuilder`, called in a fixed order by
``model.build_model``): the selection literals and the exact cover, the CMRR and gain rows of
the worst-case or yield basis, the half coupling's rows, the input-impedance and noise rows,
and the objective with its cost expression. The linearisation and why it is a relaxation:
``solve.model``, module docstring.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

from ..design import Topology
from ..spec import CmrrBasis, Objective, Spec
from .coupling import HalfPairs, couple_halves
from .cpterms import (
    COST_SCALE,
    LOG_SCALE,
    NOISE_SCALE,
    OHM_SCALE,
    QUAD_SCALE,
    ExtremeVertices,
    LinearSum,
    abs_var,
    as_ints,
    quadratic_margin,
    total,
)
from .discrete import DiscreteBlock
from .limits import SLACK, Limits
from .modelhandles import BuiltModel, Constants, ModelVariant
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

__all__ = [
    "BAND_EDGES",
    "ModelBuilder",
    "cost_expression",
]


class ModelBuilder:
    """One CP-SAT model being built: the literals (``x`` network options, ``value[i][k]`` and
    ``grade[i][c]`` the discrete value and class at position i, ``placed[i]`` 1 when position i
    holds a discrete part) and the rows added to it, one method per kind of row. The methods
    are called in a fixed order (:func:`build_model`): the model's variables and constraints
    come out in the same order every time."""

    def __init__(
        self,
        model: cp_model.CpModel,
        options: OptionTable,
        block: DiscreteBlock,
        spec: Spec,
        limits: Limits,
        constants: Constants,
        classes: list[list[int]],
        value_sets: list[NDArray[np.int64]],
    ) -> None:
        self.model, self.options, self.block, self.spec = model, options, block, spec
        self.limits = limits
        self.phi, self.fraction, self.value_noise = constants
        self.cg = gain_coefficients(spec.requirements.gain)
        self.x = [model.new_bool_var(f"o{i}") for i in range(len(options))]
        self.value: list[dict[int, cp_model.IntVar]] = []
        self.grade: list[dict[int, cp_model.IntVar]] = []
        self.placed: list[cp_model.LinearExpr | int] = []
        for position in range(4):
            self._position(position, classes[position], value_sets[position])
        self.bands: dict[tuple[int, bytes], cp_model.IntVar] = {}

    def _position(self, position: int, cs: list[int], ks: NDArray[np.int64]) -> None:
        """The value and class literals of one position: one class exactly when one value, a
        class only with a value it offers, and a value only with a class that offers it (the
        last tightens the LP)."""
        model, block = self.model, self.block
        value = {int(k): model.new_bool_var(f"v{position}_{k}") for k in ks}
        grade = {c: model.new_bool_var(f"g{position}_{c}") for c in cs}
        self.value.append(value)
        self.grade.append(grade)
        values_sum = total(list(value.values()))
        model.add(total(list(grade.values())) == values_sum)
        offered: dict[int, list[cp_model.IntVar]] = {}
        for c, lit in grade.items():
            model.add(lit <= total([value[k] for k in block.avail[position][c].tolist()]))
            for k in block.avail[position][c].tolist():
                offered.setdefault(k, []).append(lit)
        for k, lit in value.items():
            model.add(lit <= total(offered[k]))
        self.placed.append(values_sum)

    def cover(self, allowed: set[Topology]) -> None:
        """Topology selection and exact cover: one allowed topology; every position covered by
        one option or one discrete part; the options and discrete parts each topology uses."""
        model, options, x, placed = self.model, self.options, self.x, self.placed
        positions = options.positions
        t = {top: model.new_bool_var(top.value) for top in Topology if top in allowed}
        model.add_exactly_one(t.values())
        for position in range(4):
            covering = [x[i] for i in np.flatnonzero(options.covers[:, position])]
            model.add(total(covering) + placed[position] == 1)
        quads = [x[i] for i in np.flatnonzero(positions == QUAD)]
        model.add(total(quads) == t.get(Topology.QUAD, 0))
        mixed = {s: model.new_bool_var(f"mixed{s}") for s in range(len(ALL_SHAPES))}
        if Topology.PAIR_PLUS_DISCRETE in t:
            model.add(total(list(mixed.values())) == t[Topology.PAIR_PLUS_DISCRETE])
        else:
            for var in mixed.values():
                model.add(var == 0)
        for s, shape in enumerate(ALL_SHAPES):
            pairs = [x[i] for i in np.flatnonzero((positions == PAIR) & (options.shape == s))]
            fixed = t.get(Topology.EQUAL_PAIRS, 0) if shape in EQUAL_SHAPES else 0
            fixed = t.get(Topology.DIVIDER_PAIRS, 0) if shape in DIVIDER_SHAPES else fixed
            model.add(total(pairs) == fixed + mixed[s])
        model.add(
            sum(placed)
            == 4 * t.get(Topology.DISCRETE, 0) + 2 * t.get(Topology.PAIR_PLUS_DISCRETE, 0)
        )

    def linear(self, coef: NDArray[np.float64], v: int) -> LinearSum:
        """Σ coefᵢ·φᵢ,v over the chosen values and network options (δ for C_DELTA, else γ)."""
        is_delta = coef is C_DELTA
        options, value = self.options, self.value
        acc = LinearSum()
        acc.add(self.x, options.delta[:, v] if is_delta else options.gain[:, v])
        for position in range(4):
            ks = list(value[position])
            if ks:
                acc.add(
                    [value[position][k] for k in ks], coef[position] * self.phi[ks, v, position]
                )
        return acc

    def band_literal(
        self,
        position: int,
        ks: list[int],
        members_at: NDArray[np.int64],
        values: list[cp_model.IntVar],
    ) -> cp_model.IntVar:
        """The literal "the value at ``position`` is one of these" (made once per set)."""
        key = (position, np.asarray(ks, dtype=np.int64)[members_at].tobytes())
        if key not in self.bands:
            lit = self.model.new_bool_var(f"band{position}_{len(self.bands)}")
            self.model.add(lit == total([values[m] for m in members_at.tolist()]))
            self.bands[key] = lit
        return self.bands[key]

    def spread(
        self,
        coef: NDArray[np.float64],
        v: int | tuple[int, ...],
        of_variance: bool,
        scale: float,
    ) -> cp_model.LinearExpr:
        """Worst-case deviation (or variance) of Σ coefᵢ·φᵢ,v from the chosen grades, in integer
        units of ``scale``: the network options' own, plus each discrete position's
        (:meth:`_position_spread`)."""
        is_delta = coef is C_DELTA
        options = self.options
        vs = list(v) if isinstance(v, tuple) else [v]
        acc = LinearSum()
        if of_variance:
            acc.add(self.x, (options.s_delta if is_delta else options.s_gain)[:, vs].min(axis=1))
        else:
            acc.add(self.x, (options.w_delta if is_delta else options.w_gain)[:, vs].min(axis=1))
        terms: list[cp_model.LinearExpr] = [acc.expr(scale, "floor")]
        for position in range(4):
            if not self.grade[position] or coef[position] == 0.0:
                continue
            terms.append(self._position_spread(coef, position, vs, of_variance, scale))
        return total(terms)  # type: ignore[return-value,arg-type]

    def _position_spread(
        self,
        coef: NDArray[np.float64],
        position: int,
        vs: list[int],
        of_variance: bool,
        scale: float,
    ) -> cp_model.LinearExpr:
        """A discrete position's share of :meth:`spread`: |coefᵢ|·f·own (or coefᵢ²·f²·var), the
        product of a class term X and a value term Y = f (f²) = R/(R + rs). The values are split
        into bands of Y (BAND_EDGES); for the chosen band, X·Y ≥ X·Y_band,min, enforced by one
        constraint per band that is vacuous unless a value of that band is chosen (a
        disjunctive bound: linear in the literals, never above the true product)."""
        model, block = self.model, self.block
        cs = list(self.grade[position])
        ks = list(self.value[position])
        f = self.fraction[np.ix_(ks, vs, [position])].min(axis=(1, 2)) ** (2 if of_variance else 1)
        class_term = (
            (block.var[cs] * coef[position] ** 2)
            if of_variance
            else (block.own[cs] * abs(coef[position]))
        )
        x_hi = float(class_term.max())
        y_lo, y_hi = float(f.min()), float(f.max())
        grades = [self.grade[position][c] for c in cs]
        values = [self.value[position][k] for k in ks]
        if y_hi - y_lo <= 1e-12 * y_hi:
            return cp_model.LinearExpr.weighted_sum(
                grades, as_ints(np.floor(class_term * y_lo * scale))
            )
        bound = model.new_int_var(
            0, 10**15, f"w{position}_{'_'.join(map(str, vs))}_{int(of_variance)}"
        )
        band_of = np.digitize(f, BAND_EDGES)
        order = np.argsort(band_of, kind="stable")  # members keep their value order
        _, starts = np.unique(band_of[order], return_index=True)
        groups = np.split(order, starts[1:])
        # One literal per band (shared by every bound that splits the values alike): "a value
        # of this band is chosen". The bands partition the values, so their sum is "a part is
        # placed here", and each bound has one term per band, not per value.
        in_band = [self.band_literal(position, ks, members_at, values) for members_at in groups]
        placed_here = total(in_band)
        for members_at, chosen in zip(groups, in_band, strict=True):
            y_band = float(f[members_at].min())
            # bound ≥ X·y_band when a value of this band is chosen (vacuous otherwise).
            relax = math.ceil(x_hi * y_band * scale)
            model.add(
                bound
                >= cp_model.LinearExpr.weighted_sum(
                    grades, as_ints(np.floor(class_term * y_band * scale))
                )
                + relax * chosen
                - relax * placed_here
            )
        return bound

    def cmrr_and_gain(self, variant: ModelVariant, sides: ExtremeVertices) -> cp_model.IntVar:
        """The CMRR and gain rows of the spec's basis (:meth:`_worst_case_rows`,
        :meth:`_yield_rows`); returns the worst-case CMRR margin's variable (the objective of
        the CMRR-margin variants)."""
        req, limits = self.spec.requirements, self.limits
        budget = math.floor(limits.cmrr_budget * LOG_SCALE) if limits.cmrr_budget > 0 else -1
        worst_margin = self.model.new_int_var(-(10**13), 10**13, "worst_margin")
        gain_ints = (
            round(math.log(req.gain) * LOG_SCALE),
            math.floor(limits.gain_upper * LOG_SCALE),
            math.ceil(limits.gain_lower * LOG_SCALE),
            round(limits.open_loop_term * LOG_SCALE),
        )
        self._worst_case_rows(variant, sides, budget, worst_margin, gain_ints)
        if req.cmrr_basis is CmrrBasis.YIELD:
            self._yield_rows(variant, sides, budget, gain_ints)
        return worst_margin

    def _worst_case_rows(
        self,
        variant: ModelVariant,
        sides: ExtremeVertices,
        budget: int,
        worst_margin: cp_model.IntVar,
        gain_ints: tuple[int, int, int, int],
    ) -> None:
        """Worst case: |δ_nom,v| + Wδ,v ≤ B at the binding vertices (as the margin variable,
        also for the CMRR-margin objective on either basis), and the gain inside its window
        with its spread and the open-loop term."""
        req, model, cg = self.spec.requirements, self.model, self.cg
        log_g, upper, lower, open_loop = gain_ints
        if req.cmrr_basis is CmrrBasis.WORST_CASE or variant.maximise == "cmrr":
            for sign, vertices in ((1, sides.delta_high), (-1, sides.delta_low)):
                for v in vertices:
                    delta = self.linear(C_DELTA, v).expr(LOG_SCALE)
                    w_delta = self.spread(C_DELTA, v, False, LOG_SCALE)
                    model.add(worst_margin <= budget - (sign * delta + w_delta))
            if variant.cmrr:
                model.add(worst_margin >= 0)
        if req.cmrr_basis is CmrrBasis.WORST_CASE and variant.gain:
            for v in sides.gain_high:
                model.add(
                    self.linear(cg, v).expr(LOG_SCALE)
                    - log_g
                    + self.spread(cg, v, False, LOG_SCALE)
                    <= upper
                )
            for v in sides.gain_low:
                model.add(
                    self.linear(cg, v).expr(LOG_SCALE)
                    - log_g
                    - self.spread(cg, v, False, LOG_SCALE)
                    - open_loop
                    >= lower
                )

    def _yield_rows(
        self,
        variant: ModelVariant,
        sides: ExtremeVertices,
        budget: int,
        gain_ints: tuple[int, int, int, int],
    ) -> None:
        """Yield basis: (B − |δ_nom,v|)² ≥ z²·Sδ,v, the two-sided condition at a high and a low
        vertex together, and the gain's margins against z²·its variance."""
        model, limits, cg = self.model, self.limits, self.cg
        log_g, upper, lower, open_loop = gain_ints
        z2 = limits.z**2
        if variant.cmrr:
            for v in sorted(set(sides.delta_high + sides.delta_low)):
                delta = self.linear(C_DELTA, v).expr(LOG_SCALE)
                s_delta = self.spread(C_DELTA, v, True, QUAD_SCALE**2 * z2)
                quadratic_margin(model, budget - abs_var(model, delta, f"ad{v}"), s_delta, f"c{v}")
            if limits.z_two_sided > 0.0 and sides.delta_high and sides.delta_low:
                # A build must pass at the high and at the low vertex: δ_s ≤ B − D_h and
                # δ_s ≥ −B − D_l. For normal δ_s, P ≤ Φ(u) + Φ(w) − 1 ≤ 2·Φ((u + w)/2) − 1
                # (Φ is concave on u, w ≥ 0), so B − (D_h − D_l)/2 ≥ z₂·σ with z₂ = Φ⁻¹((1+Y)/2).
                vh, vl = sides.delta_high[0], sides.delta_low[0]
                swing = self.linear(C_DELTA, vh).expr(LOG_SCALE) - self.linear(C_DELTA, vl).expr(
                    LOG_SCALE
                )
                variance = self.spread(
                    C_DELTA, (vh, vl), True, QUAD_SCALE**2 * 4.0 * limits.z_two_sided**2
                )
                quadratic_margin(model, 2 * budget - swing, variance, "c_both")
        if variant.gain:
            for v in sides.gain_high:
                gain = self.linear(cg, v).expr(LOG_SCALE) - log_g
                quadratic_margin(
                    model, upper - gain, self.spread(cg, v, True, QUAD_SCALE**2 * z2), f"gu{v}"
                )
            for v in sides.gain_low:
                gain = self.linear(cg, v).expr(LOG_SCALE) - log_g
                quadratic_margin(
                    model,
                    gain - open_loop - lower,
                    self.spread(cg, v, True, QUAD_SCALE**2 * z2),
                    f"gl{v}",
                )

    def couple(self, coupling: HalfPairs) -> None:
        """The half coupling's rows (``coupling.couple_halves``), on the spreads of this model."""
        yield_basis = self.spec.requirements.cmrr_basis is CmrrBasis.YIELD
        scale = QUAD_SCALE**2 if yield_basis else LOG_SCALE
        couple_halves(
            self.model,
            coupling,
            self.x,
            self.value,
            lambda vs: self.spread(C_DELTA, vs, yield_basis, scale),
            lambda vs: self.spread(self.cg, vs, yield_basis, scale),
        )

    def impedance(self) -> None:
        """Input impedance: R1 + R3 (differential, ideal amplifier), R1 + R2 and R3 + R4 (each
        bounds the common-mode impedance from above) at least the floor, and the common-mode
        bound on ln R1 + ln R3 (:meth:`_common_mode_impedance`)."""
        req, options, block, value = self.spec.requirements, self.options, self.block, self.value
        z_min = self.limits.min_impedance_ohm
        t_max = float(block.tolerance.max()) if block.tolerance.size else 0.0
        for a, b, factor in (
            (0, 2, 1.0),
            (0, 1, 1.0 - 2.0 * req.gain_accuracy - 0.01),
            (2, 3, 1.0),
        ):
            acc = LinearSum()
            acc.add(self.x, options.ohms[:, a] + options.ohms[:, b])
            for position in (a, b):
                keys = list(value[position])
                acc.add([value[position][k] for k in keys], block.values[keys] * (1.0 + t_max))
            self.model.add(
                acc.expr(OHM_SCALE, "ceil")
                >= math.floor(z_min * factor * (1.0 - SLACK) * OHM_SCALE)
            )
        self._common_mode_impedance(z_min)

    def _common_mode_impedance(self, z_min: float) -> None:
        """Common-mode impedance Zcm = R1·(R3 + R4')/(R1 + R3) (analysis.checks). With
        R1 + R3 ≥ 2·√(R1·R3) (AM-GM) and R3 + R4' = R3·(1 + R4'/R3) ≤ R3·(1 + G_hi):
        Zcm ≤ √(R1·R3)·(1 + G_hi)/2, so ln R1 + ln R3 ≥ 2·ln Zmin − 2·ln((1 + G_hi)/2)."""
        req, limits, options, block = self.spec.requirements, self.limits, self.options, self.block
        g_hi = req.gain * (1.0 + req.gain_accuracy) * math.exp(max(limits.cmrr_budget, 0.0) + 0.05)
        acc = LinearSum()
        with np.errstate(divide="ignore"):
            acc.add(
                self.x,
                np.log(np.where(options.ohms[:, 0] > 0, options.ohms[:, 0], 1.0))
                * options.covers[:, 0],
            )
            acc.add(
                self.x,
                np.log(np.where(options.ohms[:, 2] > 0, options.ohms[:, 2], 1.0))
                * options.covers[:, 2],
            )
        for position in (0, 2):
            keys = list(self.value[position])
            acc.add([self.value[position][k] for k in keys], np.log(block.values[keys]))
            cs = list(self.grade[position])
            acc.add([self.grade[position][c] for c in cs], np.log1p(block.swing[cs]))
        floor = 2.0 * math.log(z_min * (1.0 - SLACK)) - 2.0 * math.log((1.0 + g_hi) / 2.0)
        self.model.add(acc.expr(LOG_SCALE, "ceil") >= math.floor(floor * LOG_SCALE))

    def noise(self) -> None:
        """Noise: Σ per-position output noise power density ≤ the budget (limit²/bandwidth less
        the amplifier's floor)."""
        budget = self.limits.noise_budget
        assert budget is not None
        acc = LinearSum()
        acc.add(self.x, self.options.noise * (1.0 - SLACK))
        for position in range(4):
            keys = list(self.value[position])
            acc.add(
                [self.value[position][k] for k in keys],
                self.value_noise[keys, position] * (1.0 - SLACK),
            )
        noise = acc.expr(NOISE_SCALE, "floor")
        self.model.add(noise <= (math.floor(budget * NOISE_SCALE) if budget > 0 else -1))

    def finish(self, variant: ModelVariant, worst_margin: cp_model.IntVar) -> BuiltModel:
        """The objective (cost, placements then cost, or the CMRR margin; ``cost_expression``)
        and the built model."""
        model = self.model
        cost = cost_expression(
            model, self.x, self.value, self.grade, self.options, self.block, self.spec
        )
        prefs = self.spec.preferences
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
            placements = total(self.x) + sum(self.placed)
            goal = placements * 10**9 + cost
            model.minimize(goal)
            sense = 1
        else:
            goal = cost
            model.minimize(goal)
            sense = 1
        return BuiltModel(
            model=model,
            x=self.x,
            value=self.value,
            grade=self.grade,
            options=self.options,
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


def cost_expression(
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
    acc = LinearSum()
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
    used = [total(list(value[position].values())) for position in range(4)]
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
                model.add(same <= total(both))
            same_any.append(same)
        if same_any:
            repeat = model.new_bool_var(f"repeat{i}")
            model.add(repeat <= total(same_any))
            repeats.append(repeat)
    discrete_lines = sum(used) - total(repeats)
    return expr + line_cost * (total(network_lines) + discrete_lines)
