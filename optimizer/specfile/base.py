"""The spec schema's common part: one reader with its unit readers, and the level, span,
bound and bare-fraction helpers the sections share (``optimizer.specfile``).
"""

from __future__ import annotations

import math

from yaml.nodes import Node, ScalarNode

from ..errors import UnitError
from ..parts import RailSpan
from ..units import (
    parse_db,
    parse_fraction,
    parse_frequency,
    parse_temperature,
    parse_voltage,
)
from ..yamlread import (
    Parse,
    Read,
    Reader,
    Recorded,
    Section,
    expected_form,
    node_line,
    volts_text,
)
from .keys import (
    _SPAN_FORMS,
    BARE_FRACTION_WARNING,
    SPAN_KEYS,
    _is_bare_number,
)


class _SchemaBase:
    """Reads each section of one spec file with one :class:`Reader`: the reader, the unit
    readers and the helpers every section uses."""

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
