"""The spec schema's requirements section, with its output-noise requirement
(``optimizer.specfile``).
"""

from __future__ import annotations

import math

from yaml.nodes import Node

from ..errors import ModelError
from ..spec import (
    CmrrBasis,
    DriftModel,
    Requirements,
    Signal,
)
from ..units import (
    format_temperature,
    parse_db,
    parse_duration,
    parse_fraction,
    parse_temperature,
)
from ..yamlread import (
    Recorded,
    Section,
    celsius_text,
    expected_form,
    hertz_text,
    volts_text,
)
from .base import _SchemaBase
from .keys import (
    BAND_KEYS,
    DEFAULT_NOISE_BAND_LOW_HZ,
    NOISE_KEYS,
    PLAUSIBLE_TEMPERATURE_C,
)


class _RequirementsSchema(_SchemaBase):
    """The requirements section."""

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
        """The requirements section, or None when a problem was recorded."""
        r = self.r
        gain = m.need(
            "gain",
            r.number("a gain above zero such as 20 (a plain ratio)"),
            "a gain above zero such as 20 (a plain ratio)",
            math.nan,
        )
        accuracy = m.need("gain_accuracy", self.fraction, expected_form(parse_fraction), math.nan)
        self.bare_fraction(m, "gain_accuracy", accuracy)
        floor = self._cmrr_floor(m)
        basis = m.opt("cmrr_basis", r.choice(CmrrBasis), CmrrBasis.WORST_CASE)
        yield_target = self._yield_target(m, basis)
        temps = self._temperatures(m)
        life = m.opt("operating_life", r.quantity(parse_duration), 0.0)
        drift_model = m.opt("drift_model", r.choice(DriftModel), DriftModel.SYMMETRIC)
        z_in = m.opt("min_input_impedance", self.impedance, 0.0)
        noise = m.opt("output_noise", self.noise, None)
        if not r.ok("requirements"):
            return None
        noise_max: float | None = None
        band_low, band_high = DEFAULT_NOISE_BAND_LOW_HZ, None
        if noise is not None:
            band = self._noise_band(noise, signal)
            if band is None:
                return None
            noise_max, band_low, band_high = band
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
            r.model_error(exc, "requirements", _REQUIREMENT_KEYS)
            return None

    def _cmrr_floor(self, m: Section) -> float:
        """``cmrr_floor``: a level in dB above zero."""
        r = self.r
        floor = m.need("cmrr_floor", self.db, expected_form(parse_db), math.nan)
        if r.ok("requirements.cmrr_floor") and floor <= 0.0:
            r.problem(
                "requirements.cmrr_floor",
                m.line_of("cmrr_floor"),
                f"expected a CMRR floor above 0 dB, got {floor:g} dB",
            )
        return floor

    def _yield_target(self, m: Section, basis: CmrrBasis) -> float:
        """``yield``: required with the yield basis, refused with the worst-case basis."""
        r = self.r
        if basis is CmrrBasis.YIELD:
            return m.need(
                "yield",
                self.fraction,
                "a fraction such as 99.9 % (required with cmrr_basis: yield)",
                math.nan,
            )
        if m.has("yield") and r.ok("requirements.cmrr_basis"):
            r.problem(
                "requirements.yield",
                m.line_of("yield"),
                "a yield target is only used with cmrr_basis: yield; "
                "set cmrr_basis: yield or remove this key",
            )
        return Requirements.yield_target  # unused unless cmrr_basis is yield

    def _temperatures(self, m: Section) -> tuple[float, float]:
        """``temperature``: min and max in °C, with a warning outside the plausible range."""
        r = self.r
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
        return temps

    def _noise_band(
        self, noise: tuple[float, float, float | None], signal: Signal | None
    ) -> tuple[float, float, float] | None:
        """The output-noise limit and its band (the band's top defaults to the signal's
        highest frequency), or None when a problem was recorded.
        """
        r = self.r
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
        return noise_max, band_low, band_high


#: Where each field a :class:`Requirements` refuses comes from in the spec file.
_REQUIREMENT_KEYS = {
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
}
