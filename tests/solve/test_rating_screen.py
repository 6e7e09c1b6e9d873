"""The rating screen of the exact search (``analysis.operating.rating_corners`` with
``resistor_stress``, used by ``optimizer.solve.frontier`` to leave out designs before the exact
check) never claims more stress than the exact rating check finds.

* **A relaxation**: on random four-discrete designs from the built-in catalog under specs with
  source and REF impedance, a finite amplifier, a REF voltage range and wide temperature
  ranges, the power and voltage the screen computes at its corners (every end, and the
  frontier's subset ``_SCREEN_ENDS``) never exceed the values ``check_resistor_ratings``
  reports; so a design the screen drops fails the exact check too.
* **One design or many**: the batch form (N designs at once) gives the same figures as the
  one-design form, design by design.
* **Against Ohm's and Kirchhoff's laws** (textbook, the ideal op amp holds V− = V+): with no
  source or REF impedance and every δ at zero, the screen's stress equals the largest over
  the signal corners of ``V+ = V2·R4/(R3 + R4) + VREF·R3/(R3 + R4)``, ``I1 = (V1 − V+)/R1``,
  ``V_R1 = I1·R1``, ``V_R2 = I1·R2``, ``V_R3 = (V2 − VREF)·R3/(R3 + R4)``, ``V_R4 = (V2 −
  VREF)·R4/(R3 + R4)`` and ``P = V²/R``.
"""

from __future__ import annotations

import itertools
import random
from pathlib import Path

import numpy as np
import pytest
from battery import spec_text

from optimizer.analysis.checks import check_resistor_ratings, resistor_stress
from optimizer.analysis.formulas import value_spread
from optimizer.analysis.operating import ALL_ENDS, rating_corners
from optimizer.catalog import builtin_catalog
from optimizer.design import Design, Placement
from optimizer.solve.ratingscreen import _SCREEN_ENDS
from optimizer.spec import Spec
from optimizer.specfile import load_spec

#: Specs of the relaxation test (battery fields, ``tests/battery.py``): impedances, a finite
#: amplifier, a wide temperature range, a small-signal high gain and an attenuator.
SPECS = [
    dict(gain=1, floor=40, topologies="four_discrete"),
    dict(gain=10, floor=60, tmin=-40, tmax=125, amp_cmrr="90 dB", aol="100 dB",
         source=", source_impedance: {min: 10, max: 1k, imbalance: 200}",
         ref=", impedance: {min: 0, max: 50}", topologies="four_discrete"),
    dict(gain=200, floor=50, vd=0.05, tmin=-20, tmax=85, topologies="four_discrete"),
    dict(gain=0.1, floor=50, ref=", impedance: {min: 100, max: 200}", topologies="four_discrete"),
]  # fmt: skip


def _spec(tmp_path: Path, fields: dict[str, object]) -> Spec:
    path = tmp_path / "spec.yaml"
    path.write_text(spec_text(fields), encoding="utf-8")
    return load_spec(str(path))


def _random_design(rng: random.Random) -> Design:
    catalog = builtin_catalog()
    rows = [rng.randrange(catalog.discrete_count) for _ in range(4)]
    return Design(
        tuple(Placement(f"R{i + 1}", catalog.discrete_part(r)) for i, r in enumerate(rows))
    )  # type: ignore[arg-type]


def _nominal_and_spreads(design: Design, spec: Spec) -> tuple[np.ndarray, np.ndarray]:
    req = spec.requirements
    parts = [p.part for p in design.placements]
    nominal = np.array([p.resistance_ohm for p in parts])
    spreads = np.array(
        [value_spread(p.tolerance, p.tempco_per_k, req.temp_min_c, req.temp_max_c) for p in parts]  # type: ignore[union-attr]
    )
    return nominal, spreads


@pytest.mark.parametrize("which", range(len(SPECS)))
def test_the_screen_never_exceeds_the_exact_rating_check(tmp_path: Path, which: int) -> None:
    spec = _spec(tmp_path, SPECS[which])
    rng = random.Random(which)
    for _ in range(40):
        design = _random_design(rng)
        exact = {r.name: r.value for r in check_resistor_ratings(design, spec)}
        nominal, spreads = _nominal_and_spreads(design, spec)
        for ends in (ALL_ENDS, _SCREEN_ENDS):
            power, peak = resistor_stress(rating_corners(nominal, spreads, spec, ends), spec)
            for i in range(4):
                assert power[i] <= exact[f"power_R{i + 1}"] * (1.0 + 1e-12)
                assert peak[i] <= exact[f"voltage_R{i + 1}"] * (1.0 + 1e-12)
        # With every end the screen's corners include the exact check's worst one whenever the
        # worst is at the first source vertex, the lowest REF impedance and A = ∞ (no source or
        # REF impedance, an ideal amplifier): then the two agree.
        if which == 0:
            power, peak = resistor_stress(rating_corners(nominal, spreads, spec), spec)
            for i in range(4):
                assert power[i] == pytest.approx(exact[f"power_R{i + 1}"], rel=1e-12)
                assert peak[i] == pytest.approx(exact[f"voltage_R{i + 1}"], rel=1e-12)


def test_many_designs_at_once_equal_one_at_a_time(tmp_path: Path) -> None:
    spec = _spec(tmp_path, SPECS[1])
    rng = random.Random(7)
    designs = [_random_design(rng) for _ in range(25)]
    pairs = [_nominal_and_spreads(d, spec) for d in designs]
    nominal = np.stack([p[0] for p in pairs])
    spreads = np.stack([p[1] for p in pairs])
    for ends in (ALL_ENDS, _SCREEN_ENDS):
        power, peak = resistor_stress(rating_corners(nominal, spreads, spec, ends), spec)
        assert power.shape == peak.shape == (len(designs), 4)
        for j, (n, s) in enumerate(pairs):
            one_power, one_peak = resistor_stress(rating_corners(n, s, spec, ends), spec)
            np.testing.assert_array_equal(power[j], one_power)
            np.testing.assert_array_equal(peak[j], one_peak)


@pytest.mark.parametrize(
    ("r1", "r2", "r3", "r4"),
    [(10e3, 20e3, 10e3, 20e3), (100.0, 100.0, 150.0, 150.0), (1e3, 200e3, 1.1e3, 220e3)],
)
def test_the_stress_follows_ohm_and_kirchhoff(
    tmp_path: Path, r1: float, r2: float, r3: float, r4: float
) -> None:
    """Ideal op amp, no source or REF impedance, δ = 0: textbook nodal solution (module
    docstring), worked out here without the package's formulas."""
    spec = _spec(tmp_path, dict(gain=r2 / r1, floor=40, topologies="four_discrete"))
    sig, ref = spec.signal, spec.reference
    power, peak = resistor_stress(
        rating_corners(np.array([r1, r2, r3, r4]), np.zeros(4), spec), spec
    )
    want_v = np.zeros(4)
    want_p = np.zeros(4)
    for vcm, vd, vref in itertools.product(
        (sig.common_mode_min_v, sig.common_mode_max_v),
        (sig.differential_min_v, sig.differential_max_v),
        (ref.voltage_min_v, ref.voltage_max_v),
    ):
        v1, v2 = vcm - vd / 2.0, vcm + vd / 2.0
        v_plus = v2 * r4 / (r3 + r4) + vref * r3 / (r3 + r4)
        i1 = (v1 - v_plus) / r1
        volts = [i1 * r1, i1 * r2, (v2 - vref) * r3 / (r3 + r4), (v2 - vref) * r4 / (r3 + r4)]
        for i, (v, r) in enumerate(zip(volts, (r1, r2, r3, r4), strict=True)):
            want_v[i] = max(want_v[i], abs(v))
            want_p[i] = max(want_p[i], v * v / r)
    np.testing.assert_allclose(peak, want_v, rtol=1e-12)
    np.testing.assert_allclose(power, want_p, rtol=1e-12)
