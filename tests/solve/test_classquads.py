"""Four discrete parts on the yield basis through the class quadruples
(``optimizer.solve.classquads``).

* **The shared-draw yield is the exact check's yield**: ``analysis.montecarlo.yield_fractions``
  on the draws of ``build_factors`` equals ``monte_carlo_from_variation``'s yield fraction for
  every nominal row, bit for bit, on random designs of the built-in catalog at floors around
  their own CMRR at the yield (the Monte Carlo of ``optimizer.analysis`` is the reference).
* **The build bound is an upper bound** (hypothesis): ``passing_counts`` never counts fewer
  builds than the Monte Carlo passes on the CMRR floor, for ratios inside the bounded range
  (checked to fail with the room narrowed to 0.9 Λ); the unit draws the search scales equal the
  Monte Carlo's own draws of each class (to rounding).
* **The vectorised screen is the design screen** at one vertex (``yieldbox.balance_conditions``).
* **The pick equals the independent reference** (``tests/reference/cheapest.py``, which shares
  no code with the pick and gates every design by the exact check) on an invented catalog of
  five grades at two values, at four floors and temperature ranges.

The parts are invented demo data (not check values); the check values come from the exact
check and the reference.
"""

from __future__ import annotations

import dataclasses
import functools
from pathlib import Path

import numpy as np
import pytest
from battery import YIELD_BUILTIN, spec_text, yield_fields
from hypothesis import given, settings
from hypothesis import strategies as st
from reference.cheapest import cheapest

from optimizer.analysis.environment import environment_from_spec
from optimizer.analysis.montecarlo import (
    build_factors,
    monte_carlo,
    monte_carlo_from_variation,
    yield_fractions,
)
from optimizer.analysis.variation import sample_values, variation_from_design
from optimizer.catalog import builtin_catalog, catalog_from_parts
from optimizer.catalog.table import Catalog
from optimizer.design import Design, Placement, Topology
from optimizer.parts import DiscretePart, NetworkPart
from optimizer.solve.classquads import UNIT_BOUND, ClassQuadSearch, serves
from optimizer.solve.environment import linear_environment
from optimizer.solve.pairbounds import deviation_bounds, pair_ranges, passing_counts, screen_pairs
from optimizer.solve.problem import prepare
from optimizer.solve.search import SearchStatus, pick
from optimizer.solve.streams import frontier_applies
from optimizer.solve.yieldbox import balance_conditions
from optimizer.spec import Spec
from optimizer.specfile import load_spec
from optimizer.verify import verify

YIELD = ", cmrr_basis: yield, yield: 99 %"
SAMPLES = ", monte_carlo: {samples: 2000}"


def _spec(tmp: Path, **fields: object) -> Spec:
    base: dict[str, object] = dict(gain=1, floor=46, tmin=-40, tmax=125,
                                   topologies="four_discrete", req=YIELD, prefs=SAMPLES)  # fmt: skip
    base.update(fields)
    (tmp / "s.yaml").write_text(spec_text(base), encoding="utf-8")
    return load_spec(str(tmp / "s.yaml"))


def _design(parts: list[DiscretePart]) -> Design:
    return Design(tuple(Placement(f"R{i + 1}", p) for i, p in enumerate(parts)))  # type: ignore[arg-type]


@functools.cache
def _builtin() -> Catalog:
    return builtin_catalog()


@pytest.mark.parametrize("seed", range(6))
def test_yield_fractions_equal_the_monte_carlo(tmp_path: Path, seed: int) -> None:
    spec = _spec(tmp_path, gain=2)
    cat = _builtin()
    rng = np.random.default_rng(seed)
    picked = [cat.discrete_part(int(r)) for r in rng.integers(0, cat.discrete_count, 4)]
    values = (10e3, 20e3, 10e3, 20e3)
    design = _design(
        [dataclasses.replace(p, resistance_ohm=v) for p, v in zip(picked, values, strict=True)]
    )
    req, prefs = spec.requirements, spec.preferences
    # The floor at the design's own CMRR at the yield: yields around the target, not 0 or 1.
    at_yield = monte_carlo(design, spec).cmrr_at_yield_db
    req = dataclasses.replace(req, cmrr_floor_db=at_yield, gain_accuracy=0.2)
    variation = variation_from_design(design, req.life_s, False, req.drift_model)
    factors = build_factors(variation, samples=prefs.samples, seed=prefs.seed,
                            distribution=prefs.distribution, sigma_k=prefs.sigma_k)  # fmt: skip
    r0 = np.array(design.resistances_ohm)
    rows = np.array([r0, r0 * [1, 1.003, 1, 1], r0 * [2, 2, 3, 3], r0 * [1, 0.997, 1.0, 1.001]])
    env = environment_from_spec(spec)
    got = yield_fractions(factors, rows, env, req, chunk=1000)
    for row, fraction in zip(rows, got, strict=True):
        own = dataclasses.replace(variation, nominal_ohm=tuple(float(x) for x in row))
        want = monte_carlo_from_variation(own, env, req, samples=prefs.samples, seed=prefs.seed,
                                          distribution=prefs.distribution,
                                          sigma_k=prefs.sigma_k).yield_fraction  # fmt: skip
        assert fraction == want
        # Stopped early against a target, it still decides as the Monte Carlo does.
        for target in (want, want + 1.0 / prefs.samples, want - 1.0 / prefs.samples, 0.99):
            early = yield_fractions(factors, row[None, :], env, req, chunk=500, target=target)
            assert bool(early[0] >= target) == bool(want >= target)
    assert 0.0 < got[0] < 1.0  # the comparison is not between two trivial answers


@settings(max_examples=80, deadline=None)
@given(
    rows=st.lists(st.integers(0, 10**6), min_size=4, max_size=4),
    gain=st.sampled_from([1.0, 2.0, 10.0]),
    skew=st.lists(st.floats(-0.004, 0.004), min_size=2, max_size=2),
    hot=st.booleans(),
)
def test_passing_counts_bound_the_monte_carlo(
    tmp_path_factory: pytest.TempPathFactory,
    rows: list[int],
    gain: float,
    skew: list[float],
    hot: bool,
) -> None:
    """Random classes of the built-in catalog at ratios near the gain: the builds the bound
    admits are at least the builds whose CMRR the Monte Carlo passes (floor at the design's
    own median CMRR, so both outcomes occur)."""
    tmp = tmp_path_factory.mktemp("count")
    spec = _spec(tmp, gain=gain, tmin=50 if hot else -40, tmax=85 if hot else 125)
    cat = _builtin()
    picked = [cat.discrete_part(r % cat.discrete_count) for r in rows]
    values = (10e3, 10e3 * gain * (1 + skew[0]), 10e3, 10e3 * gain * (1 + skew[1]))
    parts = [dataclasses.replace(p, resistance_ohm=v) for p, v in zip(picked, values, strict=True)]
    design = _design(parts)
    req, prefs = spec.requirements, spec.preferences
    median = dict(monte_carlo(design, spec).cmrr_percentiles_db)[50.0]
    req = dataclasses.replace(req, cmrr_floor_db=median)
    spec = dataclasses.replace(spec, requirements=req)
    counted = round(monte_carlo(design, spec).cmrr_pass_fraction * prefs.samples)
    variation = variation_from_design(design, req.life_s, False, req.drift_model)
    f, alpha = build_factors(variation, samples=prefs.samples, seed=prefs.seed,
                             distribution=prefs.distribution, sigma_k=prefs.sigma_k)  # fmt: skip
    temps = np.array(environment_from_spec(spec).delta_t_k)
    r = f[:, :, None] * (1.0 + alpha[:, :, None] * temps[None, None, :])
    rho_a, rho_b = values[1] / values[0], values[3] / values[2]
    first = deviation_bounds(r[:, 0], r[:, 1], (rho_a * 0.995, rho_a * 1.004))
    second = deviation_bounds(r[:, 2], r[:, 3], (rho_b * 0.996, rho_b * 1.005))
    m = np.log(rho_a / (1 + rho_a)) - np.log(rho_b / (1 + rho_b))
    from optimizer.solve.screen import log_balance_limit

    balance = log_balance_limit(req.cmrr_floor_db, spec.amplifier.cmrr_ratio)
    bound = int(passing_counts(first, second, np.array([m]), balance)[0])
    assert bound >= counted


def test_the_unit_draws_are_the_monte_carlo_draws(tmp_path: Path) -> None:
    """The search scales one set of draws per pattern of non-zero variables; for random
    classes of the built-in catalog they equal the Monte Carlo's draws of those classes."""
    spec = _spec(tmp_path, life=", operating_life: 43800 h")
    cat = _builtin()
    problem = prepare(spec, cat)
    search = ClassQuadSearch(spec, cat, problem.env, problem.block, lambda: False)
    rng = np.random.default_rng(4)
    block = problem.block
    usable = [block.usable(i) for i in range(4)]
    for _ in range(5):
        quad = tuple(int(rng.choice(u)) for u in usable)
        pattern = tuple(bool(x > 0.0) for c in quad for x in search._own[c])
        unit = search._unit_values(pattern)
        parts = [cat.discrete_part(int(block.part_row[c][block.part_row[c] >= 0][0])) for c in quad]
        variation = variation_from_design(_design(parts), spec.requirements.life_s, False,
                                          spec.requirements.drift_model)  # fmt: skip
        prefs = spec.preferences
        real = sample_values(variation, np.random.Generator(np.random.PCG64(prefs.seed)),
                             prefs.samples, prefs.distribution, prefs.sigma_k)  # fmt: skip
        for i, c in enumerate(quad):
            t, tc, d = search._own[c]
            np.testing.assert_allclose(
                unit.own_error[:, i] * (t / UNIT_BOUND), real.own_error[:, i], rtol=1e-12
            )
            np.testing.assert_allclose(
                unit.own_tempco[:, i] * (tc / UNIT_BOUND), real.own_tempco[:, i], rtol=1e-12
            )
            np.testing.assert_allclose(
                unit.own_drift[:, i] * (d / UNIT_BOUND), real.own_drift[:, i], rtol=1e-12
            )


@settings(max_examples=200, deadline=None)
@given(
    c=st.floats(0.05, 0.95),
    mismatch=st.floats(-0.02, 0.02),
    sigma=st.lists(st.floats(1e-5, 5e-3), min_size=4, max_size=4),
    z=st.floats(0.5, 3.5),
    z_two=st.floats(0.0, 3.5),
    balance=st.floats(1e-3, 3e-2),
)
def test_the_vectorised_screen_is_the_design_screen(
    c: float, mismatch: float, sigma: list[float], z: float, z_two: float, balance: float
) -> None:
    a = c * np.exp(-mismatch)
    if not 0.0 < a < 1.0:
        return
    spreads = np.array(sigma)
    rho_a, rho_b = c / (1.0 - c), a / (1.0 - a)
    narrow = 1.0 - (0.01 + 2.0 * float(spreads.max()))
    want = balance_conditions(np.array([1.0, rho_a, 1.0, rho_b]), spreads, np.zeros((1, 3)),
                              balance, z * narrow, z_two * narrow)  # fmt: skip
    got = bool(screen_pairs(np.array([c]), np.array([a]), spreads, balance, z, z_two)[0])
    assert got == want


def _medium(dominated: bool = False, stocked: bool = False) -> Catalog:
    """Five invented grades at two values each (demo data): every one of its designs may need
    the Monte Carlo in the reference (no screen on the yield basis), so it stays small.
    ``dominated`` adds grade F: grade B's tolerance, tempco and ratings at a higher cost.
    ``stocked`` adds grades BS and CS: B's and C's figures at a higher price, in house stock
    (with a stock penalty they compete with B and C; neither dominates the other)."""
    grades = [("A", 0.01, 100e-6, 1.0), ("B", 0.005, 50e-6, 2.5), ("C", 0.0025, 25e-6, 4.0),
              ("D", 0.001, 25e-6, 6.0), ("E", 0.0005, 10e-6, 11.0)]  # fmt: skip
    if dominated:
        grades.append(("F", 0.005, 50e-6, 3.0))
    if stocked:
        grades += [("BS", 0.005, 50e-6, 3.1), ("CS", 0.0025, 25e-6, 4.4)]
    parts = [
        DiscretePart(
            f"MQ-{g}-{v:g}", v, t, tc, "0603", 0.1, 75.0, cost, stock_qty=500 * g.endswith("S")
        )
        for g, t, tc, cost in grades
        for v in (10e3, 20e3)
    ]
    return catalog_from_parts(parts, (), source="class-quads")


#: (purpose, gain, floor dB, temperature range, preferences, other fields): floors where the
#: cheapest designs sit at different grade mixes (measured with the reference: 600 to 3,300
#: exact checks each), and BOM line costs, which make a design's cost depend on how many
#: distinct parts it places. The last case adds an input-impedance floor (12 kΩ: four 10 kΩ
#: parts give 9.8 kΩ common mode) and a noise ceiling (1.45 µV rms: four 20 kΩ parts give
#: 1.51 µV, a 10 kΩ and a 20 kΩ side 1.35 µV, by ``analysis.checks``), which leave only the
#: designs with both values, so with a line cost at least two lines.
REFERENCE_CASES = [
    ("G = 1, 44 dB, automotive", 1.0, 44.0, (-40, 125), "", {}),
    ("G = 2, 46 dB, industrial", 2.0, 46.0, (-20, 85), "", {}),
    ("G = 2, 52 dB, industrial", 2.0, 52.0, (-20, 85), "", {}),
    ("G = 1, 44 dB, automotive, line cost 1.5", 1.0, 44.0, (-40, 125), ", line_cost: 1.5", {}),
    ("G = 2, 46 dB, industrial, line cost 0.5, placement cost 0.2", 2.0, 46.0, (-20, 85),
     ", line_cost: 0.5, placement_cost: 0.2", {}),
    ("G = 1, 44 dB, automotive, line cost 1.5, impedance floor and noise ceiling", 1.0, 44.0,
     (-40, 125), ", line_cost: 1.5",
     {"req": YIELD + ", min_input_impedance: 12k, output_noise: {max: 1.45 uV}"}),
    ("G = 2, 44 dB, industrial, 0.3 % gain: the gain conditions bind", 2.0, 44.0, (-20, 85),
     "", {"acc": 0.3}),
]  # fmt: skip


@pytest.mark.parametrize(("purpose", "gain", "floor", "temps", "prefs", "extra"), REFERENCE_CASES,
                         ids=[c[0] for c in REFERENCE_CASES])  # fmt: skip
def test_the_pick_matches_the_independent_reference(
    tmp_path: Path,
    purpose: str,
    gain: float,
    floor: float,
    temps: tuple[int, int],
    prefs: str,
    extra: dict[str, object],
) -> None:
    spec = _spec(tmp_path, gain=gain, floor=floor, tmin=temps[0], tmax=temps[1],
                 prefs=SAMPLES + prefs, **extra)  # fmt: skip
    cat = _medium()
    assert frontier_applies(spec, Topology.DISCRETE, linear_environment(spec)), purpose
    ref = cheapest(spec, cat, 5, max_checks=20000)
    assert ref.complete, purpose
    result = pick(spec, cat, verify, top=5, time_limit_s=120.0)
    got = [c.cost.total for c in result.ranked]
    assert got == pytest.approx(ref.costs, rel=1e-9), (purpose, got, ref.costs)
    assert result.status is (SearchStatus.OPTIMAL if ref.designs else SearchStatus.INFEASIBLE)
    assert all(verify(c.design, spec).passed for c in result.ranked)


@pytest.mark.parametrize(("purpose", "fields"), YIELD_BUILTIN, ids=[y[0] for y in YIELD_BUILTIN])
def test_plain_yield_specs_are_proven_over_the_builtin_catalog(
    tmp_path: Path, purpose: str, fields: dict[str, object]
) -> None:
    """Plain yield-basis specs over the built-in catalog (``tests/battery.py``): proven, ten
    designs, each passing the exact check, none cheaper than the model's cost floor
    (``Problem.discrete_cost_floor``), through the class quadruples."""
    (tmp_path / "s.yaml").write_text(spec_text(yield_fields(fields)), encoding="utf-8")
    spec = load_spec(str(tmp_path / "s.yaml"))
    cat = _builtin()
    assert frontier_applies(spec, Topology.DISCRETE, linear_environment(spec)), purpose
    result = pick(spec, cat, verify, top=10, time_limit_s=120.0)
    assert result.status is SearchStatus.OPTIMAL, purpose
    assert len(result.ranked) == 10, purpose
    floor = prepare(spec, cat).discrete_cost_floor()
    assert all(c.cost.total >= floor for c in result.ranked), purpose
    assert all(verify(c.design, spec).passed for c in result.ranked), purpose


#: (purpose, gain, floor dB, temperature range, preferences): a per-line stock penalty on a
#: catalog with stocked grades dearer than the unstocked ones (``_medium(stocked=True)``): the
#: penalty is charged once per line of an unstocked part (``optimizer.cost``), so two
#: placements of one unstocked part pay it once.
STOCK_CASES = [
    ("G = 2, 46 dB, industrial, penalty 0.8", 2.0, 46.0, (-20, 85),
     ", stock: prefer, stock_penalty: 0.8"),
    ("G = 1, 44 dB, automotive, penalty 1.5 and line cost 0.5", 1.0, 44.0, (-40, 125),
     ", stock: prefer, stock_penalty: 1.5, line_cost: 0.5"),
]  # fmt: skip


@pytest.mark.parametrize(("purpose", "gain", "floor", "temps", "prefs"), STOCK_CASES,
                         ids=[c[0] for c in STOCK_CASES])  # fmt: skip
def test_a_stock_penalty_matches_the_independent_reference(
    tmp_path: Path, purpose: str, gain: float, floor: float, temps: tuple[int, int], prefs: str
) -> None:
    """The class-quadruple search serves a per-line stock penalty (it went to CP-SAT before):
    its five cheapest costs equal the independent reference's (``tests/reference/cheapest``,
    which shares no code with the pick) and a stocked part is among them."""
    spec = _spec(tmp_path, gain=gain, floor=floor, tmin=temps[0], tmax=temps[1],
                 prefs=SAMPLES + prefs)  # fmt: skip
    env = linear_environment(spec)
    assert serves(spec, env) and frontier_applies(spec, Topology.DISCRETE, env), purpose
    cat = _medium(stocked=True)
    ref = cheapest(spec, cat, 5, max_checks=20000)
    assert ref.complete, purpose
    result = pick(spec, cat, verify, top=5, time_limit_s=120.0)
    got = [c.cost.total for c in result.ranked]
    assert got == pytest.approx(ref.costs, rel=1e-9), (purpose, got, ref.costs)
    assert result.status is SearchStatus.OPTIMAL
    assert any(p.part.stock_qty > 0 for c in result.ranked for p in c.design.placements)
    assert all(verify(c.design, spec).passed for c in result.ranked)


def test_the_ranking_leaves_out_exactly_the_designs_with_a_dominated_part(
    tmp_path: Path,
) -> None:
    """Grade F is grade B at a higher cost: every design with an F part has a design with B in
    its place that passes as well and costs less. The ranking leaves out exactly those designs
    (stated in ``optimizer/solve/classquads.py``): its four costs are the reference's cheapest
    four without an F part, and the reference's own five hold at least one with F."""
    # With a line cost: the swap must not add a BOM line (dominance judged alike everywhere).
    spec = _spec(tmp_path, gain=2.0, floor=46.0, tmin=-20, tmax=85,
                 prefs=SAMPLES + ", line_cost: 0.7")  # fmt: skip
    cat = _medium(dominated=True)
    ref = cheapest(spec, cat, 24, max_checks=20000)
    assert ref.complete
    designs = [next(x for x in item if isinstance(x, Design)) for item in ref.designs]
    uses_f = ["MQ-F-" in " ".join(p.part.part_id for p in d.placements) for d in designs]
    assert any(uses_f[:5])  # the omission is exercised
    want = [c for c, f in zip(ref.costs, uses_f, strict=True) if not f][:4]
    assert len(want) == 4
    result = pick(spec, cat, verify, top=4, time_limit_s=120.0)
    assert [c.cost.total for c in result.ranked] == pytest.approx(want, rel=1e-9)


def test_a_catalog_without_discrete_parts_leaves_the_search_empty(tmp_path: Path) -> None:
    """Four discrete parts allowed on the yield basis, but a catalog of one quad network only:
    the class-quadruple search has no class and yields nothing (it raised on the empty spread
    table before), the quad is ranked and the result proven."""
    spec = _spec(tmp_path, gain=2, floor=46, tmin=25, tmax=25,
                 topologies="four_discrete, quad_network")  # fmt: skip
    quad = NetworkPart("NQ-1", (10e3, 20e3, 10e3, 20e3), 0.005, 0.001, 25e-6, 5e-6, 0.1, 80.0, 9.0)
    result = pick(spec, catalog_from_parts([], [quad], source="x"), verify, top=3,
                  time_limit_s=30.0)  # fmt: skip
    assert result.status is SearchStatus.OPTIMAL
    assert [c.design.topology for c in result.ranked] == [Topology.QUAD]


def test_the_value_checks_screen_the_designs_before_they_leave(tmp_path: Path) -> None:
    """With an impedance floor and a noise ceiling (the last reference case), every design the
    search lets out passes ``analysis.checks``' input-impedance and noise checks, and the
    search without them lets out designs that fail them (the screen is not idle)."""
    from optimizer.analysis.checks import check_input_impedance, check_output_noise

    cat = _medium()
    extra = ", min_input_impedance: 12k, output_noise: {max: 1.45 uV}"

    def first_designs(req: str) -> list[Design]:
        spec = _spec(tmp_path, gain=1.0, floor=44.0, prefs=SAMPLES, req=YIELD + req)
        problem = prepare(spec, cat)
        search = ClassQuadSearch(spec, cat, problem.env, problem.block, lambda: False)
        return [d for _, d in zip(range(40), search, strict=False)]

    spec = _spec(tmp_path, gain=1.0, floor=44.0, prefs=SAMPLES, req=YIELD + extra)

    def passes(design: Design) -> bool:
        return check_output_noise(design, spec).passed and all(
            o.passed for o in check_input_impedance(design, spec)
        )

    screened = first_designs(extra)
    assert screened and all(passes(d) for d in screened)
    assert not all(passes(d) for d in first_designs(""))


@settings(max_examples=150, deadline=None)
@given(
    rows=st.lists(st.integers(min_value=0, max_value=10**6), min_size=4, max_size=4),
    logs=st.lists(st.floats(min_value=2.0, max_value=6.0), min_size=4, max_size=4),
)
def test_the_nominal_impedance_screen_is_necessary(
    tmp_path_factory: pytest.TempPathFactory, rows: list[int], logs: list[float]
) -> None:
    """A design that meets an input-impedance floor in ``analysis.checks.check_input_impedance``
    (both resistances at every operating corner, start and end of life) passes
    ``nominal_impedance_reaches``: random built-in parts at random values, five years of
    drift, the floor at the design's own lowest resistance (so it passes with no margin)."""
    from optimizer.analysis.checks import check_input_impedance
    from optimizer.solve.quaddesigns import nominal_impedance_reaches

    spec = _spec(tmp_path_factory.mktemp("z"), gain=1.0, req=YIELD + ", operating_life: 43800 h")
    cat = _builtin()
    values = [10.0**x for x in logs]
    parts = [
        dataclasses.replace(cat.discrete_part(r % cat.discrete_count), resistance_ohm=v)
        for r, v in zip(rows, values, strict=True)
    ]
    design = _design(parts)
    floor = min(o.value for o in check_input_impedance(design, spec))  # no floor: values only
    at_floor = dataclasses.replace(
        spec, requirements=dataclasses.replace(spec.requirements, min_input_impedance_ohm=floor)
    )
    assert all(o.passed for o in check_input_impedance(design, at_floor))
    assert nominal_impedance_reaches(
        np.array(values[0]), np.array(values[2]), np.array(values[3]), floor
    )


gain_values = st.sampled_from([1e3, 2e3, 4.99e3, 10e3, 20e3, 49.9e3, 100e3])
gain_grades = st.sampled_from([0.0005, 0.001, 0.0025, 0.005, 0.01, 0.02, 0.05])
gain_tempcos = st.sampled_from([5e-6, 25e-6, 50e-6, 100e-6, 200e-6])


@settings(max_examples=150, deadline=None)
@given(
    r1=gain_values,
    gain=st.sampled_from([0.47, 1.0, 2.0, 5.0, 10.0, 100.0]),
    off=st.floats(-0.01, 0.01),
    parts=st.lists(st.tuples(gain_grades, gain_tempcos), min_size=4, max_size=4),
    scale=st.floats(0.3, 1.5),
    yield_target=st.sampled_from([0.9, 0.99, 0.999]),
    amplifier=st.sampled_from([("ideal", "ideal"), ("80 dB", "90 dB"), ("100 dB", "70 dB")]),
)
def test_the_gain_conditions_never_drop_a_design_the_monte_carlo_passes(
    tmp_path_factory: pytest.TempPathFactory,
    r1: float,
    gain: float,
    off: float,
    parts: list[tuple[float, float]],
    scale: float,
    yield_target: float,
    amplifier: tuple[str, str],
) -> None:
    """``pairbounds.gain_conditions`` is necessary for the Monte Carlo's gain accuracy: a
    four-discrete design (R2 and R4 ``off`` the exact ratio), its gain accuracy at ``scale``
    times its own largest gain error among the builds' 1 and 99 % points (both sides of the
    edge occur), ideal and finite amplifiers: whenever the exact check's Monte Carlo meets the
    accuracy at the yield target, the conditions hold at the design's mean terms and spreads
    (``yieldbox.DesignScreen.position``, as ``ClassQuadSearch`` takes them)."""
    from optimizer.analysis.montecarlo import judging_corners
    from optimizer.solve.pairbounds import gain_conditions
    from optimizer.solve.yieldbox import DesignScreen, quantiles, two_sided_quantile

    values_ohm = (r1, r1 * gain * (1.0 + off), r1, r1 * gain)
    placed = [
        DiscretePart(f"HG-{i}", v, t, tc, "0603", 0.1, 75.0, 1.0)
        for i, (v, (t, tc)) in enumerate(zip(values_ohm, parts, strict=True))
    ]
    design = _design(placed)
    tmp = tmp_path_factory.mktemp("gain")
    cmrr, aol = amplifier
    fields = dict(gain=gain, floor=20, tmin=-20, tmax=85, topologies="four_discrete",
                  amp_cmrr=cmrr, aol=aol, vd=0.01,
                  req=f", cmrr_basis: yield, yield: {yield_target * 100:g} %", prefs=SAMPLES)  # fmt: skip
    (tmp / "s.yaml").write_text(spec_text(fields), encoding="utf-8")
    spec = load_spec(str(tmp / "s.yaml"))
    errors = dict(monte_carlo(design, spec).gain_error_percentiles)
    spread = max(abs(errors[min(errors)]), abs(errors[max(errors)]))
    accuracy = min(max(spread * scale, 1e-6), 0.5)
    req = dataclasses.replace(spec.requirements, gain_accuracy=accuracy)
    spec = dataclasses.replace(spec, requirements=req)
    if monte_carlo(design, spec).gain_pass_fraction < yield_target:
        return
    screen = DesignScreen(spec, linear_environment(spec), 1.0)
    placed_at = [screen.position(p, None) for p in placed]
    r = np.array([m for m, _ in placed_at])
    sigma = np.array([s for _, s in placed_at])
    c, a = np.array([r[1] / (r[0] + r[1])]), np.array([r[3] / (r[2] + r[3])])
    judging = judging_corners(environment_from_spec(spec))
    window = (req.gain * (1.0 - accuracy), req.gain * (1.0 + accuracy))
    amp = (judging.eps_abs, judging.eps_low, judging.inv_open_loop_gain)
    z = quantiles(spec) or 0.0
    assert gain_conditions(c, a, sigma, window, amp, z, two_sided_quantile(spec))[0]


@settings(max_examples=300, deadline=None)
@given(
    ends=st.tuples(st.floats(0.05, 0.995), st.floats(0.05, 0.995)),
    at=st.floats(0.0, 1.0),
    a=st.floats(0.01, 0.999),
    sigma=st.lists(st.floats(1e-5, 0.05), min_size=4, max_size=4),
    eps=st.sampled_from([0.0, 5e-5, 5e-4]),
    inv_a=st.sampled_from([0.0, 1e-5, 1e-3]),
)
def test_the_gain_spread_floor_is_below_every_spread_it_bounds(
    ends: tuple[float, float],
    at: float,
    a: float,
    sigma: list[float],
    eps: float,
    inv_a: float,
) -> None:
    """``pairbounds.gain_spread_floor`` over a range of ``c`` is at most the lowest gain's
    spread of ``gain_conditions`` (``_log_gain_and_spread``, the chain rule of ``ln Adm``) at
    every ``c`` of the range and every ``a``, for each sign of the amplifier's error: so the
    quadruple filter built on it drops nothing ``gain_conditions`` would keep."""
    from optimizer.solve.pairbounds import _log_gain_and_spread, gain_spread_floor

    lo, hi = min(ends), max(ends)
    c = lo + at * (hi - lo)
    s = np.array(sigma)
    amplifier = (eps, (eps, -eps) if eps else (0.0,), inv_a)
    floor = gain_spread_floor((lo, hi), s, amplifier)
    for sign in amplifier[1]:
        _, spread = _log_gain_and_spread(np.array([c]), np.array([a]), s, sign, inv_a)
        assert floor <= float(spread[0]) * (1.0 + 1e-12)


@settings(max_examples=80, deadline=None)
@given(
    rows=st.lists(st.integers(min_value=0, max_value=10**6), min_size=4, max_size=4),
    gain=st.sampled_from([0.47, 1.0, 2.0, 10.0, 100.0]),
    skew=st.lists(st.floats(-0.01, 0.01), min_size=2, max_size=2),
    scale=st.floats(0.3, 1.2),
    amplifier=st.sampled_from([("ideal", "ideal"), ("80 dB", "90 dB")]),
)
def test_gain_pass_counts_are_the_monte_carlos(
    tmp_path_factory: pytest.TempPathFactory,
    rows: list[int],
    gain: float,
    skew: list[float],
    scale: float,
    amplifier: tuple[str, str],
) -> None:
    """``pairbounds.gain_pass_counts`` on the Monte Carlo's builds is never below the number of
    builds whose gain the Monte Carlo passes (random built-in classes at ratios near the gain,
    the accuracy at ``scale`` times the design's own gain spread so both outcomes occur; in
    measurement the two are equal)."""
    from optimizer.analysis.montecarlo import judging_corners
    from optimizer.solve.pairbounds import gain_pass_counts

    tmp = tmp_path_factory.mktemp("gaincount")
    cmrr, aol = amplifier
    fields = dict(gain=gain, floor=20, tmin=-20, tmax=85, topologies="four_discrete",
                  amp_cmrr=cmrr, aol=aol, vd=0.01, req=YIELD, prefs=SAMPLES)  # fmt: skip
    (tmp / "s.yaml").write_text(spec_text(fields), encoding="utf-8")
    spec = load_spec(str(tmp / "s.yaml"))
    cat = _builtin()
    values = (10e3, 10e3 * gain * (1 + skew[0]), 10e3, 10e3 * gain * (1 + skew[1]))
    parts = [
        dataclasses.replace(cat.discrete_part(r % cat.discrete_count), resistance_ohm=v)
        for r, v in zip(rows, values, strict=True)
    ]
    design = _design(parts)
    errors = dict(monte_carlo(design, spec).gain_error_percentiles)
    accuracy = max(max(abs(errors[min(errors)]), abs(errors[max(errors)])) * scale, 1e-6)
    req = dataclasses.replace(spec.requirements, gain_accuracy=accuracy)
    spec = dataclasses.replace(spec, requirements=req)
    prefs = spec.preferences
    counted = round(monte_carlo(design, spec).gain_pass_fraction * prefs.samples)
    variation = variation_from_design(design, req.life_s, False, req.drift_model)
    f, alpha = build_factors(variation, samples=prefs.samples, seed=prefs.seed,
                             distribution=prefs.distribution, sigma_k=prefs.sigma_k)  # fmt: skip
    environment = environment_from_spec(spec)
    temps = np.array(environment.delta_t_k)
    r = f[:, :, None] * (1.0 + alpha[:, :, None] * temps[None, None, :])
    judging = judging_corners(environment)
    bound = int(
        gain_pass_counts(
            values[1] / values[0], (r[:, 0], r[:, 1]), np.array([values[3] / values[2]]),
            (r[:, 2], r[:, 3]), (req.gain * (1 - accuracy), req.gain * (1 + accuracy)),
            (judging.eps_abs, judging.eps_low, judging.inv_open_loop_gain),
        )[0]
    )  # fmt: skip
    assert counted <= bound <= prefs.samples


@settings(max_examples=300, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    gain=st.floats(0.1, 300.0),
    accuracy=st.floats(1e-4, 0.05),
    balance=st.floats(1e-4, 1.5),
)
def test_pair_ranges_hold_every_pair_the_exact_tests_can_keep(
    seed: int, gain: float, accuracy: float, balance: float
) -> None:
    """``pairbounds.pair_ranges`` against a brute-force scan of its definition (the dividers
    ``c = R2/(R1 + R2)``, ``a = R4/(R3 + R4)`` and the nominal gain ``(a + c)/(2(1 − c))`` of
    the four-resistor difference amplifier, handbook form): every second-half divider with
    ``|ln(c/a)| ≤ Λ`` and a nominal gain inside the window lies in its range, and the range
    holds nothing that misses either by more than a relative 1e-6."""
    rng = np.random.default_rng(seed)
    rho = gain * np.exp(rng.uniform(-0.2, 0.2, 40))
    c = rho / (1.0 + rho)
    a = np.sort(c[rng.integers(0, c.size, 400)] * np.exp(rng.uniform(-2.0, 2.0, 400)))
    a = a[a < 1.0]
    window = (gain * (1.0 - accuracy), gain * (1.0 + accuracy))
    lo, hi = pair_ranges(c, a, balance, window)
    for k in range(c.size):
        mismatch = np.abs(np.log(c[k] / a))
        adm = (a + c[k]) / (2.0 * (1.0 - c[k]))
        kept = (mismatch <= balance) & (adm >= window[0]) & (adm <= window[1])
        inside = np.zeros(a.size, dtype=bool)
        inside[lo[k] : hi[k]] = True
        assert not np.any(kept & ~inside)
        near = (
            (mismatch <= balance * (1 + 1e-6) + 1e-9)
            & (adm >= window[0] * (1 - 1e-6))
            & (adm <= window[1] * (1 + 1e-6))
        )
        assert not np.any(inside & ~near)
