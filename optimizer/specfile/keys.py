"""The spec file's keys, format version, plausibility ranges and small text helpers
(``optimizer.specfile``).
"""

from __future__ import annotations

import math
from pathlib import Path

from ..errors import quote
from ..spec import (
    Requirements,
)

#: A fraction written as a bare number this large or larger gets a warning (0.05 = 5 %): a
#: gain accuracy or tolerance that loose is rare, "0.5" meant as 0.5 % is common.
BARE_FRACTION_WARNING = 0.05

#: Ranges op-amps are made in (key: Amplifier field, unit, low, high), common practice: GBW
#: from micropower parts (~1 kHz) to the fastest (~100 GHz), slew rate from 1 V/ms to
#: 100 V/ns, offset up to 100 mV, bias current up to 10 µA, voltage noise 0.1 nV/√Hz to
#: 10 µV/√Hz, current noise up to 100 pA/√Hz; CMRR and open-loop gain at least 40 dB.
PLAUSIBLE_AMPLIFIER: dict[str, tuple[str, str, float, float]] = {
    "cmrr": ("cmrr_db", "dB", 40.0, math.inf),
    "open_loop_gain": ("open_loop_gain_db", "dB", 40.0, math.inf),
    "gbw": ("gbw_hz", "Hz", 1e3, 1e11),
    "slew_rate": ("slew_v_per_s", "V/s", 1e3, 1e11),
    "offset_voltage": ("offset_v", "V", 0.0, 0.1),
    "bias_current": ("bias_a", "A", 0.0, 1e-5),
    "voltage_noise": ("voltage_noise_v_rthz", "V/√Hz", 1e-10, 1e-5),
    "current_noise": ("current_noise_a_rthz", "A/√Hz", 0.0, 1e-10),
}

#: Operating temperatures outside this range (°C) get a warning: resistor and op-amp data
#: cover about -55 °C to +200 °C (common practice); beyond is likely a unit mistake.
PLAUSIBLE_TEMPERATURE_C = (-200.0, 300.0)


def _is_bare_number(text: object) -> bool:
    """True for a plain number such as ``0.5`` or ``1e-3`` (no unit, no % or ppm)."""
    try:
        float(str(text).strip())
    except ValueError:
        return False
    return True


#: The spec-file format version this module reads (the ``quartet_spec`` key).
FORMAT_VERSION = 1

#: At most this many problems are listed in one error; the rest are counted.
MAX_LISTED_PROBLEMS = 25


_SPAN_FORMS = (
    "from_negative and from_positive (distances from the rails) or min and max (absolute volts)"
)


TOP_KEYS = (
    "quartet_spec",
    "title",
    "amplifier",
    "rails",
    "signal",
    "reference",
    "requirements",
    "preferences",
)
AMPLIFIER_KEYS = (
    "label",
    "cmrr",
    "open_loop_gain",
    "gbw",
    "slew_rate",
    "offset_voltage",
    "bias_current",
    "offset_current",
    "voltage_noise",
    "current_noise",
    "input_range",
    "output_swing",
)
SPAN_KEYS = ("from_negative", "from_positive", "min", "max")
RAILS_KEYS = ("positive", "negative")
SIGNAL_KEYS = ("differential", "common_mode", "max_frequency", "source_impedance", "mains_derived")
SOURCE_KEYS = ("min", "max", "imbalance")
REFERENCE_KEYS = ("voltage", "impedance")
REQUIREMENT_KEYS = (
    "gain",
    "gain_accuracy",
    "cmrr_floor",
    "cmrr_basis",
    "yield",
    "temperature",
    "operating_life",
    "drift_model",
    "min_input_impedance",
    "output_noise",
)
NOISE_KEYS = ("max", "band")
BAND_KEYS = ("low", "high")
PREFERENCE_KEYS = (
    "topologies",
    "catalogs",
    "builtin_catalogs",
    "stock",
    "stock_penalty",
    "alternatives",
    "objective",
    "cost_cap",
    "placement_cost",
    "line_cost",
    "monte_carlo",
    "same_lot_tracking",
    "resistance_range",
)
MONTE_CARLO_KEYS = ("samples", "seed", "distribution", "sigma_k")

#: Default lower edge of the output-noise band when the spec gives none (Hz): the model's.
DEFAULT_NOISE_BAND_LOW_HZ: float = Requirements.noise_band_low_hz
#: Label of an amplifier whose spec gives none.
DEFAULT_AMPLIFIER_LABEL = "op-amp"


def _path_text(path: Path) -> str:
    """A path for a message: as it is up to 200 characters, cut to one line beyond."""
    text = str(path)
    return text if len(text) <= 200 else quote(text)
