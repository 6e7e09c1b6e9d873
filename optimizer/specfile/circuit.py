"""The spec schema's circuit sections: amplifier, rails, signal (with its source impedance)
and reference, and the checks between them (``optimizer.specfile``).
"""

from __future__ import annotations

import math

from yaml.nodes import Node

from ..errors import ModelError
from ..parts import Amplifier, RailSpan
from ..spec import (
    Rails,
    Reference,
    Signal,
    SourceImpedance,
)
from ..units import (
    exceeds,
    format_quantity,
    parse_current,
    parse_current_noise,
    parse_frequency,
    parse_slew_rate,
    parse_voltage,
    parse_voltage_noise,
)
from ..yamlread import (
    ZERO_OR_RESISTANCE,
    Recorded,
    Section,
    expected_form,
    ohms_text,
    volts_text,
)
from .base import _SchemaBase
from .keys import (
    AMPLIFIER_KEYS,
    DEFAULT_AMPLIFIER_LABEL,
    PLAUSIBLE_AMPLIFIER,
    SOURCE_KEYS,
)


class _CircuitSchema(_SchemaBase):
    """The amplifier, rails, signal and reference sections."""

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
