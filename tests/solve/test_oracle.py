"""The CP-SAT pick against the exhaustive reference enumerator (the oracle).

The reference (``optimizer.solve.exhaustive``) shares no code with the CP-SAT model: it lists
every design the spec allows, verifies them cheapest first with ``optimizer.verify.verify``
(the single definition of "meets the spec") and costs them with ``optimizer.cost.design_cost``
(the single definition of cost). Where the two disagree, one of them is wrong:

* the reference finds a cheaper passing design: the linear model is not a relaxation of the
  exact check (it cut a feasible design) or its cost differs from ``design_cost``;
* the pick returns a cheaper design: the enumeration missed a design the spec allows, or the
  pick used a part or topology the spec does not allow.

Sources of the check values: the exhaustive enumeration itself (the minimum over a finite set
is exact by construction) and, for the enumerator's own counts, hand counting of the
combinations (written out beside the test). Catalogs and specs are generated from a seeded
``random.Random``: invented demo data, never check values; E-series values come from
``optimizer.eseries`` (IEC 60063), itself checked against the ``eseries`` package in
``tests/test_eseries.py``.
"""

from __future__ import annotations

import dataclasses
import functools
import itertools
import math
import random
from dataclasses import dataclass

import numpy as np
import pytest

from optimizer.analysis.checks import check_input_impedance, check_output_noise
from optimizer.analysis.worstcase import worst_case
from optimizer.catalog import Catalog, catalog_from_parts
from optimizer.cost import design_cost
from optimizer.design import Design, Placement, Topology
from optimizer.eseries import ESeries, nearest
from optimizer.parts import Amplifier, DiscretePart, NetworkPart, RailSpan
from optimizer.solve.exhaustive import (
    MAX_DESIGNS,
    ReferenceResult,
    TooManyDesigns,
    allowed_discrete,
    allowed_networks,
    design_count,
    enumerate_designs,
    fails_a_check,
    reference_pick,
    reference_search,
    screen_designs,
)
from optimizer.solve.search import PickResult, SearchStatus, pick
from optimizer.solve.streams import MAX_CUTS
from optimizer.spec import (
    CmrrBasis,
    Distribution,
    Preferences,
    Rails,
    Reference,
    Requirements,
    Signal,
    SourceImpedance,
    Spec,
    StockPolicy,
)
from optimizer.verify import verify, verify_candidate

#: Random cases in the sweep; every 12th (seed ≡ 5 mod 12) is judged on the yield basis.
CASES = 200
#: Seeds beyond the sweep on which a wider offline run (seeds 0 to 1199) found a disagreement;
#: they stay in the test until the pick agrees (see the hand-made cases for minimal versions).
FOUND_BEYOND_SWEEP: tuple[int, ...] = (287, 519, 814)
#: Time limit of each pick: a pick that hits it fails the case (the catalogs are tiny).
PICK_TIME_LIMIT_S = 20.0
#: Relative agreement required between the two optimum costs.
COST_REL_TOL = 1e-9

# ---------------------------------------------------------------------------------------------
# Building catalogs and specs
# ---------------------------------------------------------------------------------------------

TOLERANCES = (0.01, 0.005, 0.0025, 0.001, 0.0005, 0.0002, 0.0001)
TEMPCOS = (100e-6, 50e-6, 25e-6, 15e-6, 10e-6, 5e-6)
GAINS = (1.0, 2.0, 5.0, 10.0, 0.5, 20.0, 4.0, 3.3)
TEMPERATURES = ((25.0, 25.0), (0.0, 70.0), (-40.0, 85.0), (-40.0, 125.0), (10.0, 40.0))
YEAR_S = 8760 * 3600.0


def build_catalog(parts: list[DiscretePart], networks: list[NetworkPart]) -> Catalog:
    """A :class:`Catalog` from part objects."""
    return catalog_from_parts(parts, networks, source="oracle-test")


def amplifier(
    cmrr_db: float = 120.0, aol_db: float = 130.0, *, span: RailSpan | None = None
) -> Amplifier:
    """A generous amplifier: 50 MHz GBW and 50 V/µs keep bandwidth and slew out of the way."""
    return Amplifier(
        "oracle amp", cmrr_db, aol_db, 50e6, 50e6, 50e-6, 1e-9, 10e-9, 0.5e-12,
        span if span is not None else RailSpan(0.0, 0.0), RailSpan(0.05, 0.05),
    )  # fmt: skip


def e_value(ohms: float, series: ESeries = ESeries.E96) -> float:
    return float(nearest(series, ohms))


def random_discrete(rng: random.Random, index: int, ohms: float) -> DiscretePart:
    """A discrete part at ``ohms`` with a random grade; cost (2 decimals) rises with tighter
    tolerance and tempco, plus noise, so grades trade against each other."""
    tol = rng.choice(TOLERANCES)
    tc = rng.choice(TEMPCOS)
    cost = round(0.01 + 0.004 / math.sqrt(tol * 100) + 0.2e-6 / tc + rng.uniform(0, 0.04), 2)
    return DiscretePart(
        f"D{index}", ohms, tol, tc, "0603", rng.choice([0.1, 0.1, 0.063]), 75.0, cost,
        rng.choice([0, 0, 100, 5000]), None, rng.choice([0.0, 0.001, 0.0005, 0.0002]),
    )  # fmt: skip


def random_network(rng: random.Random, index: int, level: float, gain: float) -> NetworkPart:
    """A quad [R, G·R, R, G·R] or a dual [R, G·R] (sometimes equal values) with random grades."""
    high = level * gain if rng.random() < 0.8 else level
    if rng.random() < 0.5:
        values: tuple[float, ...] = (level, high, level, high)
    else:
        values = (level, high) if rng.random() < 0.6 else (level, level)
    return NetworkPart(
        f"N{index}", tuple(float(v) for v in values),
        abs_tolerance=rng.choice([0.001, 0.005, 0.01]),
        ratio_tolerance=rng.choice([0.0001, 0.0002, 0.0005, 0.001]),
        abs_tempco_per_k=rng.choice([25e-6, 10e-6]),
        tracking_tempco_per_k=rng.choice([1e-6, 2e-6, 5e-6]),
        power_per_element_w=0.1, max_voltage_v=50.0,
        unit_cost=round(rng.uniform(0.3, 3.0), 2), stock_qty=rng.choice([0, 10]),
        drift_1000h=rng.choice([0.0, 0.0005]), ratio_drift_1000h=rng.choice([0.0, 0.0001]),
    )  # fmt: skip


@dataclass(frozen=True)
class Case:
    spec: Spec
    catalog: Catalog
    note: str


def random_case(seed: int) -> Case:
    """A seeded random catalog (3 to 9 discrete parts around one or two levels, 0 to 3
    networks) and a spec whose limits sit around an *anchor*: a balanced design from the
    catalog whose worst case, noise and input impedance set the CMRR floor, the accuracy and
    the optional noise and impedance limits (some within ±0.02 dB or ±1e-4 of it: boundary
    cases), so that about half the cases are feasible."""
    rng = random.Random(seed)
    yield_basis = seed % 12 == 5
    gain = rng.choice(GAINS)
    levels = [e_value(10 ** rng.uniform(3.0, 4.7)) for _ in range(rng.choice([1, 1, 2]))]
    count = rng.randint(3, 4) if yield_basis else rng.randint(4, 9)
    parts = []
    for i in range(count):
        if i < 2 * len(levels):  # each level gets its low (R) and high (G·R) value first
            level, low = levels[i % len(levels)], (i // len(levels)) % 2 == 0
        else:
            level, low = rng.choice(levels), rng.random() < 0.5
        ohms = level if low else e_value(level * gain, ESeries.E192)
        if rng.random() < 0.1:
            ohms = e_value(ohms * rng.uniform(0.8, 1.25), ESeries.E192)
        parts.append(random_discrete(rng, i, ohms))
    n_networks = rng.choice([0, 1]) if yield_basis else rng.choice([0, 1, 1, 2, 2, 3])
    networks = [random_network(rng, j, rng.choice(levels), gain) for j in range(n_networks)]
    catalog = build_catalog(parts, networks)

    single_supply = rng.random() < 0.15
    if single_supply:
        rails = Rails(5.0, 0.0)
        vd = min(1.0, 2.2 / gain) * rng.uniform(0.2, 1.0)
        cm = (rng.uniform(0.8, 1.5), rng.uniform(1.5, 2.5))
        ref = Reference(2.5, 2.5, 0.0, rng.choice([0.0, rng.uniform(0, 5)]))
        amp = amplifier(
            rng.uniform(95, 130),
            rng.uniform(110, 140),
            span=rng.choice([RailSpan(0.0, 0.0), RailSpan(-0.1, 1.2)]),
        )
    else:
        rails = Rails(15.0, -15.0)
        vd = min(1.0, 5.0 / gain) * rng.uniform(0.2, 1.0)
        half = rng.uniform(0.0, 5.0)
        cm = (-half, half)
        ref = Reference() if rng.random() < 0.5 else Reference(2.5, 2.5, 0.0, rng.uniform(0, 5))
        amp = amplifier(rng.uniform(95, 130), rng.uniform(110, 140))
    if rng.random() < 0.5:
        source = SourceImpedance()
    else:
        top = rng.uniform(1, 200)
        bottom = rng.uniform(0, top / 4)
        source = SourceImpedance(bottom, top, rng.uniform(0, top - bottom))
    temps = rng.choice(TEMPERATURES)
    life = 0.0 if rng.random() < 0.5 else rng.uniform(1, 10) * YEAR_S
    target = gain if rng.random() < 0.9 else gain * rng.uniform(0.98, 1.02)
    stock = rng.choice([StockPolicy.ANY] * 3 + [StockPolicy.ONLY, StockPolicy.PREFER])
    if rng.random() < 0.5:
        topologies = tuple(Topology)
    else:
        topologies = tuple(t for t in Topology if rng.random() < 0.6) or (Topology.DISCRETE,)
    window = (100.0, 1e6) if rng.random() < 0.9 else (min(levels) * rng.uniform(0.9, 1.2), 1e6)
    prefs = Preferences(
        topologies=topologies, stock=stock, stock_penalty=round(rng.uniform(0.05, 0.5), 2),
        placement_cost=rng.choice([0.0, 0.0, 0.01, 0.02]), line_cost=rng.choice([0.0, 0.02, 0.05]),
        samples=2000, seed=seed, distribution=rng.choice(list(Distribution)),
        resistance_min_ohm=window[0], resistance_max_ohm=window[1],
    )  # fmt: skip
    signal = Signal(-vd, vd, cm[0], cm[1], 1e3, source)
    loose = Requirements(target, 0.05, 40.0, temps[0], temps[1], life_s=life)
    spec = Spec(amp, rails, signal, ref, loose, prefs)

    # The anchor: R1 = R3 a low-value part, R2 = R4 a high-value part of one level.
    level = rng.choice(levels)
    lows = [p for p in parts if p.resistance_ohm == level] or parts
    highs = [p for p in parts if p.resistance_ohm == e_value(level * gain, ESeries.E192)] or parts
    anchor = Design(
        (
            Placement("R1", rng.choice(lows)),
            Placement("R2", rng.choice(highs)),
            Placement("R3", rng.choice(lows)),
            Placement("R4", rng.choice(highs)),
        )
    )
    worst = worst_case(anchor, spec)
    boundary = rng.random() < 0.15
    floor = worst.cmrr_db + (rng.uniform(-0.02, 0.02) if boundary else rng.uniform(-10, 6))
    accuracy = worst.gain_error_worst * (
        rng.uniform(0.98, 1.02) if boundary else rng.uniform(0.7, 4.0)
    )
    impedance = 0.0
    if rng.random() < 0.3:
        lowest = min(r.value for r in check_input_impedance(anchor, spec))
        impedance = lowest * (
            rng.uniform(0.9999, 1.0001) if rng.random() < 0.3 else rng.uniform(0.5, 1.5)
        )
    noise = None
    if rng.random() < 0.3:
        level_v = check_output_noise(anchor, spec).value
        noise = level_v * (
            rng.uniform(0.9999, 1.0001) if rng.random() < 0.3 else rng.uniform(0.8, 2.0)
        )
    requirements = dataclasses.replace(
        loose,
        gain_accuracy=min(max(accuracy, 0.001), 0.05),
        cmrr_floor_db=min(max(floor, 40.0), 90.0),
        cmrr_basis=CmrrBasis.YIELD if yield_basis else CmrrBasis.WORST_CASE,
        yield_target=rng.choice([0.9, 0.99, 0.999]),
        min_input_impedance_ohm=impedance,
        max_output_noise_v_rms=noise,
    )
    note = "yield" if yield_basis else "worst case"
    return Case(dataclasses.replace(spec, requirements=requirements), catalog, note)


# ---------------------------------------------------------------------------------------------
# Reporting a disagreement
# ---------------------------------------------------------------------------------------------


def describe_part(placement: Placement) -> str:
    part = placement.part
    if isinstance(part, NetworkPart):
        return (
            f"{placement.position}={part.part_id}[element {placement.element}, package "
            f"{placement.package}] {placement.resistance_ohm:g} Ω (abs {part.abs_tolerance:g}, "
            f"ratio {part.ratio_tolerance:g}, tc {part.abs_tempco_per_k:g}, track "
            f"{part.tracking_tempco_per_k:g}, cost {part.unit_cost:g}, stock {part.stock_qty})"
        )
    return (
        f"{placement.position}={part.part_id} {part.resistance_ohm:g} Ω (tol {part.tolerance:g}, "
        f"tc {part.tempco_per_k:g}, drift {part.drift_1000h:g}, cost {part.unit_cost:g}, "
        f"stock {part.stock_qty})"
    )


def describe_design(label: str, design: Design | None, spec: Spec) -> str:
    if design is None:
        return f"{label}: none"
    check = verify(design, spec)
    cost = design_cost(design, spec.preferences)
    margins = "; ".join(
        f"{m.name} {'ok' if m.passed else 'FAIL'} value={m.value:.9g} limit={m.limit:.9g} "
        f"margin={m.margin:.3g}"
        for m in check.requirements
    )
    lines = [
        f"{label}: {design.topology.value}, cost {cost.total!r} ({cost})",
        *("    " + describe_part(p) for p in design.placements),
        f"    verify passed={check.passed} failures={check.failures}",
        f"    worst case: CMRR {check.worst_case.cmrr_db:.9g} dB, gain error "
        f"[{check.worst_case.gain_error_min:.6g}, {check.worst_case.gain_error_max:.6g}]",
        f"    margins: {margins}",
    ]
    return "\n".join(lines)


def allowed_by_spec(design: Design, spec: Spec, catalog: Catalog) -> str:
    """ "yes", or why the spec does not allow ``design`` (topology, window, stock)."""
    if design.topology not in spec.preferences.topologies:
        return f"no: topology {design.topology.value} not allowed"
    discrete = {p.part_id for p in allowed_discrete(spec, catalog)}
    networks = {n.part_id for n in allowed_networks(spec, catalog)}
    for placement in design.placements:
        pool = networks if isinstance(placement.part, NetworkPart) else discrete
        if placement.part.part_id not in pool:
            where = f"{placement.part.part_id} at {placement.position}"
            return f"no: {where} is outside the resistance window or not in stock"
    return "yes"


def report(seed: object, case: Case, ref: ReferenceResult, result: PickResult, what: str) -> str:
    spec = case.spec
    ref_design = ref.ranked[0][1] if ref.ranked else None
    pick_design = result.ranked[0].design if result.ranked else None
    parts = case.catalog.discrete[
        [
            "part_id",
            "resistance_ohm",
            "tolerance",
            "tempco_per_k",
            "drift_1000h",
            "unit_cost",
            "stock_qty",
        ]
    ].to_string(index=False)
    lines = [
        f"ORACLE DISAGREEMENT (seed {seed}, {case.note}): {what}",
        f"pick: status {result.status.value}, cuts {result.cuts}, solves {result.solves}, "
        f"options {result.option_count}, gap {result.gap}",
        f"reference: {ref.designs} designs, {ref.skipped} skipped by the corner bound, "
        f"{ref.prechecked} by the impedance/noise pre-check, {ref.verified} verified",
        f"spec: {spec!r}",
        f"discrete parts:\n{parts}",
        *(f"network: {n!r}" for n in case.catalog.networks),
        describe_design("reference design", ref_design, spec),
        describe_design("CP-SAT design", pick_design, spec),
    ]
    if pick_design is not None:
        lines.append(
            f"CP-SAT design allowed by the spec: {allowed_by_spec(pick_design, spec, case.catalog)}"
        )
    rejected = [d for d, _ in result.rejected]
    if ref_design is not None and rejected:
        lines.append(f"CP-SAT rejected {len(rejected)} candidates after exact verification")
    return "\n".join(lines)


def compare(
    seed: object, case: Case, ref: ReferenceResult | None = None
) -> tuple[ReferenceResult, PickResult]:
    """Run both searches (the reference's only when ``ref`` is not given) and assert they agree
    (module docstring); return both results."""
    if ref is None:
        ref = reference_search(case.spec, case.catalog, verify, top=1)
    result = pick(case.spec, case.catalog, verify, top=1, time_limit_s=PICK_TIME_LIMIT_S)
    if result.status is SearchStatus.TIME_LIMIT:
        why = (
            f"pick gave up after {result.cuts} cuts (MAX_CUTS {MAX_CUTS}) with status time_limit"
            if result.cuts >= MAX_CUTS
            else f"pick hit the {PICK_TIME_LIMIT_S} s time limit"
        )
        pytest.fail(report(seed, case, ref, result, why))
    if not ref.ranked:
        if result.ranked or result.status is not SearchStatus.INFEASIBLE:
            pytest.fail(
                report(seed, case, ref, result, "reference: infeasible; CP-SAT found a design")
            )
        return ref, result
    if not result.ranked:
        pytest.fail(
            report(
                seed, case, ref, result, "reference found a passing design; CP-SAT says infeasible"
            )
        )
    ref_cost = ref.ranked[0][0].total
    pick_cost = result.ranked[0].cost.total
    if not math.isclose(ref_cost, pick_cost, rel_tol=COST_REL_TOL, abs_tol=1e-12):
        cheaper = "reference" if ref_cost < pick_cost else "CP-SAT"
        pytest.fail(
            report(
                seed,
                case,
                ref,
                result,
                f"optimum costs differ: reference {ref_cost!r}, CP-SAT {pick_cost!r} "
                f"({cheaper} cheaper)",
            )
        )
    assert result.status is SearchStatus.OPTIMAL, report(
        seed, case, ref, result, "status is not proven optimal"
    )
    return ref, result


# ---------------------------------------------------------------------------------------------
# The enumerator itself
# ---------------------------------------------------------------------------------------------


def _small_catalog() -> Catalog:
    def part(part_id: str, ohms: float, stock: int = 0) -> DiscretePart:
        return DiscretePart(part_id, ohms, 0.001, 25e-6, "0603", 0.1, 75.0, 0.1, stock)

    def network(part_id: str, values: tuple[float, ...], stock: int = 0) -> NetworkPart:
        return NetworkPart(part_id, values, 0.001, 0.0005, 25e-6, 5e-6, 0.1, 50.0, 1.0, stock)

    return build_catalog(
        [part("A", 10e3, 5), part("B", 20e3), part("C", 10e3)],
        [
            network("DUAL-R-2R", (10e3, 20e3), 3),
            network("QUAD", (10e3, 20e3, 10e3, 20e3)),
            network("DUAL-EQ", (10e3, 10e3)),
        ],
    )


def _plain_spec(**preferences: object) -> Spec:
    return Spec(
        amplifier(), Rails(15.0, -15.0), Signal(-1.0, 1.0, -1.0, 1.0, 1e3), Reference(),
        Requirements(2.0, 0.01, 50.0), Preferences(**preferences),  # type: ignore[arg-type]
    )  # fmt: skip


@pytest.mark.parametrize(
    ("preferences", "expected"),
    [
        # Hand count (combinatorics): 3 discrete parts, dual [10k, 20k] (2 orders), dual
        # [10k, 10k] (1 distinct order), quad [10k, 20k, 10k, 20k].
        # four_discrete 3^4 = 81; quad: C(4, 2) = 6 distinct layouts of {10k, 10k, 20k, 20k};
        # pair options per position pair 2 + 1 = 3: equal_pairs 3·3 = 9, divider_pairs 9;
        # pair_plus_discrete 6 position pairs · 3 · 3^2 = 162. Total 267.
        ({}, 267),
        ({"topologies": (Topology.DISCRETE,)}, 81),
        ({"topologies": (Topology.QUAD,)}, 6),
        ({"topologies": (Topology.EQUAL_PAIRS, Topology.DIVIDER_PAIRS)}, 18),
        ({"topologies": (Topology.PAIR_PLUS_DISCRETE,)}, 162),
        # Stock only: part A and DUAL-R-2R. 1 + 0 + 2·2 + 2·2 + 6·2·1 = 21.
        ({"stock": StockPolicy.ONLY}, 21),
        # Window 15 kΩ … 1 MΩ: only B; every network has a 10 kΩ element. 1.
        ({"resistance_min_ohm": 15e3}, 1),
        # Window 100 Ω … 15 kΩ: A, C and DUAL-EQ. 2^4 + 1 + 1 + 6·1·2^2 = 42.
        ({"resistance_max_ohm": 15e3}, 42),
    ],
)
def test_enumeration_counts_match_hand_count(preferences: dict[str, object], expected: int) -> None:
    spec = _plain_spec(**preferences)
    catalog = _small_catalog()
    designs = list(enumerate_designs(spec, catalog))
    assert len(designs) == expected == design_count(spec, catalog)
    keys = {tuple((p.part.part_id, p.element, p.package) for p in d.placements) for d in designs}
    assert len(keys) == len(designs), "a design is listed twice"
    allowed = set(spec.preferences.topologies)
    assert all(d.topology in allowed for d in designs)


def test_dual_used_twice_is_two_packages() -> None:
    spec = _plain_spec(topologies=(Topology.EQUAL_PAIRS,))
    designs = list(enumerate_designs(spec, _small_catalog()))
    twice = [d for d in designs if {p.part.part_id for p in d.placements} == {"DUAL-EQ"}]
    assert len(twice) == 1
    assert twice[0].packages == (("DUAL-EQ", 0), ("DUAL-EQ", 1))
    assert twice[0].placement_count == 2


def test_refuses_catalogs_too_large_to_enumerate() -> None:
    # 27^4 = 531,441 four_discrete designs > MAX_DESIGNS = 500,000.
    parts = [
        DiscretePart(f"P{i}", 1e3 * (1 + i), 0.01, 100e-6, "0603", 0.1, 75.0, 0.01)
        for i in range(27)
    ]
    spec = _plain_spec(topologies=(Topology.DISCRETE,))
    catalog = build_catalog(parts, [])
    assert design_count(spec, catalog) == 27**4 > MAX_DESIGNS
    with pytest.raises(TooManyDesigns, match="531,441 designs"):
        reference_pick(spec, catalog)
    with pytest.raises(TooManyDesigns):
        next(enumerate_designs(spec, catalog))


@pytest.mark.parametrize("seed", [3, 12, 21, 33, 40, 52, 64, 73, 88, 97, 118, 165])
def test_screens_never_reject_a_design_verify_accepts(seed: int) -> None:
    """The corner bound is a bound of the worst case (CMRR at or below it, gain error at or
    above it) and a design it marks failing fails verify; the impedance/noise pre-check never
    rejects a design verify accepts. Checked on the designs closest to the limits (the ones a
    wrong bound would misjudge) plus a few at random."""
    case = random_case(seed)
    spec = dataclasses.replace(
        case.spec,
        requirements=dataclasses.replace(case.spec.requirements, cmrr_basis=CmrrBasis.WORST_CASE),
    )
    screened = list(screen_designs(spec, case.catalog))
    req = spec.requirements
    closeness = [
        min(
            abs(s.cmrr_db_bound - req.cmrr_floor_db) / 10.0,
            abs(s.gain_error_bound - req.gain_accuracy) / req.gain_accuracy,
        )
        for s in screened
    ]
    order = np.argsort(closeness, kind="stable")
    rng = random.Random(seed)
    chosen = list(order[:6]) + rng.sample(range(len(screened)), min(3, len(screened)))
    for index in chosen:
        item = screened[int(index)]
        check = verify(item.design, spec)
        where = f"seed {seed}\n{describe_design('design', item.design, spec)}"
        assert check.worst_case.cmrr_db <= item.cmrr_db_bound + 1e-9, where
        assert check.worst_case.gain_error_worst >= item.gain_error_bound - 1e-12, where
        if item.failing:
            assert not check.passed, where
        if fails_a_check(item.design, spec):
            assert not check.passed, where


@pytest.mark.parametrize("seed", [1001, 1002, 1003])
def test_screens_do_not_change_the_answer(seed: int) -> None:
    """On a small catalog, verifying every design gives the same answer as the screened run."""
    case = random_case(seed)
    spec = dataclasses.replace(
        case.spec,
        preferences=dataclasses.replace(
            case.spec.preferences, topologies=(Topology.DISCRETE, Topology.QUAD)
        ),
    )
    catalog = build_catalog(
        [case.catalog.discrete_part(i) for i in range(min(4, case.catalog.discrete_count))],
        list(case.catalog.networks),
    )
    full = reference_search(spec, catalog, verify, top=2, prune=False)
    screened = reference_search(spec, catalog, verify, top=2)
    assert [(c.total, d) for c, d, _ in full.ranked] == [
        (c.total, d) for c, d, _ in screened.ranked
    ]
    assert screened.verified <= full.verified


# ---------------------------------------------------------------------------------------------
# The oracle: random cases
# ---------------------------------------------------------------------------------------------


@functools.cache
def sweep_case(seed: int) -> tuple[Case, ReferenceResult]:
    """The random case of ``seed`` and the reference's answer on it, computed once per session:
    the sweep and the share check below both read them, in whichever order they run."""
    case = random_case(seed)
    return case, reference_search(case.spec, case.catalog, verify, top=1)


@pytest.mark.parametrize("seed", [*range(CASES), *FOUND_BEYOND_SWEEP])
def test_pick_matches_reference(seed: int) -> None:
    case, ref = sweep_case(seed)
    compare(seed, case, ref)


#: Seeds of the one-dual-two-discrete top-10 check (an offline run of seeds 0 to 399 agreed on
#: all 367 worst-case cases, 150 of them feasible).
MIXED_SEEDS = range(0, 90)


@pytest.mark.parametrize("seed", [s for s in MIXED_SEEDS if s % 12 != 5])
def test_one_dual_two_discrete_top_ten(seed: int) -> None:
    """The exact enumeration of one dual network and two discrete parts
    (``optimizer.solve.mixed``) against the enumerator: the ten cheapest passing designs have
    the same costs, in order, and the pick proves them. The random case of ``seed``, with the
    topologies set to one dual and two discrete parts (two seeds in three) or to that with
    four discrete parts and equal pairs (the third)."""
    case = random_case(seed)
    tops = (
        (Topology.PAIR_PLUS_DISCRETE,)
        if seed % 3
        else (Topology.PAIR_PLUS_DISCRETE, Topology.DISCRETE, Topology.EQUAL_PAIRS)
    )
    spec = dataclasses.replace(
        case.spec, preferences=dataclasses.replace(case.spec.preferences, topologies=tops)
    )
    ref = reference_search(spec, case.catalog, verify, top=10)
    result = pick(spec, case.catalog, verify, top=10, time_limit_s=PICK_TIME_LIMIT_S)
    ref_costs = [r[0].total for r in ref.ranked]
    pick_costs = [c.cost.total for c in result.ranked]
    assert pick_costs == pytest.approx(ref_costs, rel=COST_REL_TOL, abs=1e-12), (seed, case.note)
    expected = SearchStatus.OPTIMAL if ref_costs else SearchStatus.INFEASIBLE
    assert result.status is expected


def test_sweep_mix() -> None:
    """The sweep exercises both outcomes: at least 40 % feasible, at least 10 yield cases.
    Self-contained: it takes the reference's answers from :func:`sweep_case` (computing those
    the sweep has not run yet), so it holds alone, first or last."""
    outcomes = [sweep_case(seed) for seed in range(CASES)]
    feasible = sum(bool(ref.ranked) for _, ref in outcomes)
    yields = sum(case.spec.requirements.cmrr_basis is CmrrBasis.YIELD for case, _ in outcomes)
    assert feasible >= 0.4 * CASES, f"only {feasible} of {CASES} cases feasible"
    assert CASES - feasible >= 0.1 * CASES, f"only {CASES - feasible} of {CASES} cases infeasible"
    assert yields >= 10


# ---------------------------------------------------------------------------------------------
# The oracle: hand-made cases
# ---------------------------------------------------------------------------------------------


def _part(
    part_id: str, ohms: float, tol: float, tc: float, cost: float, stock: int = 0
) -> DiscretePart:
    return DiscretePart(part_id, ohms, tol, tc, "0603", 0.1, 75.0, cost, stock)


QUAD_2X = NetworkPart("Q-2X", (10e3, 20e3, 10e3, 20e3), 0.001, 0.0001, 25e-6, 2e-6, 0.1, 50.0, 1.20)


def _hand_spec(
    floor_db: float, *, accuracy: float = 0.005, min_impedance: float = 0.0, **preferences: object
) -> Spec:
    return Spec(
        amplifier(), Rails(15.0, -15.0), Signal(-1.0, 1.0, -5.0, 5.0, 1e3), Reference(),
        Requirements(2.0, accuracy, floor_db, -40.0, 85.0, min_input_impedance_ohm=min_impedance),
        Preferences(**preferences),  # type: ignore[arg-type]
    )  # fmt: skip


def test_only_a_network_meets_the_floor() -> None:
    """G = 2 over -40…85 °C. The best discrete set (0.01 %, 5 ppm/K) reaches about 65 dB worst
    case, the quad network (0.01 % ratio, 2 ppm/K tracking) about 76 dB: a 72 dB floor leaves
    only the network, although four of the best discrete parts cost less (4 x 0.25 < 1.20)."""
    parts = [
        _part("A10k", 10e3, 0.001, 25e-6, 0.05),
        _part("A20k", 20e3, 0.001, 25e-6, 0.05),
        _part("B10k", 10e3, 0.0001, 5e-6, 0.25),
        _part("B20k", 20e3, 0.0001, 5e-6, 0.25),
    ]
    case = Case(_hand_spec(72.0), build_catalog(parts, [QUAD_2X]), "network only")
    ref, result = compare("network-only", case)
    assert ref.ranked[0][1].topology is Topology.QUAD
    assert result.ranked[0].design.topology is Topology.QUAD
    assert result.ranked[0].cost.total == pytest.approx(1.20, rel=1e-12)
    discrete_only = Case(
        _hand_spec(72.0, topologies=(Topology.DISCRETE,)), case.catalog, "discrete only"
    )
    ref, result = compare("network-only/discrete", discrete_only)
    assert not ref.ranked and result.status is SearchStatus.INFEASIBLE


def test_stock_only() -> None:
    """The cheapest parts are not stocked; with stock policy "only" both searches must settle
    on the dearer stocked ones (4 x 0.08 = 0.32 instead of 4 x 0.05 = 0.20). 0.1 %, 25 ppm/K
    parts reach about 49 dB and 0.53 % gain error worst case here: a 45 dB floor and 1 %
    accuracy admit them."""
    parts = [
        _part("N10k", 10e3, 0.001, 25e-6, 0.05),
        _part("N20k", 20e3, 0.001, 25e-6, 0.05),
        _part("S10k", 10e3, 0.001, 25e-6, 0.08, stock=100),
        _part("S20k", 20e3, 0.001, 25e-6, 0.08, stock=100),
    ]
    catalog = build_catalog(parts, [QUAD_2X])
    ref, result = compare("stock-any", Case(_hand_spec(45.0, accuracy=0.01), catalog, "stock any"))
    assert result.ranked[0].cost.total == pytest.approx(0.20, rel=1e-12)
    ref, result = compare(
        "stock-only",
        Case(_hand_spec(45.0, accuracy=0.01, stock=StockPolicy.ONLY), catalog, "stock only"),
    )
    assert result.ranked[0].cost.total == pytest.approx(0.32, rel=1e-12)
    assert all(p.part.in_stock for p in result.ranked[0].design.placements)
    assert all(p.part.in_stock for p in ref.ranked[0][1].placements)


@pytest.mark.parametrize(
    ("floor_db", "min_impedance", "why"),
    [
        # Worst-case CMRR ≈ (1 + G)/(4·t) for parts of total spread t (common practice, from
        # memory): t = 1 % + 100 ppm/K x 65 K ≈ 1.65 % gives about 33 dB; 70 dB is out of reach.
        (70.0, 0.0, "tolerance"),
        # The differential input resistance R1 + R3 stays near 20 kΩ: 100 kΩ is out of reach.
        (30.0, 100e3, "input impedance"),
    ],
)
def test_infeasible(floor_db: float, min_impedance: float, why: str) -> None:
    parts = [
        _part("C10k", 10e3, 0.01, 100e-6, 0.01),
        _part("C20k", 20e3, 0.01, 100e-6, 0.01),
    ]
    case = Case(_hand_spec(floor_db, min_impedance=min_impedance), build_catalog(parts, []), why)
    ref, result = compare(f"infeasible-{why}", case)
    assert not ref.ranked and not result.ranked
    assert result.status is SearchStatus.INFEASIBLE
    assert ref.designs == 16


def test_pair_plus_discrete_orders_and_shapes() -> None:
    """Every element order of a dual on every position pair is listed once per distinct value
    layout: a [10k, 20k] dual on (R1, R2) gives both orders, on (R1, R3) both orders."""
    spec = _plain_spec(topologies=(Topology.PAIR_PLUS_DISCRETE,))
    catalog = build_catalog(
        [_part("A", 10e3, 0.001, 25e-6, 0.1)],
        [NetworkPart("D", (10e3, 20e3), 0.001, 0.0005, 25e-6, 5e-6, 0.1, 50.0, 1.0)],
    )
    layouts = set()
    for design in enumerate_designs(spec, catalog):
        layouts.add(tuple(p.resistance_ohm if p.package_key else None for p in design.placements))
    # 6 position pairs x 2 orders, one discrete part: 12 designs, 12 distinct layouts.
    assert len(layouts) == 12 == design_count(spec, catalog)
    assert all(sum(v is not None for v in layout) == 2 for layout in layouts)
    assert {tuple(i for i, v in enumerate(layout) if v is not None) for layout in layouts} == set(
        itertools.combinations(range(4), 2)
    )


def test_line_cost_beside_a_network() -> None:
    """One dual network and two discrete parts, with a line cost of 0.05. A 200 Ω REF
    impedance makes R4' = R4 + 200 Ω, so the balanced design is the dual [10k, 20k] on
    (R1, R2), a 10 kΩ part at R3 and the 19.8 kΩ part at R4 (R4'/R3 = R2/R1 = 2); no other
    position pair serves (the mirror image, dual on (R3, R4), leaves a 2 % ratio mismatch; the
    dual on (R2, R3) reaches only about 53 dB worst case against the 55 dB floor, the layout
    on (R1, R2) about 61 dB). The true optimum uses the cheaper 10 kΩ part P1:
    0.50 + 0.04 + 0.05 + 3 lines x 0.05 = 0.74; with the dearer P0 (first catalog row: value
    index 0 and grade class 0 in the CP-SAT model) it costs 0.76. Found by the oracle on
    random seed 287: the model's line count may pair a discrete part of value index 0 and
    class 0 with a position the network fills (whose value and class sums are 0) and count
    one line too few, making the P0 design look 0.71 to the model."""
    parts = [
        _part("P0", 10e3, 0.0005, 5e-6, 0.06),
        _part("P1", 10e3, 0.0005, 10e-6, 0.04),
        _part("Q", 19.8e3, 0.0005, 10e-6, 0.05),
    ]
    dual = NetworkPart("DUAL", (10e3, 20e3), 0.001, 0.0005, 25e-6, 5e-6, 0.1, 50.0, 0.50)
    spec = Spec(
        amplifier(), Rails(15.0, -15.0), Signal(-1.0, 1.0, -2.0, 2.0, 1e3),
        Reference(0.0, 0.0, 200.0, 200.0),
        Requirements(2.0, 0.02, 55.0, 0.0, 70.0),
        Preferences(topologies=(Topology.PAIR_PLUS_DISCRETE,), line_cost=0.05),
    )  # fmt: skip
    ref, _ = compare("line-cost", Case(spec, build_catalog(parts, [dual]), "line cost"))
    assert ref.ranked[0][0].total == pytest.approx(0.74, rel=1e-12)
    assert [p.part.part_id for p in ref.ranked[0][1].placements] == ["DUAL", "DUAL", "P1", "Q"]


def test_noise_limit_with_gain_below_target() -> None:
    """Target gain 3.3 from E96 values 47.5 kΩ and 156 kΩ (R2/R1 = 3.284, 0.5 % low, inside the
    1.5 % accuracy) with a noise ceiling 0.1 % above that design's own output noise. The
    design passes verify, so the pick must find it. Found by the oracle on random seeds 519
    and 814: the linear model prices resistor noise at the target gain G (R1 and R3 through
    G², the amplifier through (1 + G)²), about 0.3 % above this design's noise, and with a
    relative slack of 2e-4 rejects it."""
    parts = [
        _part("R47k5", 47.5e3, 0.0001, 10e-6, 0.08),
        _part("R156k", 156e3, 0.0002, 15e-6, 0.09),
    ]
    catalog = build_catalog(parts, [])
    low, high = parts
    design = Design(
        (Placement("R1", low), Placement("R2", high), Placement("R3", low), Placement("R4", high))
    )
    base = Spec(
        amplifier(99.8, 111.0), Rails(15.0, -15.0), Signal(-0.55, 0.55, -2.66, 2.66, 1e3),
        Reference(), Requirements(3.3, 0.015, 55.0, 0.0, 70.0),
        Preferences(topologies=(Topology.DISCRETE,)),
    )  # fmt: skip
    ceiling = check_output_noise(design, base).value * 1.001
    spec = dataclasses.replace(
        base,
        requirements=dataclasses.replace(base.requirements, max_output_noise_v_rms=ceiling),
    )
    assert verify(design, spec).passed
    ref, _ = compare("noise-gain", Case(spec, catalog, "noise at target gain"))
    assert ref.ranked[0][1] == design


@pytest.mark.parametrize("seed", [*range(0, 40, 2), 5, 17, 29, 41, 53])
def test_the_search_check_decides_as_the_full_check(seed: int) -> None:
    """``verify_candidate`` (what the search runs on each candidate: a design failing the exact
    worst-case CMRR or gain, or the Monte Carlo yield, returned at once) passes and fails
    exactly the designs ``verify`` does, and gives a design that passes the very same
    requirements, on random designs of the seeded catalogs (four discrete parts; the even seeds
    on the worst-case basis, the seeds ≡ 5 mod 12 on the yield basis)."""
    case = random_case(seed)
    rng = random.Random(seed)
    parts = [case.catalog.discrete_part(i) for i in range(case.catalog.discrete_count)]
    combos = list(itertools.product(parts, repeat=4))
    decided = {True: 0, False: 0}
    for combo in rng.sample(combos, min(25, len(combos))):
        design = Design(tuple(Placement(f"R{i + 1}", p) for i, p in enumerate(combo)))  # type: ignore[arg-type]
        full, quick = verify(design, case.spec), verify_candidate(design, case.spec)
        assert quick.passed == full.passed, (seed, combo)
        if full.passed:
            assert quick.requirements == full.requirements
        decided[full.passed] += 1
    assert decided[False] > 0  # the early answer is exercised
