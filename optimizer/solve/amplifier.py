"""Requirements no choice of resistors can meet: the amplifier's bandwidth, slew rate, input
range and output swing, judged on ideal resistor sets across the gain tolerance band."""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from ..analysis.checks import (
    Outcome,
    check_bandwidth,
    check_full_power_bandwidth,
    check_input_range,
    check_output_swing,
)
from ..design import Design, Placement
from ..parts import DiscretePart
from ..spec import Spec

__all__ = ["amplifier_limits"]

#: Gains tried across the accuracy band by :func:`amplifier_limits`.
TRIAL_GAINS = 9


#: Resistance levels (R1) tried between the smallest and largest allowed values.
TRIAL_LEVELS = 7


def _ideal_design(r1: float, gain: float, rref: float = 0.0) -> Design:
    """R1 = R3 = r1, R2 = G·r1, R4 = G·r1 − Rref (so that R4 plus the REF impedance balances
    the bridge), all exact (no tolerance, tempco or drift)."""

    def part(name: str, ohms: float) -> Placement:
        return Placement(
            name, DiscretePart(f"ideal-{name}", ohms, 0.0, 0.0, "ideal", 1e9, 1e9, 0.0)
        )

    r4 = max(r1 * gain - rref, r1 * gain * 1e-3)
    return Design((part("R1", r1), part("R2", r1 * gain), part("R3", r1), part("R4", r4)))


def amplifier_limits(spec: Spec) -> tuple[Outcome, ...]:
    """Checks that fail for every ideal, balanced resistor set across the gain band
    [G(1−acc), G(1+acc)] and across the allowed resistance levels: neither the catalog nor the
    search can meet them; the amplifier or the signal decides."""
    req = spec.requirements
    prefs = spec.preferences
    gains = np.geomspace(
        req.gain * (1 - req.gain_accuracy), req.gain * (1 + req.gain_accuracy), TRIAL_GAINS
    )
    top = max(prefs.resistance_min_ohm, prefs.resistance_max_ohm / max(req.gain, 1.0))
    levels = np.geomspace(prefs.resistance_min_ohm, top, TRIAL_LEVELS)
    rref = 0.5 * (spec.reference.impedance_min_ohm + spec.reference.impedance_max_ohm)
    grid = [(float(r), float(g)) for r in levels for g in gains]
    made: dict[tuple[float, float], Design] = {}

    def designs() -> Iterator[Design]:
        """The ideal sets, built once each and only when a check gets that far."""
        for key in grid:
            if key not in made:
                made[key] = _ideal_design(key[0], key[1], rref)
            yield made[key]

    failing: list[Outcome] = []
    for check in (
        check_bandwidth,
        check_full_power_bandwidth,
        check_input_range,
        check_output_swing,
    ):
        results: list[Outcome] = []
        for design in designs():
            result = check(design, spec)
            if result.passed:
                break  # one ideal set passes: the resistors can meet this check
            results.append(result)
        else:
            failing.append(max(results, key=lambda r: r.margin))
    return tuple(failing)
