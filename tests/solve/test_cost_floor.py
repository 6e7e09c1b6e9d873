"""The cost floor of four discrete parts (``Problem.discrete_cost_floor``,
``optimizer.solve.discrete.least_cost``): the search skips the four-discrete CP-SAT model when
this floor is above the cost the ranking can still use.

* ``least_cost`` solves its knapsack exactly: equal to a brute force over every choice of one
  class per position (``itertools.product``, an independent enumeration) on random data.
* **The floor is a lower bound** of the exact check: on random four-discrete designs with the
  CMRR floor set around their own CMRR (worst case, or at the yield target by the exact
  check's Monte Carlo), every design that passes costs at least the floor of a catalog made of
  its own parts (hypothesis; checked to fail with the floor's budget narrowed to 0.8).
* On the ADC driver example (yield basis) the floor proves the four-discrete stream empty
  below the ranking's last cost: the pick is proven without building the CP-SAT model.

The parts are invented demo data (not check values); the check values come from the exact
check and the brute force.
"""

from __future__ import annotations

import dataclasses
import itertools
import math

import numpy as np
import pytest
from battery import spec_text
from helpers import ROOT
from hypothesis import given, settings
from hypothesis import strategies as st

from optimizer import load_spec, spec_catalogs
from optimizer.analysis.montecarlo import monte_carlo
from optimizer.analysis.worstcase import worst_case
from optimizer.catalog import catalog_from_parts
from optimizer.cost import design_cost
from optimizer.design import Design, Placement, Topology
from optimizer.parts import DiscretePart
from optimizer.solve.discrete import least_cost
from optimizer.solve.problem import prepare
from optimizer.solve.search import SearchStatus, pick
from optimizer.verify import verify

EXAMPLES = ROOT / "examples"


@settings(max_examples=200, deadline=None)
@given(
    data=st.lists(st.tuples(st.floats(0.0, 10.0), st.floats(0.0, 1.0)), min_size=1, max_size=7),
    usable=st.lists(st.lists(st.integers(0, 6), min_size=0, max_size=4), min_size=4, max_size=4),
    weights=st.lists(st.floats(0.0, 2.0), min_size=4, max_size=4),
    budget=st.floats(0.0, 4.0),
)
def test_least_cost_equals_the_brute_force(
    data: list[tuple[float, float]], usable: list[list[int]], weights: list[float], budget: float
) -> None:
    cost = np.array([c for c, _ in data])
    spread = np.array([s for _, s in data])
    sets = [sorted({c % len(data) for c in u}) for u in usable]
    w = np.array(weights)
    want = min(
        (
            sum(cost[c] for c in choice)
            for choice in itertools.product(*sets)
            if sum(w[i] * spread[c] for i, c in enumerate(choice)) <= budget
        ),
        default=math.inf,
    )
    got = least_cost(cost, spread, sets, w, budget)
    assert got == pytest.approx(want, rel=1e-12, abs=1e-12)


values = st.sampled_from([1e3, 2e3, 4.99e3, 10e3, 20e3, 49.9e3])
grades = st.sampled_from(
    [(0.0005, 5e-6, 12.0), (0.001, 25e-6, 6.0), (0.0025, 25e-6, 3.5), (0.005, 50e-6, 2.0),
     (0.01, 100e-6, 1.0)]
)  # fmt: skip


@settings(max_examples=60, deadline=None)
@given(
    r1=values,
    gain=st.sampled_from([1.0, 2.0, 10.0]),
    parts=st.lists(grades, min_size=4, max_size=4),
    below=st.floats(-1.0, 0.3),
    yield_basis=st.booleans(),
    source=st.sampled_from([0.0, 50.0]),
)
def test_every_design_that_passes_costs_at_least_the_floor(
    tmp_path_factory: pytest.TempPathFactory,
    r1: float,
    gain: float,
    parts: list[tuple[float, float, float]],
    below: float,
    yield_basis: bool,
    source: float,
) -> None:
    """A four-discrete design with its floor ``below`` dB under its own CMRR (worst case or at
    99 % yield): whenever the exact check passes it, its cost is at least the floor computed
    over a catalog of its own four parts."""
    values_ohm = (r1, r1 * gain, r1, r1 * gain)
    placed = [
        DiscretePart(f"CF-{i}", v, t, tc, "0603", 0.1, 75.0, cost)
        for i, (v, (t, tc, cost)) in enumerate(zip(values_ohm, parts, strict=True))
    ]
    design = Design(
        tuple(Placement(f"R{i + 1}", p) for i, p in enumerate(placed))  # type: ignore[arg-type]
    )
    tmp = tmp_path_factory.mktemp("floor")
    imbalance = f", source_impedance: {{min: 0, max: {source:g}, imbalance: {source / 4:g}}}"
    basis = ", cmrr_basis: yield, yield: 99 %" if yield_basis else ""
    fields = dict(gain=gain, floor=40, tmin=-20, tmax=85, acc=5,
                  topologies="four_discrete", source=imbalance if source else "",
                  req=basis, prefs=", monte_carlo: {samples: 2000}")  # fmt: skip
    (tmp / "s.yaml").write_text(spec_text(fields), encoding="utf-8")
    spec = load_spec(str(tmp / "s.yaml"))
    own = (
        monte_carlo(design, spec).cmrr_at_yield_db
        if yield_basis
        else worst_case(design, spec).cmrr_db
    )
    req = dataclasses.replace(spec.requirements, cmrr_floor_db=own - below)
    spec = dataclasses.replace(spec, requirements=req)
    if not verify(design, spec).passed:
        return
    floor = prepare(spec, catalog_from_parts(placed, (), source="floor")).discrete_cost_floor()
    assert floor <= design_cost(design, spec.preferences).total * (1 + 1e-12)


def test_the_adc_driver_is_proven_without_the_four_discrete_model() -> None:
    """The networks' ten designs cost far less than any four-discrete design can on the yield
    basis: the floor decides it, no CP-SAT solve runs, and the
    ranking is proven."""
    spec = load_spec(str(EXAMPLES / "adc_driver.yaml"))
    catalog = spec_catalogs(spec)
    result = pick(spec, catalog, verify, top=10, time_limit_s=60.0)
    assert result.status is SearchStatus.OPTIMAL
    assert Topology.DISCRETE in result.capped
    assert result.solve_seconds == 0.0  # no CP-SAT solve ran
    floor = prepare(spec, catalog).discrete_cost_floor()
    assert floor > max(c.cost.total for c in result.ranked)
