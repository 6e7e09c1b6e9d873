"""What the pick's models are built from (:class:`Problem`): the spec, the catalog, the linear
environment and limits, the option table, discrete block and value constants (built on first
use), and the least cost of four discrete parts the model admits.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from ..catalog import Catalog
from ..design import Design, Placement
from ..spec import CmrrBasis, Spec
from .discrete import DiscreteBlock, build_discrete, least_cost, value_constants
from .environment import LinearEnvironment, linear_environment
from .halfgroups import Shared
from .limits import LOOSE_BUDGET, Limits, limits_for
from .options import (
    C_DELTA,
    OptionTable,
    build_options,
)

if TYPE_CHECKING:  # CP-SAT loads on first use: the exact enumerations never need it
    from ortools.sat.python import cp_model

    from .model import BuiltModel, ModelVariant

__all__ = [
    "FLOOR_SLACK",
    "Problem",
    "prepare",
]


#: Relative widening of the budget of ``Problem.discrete_cost_floor`` against the model's own
#: rounding of its budget and spreads to integer units (the model stays the looser of the two).
FLOOR_SLACK = 1e-6


@dataclass(frozen=True)
class _ModelParts:
    """The option table, discrete block and value constants of the CP-SAT model."""

    options: OptionTable
    block: DiscreteBlock
    constants: tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]


@dataclass(frozen=True)
class Problem:
    """Everything the model is built from (kept together for re-builds). The CP-SAT model's
    parts (options, discrete block, value constants) are built on first use: a pick served by
    the exact enumerations alone never needs them."""

    spec: Spec
    catalog: Catalog
    env: LinearEnvironment
    limits: Limits
    _parts: list[_ModelParts] = field(default_factory=list, compare=False, repr=False)
    shared: Shared = field(default_factory=Shared, compare=False, repr=False)
    """The exact enumerations' shared parts (:func:`prepare` keeps the half records only when
    the one-dual-two-discrete search will read them)."""

    def _model_parts(self) -> _ModelParts:
        if not self._parts:
            block = build_discrete(self.catalog, self.spec, self.env)
            self._parts.append(
                _ModelParts(
                    build_options(self.catalog, self.spec, self.env),
                    block,
                    value_constants(block, self.spec, self.env),
                )
            )
        return self._parts[0]

    @property
    def options(self) -> OptionTable:
        return self._model_parts().options

    @property
    def block(self) -> DiscreteBlock:
        return self._model_parts().block

    @property
    def constants(self) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
        return self._model_parts().constants

    @property
    def built(self) -> bool:
        """Whether the CP-SAT model's parts have been built."""
        return bool(self._parts)

    def build(self, variant: ModelVariant) -> BuiltModel:
        from .model import build_model

        return build_model(
            self.options, self.block, self.spec, self.env, self.limits, variant, self.constants
        )

    def discrete_cost_floor(self) -> float:
        """A lower bound on the cost of every four-discrete design the CP-SAT model admits: at
        each of the model's mismatch vertices, the least cost of four classes whose spreads,
        at each position's least weight over its values, fit the model's budget
        (``discrete.least_cost``), the largest over the vertices; 0 where the budget is loose.
        Relative cost units: the parts and their placements (the model's per-placement stock
        penalty left out: the cost charges it per line) and one BOM line."""
        from .cpterms import extreme_vertices

        limits, block, spec = self.limits, self.block, self.spec
        yield_basis = spec.requirements.cmrr_basis is CmrrBasis.YIELD
        if not 0.0 < limits.cmrr_budget < LOOSE_BUDGET or (yield_basis and limits.z <= 0.0):
            return 0.0
        _, fraction, _ = self.constants
        usable = [block.usable(i) for i in range(4)]
        if not all(usable):
            return math.inf
        spread = block.var if yield_basis else block.own
        limit = limits.cmrr_budget / limits.z if yield_basis else limits.cmrr_budget
        budget = (limit**2 if yield_basis else limit) * (1.0 + FLOOR_SLACK)
        sides = extreme_vertices(self.env.vertices, spec.requirements.gain)
        cost = block.cost - block.penalty
        floor = 0.0
        for v in sorted(set(sides.delta_high + sides.delta_low)):
            f = np.array([fraction[block.value_indices(i), v, i].min() for i in range(4)])
            w = np.abs(C_DELTA) * f
            weights = w**2 if yield_basis else w
            floor = max(floor, least_cost(cost, spread, usable, weights, budget))
        return floor + spec.preferences.line_cost

    @property
    def size(self) -> int:
        return len(self.options) + sum(
            len(self.block.value_indices(i)) + len(self.block.usable(i)) for i in range(4)
        )

    def decode(
        self, solver: cp_model.CpSolver, built: BuiltModel
    ) -> tuple[list[cp_model.IntVar], Design]:
        """The chosen decision literals and the design they make."""
        chosen = [lit for lit in built.literals() if solver.boolean_value(lit)]
        slots: dict[int, Placement] = {}
        package_count: dict[str, int] = {}
        for i, lit in enumerate(built.x):
            if not solver.boolean_value(lit):
                continue
            recipe = built.options.makers[i]
            network = self.catalog.networks[recipe[0][2]]
            package = package_count.get(network.part_id, 0)
            package_count[network.part_id] = package + 1
            for position, _, _, element in recipe:
                slots[position] = Placement(f"R{position + 1}", network, element, package)
        for position in range(4):
            ks = [k for k, lit in built.value[position].items() if solver.boolean_value(lit)]
            cs = [c for c, lit in built.grade[position].items() if solver.boolean_value(lit)]
            if ks and cs:
                row = int(self.block.part_row[cs[0], ks[0]])
                slots[position] = Placement(f"R{position + 1}", self.catalog.discrete_part(row))
        design = Design((slots[0], slots[1], slots[2], slots[3]))
        return chosen, design


def prepare(spec: Spec, catalog: Catalog) -> Problem:
    """The environment and limits of the linear model; its options, discrete block and value
    constants follow on first use (:class:`Problem`)."""
    env = linear_environment(spec)
    return Problem(spec, catalog, env, limits_for(spec, env), shared=Shared())
