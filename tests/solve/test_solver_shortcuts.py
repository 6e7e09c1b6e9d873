"""The solver's shortcuts agree with what they short-cut.

The speed-ups in ``optimizer.solve`` skip work whose outcome is known: streams the catalog
cannot fill, dominated grade classes, a bound on the objective after an optimal solve, a hint
from the previous design. Each test here compares a shortcut with the long way round on the
same input. The outside reference for the pick as a whole stays ``tests/solve/test_oracle.py`` (the
exhaustive enumerator); these tests pin the shortcuts themselves, so a wrong one fails here
with a message that names it.
"""

from __future__ import annotations

import itertools
from functools import cache

import numpy as np
import pytest
from helpers import ROOT
from ortools.sat.python import cp_model

from optimizer.catalog import Catalog, load_catalogs
from optimizer.design import Topology
from optimizer.solve import discrete as discrete_module
from optimizer.solve import model as model_module
from optimizer.solve import streams as streams_module
from optimizer.solve.discrete import SAFE_RATING, _drop_dominated
from optimizer.solve.model import ModelVariant
from optimizer.solve.options import ALL_SHAPES
from optimizer.solve.problem import prepare
from optimizer.solve.search import pick
from optimizer.solve.streams import make_streams
from optimizer.spec import Spec
from optimizer.specfile import load_spec
from optimizer.verify import verify

EXAMPLES = ("motor_shunt", "mains_monitor", "bridge_front_end", "industrial_input_stock")
#: The bundled examples, found from this file (tests run from any folder).
EXAMPLE_DIR = ROOT / "examples"


@cache
def _example(name: str) -> tuple[Spec, Catalog]:
    spec = load_spec(EXAMPLE_DIR / f"{name}.yaml")
    catalog = load_catalogs(
        list(spec.preferences.catalogs), include_builtin=spec.preferences.use_builtin_catalogs
    )
    return spec, catalog


def _all_streams(spec: Spec) -> list[tuple[Topology, int | None]]:
    out: list[tuple[Topology, int | None]] = []
    for topology in Topology:
        if topology not in spec.preferences.topologies:
            continue
        if topology is Topology.PAIR_PLUS_DISCRETE:
            out.extend((topology, shape) for shape in range(len(ALL_SHAPES)))
        else:
            out.append((topology, None))
    return out


@pytest.mark.parametrize("name", EXAMPLES)
def test_streams_left_out_have_no_design(name: str) -> None:
    """A stream ``_streams`` leaves out (its topology cannot be filled from the catalog) has an
    infeasible model when it is built and solved anyway."""
    spec, catalog = _example(name)
    problem = prepare(spec, catalog)
    kept = {(next(iter(s.topologies)), s.pair_shape) for s in make_streams(problem, spec)}
    for topology, shape in _all_streams(spec):
        if (topology, shape) in kept:
            continue
        built = problem.build(
            ModelVariant(
                objective=spec.preferences.objective,
                topologies=frozenset({topology}),
                pair_shape=shape,
            )
        )
        solver = streams_module.configured_solver(20.0)
        status = solver.solve(built.model)
        assert status == cp_model.INFEASIBLE, f"{name}: {topology.value} shape {shape}"


@pytest.mark.parametrize("name", ["motor_shunt", "mains_monitor"])
def test_objective_bound_and_hint_keep_the_ranking(
    name: str, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Bounding the objective by the last optimum and hinting the last design change how fast
    the next solve is, never what it returns: the ranking (costs in order) is the same
    without them."""
    spec, catalog = _example(name)
    fast = pick(spec, catalog, verify, top=10)
    monkeypatch.setattr(model_module.BuiltModel, "no_better", lambda self, optimum: None)
    monkeypatch.setattr(cp_model.CpModel, "add_hint", lambda self, var, value: None)
    slow = pick(spec, catalog, verify, top=10)
    assert [round(c.cost.total, 9) for c in fast.ranked] == [
        round(c.cost.total, 9) for c in slow.ranked
    ]
    assert fast.status == slow.status


def _dominated_by_definition(
    usable: list[np.ndarray],
    cost: np.ndarray,
    spread: np.ndarray,
    power: np.ndarray,
    volts: np.ndarray,
    stocked: np.ndarray,
    values: np.ndarray,
    stress: float,
) -> list[list[int]]:
    """The dominance rule written out pair by pair (the docstring of ``_drop_dominated``): at
    a value, class c goes when a class d offering the same value is no worse in every attribute
    (cost, spread, power and voltage rating capped at SAFE_RATING × the stress, stock) and comes
    first in the order (cost, spread, power, voltage, stock, class index)."""
    kept: list[list[int]] = []
    for c, ks in enumerate(usable):
        survivors = []
        for k in ks.tolist():

            def attrs(x: int, k: int = k) -> tuple[float, ...]:
                need_p = stress**2 / values[k]
                return (
                    float(cost[x]),
                    *(float(v) for v in spread[x]),
                    -min(float(power[x]), SAFE_RATING * need_p),
                    -min(float(volts[x]), SAFE_RATING * stress),
                    -float(stocked[x]),
                )

            beaten = any(
                d != c
                and k in usable[d].tolist()
                and all(a <= b + 1e-15 for a, b in zip(attrs(d), attrs(c), strict=True))
                and (*attrs(d), d) < (*attrs(c), c)
                for d in range(len(usable))
            )
            if not beaten:
                survivors.append(k)
        kept.append(survivors)
    return kept


@pytest.mark.parametrize("by_value", [False, True], ids=["class-by-class", "value-groups"])
@pytest.mark.parametrize("seed", range(40))
def test_drop_dominated_matches_the_rule_written_out(
    seed: int, by_value: bool, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Both ways of filtering (class against class for few classes, within each value's group
    for many) keep exactly what the pairwise rule keeps, on random classes with ties
    (attributes drawn from few levels, so equal classes and partial orders are common)."""
    if by_value:
        monkeypatch.setattr(discrete_module, "MANY_CLASSES", 0)
    rng = np.random.default_rng(seed)
    n_classes, n_values = int(rng.integers(2, 9)), int(rng.integers(1, 7))
    values = np.sort(rng.choice([100.0, 1e3, 4.99e3, 1e4, 1e5, 1e6], n_values, replace=False))
    cost = rng.choice([1.0, 2.0, 3.0], n_classes)
    spread = rng.choice([0.001, 0.002, 0.005], (n_classes, 2))
    power = rng.choice([0.05, 0.1, 0.25], n_classes)
    volts = rng.choice([50.0, 150.0], n_classes)
    stocked = rng.random(n_classes) < 0.5
    stress = float(rng.choice([0.5, 5.0, 50.0]))
    usable = [np.flatnonzero(rng.random(n_values) < 0.7).astype(np.int64) for _ in range(n_classes)]
    got = _drop_dominated(usable, cost, spread, power, volts, stocked, values, stress)
    want = _dominated_by_definition(usable, cost, spread, power, volts, stocked, values, stress)
    assert [g.tolist() for g in got] == want


def test_drop_dominated_equal_classes_keep_the_first() -> None:
    """Two identical classes at one value: the first one stays (hand-made case)."""
    usable = [np.array([0]), np.array([0])]
    got = _drop_dominated(
        usable,
        np.array([1.0, 1.0]),
        np.array([[0.001, 0.001], [0.001, 0.001]]),
        np.array([0.1, 0.1]),
        np.array([50.0, 50.0]),
        np.array([True, True]),
        np.array([1e3]),
        1.0,
    )
    assert [g.tolist() for g in got] == [[0], []]


def test_pair_shapes_cover_every_position_pair() -> None:
    """The pair-plus-discrete streams are one per unordered position pair: C(4, 2) = 6."""
    assert tuple(ALL_SHAPES) == tuple(itertools.combinations(range(4), 2))
