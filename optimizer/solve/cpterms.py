"""What the CP-SAT model's parts share: the integer units of logs, costs, ohms and noise, a
linear sum of literals with real coefficients rounded the safe way, the absolute-value and
quadratic-margin constraints, and the environment vertices at which each requirement binds.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

__all__ = [
    "COST_SCALE",
    "LOG_SCALE",
    "NOISE_SCALE",
    "OHM_SCALE",
    "QUAD_SCALE",
    "ExtremeVertices",
    "LinearSum",
    "abs_var",
    "as_ints",
    "extreme_vertices",
    "quadratic_margin",
    "total",
]


LOG_SCALE = 1e7  # integer units per natural-log unit (0.1 ppm resolution)


COST_SCALE = 1e4  # integer units per relative cost unit


OHM_SCALE = 1.0  # integer units per ohm


NOISE_SCALE = 1e24  # integer units per V²/Hz


class LinearSum:
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
            ints = as_ints(np.floor(values))
        elif rounding == "ceil":
            ints = as_ints(np.ceil(values))
        else:
            ints = as_ints(np.rint(values))
        return cp_model.LinearExpr.weighted_sum(self.literals, ints)


def total(literals: list[cp_model.IntVar]) -> cp_model.LinearExpr | int:
    """Σ literals (0 when there are none, as Python's ``sum`` gives), built in one call."""
    return cp_model.LinearExpr.sum(literals) if literals else 0


def as_ints(values: NDArray[np.float64]) -> list[int]:
    """Whole-valued floats as Python ints (the coefficients CP-SAT takes)."""
    ints: list[int] = values.astype(np.int64).tolist()
    return ints


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


def abs_var(model: cp_model.CpModel, expr: cp_model.LinearExpr, name: str) -> cp_model.IntVar:
    var = model.new_int_var(0, 10**12, name)
    model.add(var >= expr)
    model.add(var >= -expr)
    return var


#: Coarser integer units per log unit for the yield basis' quadratic constraint: small domains
#: let CP-SAT propagate the product well; the margin is rounded up, so it stays a relaxation.
QUAD_SCALE = 1e5


def quadratic_margin(
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
