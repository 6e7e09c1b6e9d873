"""The spec-file loader: values in SI units, and every refusal located by file, line and key.

Sources: SI prefixes (k, M, µ, n, p, f) are the BIPM SI Brochure, 9th edition (2019), table 7,
taken here from ``scipy.constants``; the Julian year of 365.25 days is the IAU's (also
``scipy.constants.Julian_year``); which plain YAML words are booleans, integers and nulls is
the YAML 1.1 type repository (yaml.org/type/bool.html, int.html, null.html), which PyYAML's
safe loader follows. The wording of the error messages is Quartet's own: those tests pin the
exact text, file, line and dotted key path of each message.
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable
from pathlib import Path

import pytest
import scipy.constants as si
from helpers import EXAMPLES
from rich.console import Console

from optimizer.cli import main
from optimizer.design import Topology
from optimizer.errors import SpecError
from optimizer.report.spec import render_spec_summary
from optimizer.spec import CmrrBasis, Distribution, Objective, Spec, StockPolicy
from optimizer.specfile import load_spec, parse_spec_text

# A valid spec; the line numbers in the expected messages below refer to this text.
BASE = """\
quartet_spec: 1
title: "test spec"
amplifier:
  label: "test op-amp"
  cmrr: 100 dB
  open_loop_gain: 120 dB
  gbw: 1 MHz
  slew_rate: 0.5 V/us
  offset_voltage: 50 uV
  bias_current: 1 nA
  offset_current: 0.5 nA
  voltage_noise: 20 nV/rtHz
  current_noise: 0.1 pA/rtHz
  input_range: {from_negative: -0.1 V, from_positive: 1.5 V}
  output_swing: {from_negative: 50 mV, from_positive: 50 mV}
rails: {positive: 5 V, negative: 0 V}
signal:
  differential: {min: -0.1 V, max: 0.1 V}
  common_mode: {min: -0.1 V, max: 0.5 V}
  max_frequency: 20 kHz
  source_impedance: {min: 0, max: 10, imbalance: 1}
  mains_derived: false
reference:
  voltage: 2.5 V
  impedance: 0
requirements:
  gain: 20
  gain_accuracy: 0.5 %
  cmrr_floor: 80 dB
  cmrr_basis: worst_case
  temperature: {min: -40 °C, max: 125 °C}
  operating_life: 10 years
  min_input_impedance: 10k
  output_noise: {max: 100 uV, band: {low: 0.1 Hz, high: 10 kHz}}
preferences:
  topologies: [four_discrete, quad_network]
  builtin_catalogs: true
  stock: any
  alternatives: 10
  objective: lowest_cost
  placement_cost: 0.02
  line_cost: 0.05
  monte_carlo: {samples: 1000, seed: 1, distribution: normal, sigma_k: 3}
  same_lot_tracking: false
"""

TOPOLOGIES = "four_discrete, quad_network, equal_pairs, divider_pairs, pair_plus_discrete"
AMPLIFIER_KEYS = (
    "label, cmrr, open_loop_gain, gbw, slew_rate, offset_voltage, bias_current, "
    "offset_current, voltage_noise, current_noise, input_range, output_swing"
)
TOP_KEYS = "quartet_spec, title, amplifier, rails, signal, reference, requirements, preferences"


def edit(old: str, new: str, text: str = BASE) -> str:
    """``text`` with the one occurrence of ``old`` replaced (the test fails if not exactly one)."""
    assert text.count(old) == 1, f"{old!r} occurs {text.count(old)} times"
    return text.replace(old, new)


def refusal(text: str, path: str = "t.yaml") -> str:
    with pytest.raises(SpecError) as caught:
        parse_spec_text(text, path)
    return str(caught.value)


# ---------------------------------------------------------------------------------------------
# values read into SI units
# ---------------------------------------------------------------------------------------------


def test_base_spec_values_in_si_units() -> None:
    """Each token against its SI value (prefixes: SI Brochure table 7 via scipy.constants)."""
    spec = parse_spec_text(BASE, "t.yaml")
    amp = spec.amplifier
    assert spec.title == "test spec"
    assert spec.source_path == "t.yaml"
    assert amp.name == "test op-amp"
    assert amp.cmrr_db == 100.0
    assert amp.open_loop_gain_db == 120.0
    assert amp.gbw_hz == pytest.approx(1 * si.mega, rel=1e-15)
    assert amp.slew_v_per_s == pytest.approx(0.5 / si.micro, rel=1e-15)
    assert amp.offset_v == pytest.approx(50 * si.micro, rel=1e-15)
    assert amp.bias_a == pytest.approx(1 * si.nano, rel=1e-15)
    assert amp.offset_current_a == pytest.approx(0.5 * si.nano, rel=1e-15)
    assert amp.voltage_noise_v_rthz == pytest.approx(20 * si.nano, rel=1e-15)
    assert amp.current_noise_a_rthz == pytest.approx(0.1 * si.pico, rel=1e-15)
    # RailSpan: relative, [V- + low, V+ - high]
    assert amp.input_span.relative and amp.output_span.relative
    assert amp.input_span.resolve(0.0, 5.0) == pytest.approx((-0.1, 3.5))
    assert amp.output_span.resolve(0.0, 5.0) == pytest.approx((50 * si.milli, 5.0 - 50 * si.milli))
    assert (spec.rails.positive_v, spec.rails.negative_v) == (5.0, 0.0)
    sig = spec.signal
    assert (sig.differential_min_v, sig.differential_max_v) == pytest.approx((-0.1, 0.1))
    assert (sig.common_mode_min_v, sig.common_mode_max_v) == pytest.approx((-0.1, 0.5))
    assert sig.max_frequency_hz == pytest.approx(20 * si.kilo, rel=1e-15)
    assert (sig.source.min_ohm, sig.source.max_ohm, sig.source.imbalance_ohm) == (0.0, 10.0, 1.0)
    assert sig.ac is False
    ref = spec.reference
    assert (ref.voltage_min_v, ref.voltage_max_v) == (2.5, 2.5)
    assert (ref.impedance_min_ohm, ref.impedance_max_ohm) == (0.0, 0.0)
    req = spec.requirements
    assert req.gain == 20.0
    assert req.gain_accuracy == pytest.approx(0.005, rel=1e-15)  # 0.5 % = 0.5/100
    assert req.cmrr_floor_db == 80.0
    assert req.cmrr_basis is CmrrBasis.WORST_CASE
    assert (req.temp_min_c, req.temp_max_c) == (-40.0, 125.0)
    assert req.life_s == pytest.approx(10 * si.Julian_year, rel=1e-15)
    assert req.min_input_impedance_ohm == pytest.approx(10 * si.kilo, rel=1e-15)
    assert req.max_output_noise_v_rms == pytest.approx(100 * si.micro, rel=1e-15)
    assert (req.noise_band_low_hz, req.noise_band_high_hz) == pytest.approx((0.1, 10 * si.kilo))
    prefs = spec.preferences
    assert prefs.topologies == (Topology.DISCRETE, Topology.QUAD)
    assert prefs.catalogs == ()
    assert prefs.use_builtin_catalogs is True
    assert prefs.stock is StockPolicy.ANY
    assert prefs.objective is Objective.COST
    assert (prefs.alternatives, prefs.placement_cost, prefs.line_cost) == (10, 0.02, 0.05)
    assert (prefs.samples, prefs.seed, prefs.distribution, prefs.sigma_k) == (
        1000,
        1,
        Distribution.NORMAL,
        3.0,
    )
    assert prefs.same_lot_tracking is False


def test_optional_keys_take_their_defaults() -> None:
    text = BASE.split("preferences:")[0]
    text = edit("  offset_current: 0.5 nA\n", "", text)
    text = edit("  source_impedance: {min: 0, max: 10, imbalance: 1}\n", "", text)
    text = edit("  mains_derived: false\n", "", text)
    text = edit("  impedance: 0\n", "", text)
    text = edit("  cmrr_basis: worst_case\n", "", text)
    text = edit("  operating_life: 10 years\n", "", text)
    text = edit("  min_input_impedance: 10k\n", "", text)
    text = edit("  output_noise: {max: 100 uV, band: {low: 0.1 Hz, high: 10 kHz}}\n", "", text)
    text = edit('title: "test spec"\n', "", text)
    text = edit('  label: "test op-amp"\n', "", text)
    spec = parse_spec_text(text, "t.yaml")
    assert spec.title is None
    assert spec.amplifier.name == "op-amp"
    assert spec.amplifier.offset_current_a is None
    assert spec.signal.source.max_ohm == 0.0 and spec.signal.ac is False
    assert spec.reference.impedance_max_ohm == 0.0
    req = spec.requirements
    assert req.cmrr_basis is CmrrBasis.WORST_CASE
    assert (req.life_s, req.min_input_impedance_ohm, req.max_output_noise_v_rms) == (0.0, 0.0, None)
    assert spec.preferences == type(spec.preferences)()


def test_noise_band_high_defaults_to_signal_max_frequency() -> None:
    spec = parse_spec_text(edit("band: {low: 0.1 Hz, high: 10 kHz}", "band: {low: 1 Hz}"), "t.yaml")
    assert spec.requirements.noise_band_low_hz == 1.0
    assert spec.requirements.noise_band_high_hz == spec.signal.max_frequency_hz == 20e3


@pytest.mark.parametrize(
    ("old", "new", "check"),
    [
        ("cmrr: 100 dB", "cmrr: ideal", lambda s: math.isinf(s.amplifier.cmrr_db)),
        (
            "open_loop_gain: 120 dB",
            "open_loop_gain: ideal",
            lambda s: math.isinf(s.amplifier.open_loop_gain),
        ),
        (
            "input_range: {from_negative: -0.1 V, from_positive: 1.5 V}",
            "input_range: {min: 0 V, max: 3.5 V}",
            lambda s: (
                not s.amplifier.input_span.relative
                and s.amplifier.input_span.resolve(-5, 5) == (0, 3.5)
            ),
        ),
        (
            "voltage: 2.5 V",
            "voltage: {min: 2.4 V, max: 2.6 V}",
            lambda s: (s.reference.voltage_min_v, s.reference.voltage_max_v) == (2.4, 2.6),
        ),
        (
            "impedance: 0",
            "impedance: {min: 0, max: 1k}",
            lambda s: s.reference.impedance_max_ohm == 1e3,
        ),
        ("impedance: 0", "impedance: 4k99", lambda s: s.reference.impedance_min_ohm == 4990.0),
        (
            "cmrr_basis: worst_case",
            "cmrr_basis: yield\n  yield: 99.9 %",
            lambda s: (
                s.requirements.cmrr_basis is CmrrBasis.YIELD
                and s.requirements.yield_target == pytest.approx(0.999, rel=1e-15)
            ),
        ),
        (
            "stock: any",
            "stock: prefer\n  stock_penalty: 0.5",
            lambda s: (
                s.preferences.stock is StockPolicy.PREFER and s.preferences.stock_penalty == 0.5
            ),
        ),
        (
            "objective: lowest_cost",
            "objective: most_cmrr_margin\n  cost_cap: 5.0",
            lambda s: (
                s.preferences.objective is Objective.CMRR_MARGIN and s.preferences.cost_cap == 5.0
            ),
        ),
        (
            "distribution: normal, sigma_k: 3",
            "distribution: uniform",
            lambda s: s.preferences.distribution is Distribution.UNIFORM,
        ),
        # a single topology may be written without brackets
        (
            "topologies: [four_discrete, quad_network]",
            "topologies: quad_network",
            lambda s: s.preferences.topologies == (Topology.QUAD,),
        ),
        (
            "same_lot_tracking: false",
            "resistance_range: {min: 1k, max: 100k}",
            lambda s: (
                (s.preferences.resistance_min_ohm, s.preferences.resistance_max_ohm) == (1e3, 1e5)
            ),
        ),
        # YAML 1.1 (yaml.org/type/bool.html): "yes" is a boolean true
        ("mains_derived: false", "mains_derived: yes", lambda s: s.signal.ac is True),
        # YAML 1.1 (yaml.org/type/int.html): "_" separates digit groups
        ("samples: 1000", "samples: 100_000", lambda s: s.preferences.samples == 100_000),
        # YAML merge key (yaml.org/type/merge.html), as safe_load reads it
        (
            "rails: {positive: 5 V, negative: 0 V}",
            "rails: {<<: {positive: 5 V}, negative: 0 V}",
            lambda s: s.rails.positive_v == 5.0,
        ),
    ],
)
def test_accepted_forms(old: str, new: str, check: Callable[[Spec], bool]) -> None:
    assert check(parse_spec_text(edit(old, new), "t.yaml"))


# ---------------------------------------------------------------------------------------------
# every refusal, exactly as the user sees it
# ---------------------------------------------------------------------------------------------

REFUSALS = [
    # unknown keys
    (
        "unknown key, close match",
        "  gbw: 1 MHz",
        "  gwb: 1 MHz",
        "t.yaml:7: amplifier.gwb: unknown key 'gwb'; did you mean 'gbw'?",
    ),
    (
        "unknown key, no close match",
        "  gbw: 1 MHz\n",
        "  gbw: 1 MHz\n  colour: blue\n",
        f"t.yaml:8: amplifier.colour: unknown key 'colour'; valid keys here: {AMPLIFIER_KEYS}",
    ),
    (
        "unknown top-level key",
        'title: "test spec"',
        'titel: "test spec"',
        "t.yaml:2: titel: unknown key 'titel'; did you mean 'title'?",
    ),
    (
        "unknown key in a nested mapping",
        "{samples: 1000, seed: 1,",
        "{sample: 1000, seed: 1,",
        "t.yaml:43: preferences.monte_carlo.sample: unknown key 'sample'; did you mean 'samples'?",
    ),
    (
        "key given twice",
        "  gain: 20\n",
        "  gain: 20\n  gain: 21\n",
        "t.yaml:28: requirements.gain: key 'gain' is given twice in this mapping",
    ),
    # missing required keys: reported at the line of the parent mapping's key
    (
        "missing required key",
        "  gain: 20\n",
        "",
        "t.yaml:26: requirements.gain: required key is missing; "
        "expected a gain above zero such as 20 (a plain ratio)",
    ),
    (
        "common mode range must be given",
        "  common_mode: {min: -0.1 V, max: 0.5 V}\n",
        "",
        "t.yaml:17: signal.common_mode: required key is missing; "
        "expected min and max in volts, such as {min: -1 V, max: 1 V}",
    ),
    (
        "missing end of a range",
        "temperature: {min: -40 °C, max: 125 °C}",
        "temperature: {min: -40 °C}",
        "t.yaml:31: requirements.temperature.max: required key is missing; "
        "expected a temperature such as -40 °C, 125C or 233.15 K",
    ),
    (
        "missing section",
        "rails: {positive: 5 V, negative: 0 V}\n",
        "",
        "t.yaml:1: rails: required section is missing; "
        "expected a mapping with keys positive, negative",
    ),
    (
        "missing format version",
        "quartet_spec: 1\n",
        "",
        "t.yaml:1: quartet_spec: required key is missing; expected the format version, 1",
    ),
    (
        "wrong format version",
        "quartet_spec: 1",
        "quartet_spec: 2",
        "t.yaml:1: quartet_spec: unsupported format version 2; this Quartet reads format 1",
    ),
    (
        "format version not a number",
        "quartet_spec: 1",
        "quartet_spec: one",
        "t.yaml:1: quartet_spec: expected the format version, 1, got 'one'",
    ),
    # unit tokens (UnitError re-raised with its location)
    (
        "bad unit token",
        "cmrr_floor: 80 dB",
        "cmrr_floor: 80 dBB",
        "t.yaml:29: requirements.cmrr_floor: cannot read '80 dBB' (unknown suffix 'dBB'): "
        "expected a level in decibels such as 80 dB",
    ),
    (
        "bad unit prefix",
        "gbw: 1 MHz",
        "gbw: 1 MHzz",
        "t.yaml:7: amplifier.gbw: cannot read '1 MHzz' (unknown suffix 'MHzz'): "
        "expected a frequency above zero such as 1 MHz or 10 kHz",
    ),
    (
        "bad unit inside a range",
        "max_frequency: 20 kHz",
        "max_frequency: 0 Hz",
        "t.yaml:20: signal.max_frequency: cannot read '0 Hz' (zero is not allowed): "
        "expected a frequency above zero such as 1 MHz or 10 kHz",
    ),
    (
        "a list where a value belongs",
        "gbw: 1 MHz",
        "gbw: [1 MHz]",
        "t.yaml:7: amplifier.gbw: "
        "expected a frequency above zero such as 1 MHz or 10 kHz, got a list",
    ),
    (
        "no value",
        "slew_rate: 0.5 V/us",
        "slew_rate: ~",
        "t.yaml:8: amplifier.slew_rate: "
        "no value given; expected a slew rate above zero such as 0.5 V/us",
    ),
    (
        "negative impedance",
        "impedance: 0",
        "impedance: -5",
        "t.yaml:25: reference.impedance: cannot read -5 (below zero): "
        "expected a resistance of zero or more such as 0, 100R or 4.99k",
    ),
    (
        "gain not a number",
        "gain: 20",
        "gain: twenty",
        "t.yaml:27: requirements.gain: "
        "expected a gain above zero such as 20 (a plain ratio), got 'twenty'",
    ),
    (
        "negative offset bound",
        "offset_voltage: 50 uV",
        "offset_voltage: -50 uV",
        "t.yaml:9: amplifier.offset_voltage: "
        "expected a bound of zero or more (a magnitude), got '-50 uV'",
    ),
    (
        "not a boolean",
        "mains_derived: false",
        "mains_derived: maybe",
        "t.yaml:22: signal.mains_derived: expected true or false, got 'maybe'",
    ),
    (
        "section not a mapping",
        "rails: {positive: 5 V, negative: 0 V}",
        "rails: 5 V",
        "t.yaml:16: rails: expected a mapping with keys positive, negative, got a single value",
    ),
    # min <= max everywhere
    (
        "differential min above max",
        "differential: {min: -0.1 V, max: 0.1 V}",
        "differential: {min: 0.1 V, max: -0.1 V}",
        "t.yaml:18: signal.differential.min: min 100 mV is above max -100 mV",
    ),
    (
        "temperature min above max",
        "temperature: {min: -40 °C, max: 125 °C}",
        "temperature: {min: 130 °C, max: 125 °C}",
        "t.yaml:31: requirements.temperature.min: min 130 °C is above max 125 °C",
    ),
    (
        "source impedance min above max",
        "{min: 0, max: 10, imbalance: 1}",
        "{min: 20, max: 10, imbalance: 1}",
        "t.yaml:21: signal.source_impedance.min: min 20 Ω is above max 10 Ω",
    ),
    (
        "source imbalance beyond the range",
        "{min: 0, max: 10, imbalance: 1}",
        "{min: 0, max: 10, imbalance: 11}",
        "t.yaml:21: signal.source_impedance.imbalance: 11 Ω is more than max - min = 10 Ω; "
        "two legs inside [min, max] cannot differ by more",
    ),
    (
        "reference impedance min above max",
        "impedance: 0",
        "impedance: {min: 2k, max: 1k}",
        "t.yaml:25: reference.impedance.min: min 2 kΩ is above max 1 kΩ",
    ),
    (
        "noise band low not below high",
        "band: {low: 0.1 Hz, high: 10 kHz}",
        "band: {low: 20 kHz, high: 10 kHz}",
        "t.yaml:34: requirements.output_noise.band.low: "
        "band low 20 kHz is not below band high 10 kHz",
    ),
    (
        "noise band low above the default high",
        "band: {low: 0.1 Hz, high: 10 kHz}",
        "band: {low: 30 kHz}",
        "t.yaml:34: requirements.output_noise.band.low: band low 30 kHz is not below "
        "band high 20 kHz (signal.max_frequency)",
    ),
    (
        "resistance range inverted",
        "same_lot_tracking: false",
        "resistance_range: {min: 1M, max: 100k}",
        "t.yaml:44: preferences.resistance_range.min: min 1 MΩ is above max 100 kΩ",
    ),
    # physically impossible combinations
    (
        "rails inverted",
        "rails: {positive: 5 V, negative: 0 V}",
        "rails: {positive: 0 V, negative: 5 V}",
        "t.yaml:16: rails.negative: 5 V is not below positive 0 V",
    ),
    (
        "positive rail not above the default negative rail",
        "rails: {positive: 5 V, negative: 0 V}",
        "rails: {positive: -5 V}",
        "t.yaml:16: rails: negative: 0 V is not below positive -5 V",
    ),
    (
        "reference outside the rails",
        "voltage: 2.5 V",
        "voltage: 5.5 V",
        "t.yaml:24: reference.voltage: 5.5 V is outside the rails (0 V to 5 V)",
    ),
    (
        "reference range partly outside the rails",
        "voltage: 2.5 V",
        "voltage: {min: -1 V, max: 2.5 V}",
        "t.yaml:24: reference.voltage.min: -1 V is outside the rails (0 V to 5 V)",
    ),
    (
        "input range empty with these rails",
        "input_range: {from_negative: -0.1 V, from_positive: 1.5 V}",
        "input_range: {from_negative: 3 V, from_positive: 3 V}",
        "t.yaml:14: amplifier.input_range: with rails 0 V and 5 V this range (3 V to 2 V) is empty",
    ),
    (
        "input range in both forms",
        "input_range: {from_negative: -0.1 V, from_positive: 1.5 V}",
        "input_range: {from_negative: 0 V, max: 3 V}",
        "t.yaml:14: amplifier.input_range: give either from_negative and from_positive "
        "(distances from the rails) or min and max (absolute volts), not both",
    ),
    (
        "absolute input range inverted",
        "input_range: {from_negative: -0.1 V, from_positive: 1.5 V}",
        "input_range: {min: 3 V, max: 1 V}",
        "t.yaml:14: amplifier.input_range.min: min 3 V is not below max 1 V",
    ),
    (
        "output swing beyond the rails (absolute)",
        "output_swing: {from_negative: 50 mV, from_positive: 50 mV}",
        "output_swing: {min: -1 V, max: 4.9 V}",
        "t.yaml:15: amplifier.output_swing.min: -1 V is below the negative rail 0 V",
    ),
    (
        "output swing beyond the rails (relative)",
        "output_swing: {from_negative: 50 mV, from_positive: 50 mV}",
        "output_swing: {from_negative: -50 mV, from_positive: 50 mV}",
        "t.yaml:15: amplifier.output_swing.from_negative: -50 mV would put the output beyond the "
        "rail; expected zero or more",
    ),
    (
        "yield without the yield basis",
        "  cmrr_basis: worst_case\n",
        "  cmrr_basis: worst_case\n  yield: 99.9 %\n",
        "t.yaml:31: requirements.yield: a yield target is only used with cmrr_basis: yield; "
        "set cmrr_basis: yield or remove this key",
    ),
    (
        "yield basis without a yield",
        "cmrr_basis: worst_case",
        "cmrr_basis: yield",
        "t.yaml:26: requirements.yield: required key is missing; "
        "expected a fraction such as 99.9 % (required with cmrr_basis: yield)",
    ),
    (
        "stock penalty without stock: prefer",
        "  line_cost: 0.05\n",
        "  line_cost: 0.05\n  stock_penalty: 0.5\n",
        "t.yaml:43: preferences.stock_penalty: only used with stock: prefer; "
        "set stock: prefer or remove this key",
    ),
    (
        "stock: prefer without a penalty",
        "stock: any",
        "stock: prefer",
        "t.yaml:35: preferences.stock_penalty: required key is missing; "
        "expected a relative cost of zero or more such as 0.5 (required with stock: prefer)",
    ),
    (
        "cost cap without the margin objective",
        "  line_cost: 0.05\n",
        "  line_cost: 0.05\n  cost_cap: 5\n",
        "t.yaml:43: preferences.cost_cap: only used with objective: most_cmrr_margin; "
        "change the objective or remove this key",
    ),
    (
        "sigma_k with a uniform distribution",
        "distribution: normal",
        "distribution: uniform",
        "t.yaml:43: preferences.monte_carlo.sigma_k: only used with distribution: normal "
        "(the tolerance spans sigma_k standard deviations); remove this key",
    ),
    # values the dataclasses refuse (ModelError re-raised with its location)
    (
        "gain not above zero",
        "gain: 20",
        "gain: -20",
        "t.yaml:27: requirements.gain: expected a gain above zero, got -20",
    ),
    (
        "gain accuracy of zero",
        "gain_accuracy: 0.5 %",
        "gain_accuracy: 0 %",
        "t.yaml:28: requirements.gain_accuracy: expected a fraction between 0 and 100 %, got 0",
    ),
    (
        "amplifier CMRR not above 0 dB",
        "cmrr: 100 dB",
        "cmrr: -3 dB",
        "t.yaml:5: amplifier.cmrr: expected a level above 0 dB, got -3.0",
    ),
    (
        "alternatives out of range",
        "alternatives: 10",
        "alternatives: 0",
        "t.yaml:39: preferences.alternatives: expected a whole number from 1 to 1000, got 0",
    ),
    (
        "Monte Carlo samples out of range",
        "samples: 1000",
        "samples: 10",
        "t.yaml:43: preferences.monte_carlo.samples: "
        "expected a whole number from 100 to 10,000,000, got 10",
    ),
    (
        "negative line cost",
        "line_cost: 0.05",
        "line_cost: -0.05",
        "t.yaml:42: preferences.line_cost: expected zero or more",
    ),
    # enumerations list the valid values
    (
        "bad topology",
        "topologies: [four_discrete, quad_network]",
        "topologies: [four_discrete, quad_netwrk]",
        f"t.yaml:36: preferences.topologies[1]: 'quad_netwrk' is not one of {TOPOLOGIES}; "
        "did you mean 'quad_network'?",
    ),
    (
        "topology listed twice",
        "topologies: [four_discrete, quad_network]",
        "topologies: [four_discrete, four_discrete]",
        "t.yaml:36: preferences.topologies[1]: 'four_discrete' is listed twice",
    ),
    (
        "empty topology list",
        "topologies: [four_discrete, quad_network]",
        "topologies: []",
        f"t.yaml:36: preferences.topologies: expected at least one of {TOPOLOGIES}",
    ),
    (
        "bad objective",
        "objective: lowest_cost",
        "objective: cheapest",
        "t.yaml:40: preferences.objective: 'cheapest' is not one of "
        "lowest_cost, most_cmrr_margin, fewest_placements",
    ),
    (
        "bad stock policy",
        "stock: any",
        "stock: sometimes",
        "t.yaml:38: preferences.stock: 'sometimes' is not one of any, only, prefer",
    ),
    (
        # YAML 1.1 reads "no" as a boolean; the message quotes it as written
        "stock policy a YAML boolean",
        "stock: any",
        "stock: no",
        "t.yaml:38: preferences.stock: 'no' is not one of any, only, prefer",
    ),
    (
        "bad CMRR basis",
        "cmrr_basis: worst_case",
        "cmrr_basis: worstcase",
        "t.yaml:30: requirements.cmrr_basis: 'worstcase' is not one of worst_case, yield; "
        "did you mean 'worst_case'?",
    ),
    (
        "bad distribution",
        "distribution: normal, sigma_k: 3",
        "distribution: gaussian",
        "t.yaml:43: preferences.monte_carlo.distribution: 'gaussian' is not one of uniform, normal",
    ),
    # only safe YAML: no Python objects
    (
        "python tag on a value",
        "gain: 20",
        "gain: !!python/name:os.system",
        "t.yaml:27: requirements.gain: cannot read this value: could not determine a constructor "
        "for the tag 'tag:yaml.org,2002:python/name:os.system'",
    ),
    (
        "python tag on a mapping",
        "rails: {positive: 5 V, negative: 0 V}",
        "rails: !!python/object:os.system {positive: 5 V, negative: 0 V}",
        "t.yaml:16: rails: the tag 'tag:yaml.org,2002:python/object:os.system' is not allowed "
        "here; write a plain mapping",
    ),
]


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [case[1:] for case in REFUSALS],
    ids=[case[0] for case in REFUSALS],
)
def test_refusal_is_located(old: str, new: str, message: str) -> None:
    assert refusal(edit(old, new)) == message


WHOLE_FILE_REFUSALS = [
    (
        "YAML syntax error",
        edit("gain: 20", "gain: [20"),
        "t.yaml:28: not valid YAML: "
        "expected ',' or ']', but got ':' (while parsing a flow sequence)",
    ),
    (
        "tab indentation",
        edit("  gain: 20", "\tgain: 20"),
        "t.yaml:27: not valid YAML: found character '\\t' that cannot start any token "
        "(while scanning for the next token)",
    ),
    (
        "two documents",
        BASE + "---\nquartet_spec: 1\n",
        "t.yaml:45: not valid YAML: expected a single document in the stream, "
        "but found another document",
    ),
    (
        "top level a list",
        "- quartet_spec: 1\n- rails: {positive: 5 V}\n",
        f"t.yaml:1: expected a mapping of sections at the top level ({TOP_KEYS}), got a list",
    ),
    (
        "top level a single value",
        "quartet spec version 1\n",
        f"t.yaml:1: expected a mapping of sections at the top level ({TOP_KEYS}), "
        "got a single value",
    ),
    (
        "empty file",
        "# nothing but a comment\n",
        "t.yaml:1: the file is empty; expected a mapping starting with quartet_spec: 1",
    ),
    (
        "some other YAML file",
        "# a catalog, not a spec\nnetworks:\n  - part_id: X1\n",
        "t.yaml:2: not a Quartet spec file: expected quartet_spec: 1 and the sections amplifier, "
        "rails, signal, reference, requirements, preferences (top-level keys found: networks)",
    ),
    (
        "several problems at once, sorted by line",
        edit("cmrr_floor: 80 dB", "cmrr_floor: 80 dBB", edit("gbw: 1 MHz", "gwb: 1 MHz")),
        "t.yaml: 2 problems\n"
        "t.yaml:7: amplifier.gwb: unknown key 'gwb'; did you mean 'gbw'?\n"
        "t.yaml:29: requirements.cmrr_floor: cannot read '80 dBB' (unknown suffix 'dBB'): "
        "expected a level in decibels such as 80 dB",
    ),
]


@pytest.mark.parametrize(
    ("text", "message"),
    [case[1:] for case in WHOLE_FILE_REFUSALS],
    ids=[case[0] for case in WHOLE_FILE_REFUSALS],
)
def test_whole_file_refusal(text: str, message: str) -> None:
    assert refusal(text) == message


def test_combined_error_points_at_the_first_problem() -> None:
    text = edit("cmrr_floor: 80 dB", "cmrr_floor: 80 dBB", edit("gbw: 1 MHz", "gwb: 1 MHz"))
    with pytest.raises(SpecError) as caught:
        parse_spec_text(text, "t.yaml")
    assert (caught.value.path, caught.value.line, caught.value.key) == (
        "t.yaml",
        7,
        "amplifier.gwb",
    )


def test_single_error_fields() -> None:
    with pytest.raises(SpecError) as caught:
        parse_spec_text(edit("cmrr_floor: 80 dB", "cmrr_floor: 80 dBB"), "t.yaml")
    error = caught.value
    assert (error.path, error.line, error.key) == ("t.yaml", 29, "requirements.cmrr_floor")


# ---------------------------------------------------------------------------------------------
# files: missing, unreadable, catalogs relative to the spec
# ---------------------------------------------------------------------------------------------


def test_missing_file(tmp_path: Path) -> None:
    path = tmp_path / "nope.yaml"
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    assert str(caught.value) == f"{path}: file not found"


def test_folder_instead_of_file(tmp_path: Path) -> None:
    with pytest.raises(SpecError) as caught:
        load_spec(tmp_path)
    assert str(caught.value) == f"{tmp_path}: is a folder, not a spec file"


def test_not_utf8(tmp_path: Path) -> None:
    path = tmp_path / "latin1.yaml"
    path.write_bytes(BASE.replace('"test spec"', '"caf\u00e9"').encode("latin-1"))
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    assert str(caught.value) == f"{path}:2: not UTF-8 text"


def test_load_spec_reads_a_file(tmp_path: Path) -> None:
    path = tmp_path / "spec.yaml"
    path.write_text(BASE, encoding="utf-8")
    spec = load_spec(path)
    assert spec == parse_spec_text(BASE, str(path))
    assert spec.source_path == str(path)


def test_catalog_paths_resolve_against_the_spec_folder(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    folder = tmp_path / "project"
    (folder / "parts").mkdir(parents=True)
    (folder / "stock.csv").write_text("part_id\n", encoding="utf-8")
    (folder / "parts" / "nets.yaml").write_text("networks: []\n", encoding="utf-8")
    spec_path = folder / "spec.yaml"
    spec_path.write_text(
        edit("stock: any", "stock: any\n  catalogs: [stock.csv, parts/nets.yaml]"), encoding="utf-8"
    )
    monkeypatch.chdir(tmp_path)  # relative to the spec file, not to the working folder
    spec = load_spec(spec_path)
    assert spec.preferences.catalogs == (
        str(folder / "stock.csv"),
        str(folder / "parts" / "nets.yaml"),
    )


def test_catalog_not_found(tmp_path: Path) -> None:
    spec_path = tmp_path / "spec.yaml"
    spec_path.write_text(
        edit("stock: any", "stock: any\n  catalogs: [house.csv]"), encoding="utf-8"
    )
    with pytest.raises(SpecError) as caught:
        load_spec(spec_path)
    assert str(caught.value) == (
        f"{spec_path}:39: preferences.catalogs[0]: "
        f"catalog file not found: {tmp_path / 'house.csv'} "
        "(paths are relative to the spec file's folder)"
    )


# ---------------------------------------------------------------------------------------------
# the example specs
# ---------------------------------------------------------------------------------------------

MAIN_EXAMPLES = ["motor_shunt", "adc_driver", "bridge_front_end", "industrial_input"]
#: The stock variant of each main example; the bridge's is the diagnosis demo (nothing in the
#: stockroom meets it), so its name says so.
STOCK_VARIANTS = {
    name: f"{name}_stock_infeasible" if name == "bridge_front_end" else f"{name}_stock"
    for name in MAIN_EXAMPLES
}
NAMED_EXAMPLES = [*MAIN_EXAMPLES, *STOCK_VARIANTS.values(), "mains_monitor"]


def _spec_examples() -> list[Path]:
    """Every YAML file in examples/ that declares itself a spec (catalogs live there too)."""
    return sorted(
        p for p in EXAMPLES.glob("*.y*ml") if "quartet_spec:" in p.read_text(encoding="utf-8")
    )


def test_named_examples_exist() -> None:
    names = {p.stem for p in _spec_examples()}
    assert set(NAMED_EXAMPLES) <= names


@pytest.mark.parametrize("path", _spec_examples(), ids=lambda p: p.name)
def test_every_example_loads(path: Path) -> None:
    spec = load_spec(path)
    assert spec.title
    for catalog in spec.preferences.catalogs:
        assert Path(catalog).is_file()


@pytest.mark.parametrize("name", MAIN_EXAMPLES)
def test_stock_variant_differs_only_in_preferences(name: str) -> None:
    main_spec = load_spec(EXAMPLES / f"{name}.yaml")
    stock_spec = load_spec(EXAMPLES / f"{STOCK_VARIANTS[name]}.yaml")
    for section in ("amplifier", "rails", "signal", "reference", "requirements"):
        assert getattr(stock_spec, section) == getattr(main_spec, section)
    assert stock_spec.preferences.stock in (StockPolicy.ONLY, StockPolicy.PREFER)
    assert Path(stock_spec.preferences.catalogs[0]).name == "house_stock.csv"


def test_mains_example_is_marked_mains_derived() -> None:
    spec = load_spec(EXAMPLES / "mains_monitor.yaml")
    assert spec.signal.ac is True
    assert max(abs(spec.signal.common_mode_min_v), abs(spec.signal.common_mode_max_v)) > 60.0
    for name in MAIN_EXAMPLES:  # the others stay below 60 V and are not mains-derived
        other = load_spec(EXAMPLES / f"{name}.yaml")
        assert not other.signal.ac
        assert max(abs(other.signal.common_mode_min_v), abs(other.signal.common_mode_max_v)) < 60.0


# ---------------------------------------------------------------------------------------------
# the summary table and the command line
# ---------------------------------------------------------------------------------------------


def _console() -> Console:
    return Console(file=io.StringIO(), width=300, color_system=None)


def _text(console: Console) -> str:
    file = console.file
    assert isinstance(file, io.StringIO)
    return file.getvalue()


def test_summary_shows_the_values_read() -> None:
    out = _console()
    out.print(render_spec_summary(parse_spec_text(BASE, "t.yaml")))
    text = _text(out)
    for expected in (
        "test spec",
        "1 MHz",
        "0.5 V/µs",
        "20 nV/√Hz",
        "-100 mV to 3.5 V",
        "2.5 V",
        "±0.5 %",
        "80 dB worst case",
        "-40 °C to 125 °C",
        "10 years",
        "100 µV rms, 100 mHz to 10 kHz",
        "four_discrete, quad_network",
        "1,000 samples, seed 1",
    ):
        assert expected in text, expected


def test_summary_does_not_interpret_markup_in_user_text() -> None:
    out = _console()
    spec = parse_spec_text(edit('"test spec"', '"[bold]shunt[/bold] amp"'), "t.yaml")
    out.print(render_spec_summary(spec))
    assert "[bold]shunt[/bold] amp" in _text(out)


def test_cli_validates_an_example() -> None:
    out, err = _console(), _console()
    path = str(EXAMPLES / "motor_shunt.yaml")
    assert main(["spec", "validate", path], console=out, err=err) == 0
    assert f"valid: {path}" in _text(out).splitlines()
    assert "80 dB worst case" in _text(out)
    assert _text(err) == ""


def test_cli_reports_a_broken_spec_with_its_location(tmp_path: Path) -> None:
    path = tmp_path / "broken.yaml"
    path.write_text(edit("cmrr_floor: 80 dB", "cmrr_floor: 80 dBB"), encoding="utf-8")
    out, err = _console(), _console()
    assert main(["spec", "validate", str(path)], console=out, err=err) == 2
    assert _text(err).splitlines() == [
        f"SpecError: {path}:29: requirements.cmrr_floor: cannot read '80 dBB' (unknown suffix "
        "'dBB'): expected a level in decibels such as 80 dB"
    ]
    assert _text(out) == ""


def test_cli_error_with_markup_like_text_is_printed_verbatim(tmp_path: Path) -> None:
    path = tmp_path / "markup.yaml"
    path.write_text(edit('title: "test spec"', '"[/x]": 1'), encoding="utf-8")
    out, err = _console(), _console()
    assert main(["spec", "validate", str(path)], console=out, err=err) == 2
    assert _text(err).splitlines() == [
        f"SpecError: {path}:2: [/x]: unknown key '[/x]'; valid keys here: {TOP_KEYS}"
    ]


def test_cli_missing_spec_file(tmp_path: Path) -> None:
    out, err = _console(), _console()
    path = tmp_path / "absent.yaml"
    assert main(["spec", "validate", str(path)], console=out, err=err) == 2
    assert _text(err).splitlines() == [f"SpecError: {path}: file not found"]


# ---------------------------------------------------------------------------------------------
# comparisons that allow equality hold at their boundary (issue 15, item 2)
# ---------------------------------------------------------------------------------------------
# Float64 rounding (IEEE 754 binary64): 0.3 - 0.1 == 0.19999999999999998 and
# 977.3 - 426.7 == 550.5999999999999, so an imbalance equal to the span, written as the user
# wrote it, is a hair above the computed span; 233.15 K - 273.15 is -39.99999999999997 °C.
# Each case sits exactly at its limit (accepted) and just beyond it (refused).


@pytest.mark.parametrize(
    ("old", "new", "check"),
    [
        (
            "{min: 0, max: 10, imbalance: 1}",
            "{min: 0.1, max: 0.3, imbalance: 0.2}",
            lambda s: s.signal.source.imbalance_ohm == 0.2,
        ),
        (
            "{min: 0, max: 10, imbalance: 1}",
            "{min: 426.7, max: 977.3, imbalance: 550.6}",
            lambda s: s.signal.source.imbalance_ohm == 550.6,
        ),
        (
            "{min: 0, max: 10, imbalance: 1}",
            "{min: 10, max: 10, imbalance: 0}",
            lambda s: s.signal.source.min_ohm == s.signal.source.max_ohm == 10.0,
        ),
        (
            "temperature: {min: -40 °C, max: 125 °C}",
            "temperature: {min: 233.15 K, max: -40 °C}",
            lambda s: s.requirements.temp_min_c == s.requirements.temp_max_c == -40.0,
        ),
        (
            "output_swing: {from_negative: 50 mV, from_positive: 50 mV}",
            "output_swing: {min: 0 V, max: 5000 mV}",
            lambda s: s.amplifier.output_span.high_v == 5.0,
        ),
        (
            "voltage: 2.5 V",
            "voltage: 5000 mV",
            lambda s: s.reference.voltage_max_v == 5.0,
        ),
    ],
)
def test_limits_met_exactly_are_accepted(old: str, new: str, check: Callable[[Spec], bool]) -> None:
    assert check(parse_spec_text(edit(old, new), "t.yaml"))


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        (
            "{min: 0, max: 10, imbalance: 1}",
            "{min: 0.1, max: 0.3, imbalance: 0.201}",
            "t.yaml:21: signal.source_impedance.imbalance: 201 mΩ is more than max - min = "
            "200 mΩ; two legs inside [min, max] cannot differ by more",
        ),
        (
            "temperature: {min: -40 °C, max: 125 °C}",
            "temperature: {min: 233.16 K, max: -40 °C}",
            "t.yaml:31: requirements.temperature.min: min -39.99 °C is above max -40 °C",
        ),
        (
            "voltage: 2.5 V",
            "voltage: 5001 mV",
            "t.yaml:24: reference.voltage: 5.001 V is outside the rails (0 V to 5 V)",
        ),
    ],
)
def test_limits_exceeded_beyond_rounding_are_refused(old: str, new: str, message: str) -> None:
    assert message in refusal(edit(old, new))
