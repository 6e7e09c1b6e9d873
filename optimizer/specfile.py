"""Read a spec file (YAML) into a :class:`~optimizer.spec.Spec`.

The file is read with PyYAML's *safe* loader only: it is composed into a node tree with
``yaml.SafeLoader`` (which keeps every node's line) and each plain value is built by
``SafeConstructor`` (strings, numbers, yes/no, null); no Python object is ever constructed.
The tree is then walked key by key (:mod:`optimizer.yamlread`) against the schema below.

Every problem becomes a :class:`~optimizer.errors.SpecError` naming the file, the 1-based line
and the dotted key path (``motor.yaml:14: requirements.cmrr_floor: cannot read '80 dBB' ...``).
The loader does not stop at the first problem: every independent problem is collected and
reported together (sorted by line); values that depend on a broken one are not checked.

Schema (format version 1; see docs/reference.md for every key, its unit and its default)::

    quartet_spec: 1
    title: ...
    amplifier:    {label, cmrr, open_loop_gain, gbw, slew_rate, offset_voltage, bias_current,
                   offset_current, voltage_noise, current_noise, input_range, output_swing}
    rails:        {positive, negative}
    signal:       {differential, common_mode, max_frequency, source_impedance, mains_derived}
    reference:    {voltage, impedance}
    requirements: {gain, gain_accuracy, cmrr_floor, cmrr_basis, yield, temperature,
                   operating_life, drift_model, min_input_impedance, output_noise}
    preferences:  {topologies, catalogs, builtin_catalogs, stock, stock_penalty, alternatives,
                   objective, cost_cap, placement_cost, line_cost, monte_carlo, same_lot_tracking,
                   resistance_range}
"""

from __future__ import annotations

import math
import os
from pathlib import Path

from yaml.nodes import MappingNode, Node, ScalarNode

from .design import Topology
from .errors import ModelError, SpecError, UnitError, quote
from .inputs import YamlTrouble, compose_yaml, is_file
from .parts import Amplifier, RailSpan
from .spec import (
    MAX_SAMPLES,
    CmrrBasis,
    Distribution,
    DriftModel,
    Objective,
    Preferences,
    Rails,
    Reference,
    Requirements,
    Signal,
    SourceImpedance,
    Spec,
    StockPolicy,
)
from .units import (
    exceeds,
    format_quantity,
    format_temperature,
    parse_current,
    parse_current_noise,
    parse_db,
    parse_duration,
    parse_fraction,
    parse_frequency,
    parse_resistance,
    parse_slew_rate,
    parse_temperature,
    parse_voltage,
    parse_voltage_noise,
)
from .yamlread import (
    ZERO_OR_RESISTANCE,
    Parse,
    Read,
    Reader,
    Recorded,
    Section,
    celsius_text,
    expected_form,
    hertz_text,
    join_names,
    kind_of,
    node_line,
    ohms_text,
    read_document,
    volts_text,
)

__all__ = [
    "FORMAT_VERSION",
    "load_spec",
    "parse_spec_text",
]


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


# ---------------------------------------------------------------------------------------------
# The schema, section by section
# ---------------------------------------------------------------------------------------------

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


class _Schema:
    """Reads each section of one spec file with one :class:`Reader`."""

    def __init__(self, reader: Reader) -> None:
        self.r = reader
        r = reader
        self.voltage = r.quantity(parse_voltage)
        self.frequency = r.quantity(parse_frequency)
        self.temperature = r.quantity(parse_temperature)
        self.fraction = r.quantity(parse_fraction)
        self.db = r.quantity(parse_db)
        self.impedance = r.zero_or_resistance

    # -- amplifier --------------------------------------------------------------------------

    def level(self, node: Node, key: str) -> float:
        """A minimum level in dB, or the word ``ideal`` (infinite)."""
        expected = "a level in decibels such as 100 dB, or ideal"
        value = self.r.scalar(node, key, expected)
        if isinstance(value, str) and value.strip().lower() == "ideal":
            return math.inf
        try:
            return parse_db(value)
        except UnitError as exc:
            self.r.fail(key, node_line(node), str(exc))

    def span(self, node: Node, key: str) -> RailSpan:
        """``{from_negative, from_positive}`` (distances from the rails) or ``{min, max}``."""
        r = self.r
        m = r.mapping(node, key, SPAN_KEYS, line=r.lines.get(key))
        relative = [n for n in ("from_negative", "from_positive") if m.has(n)]
        absolute = [n for n in ("min", "max") if m.has(n)]
        if relative and absolute:
            r.fail(
                key,
                m.line,
                f"give either {_SPAN_FORMS}, not both",
            )
        if not relative and not absolute:
            r.fail(
                key,
                m.line,
                f"expected {_SPAN_FORMS}",
            )
        names = ("from_negative", "from_positive") if relative else ("min", "max")
        what = expected_form(parse_voltage)
        low = m.need(names[0], self.voltage, what, math.nan)
        high = m.need(names[1], self.voltage, what, math.nan)
        if not r.ok(key):
            raise Recorded
        if not relative and low >= high:
            r.fail(
                m.child("min"),
                m.line_of("min"),
                f"min {volts_text(low)} is not below max {volts_text(high)}",
            )
        return RailSpan(low, high, relative=bool(relative))

    def amplifier(self, m: Section) -> Amplifier | None:
        r = self.r
        label = m.opt("label", r.line_text, DEFAULT_AMPLIFIER_LABEL)
        cmrr = m.need("cmrr", self.level, "a level in decibels such as 100 dB, or ideal", math.nan)
        aol = m.need(
            "open_loop_gain", self.level, "a level in decibels such as 120 dB, or ideal", math.nan
        )
        gbw = m.need("gbw", self.frequency, expected_form(parse_frequency), math.nan)
        slew = m.need(
            "slew_rate", r.quantity(parse_slew_rate), expected_form(parse_slew_rate), math.nan
        )
        offset = m.need(
            "offset_voltage", self.bound(parse_voltage), expected_form(parse_voltage), math.nan
        )
        bias = m.need(
            "bias_current", self.bound(parse_current), expected_form(parse_current), math.nan
        )
        offset_current = m.opt("offset_current", self.bound(parse_current), None)
        en = m.need(
            "voltage_noise",
            r.quantity(parse_voltage_noise),
            expected_form(parse_voltage_noise),
            math.nan,
        )
        in_ = m.need(
            "current_noise",
            r.quantity(parse_current_noise),
            expected_form(parse_current_noise),
            math.nan,
        )
        span_expected = (
            "from_negative and from_positive (distances from the rails) or min and max (volts)"
        )
        placeholder = RailSpan(0.0, 0.0)
        input_span = m.need("input_range", self.span, span_expected, placeholder)
        output_span = m.need("output_swing", self.span, span_expected, placeholder)
        if not r.ok("amplifier"):
            return None
        try:
            return Amplifier(
                name=label,
                cmrr_db=cmrr,
                open_loop_gain_db=aol,
                gbw_hz=gbw,
                slew_v_per_s=slew,
                offset_v=offset,
                bias_a=bias,
                voltage_noise_v_rthz=en,
                current_noise_a_rthz=in_,
                input_span=input_span,
                output_span=output_span,
                offset_current_a=offset_current,
            )
        except ModelError as exc:
            r.model_error(exc, "amplifier", {f: f"amplifier.{f}" for f in AMPLIFIER_KEYS})
            return None

    def bound(self, parse: Parse) -> Read[float]:
        """A datasheet bound (a magnitude): zero or more."""
        read = self.r.quantity(parse)

        def inner(node: Node, key: str) -> float:
            value = read(node, key)
            if value < 0.0:
                self.r.fail(
                    key,
                    node_line(node),
                    f"expected a bound of zero or more (a magnitude), got {node.value!r}",
                )
            return value

        return inner

    def bare_fraction(self, m: Section, name: str, value: float) -> None:
        """Warn when a fraction is written as a bare number of BARE_FRACTION_WARNING or more
        (``0.5`` is ±50 %, often meant as 0.5 %)."""
        node = m.entries.get(name)
        if node is None or not isinstance(node, ScalarNode) or not math.isfinite(value):
            return
        if value < BARE_FRACTION_WARNING or not _is_bare_number(node.value):
            return
        self.r.warn(
            m.child(name),
            m.line_of(name),
            f"{node.value} means ±{value * 100:g} %; write {node.value} % for {node.value} percent",
        )

    def check_amplifier(self, m: Section, amp: Amplifier) -> None:
        """Warn about amplifier figures outside the ranges op-amps are made in
        (PLAUSIBLE_AMPLIFIER)."""
        for name, (field_name, unit, low, high) in PLAUSIBLE_AMPLIFIER.items():
            value = getattr(amp, field_name)
            if value is None or not math.isfinite(value) or low <= value <= high:
                continue
            self.r.warn(
                m.child(name),
                m.line_of(name),
                f"{format_quantity(value, unit, 4)} lies outside "
                f"{format_quantity(low, unit, 4)} to {format_quantity(high, unit, 4)}, the range "
                "op-amps are made in; check the value and its unit",
            )

    def check_spans(self, amp: Amplifier, rails: Rails) -> None:
        """The input range must be non-empty and the output swing inside the rails."""
        r = self.r
        low, high = amp.input_span.resolve(rails.negative_v, rails.positive_v)
        if low >= high:
            r.problem(
                "amplifier.input_range",
                r.lines.get("amplifier.input_range", 1),
                f"with rails {volts_text(rails.negative_v)} and {volts_text(rails.positive_v)} "
                "this range "
                f"({volts_text(low)} to {volts_text(high)}) is empty",
            )
        out = amp.output_span
        key = "amplifier.output_swing"
        if out.relative:
            for name, distance in (("from_negative", out.low_v), ("from_positive", out.high_v)):
                if distance < 0.0:
                    r.problem(
                        f"{key}.{name}",
                        r.lines.get(f"{key}.{name}", 1),
                        f"{volts_text(distance)} would put the output beyond the rail; "
                        "expected zero or more",
                    )
        else:
            if exceeds(rails.negative_v, out.low_v):
                r.problem(
                    f"{key}.min",
                    r.lines.get(f"{key}.min", 1),
                    f"{volts_text(out.low_v)} is below the negative rail "
                    f"{volts_text(rails.negative_v)}",
                )
            if exceeds(out.high_v, rails.positive_v):
                r.problem(
                    f"{key}.max",
                    r.lines.get(f"{key}.max", 1),
                    f"{volts_text(out.high_v)} is above the positive rail "
                    f"{volts_text(rails.positive_v)}",
                )
        if r.ok(key):
            low, high = out.resolve(rails.negative_v, rails.positive_v)
            if low >= high:
                r.problem(
                    key,
                    r.lines.get(key, 1),
                    f"with rails {volts_text(rails.negative_v)} and {volts_text(rails.positive_v)} "
                    f"this swing ({volts_text(low)} to {volts_text(high)}) is empty",
                )

    # -- rails, signal, reference -------------------------------------------------------------

    def rails(self, m: Section) -> Rails | None:
        positive = m.need("positive", self.voltage, expected_form(parse_voltage), math.nan)
        negative = m.opt("negative", self.voltage, 0.0)
        if not self.r.ok("rails"):
            return None
        try:
            return Rails(positive_v=positive, negative_v=negative)
        except ModelError as exc:
            self.r.model_error(
                exc, "rails", {"positive": "rails.positive", "negative": "rails.negative"}
            )
            return None

    def source(self, node: Node, key: str) -> SourceImpedance:
        r = self.r
        m = r.mapping(node, key, SOURCE_KEYS, line=r.lines.get(key))
        low = m.opt("min", self.impedance, 0.0)
        high = m.opt("max", self.impedance, 0.0)
        imbalance = m.opt("imbalance", self.impedance, 0.0)
        if not r.ok(key):
            raise Recorded
        if exceeds(low, high):
            r.fail(
                m.child("min"),
                m.line_of("min"),
                f"min {ohms_text(low)} is above max {ohms_text(high)}",
            )
        low = min(low, high)  # equal within rounding counts as equal
        # high − low rounds (0.3 − 0.1 is 0.19999999999999998): compare within
        # units.NUMBER_REL_TOL of the numbers the span comes from.
        if exceeds(imbalance, high - low, max(abs(low), abs(high), imbalance)):
            r.fail(
                m.child("imbalance"),
                m.line_of("imbalance"),
                f"{ohms_text(imbalance)} is more than max - min = {ohms_text(high - low)}; "
                "two legs inside [min, max] cannot differ by more",
            )
        return SourceImpedance(min_ohm=low, max_ohm=high, imbalance_ohm=imbalance)

    def signal(self, m: Section) -> Signal | None:
        r = self.r
        pair = "min and max in volts, such as {min: -1 V, max: 1 V}"
        volts = r.pair(self.voltage, expected_form(parse_voltage), volts_text)
        nan2 = (math.nan, math.nan)
        diff = m.need("differential", volts, pair, nan2)
        cm = m.need("common_mode", volts, pair, nan2)
        fmax = m.need("max_frequency", self.frequency, expected_form(parse_frequency), math.nan)
        source = m.opt("source_impedance", self.source, SourceImpedance())
        ac = m.opt("mains_derived", r.boolean, False)
        if not r.ok("signal"):
            return None
        try:
            return Signal(
                differential_min_v=diff[0],
                differential_max_v=diff[1],
                common_mode_min_v=cm[0],
                common_mode_max_v=cm[1],
                max_frequency_hz=fmax,
                source=source,
                ac=ac,
            )
        except ModelError as exc:
            r.model_error(
                exc,
                "signal",
                {
                    "differential min": "signal.differential.min",
                    "differential max": "signal.differential.max",
                    "common_mode min": "signal.common_mode.min",
                    "common_mode max": "signal.common_mode.max",
                    "max_frequency": "signal.max_frequency",
                },
            )
            return None

    def reference(self, m: Section) -> Reference | None:
        r = self.r
        voltage = m.need(
            "voltage",
            r.pair(self.voltage, expected_form(parse_voltage), volts_text, scalar=True),
            "a voltage such as 2.5 V, or {min: 2.4 V, max: 2.6 V}",
            (math.nan, math.nan),
        )
        impedance = m.opt(
            "impedance",
            r.pair(self.impedance, ZERO_OR_RESISTANCE, ohms_text, scalar=True),
            (0.0, 0.0),
        )
        if not r.ok("reference"):
            return None
        try:
            return Reference(
                voltage_min_v=voltage[0],
                voltage_max_v=voltage[1],
                impedance_min_ohm=impedance[0],
                impedance_max_ohm=impedance[1],
            )
        except ModelError as exc:
            r.model_error(
                exc,
                "reference",
                {
                    "voltage min": "reference.voltage.min",
                    "voltage max": "reference.voltage.max",
                    "impedance min": "reference.impedance.min",
                    "impedance max": "reference.impedance.max",
                },
            )
            return None

    def check_reference(self, ref: Reference, rails: Rails) -> None:
        """The REF voltage must lie within the rails."""
        r = self.r
        for name, value in (("min", ref.voltage_min_v), ("max", ref.voltage_max_v)):
            if not (exceeds(rails.negative_v, value) or exceeds(value, rails.positive_v)):
                continue
            key = (
                f"reference.voltage.{name}"
                if f"reference.voltage.{name}" in r.lines
                else "reference.voltage"
            )
            r.problem(
                key,
                r.lines.get(key, 1),
                f"{volts_text(value)} is outside the rails "
                f"({volts_text(rails.negative_v)} to {volts_text(rails.positive_v)})",
            )
            if key == "reference.voltage":
                break

    # -- requirements -------------------------------------------------------------------------

    def noise(self, node: Node, key: str) -> tuple[float, float, float | None]:
        """``{max: 100 uV, band: {low: 0.1 Hz, high: 10 kHz}}`` → (V rms, low Hz, high Hz|None)."""
        r = self.r
        m = r.mapping(node, key, NOISE_KEYS, line=r.lines.get(key))
        limit = m.need("max", self.voltage, "an RMS voltage above zero such as 100 uV", math.nan)
        low, high = DEFAULT_NOISE_BAND_LOW_HZ, None
        band = r.section(m, "band", BAND_KEYS)
        if band is not None:
            low = band.opt("low", self.frequency, DEFAULT_NOISE_BAND_LOW_HZ)
            high = band.opt("high", self.frequency, None)
        if not r.ok(key):
            raise Recorded
        if limit <= 0.0:
            r.fail(
                m.child("max"),
                m.line_of("max"),
                f"expected an RMS voltage above zero, got {volts_text(limit)}",
            )
        return limit, low, high

    def requirements(self, m: Section, signal: Signal | None) -> Requirements | None:
        r = self.r
        gain = m.need(
            "gain",
            r.number("a gain above zero such as 20 (a plain ratio)"),
            "a gain above zero such as 20 (a plain ratio)",
            math.nan,
        )
        accuracy = m.need("gain_accuracy", self.fraction, expected_form(parse_fraction), math.nan)
        self.bare_fraction(m, "gain_accuracy", accuracy)
        floor = m.need("cmrr_floor", self.db, expected_form(parse_db), math.nan)
        if r.ok("requirements.cmrr_floor") and floor <= 0.0:
            r.problem(
                "requirements.cmrr_floor",
                m.line_of("cmrr_floor"),
                f"expected a CMRR floor above 0 dB, got {floor:g} dB",
            )
        basis = m.opt("cmrr_basis", r.choice(CmrrBasis), CmrrBasis.WORST_CASE)
        yield_target = Requirements.yield_target  # unused unless cmrr_basis is yield
        if basis is CmrrBasis.YIELD:
            yield_target = m.need(
                "yield",
                self.fraction,
                "a fraction such as 99.9 % (required with cmrr_basis: yield)",
                math.nan,
            )
        elif m.has("yield") and r.ok("requirements.cmrr_basis"):
            r.problem(
                "requirements.yield",
                m.line_of("yield"),
                "a yield target is only used with cmrr_basis: yield; "
                "set cmrr_basis: yield or remove this key",
            )
        temps = m.need(
            "temperature",
            r.pair(self.temperature, expected_form(parse_temperature), celsius_text),
            "min and max such as {min: -40 °C, max: 125 °C}",
            (math.nan, math.nan),
        )
        low_c, high_c = PLAUSIBLE_TEMPERATURE_C
        if r.ok("requirements.temperature") and (temps[0] < low_c or temps[1] > high_c):
            r.warn(
                "requirements.temperature",
                m.line_of("temperature"),
                f"{format_temperature(temps[0], 4)} to {format_temperature(temps[1], 4)} lies "
                f"outside {low_c:g} °C to {high_c:g} °C, where resistor and amplifier data "
                "end; check the unit",
            )
        life = m.opt("operating_life", r.quantity(parse_duration), 0.0)
        drift_model = m.opt("drift_model", r.choice(DriftModel), DriftModel.SYMMETRIC)
        z_in = m.opt("min_input_impedance", self.impedance, 0.0)
        noise = m.opt("output_noise", self.noise, None)
        if not r.ok("requirements"):
            return None
        noise_max: float | None = None
        band_low, band_high = DEFAULT_NOISE_BAND_LOW_HZ, None
        if noise is not None:
            noise_max, band_low, band_high = noise
            if band_high is None and signal is not None:
                band_high = signal.max_frequency_hz
            if band_high is None:
                return None  # the signal section is broken; its problem is already recorded
            if band_low >= band_high:
                key = "requirements.output_noise.band.low"
                given = "requirements.output_noise.band.high" in r.lines
                source = "" if given else " (signal.max_frequency)"
                r.problem(
                    key if key in r.lines else "requirements.output_noise",
                    r.lines.get(key, r.lines.get("requirements.output_noise", 1)),
                    f"band low {hertz_text(band_low)} is not below "
                    f"band high {hertz_text(band_high)}{source}",
                )
                return None
        try:
            return Requirements(
                gain=gain,
                gain_accuracy=accuracy,
                cmrr_floor_db=floor,
                temp_min_c=temps[0],
                temp_max_c=temps[1],
                cmrr_basis=basis,
                yield_target=yield_target,
                life_s=life,
                min_input_impedance_ohm=z_in,
                max_output_noise_v_rms=noise_max,
                noise_band_low_hz=band_low,
                noise_band_high_hz=band_high,
                drift_model=drift_model,
            )
        except ModelError as exc:
            r.model_error(
                exc,
                "requirements",
                {
                    "gain": "requirements.gain",
                    "gain_accuracy": "requirements.gain_accuracy",
                    "cmrr_floor": "requirements.cmrr_floor",
                    "temperature min": "requirements.temperature.min",
                    "temperature max": "requirements.temperature.max",
                    "yield": "requirements.yield",
                    "life": "requirements.operating_life",
                    "min_input_impedance": "requirements.min_input_impedance",
                    "max_output_noise": "requirements.output_noise.max",
                    "noise band low": "requirements.output_noise.band.low",
                    "noise band high": "requirements.output_noise.band.high",
                },
            )
            return None

    # -- preferences --------------------------------------------------------------------------

    def topologies(self, node: Node, key: str) -> tuple[Topology, ...]:
        r = self.r
        valid = [t.value for t in Topology]
        items = r.sequence(node, key, f"topologies ({join_names(valid)})")
        if not items:
            r.fail(key, node_line(node), f"expected at least one of {join_names(valid)}")
        read = r.choice(Topology)
        chosen: list[Topology] = []
        for index, item in enumerate(items):
            topology = r.attempt(item, f"{key}[{index}]", read, None)
            if topology is None:
                continue
            if topology in chosen:
                r.problem(f"{key}[{index}]", node_line(item), f"{topology.value!r} is listed twice")
                continue
            chosen.append(topology)
        if not r.ok(key):
            raise Recorded
        return tuple(chosen)

    def catalogs(self, node: Node, key: str) -> tuple[str, ...]:
        """Catalog files, relative to the spec file's folder; each must exist."""
        r = self.r
        items = r.sequence(node, key, "catalog file paths")
        paths: list[str] = []
        for index, item in enumerate(items):
            item_key = f"{key}[{index}]"
            text = r.attempt(item, item_key, r.text, None)
            if text is None:
                continue
            candidate = Path(os.path.expanduser(text))
            resolved = candidate if candidate.is_absolute() else r.folder / candidate
            if not is_file(resolved):
                r.problem(
                    item_key,
                    node_line(item),
                    f"catalog file not found: {_path_text(resolved)} "
                    "(paths are relative to the spec file's folder)",
                )
                continue
            if str(resolved) in paths:
                r.problem(item_key, node_line(item), f"{text!r} is listed twice")
                continue
            paths.append(str(resolved))
        if not r.ok(key):
            raise Recorded
        return tuple(paths)

    def preferences(self, m: Section | None) -> Preferences | None:
        r = self.r
        if m is None:
            return Preferences()
        defaults = Preferences()
        topologies = m.opt("topologies", self.topologies, defaults.topologies)
        catalogs = m.opt("catalogs", self.catalogs, defaults.catalogs)
        builtin = m.opt("builtin_catalogs", r.boolean, defaults.use_builtin_catalogs)
        stock = m.opt("stock", r.choice(StockPolicy), defaults.stock)
        cost = r.number("a relative cost of zero or more such as 0.5")
        penalty = defaults.stock_penalty
        if stock is StockPolicy.PREFER:
            penalty = m.need(
                "stock_penalty",
                cost,
                "a relative cost of zero or more such as 0.5 (required with stock: prefer)",
                math.nan,
            )
        elif m.has("stock_penalty") and r.ok("preferences.stock"):
            r.problem(
                "preferences.stock_penalty",
                m.line_of("stock_penalty"),
                "only used with stock: prefer; set stock: prefer or remove this key",
            )
        alternatives = m.opt(
            "alternatives", r.integer("a whole number from 1 to 1000"), defaults.alternatives
        )
        objective = m.opt("objective", r.choice(Objective), defaults.objective)
        cost_cap = defaults.cost_cap
        if (
            m.has("cost_cap")
            and r.ok("preferences.objective")
            and objective is not Objective.CMRR_MARGIN
        ):
            r.problem(
                "preferences.cost_cap",
                m.line_of("cost_cap"),
                f"only used with objective: {Objective.CMRR_MARGIN.value}; "
                "change the objective or remove this key",
            )
        else:
            cost_cap = m.opt(
                "cost_cap", r.number("a relative cost above zero such as 5"), defaults.cost_cap
            )
        placement_cost = m.opt("placement_cost", cost, defaults.placement_cost)
        line_cost = m.opt("line_cost", cost, defaults.line_cost)
        same_lot = m.opt("same_lot_tracking", r.boolean, defaults.same_lot_tracking)
        window = m.opt(
            "resistance_range",
            r.pair(r.quantity(parse_resistance), expected_form(parse_resistance), ohms_text),
            (defaults.resistance_min_ohm, defaults.resistance_max_ohm),
        )
        samples, seed, distribution, sigma_k = (
            defaults.samples,
            defaults.seed,
            defaults.distribution,
            defaults.sigma_k,
        )
        mc = r.section(m, "monte_carlo", MONTE_CARLO_KEYS)
        if mc is not None:
            samples = mc.opt(
                "samples", r.integer(f"a whole number from 100 to {MAX_SAMPLES:,}"), samples
            )
            seed = mc.opt("seed", r.integer("a whole number of zero or more"), seed)
            distribution = mc.opt("distribution", r.choice(Distribution), distribution)
            if (
                mc.has("sigma_k")
                and r.ok("preferences.monte_carlo.distribution")
                and distribution is not Distribution.NORMAL
            ):
                r.problem(
                    "preferences.monte_carlo.sigma_k",
                    mc.line_of("sigma_k"),
                    "only used with distribution: normal "
                    "(the tolerance spans sigma_k standard deviations); remove this key",
                )
            else:
                sigma_k = mc.opt("sigma_k", r.number("a number above zero such as 3"), sigma_k)
        if not r.ok("preferences"):
            return None
        try:
            return Preferences(
                topologies=topologies,
                catalogs=catalogs,
                use_builtin_catalogs=builtin,
                stock=stock,
                stock_penalty=penalty,
                alternatives=alternatives,
                objective=objective,
                cost_cap=cost_cap,
                placement_cost=placement_cost,
                line_cost=line_cost,
                distribution=distribution,
                sigma_k=sigma_k,
                samples=samples,
                seed=seed,
                same_lot_tracking=same_lot,
                resistance_min_ohm=window[0],
                resistance_max_ohm=window[1],
            )
        except ModelError as exc:
            fields = {name: f"preferences.{name}" for name in PREFERENCE_KEYS}
            fields.update({name: f"preferences.monte_carlo.{name}" for name in MONTE_CARLO_KEYS})
            fields["resistance_range min"] = "preferences.resistance_range.min"
            fields["resistance_range max"] = "preferences.resistance_range.max"
            r.model_error(exc, "preferences", fields)
            return None

    # -- the whole file -----------------------------------------------------------------------

    def version(self, node: Node, key: str) -> int:
        expected = f"the format version, {FORMAT_VERSION}"
        version = self.r.integer(expected)(node, key)
        if version != FORMAT_VERSION:
            raise SpecError(
                f"unsupported format version {version}; this Quartet reads format {FORMAT_VERSION}",
                path=self.r.path,
                key=self.r.shown(key),
                line=node_line(node),
            )
        return version

    def spec(self, root: Node) -> Spec | None:
        r = self.r
        if not isinstance(root, MappingNode):
            r.fail(
                "",
                node_line(root),
                f"expected a mapping of sections at the top level ({join_names(TOP_KEYS)}), "
                f"got {kind_of(root)}",
            )
        names = {str(k.value) for k, _ in root.value if isinstance(k, ScalarNode)}
        if not names & set(TOP_KEYS):
            found = join_names(sorted(names)) or "none"
            r.fail(
                "",
                node_line(root),
                f"not a Quartet spec file: expected quartet_spec: {FORMAT_VERSION} and the "
                f"sections {join_names(TOP_KEYS[2:])} (top-level keys found: {found})",
            )
        top = r.mapping(root, "", TOP_KEYS, line=node_line(root))
        if r.prefix:  # a spec inside another file: the version key may be left out
            top.opt("quartet_spec", self.version, 0)
        else:
            top.need("quartet_spec", self.version, f"the format version, {FORMAT_VERSION}", 0)
        title = top.opt("title", r.line_text, None)
        sections = {
            "amplifier": AMPLIFIER_KEYS,
            "rails": RAILS_KEYS,
            "signal": SIGNAL_KEYS,
            "reference": REFERENCE_KEYS,
            "requirements": REQUIREMENT_KEYS,
        }
        maps: dict[str, Section | None] = {}
        for name, keys in sections.items():
            if not top.has(name):
                r.problem(
                    name,
                    top.line,
                    f"required section is missing; expected a mapping with keys {join_names(keys)}",
                )
                maps[name] = None
            else:
                maps[name] = r.section(top, name, keys)
        amplifier_map, rails_map, signal_map = maps["amplifier"], maps["rails"], maps["signal"]
        reference_map, requirements_map = maps["reference"], maps["requirements"]
        amplifier = None if amplifier_map is None else self.amplifier(amplifier_map)
        rails = None if rails_map is None else self.rails(rails_map)
        signal = None if signal_map is None else self.signal(signal_map)
        reference = None if reference_map is None else self.reference(reference_map)
        requirements = (
            None if requirements_map is None else self.requirements(requirements_map, signal)
        )
        preferences = self.preferences(r.section(top, "preferences", PREFERENCE_KEYS))
        if rails is not None and amplifier is not None:
            self.check_spans(amplifier, rails)
        if amplifier is not None and amplifier_map is not None:
            self.check_amplifier(amplifier_map, amplifier)
        if rails is not None and reference is not None:
            self.check_reference(reference, rails)
        if r.problems:
            return None
        assert amplifier is not None and rails is not None and signal is not None
        assert reference is not None and requirements is not None and preferences is not None
        return Spec(
            amplifier=amplifier,
            rails=rails,
            signal=signal,
            reference=reference,
            requirements=requirements,
            preferences=preferences,
            source_path=r.path,
            title=title,
            warnings=tuple(text for _, text in sorted(r.warnings)),
        )


def _combined(path: str, problems: list[SpecError]) -> SpecError:
    """One error for all problems: a single one as it is, several as one located line each."""
    ordered = sorted(problems, key=lambda p: p.line or 0)
    if len(ordered) == 1:
        return ordered[0]
    lines = [str(p) for p in ordered[:MAX_LISTED_PROBLEMS]]
    if len(ordered) > MAX_LISTED_PROBLEMS:
        lines.append(f"... and {len(ordered) - MAX_LISTED_PROBLEMS} more")
    error = SpecError(f"{len(ordered)} problems\n" + "\n".join(lines), path=path)
    error.key, error.line = ordered[0].key, ordered[0].line
    return error


def _path_text(path: Path) -> str:
    """A path for a message: as it is up to 200 characters, cut to one line beyond."""
    text = str(path)
    return text if len(text) <= 200 else quote(text)


def parse_spec_text(text: str, path: str) -> Spec:
    """Read a spec from YAML ``text``; ``path`` names the file in messages and is the base for
    relative catalog paths. Raises :class:`SpecError` listing every problem found."""
    try:
        root = compose_yaml(text, "a spec", 4)
    except YamlTrouble as exc:
        raise SpecError(exc.message, path=path, line=exc.line) from None
    if root is None:
        raise SpecError(
            f"the file is empty; expected a mapping starting with quartet_spec: {FORMAT_VERSION}",
            path=path,
            line=1,
        )
    reader = Reader(path)
    schema = _Schema(reader)
    try:
        spec = schema.spec(root)
    except Recorded:
        spec = None
    if reader.problems:
        raise _combined(path, reader.problems)
    assert spec is not None
    return spec


def load_spec(path: str | os.PathLike[str]) -> Spec:
    """Read and check the spec file at ``path``. Raises :class:`SpecError` (located by file, line
    and key path) for a missing or unreadable file, bad YAML, or any problem in the content."""
    name, text = read_document(path, "spec")
    return parse_spec_text(text, name)
