"""Numerical robustness of the analysis and the pick at extreme but legal inputs.

1 Ω and 10 MΩ parts, G = 0.01 and 1000, 0.001 % tolerance, −55 °C to 155 °C, zero and very
large source impedance: every figure is finite and agrees with a closed form, or the design is
refused clearly (a failed check with a finite margin, never NaN and never an exception).

Sources of the check values:

* Textbook transfer of the ideal four-resistor difference amplifier (superposition; e.g.
  Horowitz & Hill, *The Art of Electronics*, 3rd ed., §4.2.4, and every op-amp handbook):
  ``Vout = −V1·R2/R1 + V2·R4/(R3+R4)·(1+R2/R1) + VREF·R3/(R3+R4)·(1+R2/R1)``.
* Finite open-loop gain A (the classic feedback result, e.g. Franco, *Design with Operational
  Amplifiers*, ch. 1): closed-loop gain = ideal gain / (1 + (1+G)/A).
* Worst-case CMRR of four resistors of tolerance t, handbook approximation (Kitchin & Counts,
  *A Designer's Guide to Instrumentation Amplifiers*, 3rd ed., "difference amplifier" section;
  the same formula appears in many op-amp application handbooks): CMRR ≈ (1+G)/(4t), first
  order in t.
* Chip-resistor power derating to zero at 155 °C: common practice (the project's own
  ``derated_power`` docstring says so too).
"""

from __future__ import annotations

import itertools
import math

import pytest

from optimizer.analysis.checks import check_resistor_ratings
from optimizer.analysis.formulas import derated_power
from optimizer.analysis.transfer import coefficients, differential_gain
from optimizer.analysis.worstcase import worst_case
from optimizer.catalog import Catalog, catalog_from_parts
from optimizer.design import Design, Placement, Topology
from optimizer.parts import Amplifier, DiscretePart, RailSpan
from optimizer.solve.search import SearchStatus, pick
from optimizer.spec import (
    Preferences,
    Rails,
    Reference,
    Requirements,
    Signal,
    SourceImpedance,
    Spec,
)
from optimizer.verify import verify

IDEAL = Amplifier(
    "ideal-ish amp",
    math.inf,
    math.inf,
    1e12,
    1e12,
    0.0,
    0.0,
    0.0,
    0.0,
    RailSpan(-100.0, -100.0),
    RailSpan(0.0, 0.0),
)


def _part(
    part_id: str,
    ohms: float,
    tol: float,
    *,
    tc: float = 0.0,
    power: float = 0.25,
    cost: float = 1.0,
) -> DiscretePart:
    return DiscretePart(part_id, ohms, tol, tc, "0805", power, 200.0, cost)


def _design(
    r1: float, r2: float, r3: float, r4: float, tol: float, *, tc: float = 0.0, power: float = 0.25
) -> Design:
    parts = [_part(f"P{i}", r, tol, tc=tc, power=power) for i, r in enumerate((r1, r2, r3, r4), 1)]
    return Design(tuple(Placement(f"R{i}", p) for i, p in enumerate(parts, 1)))  # type: ignore[arg-type]


def _spec(
    gain: float,
    *,
    diff_v: float = 1e-3,
    cm_v: float = 1.0,
    temps: tuple[float, float] = (25.0, 25.0),
    source: SourceImpedance | None = None,
    amp: Amplifier = IDEAL,
    floor_db: float = 20.0,
    accuracy: float = 0.5,
    **preferences: object,
) -> Spec:
    signal = Signal(-diff_v, diff_v, -cm_v, cm_v, 10.0, source or SourceImpedance())
    requirements = Requirements(gain, accuracy, floor_db, temps[0], temps[1])
    prefs = Preferences(**preferences)  # type: ignore[arg-type]
    return Spec(amp, Rails(15.0, -15.0), signal, Reference(), requirements, prefs)


def _textbook(r1: float, r2: float, r3: float, r4: float) -> tuple[float, float, float]:
    """Ideal difference amplifier (Horowitz & Hill §4.2.4): k1, k2, kref."""
    return -r2 / r1, r4 / (r3 + r4) * (1.0 + r2 / r1), r3 / (r3 + r4) * (1.0 + r2 / r1)


def _textbook_worst_cmrr_db(
    r: tuple[float, float, float, float],
    tol: float,
    rs: tuple[tuple[float, float], ...] = ((0.0, 0.0),),
) -> float:
    """Worst CMRR over the 16 tolerance corners (and the given source pairs) from the textbook
    transfer, with Adm = (k2 − k1)/2 and Acm = k1 + k2 (the usual definitions)."""
    worst = math.inf
    for signs in itertools.product((-1.0, 1.0), repeat=4):
        r1, r2, r3, r4 = (v * (1.0 + s * tol) for v, s in zip(r, signs, strict=True))
        for rs1, rs3 in rs:
            k1, k2, _ = _textbook(r1 + rs1, r2, r3 + rs3, r4)
            acm, adm = abs(k1 + k2), abs(k2 - k1) / 2.0
            worst = min(worst, math.inf if acm == 0.0 else 20.0 * math.log10(adm / acm))
    return worst


# Extreme value sets: (R1, R2, R3, R4) with G = R2/R1 and R4/R3 = G.
EXTREMES = [
    pytest.param((1.0, 1e3, 1.0, 1e3), id="G1000-1ohm"),
    pytest.param((10e3, 10e6, 10e3, 10e6), id="G1000-10Mohm"),
    pytest.param((10e6, 100e3, 10e6, 100e3), id="G0.01-10Mohm"),
    pytest.param((100.0, 1.0, 100.0, 1.0), id="G0.01-1ohm"),
    pytest.param((1.0, 10e6, 1.0, 10e6), id="G1e7-1ohm-10Mohm"),
]


@pytest.mark.parametrize("values", EXTREMES)
def test_coefficients_match_the_textbook_transfer(
    values: tuple[float, float, float, float],
) -> None:
    k = coefficients(*values)
    for got, want in zip((k.k1, k.k2, k.kref), _textbook(*values), strict=True):
        assert float(got) == pytest.approx(want, rel=1e-12)
        assert math.isfinite(float(got))


@pytest.mark.parametrize("gain_pair", [(1e3, 1e6), (10e6, 100e3), (1.0, 1e3), (100.0, 1.0)])
@pytest.mark.parametrize("open_loop_db", [60.0, 100.0, 140.0])
def test_finite_open_loop_gain_matches_the_feedback_formula(
    gain_pair: tuple[float, float], open_loop_db: float
) -> None:
    """Closed-loop gain = G / (1 + (1+G)/A) (Franco, ch. 1), balanced bridge, ideal CMRR."""
    r1, r2 = gain_pair
    g, a = r2 / r1, 10.0 ** (open_loop_db / 20.0)
    got = float(differential_gain(coefficients(r1, r2, r1, r2, open_loop_gain=a)))
    assert got == pytest.approx(g / (1.0 + (1.0 + g) / a), rel=1e-12)


@pytest.mark.parametrize("values", EXTREMES)
@pytest.mark.parametrize("tol", [1e-5, 1e-3, 1e-2])
def test_worst_case_cmrr_at_extremes(values: tuple[float, float, float, float], tol: float) -> None:
    """Worst-case CMRR of four parts at ±t against the exact textbook corner enumeration and the
    handbook (1+G)/(4t) (first order in t: agreement within a relative 4t)."""
    g = values[1] / values[0]
    spec = _spec(g, diff_v=1e-6, cm_v=1e-3)
    worst = worst_case(_design(*values, tol), spec)
    assert (
        math.isfinite(worst.cmrr_resistors_db)
        and math.isfinite(worst.gain_min)
        and math.isfinite(worst.gain_max)
    )
    assert worst.cmrr_resistors_db == pytest.approx(_textbook_worst_cmrr_db(values, tol), abs=1e-6)
    handbook = (1.0 + g) / (4.0 * tol)
    assert 10.0 ** (worst.cmrr_resistors_db / 20.0) == pytest.approx(handbook, rel=4.0 * tol)
    # Gain range: the extreme ratio corners, (G(1−t)/(1+t), G(1+t)/(1−t)) (textbook).
    assert worst.gain_min == pytest.approx(g * (1 - tol) / (1 + tol), rel=1e-9)
    assert worst.gain_max == pytest.approx(g * (1 + tol) / (1 - tol), rel=1e-9)


@pytest.mark.parametrize(
    ("max_ohm", "imbalance_ohm"),
    [(0.0, 0.0), (1.0, 1.0), (1e3, 1e3), (1e6, 1e6), (1e9, 1e9), (1e9, 0.0)],
)
def test_source_impedance_zero_and_very_large(max_ohm: float, imbalance_ohm: float) -> None:
    """The resistor CMRR with a source impedance on each leg in [0, max] differing by at most
    ``imbalance`` equals the textbook corner enumeration over the vertices of that region
    (each leg at 0 or max, or the two legs ``imbalance`` apart at the ends); finite even for a
    1 GΩ source, where the common-mode rejection collapses."""
    values = (10e3, 100e3, 10e3, 100e3)
    tol = 1e-3
    spec = _spec(10.0, source=SourceImpedance(0.0, max_ohm, imbalance_ohm), diff_v=1e-6, cm_v=1e-3)
    worst = worst_case(_design(*values, tol), spec)
    d = min(max_ohm, imbalance_ohm)
    pairs = {
        (0.0, 0.0),
        (max_ohm, max_ohm),
        (0.0, d),
        (d, 0.0),
        (max_ohm - d, max_ohm),
        (max_ohm, max_ohm - d),
    }
    expected = _textbook_worst_cmrr_db(values, tol, tuple(pairs))
    assert math.isfinite(worst.cmrr_resistors_db)
    assert worst.cmrr_resistors_db == pytest.approx(expected, abs=1e-6)
    result = verify(_design(*values, tol), spec)
    assert all(not math.isnan(m.value) and not math.isnan(m.margin) for m in result.requirements)


@pytest.mark.parametrize("values", EXTREMES)
def test_verify_gives_finite_figures_at_extremes(values: tuple[float, float, float, float]) -> None:
    g = values[1] / values[0]
    spec = _spec(g, diff_v=1e-6, cm_v=1e-3, temps=(-55.0, 125.0))
    result = verify(_design(*values, 1e-5, tc=5e-6), spec)
    for margin in result.requirements:
        assert not math.isnan(margin.value) and not math.isnan(margin.margin), margin
    assert math.isfinite(result.worst_case.cmrr_db)


def test_power_derates_to_zero_at_155_c() -> None:
    """Common practice: full rating to 70 °C, zero at 155 °C."""
    assert float(derated_power(0.25, 155.0)) == 0.0
    assert float(derated_power(0.25, 70.0)) == 0.25
    assert float(derated_power(0.25, 112.5)) == pytest.approx(0.125)


def test_ratings_fail_clearly_at_155_c() -> None:
    """At 155 °C the derated power is zero: every power check fails with a finite, negative
    margin equal to minus the dissipation (P = V²/R, Joule), and verify reports it; no crash."""
    spec = _spec(1.0, diff_v=1.0, cm_v=1.0, temps=(-55.0, 155.0))
    design = _design(10e3, 10e3, 10e3, 10e3, 1e-3)
    powers = [c for c in check_resistor_ratings(design, spec) if c.name.startswith("power_")]
    assert len(powers) == 4
    for check in powers:
        assert not check.passed and check.limit == 0.0
        assert math.isfinite(check.margin) and check.margin == -check.value < 0.0
    result = verify(design, spec)
    assert not result.passed
    assert {"power_R1", "power_R2", "power_R3", "power_R4"} <= set(result.failures)


# ---------------------------------------------------------------------------------------------
# The pick on small hand-made catalogs at the extremes
# ---------------------------------------------------------------------------------------------


def _catalog(parts: list[DiscretePart]) -> Catalog:
    return catalog_from_parts(parts, source="robustness-test")


@pytest.mark.parametrize(
    ("low", "high", "gain"),
    [
        pytest.param(1.0, 1e3, 1e3, id="G1000-1ohm"),
        pytest.param(10e6, 100e3, 0.01, id="G0.01-10Mohm"),
    ],
)
def test_pick_at_extremes(low: float, high: float, gain: float) -> None:
    """Loose (0.1 %, cost 1) and tight (0.001 %, cost 5) parts of the two values. The handbook
    CMRR (1+G)/(Σ tᵢ) (four tolerances adding, first order) gives, for G = 1000: all loose
    108 dB, one tight 110.5 dB, two 114 dB, three 119.7 dB, all tight 148 dB; for G = 0.01:
    all loose 48 dB, all tight 88 dB, three tight 59.8 dB. A floor between three-tight and
    all-tight leaves only the four tight parts (cost 20), so the pick must find exactly that,
    proven optimal, and the design must pass the exact check."""
    parts = [
        _part("LOOSE-LOW", low, 1e-3, cost=1.0),
        _part("LOOSE-HIGH", high, 1e-3, cost=1.0),
        _part("TIGHT-LOW", low, 1e-5, cost=5.0),
        _part("TIGHT-HIGH", high, 1e-5, cost=5.0),
    ]
    floor = 130.0 if gain > 1 else 75.0
    spec = _spec(
        gain, diff_v=1e-3 if gain > 1 else 1.0, cm_v=1e-3, floor_db=floor, accuracy=0.01,
        topologies=(Topology.DISCRETE,), resistance_min_ohm=1.0, resistance_max_ohm=10e6,
    )  # fmt: skip
    result = pick(spec, _catalog(parts), verify, top=1, time_limit_s=20)
    assert result.status is SearchStatus.OPTIMAL
    assert len(result.ranked) == 1
    best = result.ranked[0]
    assert [p.part.part_id for p in best.design.placements] == [
        "TIGHT-LOW",
        "TIGHT-HIGH",
        "TIGHT-LOW",
        "TIGHT-HIGH",
    ]
    assert best.cost.total == pytest.approx(20.0, rel=1e-12)
    check = verify(best.design, spec)
    assert check.passed and math.isfinite(check.worst_case.cmrr_db)


def test_pick_refuses_clearly_when_nothing_meets_the_floor() -> None:
    """A floor above even four 0.001 % parts (148 dB at G = 1000, handbook) gives no design and
    the status INFEASIBLE (the CLI then runs the diagnosis), never an exception."""
    parts = [_part("TIGHT-LOW", 1.0, 1e-5, cost=5.0), _part("TIGHT-HIGH", 1e3, 1e-5, cost=5.0)]
    spec = _spec(
        1e3, floor_db=160.0, accuracy=0.01, topologies=(Topology.DISCRETE,),
        resistance_min_ohm=1.0, resistance_max_ohm=10e6,
    )  # fmt: skip
    result = pick(spec, _catalog(parts), verify, top=1, time_limit_s=20)
    assert not result.ranked
    assert result.status is SearchStatus.INFEASIBLE
