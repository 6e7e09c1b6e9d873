"""The CP-SAT model's variant (which requirements it enforces, what it optimises) and the built
model with handles to its literals, as the search uses them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

from ..design import Topology
from ..spec import Objective
from .cpterms import (
    COST_SCALE,
)
from .options import (
    OptionTable,
)

__all__ = [
    "BuiltModel",
    "Constants",
    "ModelVariant",
]


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


#: The value constants of a block (``discrete.value_constants``): φ, the fractions R/(R + rs)
#: and each value's noise.
Constants = tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]
