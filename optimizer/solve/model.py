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

The model is built by :func:`build_model`: ``solve.pruning`` leaves out what cannot help,
``solve.coupling`` analyses the half coupling, ``solve.builder`` adds the literals and rows step
by step, ``solve.cpterms`` holds the units and constraint helpers they share and
``solve.modelhandles`` the variant and the built model.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import NDArray
from ortools.sat.python import cp_model

from ..design import Topology
from ..spec import CmrrBasis, Spec
from .builder import ModelBuilder
from .coupling import HalfPairs, LeastSpread, half_pairs
from .cpterms import (
    ExtremeVertices,
    extreme_vertices,
)
from .discrete import DiscreteBlock, value_constants
from .environment import LinearEnvironment
from .limits import COUPLING_BUDGET, Limits, limits_for
from .modelhandles import BuiltModel, Constants, ModelVariant
from .options import (
    ALL_SHAPES,
    PAIR,
    OptionTable,
)
from .pruning import options_in_use, prune

__all__ = [
    "BuiltModel",
    "Limits",
    "ModelVariant",
    "build_model",
    "limits_for",
]


def build_model(
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
    env: LinearEnvironment,
    limits: Limits,
    variant: ModelVariant,
    constants: Constants | None = None,
) -> BuiltModel:
    """The CP-SAT model for network ``options`` and discrete ``block`` under ``limits``, built
    step by step: the options and classes pruned (``solve.pruning``), the half coupling's
    analysis (``solve.coupling``; it needs no literal, so a stream it proves infeasible costs no
    further building), then by :class:`ModelBuilder` the selection literals and the exact cover,
    the CMRR and gain rows (worst case or yield), the coupling's rows, the input-impedance and
    noise rows, and the objective."""
    model = cp_model.CpModel()
    allowed = set(
        variant.topologies if variant.topologies is not None else spec.preferences.topologies
    )
    if constants is None:
        constants = value_constants(block, spec, env)
    options, classes = _pruned(options, block, spec, env, limits, variant, allowed, constants)
    if any(not classes[i] and not options.covers[:, i].any() for i in range(4)):
        # A position nothing can fill after pruning: the stream is infeasible; skip the rest.
        return _infeasible(model, options)
    sides = extreme_vertices(env.vertices, spec.requirements.gain)
    value_sets = [
        np.unique(np.concatenate([block.avail[position][c] for c in classes[position]]))
        if classes[position]
        else np.zeros(0, dtype=np.int64)
        for position in range(4)
    ]
    coupling = _coupling(
        options, block, spec, limits, variant, allowed, constants, classes, value_sets, sides
    )
    if coupling is not None and coupling.infeasible:
        return _infeasible(model, options)
    builder = ModelBuilder(model, options, block, spec, limits, constants, classes, value_sets)
    builder.cover(allowed)
    worst_margin = builder.cmrr_and_gain(variant, sides)
    if coupling is not None:
        builder.couple(coupling)
    if variant.impedance and limits.min_impedance_ohm > 0.0:
        builder.impedance()
    if variant.noise and limits.noise_budget is not None:
        builder.noise()
    return builder.finish(variant, worst_margin)


def _pruned(
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
    env: LinearEnvironment,
    limits: Limits,
    variant: ModelVariant,
    allowed: set[Topology],
    constants: Constants,
) -> tuple[OptionTable, list[list[int]]]:
    """The network options an allowed topology (and the variant's one pair shape) can use and
    that survive ``pruning.prune``, with the discrete classes kept at each position."""
    discrete_allowed = bool(allowed & {Topology.DISCRETE, Topology.PAIR_PLUS_DISCRETE})
    usable_options = options_in_use(options, allowed)
    if variant.pair_shape is not None:
        usable_options &= (options.positions == PAIR) & (options.shape == variant.pair_shape)
    usable, classes = prune(
        options, block, spec, env, limits, usable_options, discrete_allowed, constants[1]
    )
    return options.subset(usable), classes


def _coupling(
    options: OptionTable,
    block: DiscreteBlock,
    spec: Spec,
    limits: Limits,
    variant: ModelVariant,
    allowed: set[Topology],
    constants: Constants,
    classes: list[list[int]],
    value_sets: list[NDArray[np.int64]],
    sides: ExtremeVertices,
) -> HalfPairs | None:
    """The half coupling's analysis (``coupling.half_pairs``) where it applies: a topology with
    two halves (:func:`_halves`), both the CMRR and the gain enforced, and a budget no looser
    than ``COUPLING_BUDGET``; None elsewhere."""
    halves = _halves(allowed, variant)
    if halves is None or not (variant.cmrr and variant.gain):
        return None
    if not limits.cmrr_budget <= COUPLING_BUDGET:
        return None
    return half_pairs(
        halves,
        [{int(k): None for k in ks} for ks in value_sets],
        options,
        constants[0],
        LeastSpread(
            block,
            [{c: None for c in cs} for cs in classes],
            constants[1],
            spec.requirements.cmrr_basis is CmrrBasis.YIELD,
        ),
        spec,
        limits,
        sides,
        np.ones(len(options), dtype=bool),
    )


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
