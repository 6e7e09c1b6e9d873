"""Parts: discrete resistors, matched resistor networks and the op-amp.

Frozen dataclasses in SI units, validated in ``__post_init__``; a bad field raises
:class:`~optimizer.errors.ModelError` naming the part and the field. Fractions are plain
fractions (0.001 = 0.1 %), tempcos are per kelvin (25e-6 = 25 ppm/K), costs are relative
(illustrative units, not money).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from enum import Enum

from .bounds import FRACTION, NONNEGATIVE, POSITIVE, TEMPCO
from .errors import ModelError

__all__ = [
    "SIZE_CODES",
    "Amplifier",
    "DiscretePart",
    "NetworkPart",
    "RailSpan",
    "Technology",
]

#: Package size codes Quartet knows (imperial chip sizes); user catalogs may add others.
SIZE_CODES = ("0201", "0402", "0603", "0805", "1206", "1210", "2010", "2512")


class Technology(str, Enum):
    """Resistor technology: decides typical tempco and drift; optional on a part."""

    THIN_FILM = "thin_film"
    THICK_FILM = "thick_film"
    FOIL = "foil"
    METAL_FILM = "metal_film"
    WIREWOUND = "wirewound"

    @classmethod
    def from_text(cls, text: str) -> Technology:
        key = text.strip().lower().replace(" ", "_").replace("-", "_")
        for member in cls:
            if member.value == key:
                return member
        valid = ", ".join(m.value for m in cls)
        raise ModelError(
            "technology", "value", f"unknown technology {text!r}; expected one of {valid}"
        )


def _check_finite(owner: str, field: str, value: float) -> None:
    if not isinstance(value, (int, float)) or isinstance(value, bool) or not math.isfinite(value):
        raise ModelError(owner, field, f"expected a finite number, got {value!r}")


def _check_positive(owner: str, field: str, value: float) -> None:
    _check_finite(owner, field, value)
    if not POSITIVE.holds(value):
        raise ModelError(owner, field, f"expected a value above zero, got {value!r}")


def _check_nonnegative(owner: str, field: str, value: float) -> None:
    _check_finite(owner, field, value)
    if not NONNEGATIVE.holds(value):
        raise ModelError(owner, field, f"expected a value of zero or more, got {value!r}")


def _check_fraction(owner: str, field: str, value: float) -> None:
    _check_nonnegative(owner, field, value)
    if not FRACTION.holds(value):
        raise ModelError(
            owner, field, f"expected a fraction below {FRACTION.high:g}, got {value!r}"
        )


def _check_tempco(owner: str, field: str, value: float) -> None:
    _check_nonnegative(owner, field, value)
    if not TEMPCO.holds(value):
        raise ModelError(
            owner,
            field,
            f"expected at most {TEMPCO.high:g} per kelvin ({TEMPCO.high * 1e6:,.0f} ppm/K), "
            f"got {value!r}",
        )


def _check_id(owner: str, part_id: str) -> None:
    if not isinstance(part_id, str) or not part_id.strip():
        raise ModelError(owner, "id", "expected a non-empty part id")


@dataclass(frozen=True)
class DiscretePart:
    """One orderable chip resistor.

    ``tolerance`` is the initial tolerance at 25 °C as a fraction; ``tempco_per_k`` the bound
    on the temperature coefficient (the part lies anywhere in ±bound); ``power_w`` the rating
    at 70 °C; ``max_voltage_v`` the limiting element voltage; ``drift_1000h`` the long-term
    drift bound over 1000 h as a fraction; ``stock_qty`` the house stock (0 = not stocked).
    """

    part_id: str
    resistance_ohm: float
    tolerance: float
    tempco_per_k: float
    size: str
    power_w: float
    max_voltage_v: float
    unit_cost: float
    stock_qty: int = 0
    technology: Technology | None = None
    drift_1000h: float = 0.0

    def __post_init__(self) -> None:
        _check_id("discrete part", self.part_id)
        owner = f"part {self.part_id}"
        _check_positive(owner, "resistance", self.resistance_ohm)
        _check_fraction(owner, "tolerance", self.tolerance)
        _check_tempco(owner, "tempco", self.tempco_per_k)
        if not isinstance(self.size, str) or not self.size.strip():
            raise ModelError(owner, "size", "expected a size code such as 0603")
        _check_positive(owner, "power", self.power_w)
        _check_positive(owner, "max_voltage", self.max_voltage_v)
        _check_nonnegative(owner, "cost", self.unit_cost)
        if (
            isinstance(self.stock_qty, bool)
            or not isinstance(self.stock_qty, int)
            or self.stock_qty < 0
        ):
            raise ModelError(
                owner, "stock", f"expected a whole number of zero or more, got {self.stock_qty!r}"
            )
        _check_fraction(owner, "drift", self.drift_1000h)

    @property
    def in_stock(self) -> bool:
        return self.stock_qty > 0


@dataclass(frozen=True)
class NetworkPart:
    """A matched resistor network: two or four elements in one package.

    Error structure (see docs/explanation.md, "How parts vary"): all elements share one absolute
    error within ±``abs_tolerance`` and one tempco within ±``abs_tempco_per_k``; each element's
    deviation from the package mean lies within ±``ratio_tolerance``/2 and its tempco within
    ±``tracking_tempco_per_k``/2 of the shared one, so every element ratio stays within
    ``ratio_tolerance`` and tracks within ``tracking_tempco_per_k``.
    """

    part_id: str
    values_ohm: tuple[float, ...]
    abs_tolerance: float
    ratio_tolerance: float
    abs_tempco_per_k: float
    tracking_tempco_per_k: float
    power_per_element_w: float
    max_voltage_v: float
    unit_cost: float
    stock_qty: int = 0
    size: str = "network"
    drift_1000h: float = 0.0
    ratio_drift_1000h: float = 0.0

    def __post_init__(self) -> None:
        _check_id("network part", self.part_id)
        owner = f"network {self.part_id}"
        if not isinstance(self.values_ohm, tuple) or len(self.values_ohm) not in (2, 4):
            raise ModelError(owner, "values", "expected a tuple of 2 or 4 element values")
        for index, value in enumerate(self.values_ohm):
            _check_positive(owner, f"values[{index}]", value)
        _check_fraction(owner, "abs_tolerance", self.abs_tolerance)
        _check_fraction(owner, "ratio_tolerance", self.ratio_tolerance)
        _check_tempco(owner, "abs_tempco", self.abs_tempco_per_k)
        _check_tempco(owner, "tracking_tempco", self.tracking_tempco_per_k)
        _check_positive(owner, "power_per_element", self.power_per_element_w)
        _check_positive(owner, "max_voltage", self.max_voltage_v)
        _check_nonnegative(owner, "cost", self.unit_cost)
        if (
            isinstance(self.stock_qty, bool)
            or not isinstance(self.stock_qty, int)
            or self.stock_qty < 0
        ):
            raise ModelError(
                owner, "stock", f"expected a whole number of zero or more, got {self.stock_qty!r}"
            )
        _check_fraction(owner, "drift", self.drift_1000h)
        _check_fraction(owner, "ratio_drift", self.ratio_drift_1000h)

    @property
    def elements(self) -> int:
        return len(self.values_ohm)

    @property
    def in_stock(self) -> bool:
        return self.stock_qty > 0


@dataclass(frozen=True)
class RailSpan:
    """A voltage span given either absolutely or as distances from the rails.

    ``relative=True``: the span is [negative rail + low_v, positive rail − high_v] (a
    rail-to-rail input is ``RailSpan(0, 0, True)``; one that reaches 0.1 V beyond the
    negative rail is ``RailSpan(-0.1, 0, True)``). ``relative=False``: [low_v, high_v] in volts.
    """

    low_v: float
    high_v: float
    relative: bool = True

    def __post_init__(self) -> None:
        _check_finite("span", "low", self.low_v)
        _check_finite("span", "high", self.high_v)
        if not self.relative and self.low_v >= self.high_v:
            raise ModelError(
                "span", "low", f"low {self.low_v!r} V is not below high {self.high_v!r} V"
            )

    def resolve(self, negative_rail_v: float, positive_rail_v: float) -> tuple[float, float]:
        """The absolute (low, high) in volts for the given rails."""
        if self.relative:
            return negative_rail_v + self.low_v, positive_rail_v - self.high_v
        return self.low_v, self.high_v


@dataclass(frozen=True)
class Amplifier:
    """The op-amp, by the datasheet figures that matter here (minimum or worst-case values).

    ``cmrr_db`` and ``open_loop_gain_db`` are minimums in dB (``math.inf`` for ideal);
    ``gbw_hz`` gain-bandwidth product; ``slew_v_per_s`` slew rate; ``offset_v`` the input offset
    voltage bound; ``bias_a`` the input bias current bound (magnitude); ``offset_current_a``
    the input offset current bound; noise densities in V/√Hz and A/√Hz (white region);
    ``input_span`` the input common-mode range, ``output_span`` the output swing.
    """

    name: str
    cmrr_db: float
    open_loop_gain_db: float
    gbw_hz: float
    slew_v_per_s: float
    offset_v: float
    bias_a: float
    voltage_noise_v_rthz: float
    current_noise_a_rthz: float
    input_span: RailSpan
    output_span: RailSpan
    offset_current_a: float | None = None

    def __post_init__(self) -> None:
        owner = f"amplifier {self.name}"
        for field in ("cmrr_db", "open_loop_gain_db"):
            value = getattr(self, field)
            if not isinstance(value, (int, float)) or math.isnan(value) or value <= 0.0:
                raise ModelError(
                    owner, field.removesuffix("_db"), f"expected a level above 0 dB, got {value!r}"
                )
        _check_positive(owner, "gbw", self.gbw_hz)
        _check_positive(owner, "slew_rate", self.slew_v_per_s)
        _check_nonnegative(owner, "offset_voltage", abs(self.offset_v))
        _check_nonnegative(owner, "bias_current", abs(self.bias_a))
        _check_nonnegative(owner, "voltage_noise", self.voltage_noise_v_rthz)
        _check_nonnegative(owner, "current_noise", self.current_noise_a_rthz)
        if self.offset_current_a is not None:
            _check_nonnegative(owner, "offset_current", abs(self.offset_current_a))

    @property
    def cmrr_ratio(self) -> float:
        """CMRR as a ratio (``inf`` for an ideal amplifier)."""
        return math.inf if math.isinf(self.cmrr_db) else 10.0 ** (self.cmrr_db / 20.0)

    @property
    def open_loop_gain(self) -> float:
        """Open-loop gain as a ratio (``inf`` for an ideal amplifier)."""
        return (
            math.inf
            if math.isinf(self.open_loop_gain_db)
            else 10.0 ** (self.open_loop_gain_db / 20.0)
        )
