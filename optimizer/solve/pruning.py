"""Options and classes the CP-SAT model can leave out before it is built: network options no
allowed topology uses, and network options and discrete classes that cannot meet the CMRR or
gain budget even with the least-varying choice at every other position (necessary conditions:
nothing feasible is lost).
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import NDArray

from ..design import Topology
from ..spec import CmrrBasis, Spec
from .discrete import DiscreteBlock
from .environment import LinearEnvironment
from .limits import Limits
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
    "options_in_use",
    "prune",
]


def options_in_use(options: OptionTable, allowed: set[Topology]) -> NDArray[np.bool_]:
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


def prune(
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
