"""A compact summary of a loaded spec, as a Rich table (values in engineering notation).

Returns renderables only; ``optimizer.cli`` prints them.
"""

from __future__ import annotations

import math

from rich.console import RenderableType
from rich.table import Table
from rich.text import Text

from ..parts import Amplifier, RailSpan
from ..spec import CmrrBasis, Distribution, Objective, Preferences, Rails, Spec, StockPolicy
from ..units import format_fraction, format_quantity, format_resistance, format_temperature

__all__ = ["render_spec_summary", "spec_rows"]

#: Significant digits shown for values read from a spec (enough for E192 values).
DIGITS = 6
#: Seconds in a Julian year (365.25 days), the year ``units.parse_duration`` uses.
JULIAN_YEAR_S = 365.25 * 86400.0

Row = tuple[str, str, str]


def _v(volts: float) -> str:
    return format_quantity(volts, "V", DIGITS)


def _ohm(ohms: float) -> str:
    return format_resistance(ohms, DIGITS)


def _hz(hertz: float) -> str:
    return format_quantity(hertz, "Hz", DIGITS)


def _db(level: float) -> str:
    return "ideal" if math.isinf(level) else f"{level:.{DIGITS}g} dB"


def _number(value: float) -> str:
    return f"{value:.{DIGITS}g}"


def _range(low: str, high: str) -> str:
    return low if low == high else f"{low} to {high}"


def _span(span: RailSpan, rails: Rails) -> str:
    low, high = span.resolve(rails.negative_v, rails.positive_v)
    absolute = _range(_v(low), _v(high))
    if not span.relative:
        return absolute
    return f"{absolute} (from_negative {_v(span.low_v)}, from_positive {_v(span.high_v)})"


def _duration(seconds: float) -> str:
    if seconds == 0.0:
        return "not given (no ageing)"
    years = seconds / JULIAN_YEAR_S
    if years >= 1.0:
        return f"{years:.{DIGITS}g} years"
    return f"{seconds / 3600.0:.{DIGITS}g} h"


def _amplifier_rows(amp: Amplifier, rails: Rails) -> list[Row]:
    rows: list[Row] = [
        ("amplifier", "label", amp.name),
        ("", "CMRR (min)", _db(amp.cmrr_db)),
        ("", "open-loop gain (min)", _db(amp.open_loop_gain_db)),
        ("", "GBW", _hz(amp.gbw_hz)),
        ("", "slew rate", f"{amp.slew_v_per_s / 1e6:.{DIGITS}g} V/µs"),
        ("", "offset voltage", _v(amp.offset_v)),
        ("", "bias current", format_quantity(amp.bias_a, "A", DIGITS)),
    ]
    if amp.offset_current_a is not None:
        rows.append(("", "offset current", format_quantity(amp.offset_current_a, "A", DIGITS)))
    rows += [
        ("", "voltage noise", format_quantity(amp.voltage_noise_v_rthz, "V/√Hz", DIGITS)),
        ("", "current noise", format_quantity(amp.current_noise_a_rthz, "A/√Hz", DIGITS)),
        ("", "input range", _span(amp.input_span, rails)),
        ("", "output swing", _span(amp.output_span, rails)),
    ]
    return rows


def _preference_rows(prefs: Preferences) -> list[Row]:
    catalogs = [*prefs.catalogs]
    if prefs.use_builtin_catalogs:
        catalogs.insert(0, "built-in")
    stock = prefs.stock.value
    if prefs.stock is StockPolicy.PREFER:
        stock += f" (penalty {_number(prefs.stock_penalty)} per line not in stock)"
    objective = prefs.objective.value
    if prefs.objective is Objective.CMRR_MARGIN and prefs.cost_cap is not None:
        objective += f" (cost cap {_number(prefs.cost_cap)})"
    spread = prefs.distribution.value
    if prefs.distribution is Distribution.NORMAL:
        spread += f", tolerance = {_number(prefs.sigma_k)} sigma"
    return [
        ("preferences", "topologies", ", ".join(t.value for t in prefs.topologies)),
        ("", "catalogs", ", ".join(catalogs) if catalogs else "none"),
        ("", "stock", stock),
        ("", "objective", objective),
        ("", "alternatives", str(prefs.alternatives)),
        (
            "",
            "cost per placement / line",
            f"{_number(prefs.placement_cost)} / {_number(prefs.line_cost)}",
        ),
        ("", "Monte Carlo", f"{prefs.samples:,} samples, seed {prefs.seed}, {spread}"),
        ("", "same-lot tracking", "yes" if prefs.same_lot_tracking else "no"),
        (
            "",
            "resistance range",
            _range(_ohm(prefs.resistance_min_ohm), _ohm(prefs.resistance_max_ohm)),
        ),
    ]


def spec_rows(spec: Spec) -> list[Row]:
    """The summary as (section, item, value) rows; the section is named on its first row."""
    rails, signal, ref, req = spec.rails, spec.signal, spec.reference, spec.requirements
    source = signal.source
    rows: list[Row] = _amplifier_rows(spec.amplifier, rails)
    rows += [
        ("rails", "positive / negative", f"{_v(rails.positive_v)} / {_v(rails.negative_v)}"),
        (
            "signal",
            "differential (V2 - V1)",
            _range(_v(signal.differential_min_v), _v(signal.differential_max_v)),
        ),
        (
            "",
            "common mode" + (" (mains-derived, peak)" if signal.ac else ""),
            _range(_v(signal.common_mode_min_v), _v(signal.common_mode_max_v)),
        ),
        ("", "max frequency", _hz(signal.max_frequency_hz)),
        (
            "",
            "source impedance per leg",
            f"{_range(_ohm(source.min_ohm), _ohm(source.max_ohm))}, "
            f"imbalance up to {_ohm(source.imbalance_ohm)}",
        ),
        ("reference", "voltage", _range(_v(ref.voltage_min_v), _v(ref.voltage_max_v))),
        ("", "impedance", _range(_ohm(ref.impedance_min_ohm), _ohm(ref.impedance_max_ohm))),
        ("requirements", "gain", _number(req.gain)),
        ("", "gain accuracy", f"±{format_fraction(req.gain_accuracy, DIGITS)}"),
    ]
    floor = f"{_db(req.cmrr_floor_db)} "
    if req.cmrr_basis is CmrrBasis.YIELD:
        floor += f"at {format_fraction(req.yield_target, DIGITS)} yield"
    else:
        floor += "worst case"
    rows += [
        ("", "CMRR floor", floor),
        (
            "",
            "temperature",
            _range(
                format_temperature(req.temp_min_c, DIGITS),
                format_temperature(req.temp_max_c, DIGITS),
            ),
        ),
        ("", "operating life", _duration(req.life_s)),
        ("", "drift model", req.drift_model.value),
        (
            "",
            "min input impedance",
            _ohm(req.min_input_impedance_ohm) if req.min_input_impedance_ohm else "not given",
        ),
    ]
    if req.max_output_noise_v_rms is None:
        rows.append(("", "output noise", "not given"))
    else:
        high = (
            req.noise_band_high_hz
            if req.noise_band_high_hz is not None
            else signal.max_frequency_hz
        )
        rows.append(
            (
                "",
                "output noise",
                f"{_v(req.max_output_noise_v_rms)} rms, "
                f"{_hz(req.noise_band_low_hz)} to {_hz(high)}",
            )
        )
    rows += _preference_rows(spec.preferences)
    return rows


def render_spec_summary(spec: Spec) -> RenderableType:
    """A compact table of everything read from the spec (nothing is printed here)."""
    table = Table(
        title=Text(spec.title or "Spec", style="bold"),
        caption=None if spec.source_path is None else Text(spec.source_path),
        show_header=True,
        header_style="bold",
        pad_edge=False,
    )
    table.add_column("section", style="bold cyan", no_wrap=True)
    table.add_column("item", no_wrap=True)
    table.add_column("value", overflow="fold")
    rows = spec_rows(spec)
    for index, (section, item, value) in enumerate(rows):
        last_of_section = index + 1 == len(rows) or rows[index + 1][0] != ""
        # Text, not markup: labels and titles are the user's own text.
        table.add_row(Text(section), Text(item), Text(value), end_section=last_of_section)
    return table
