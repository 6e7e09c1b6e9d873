"""Walking a YAML node tree (composed by PyYAML's safe loader, which keeps every node's line)
with located problems: each value is read by key path and line, and every independent problem
is recorded rather than raised at once, so a file's problems are reported together.

:class:`Reader` reads plain values (numbers, quantities with units, enums, text of one line)
and records a :class:`~optimizer.errors.SpecError` for each problem; :class:`Section` checks a
mapping's keys ("did you mean"). The spec schema (:mod:`optimizer.specfile`) is written on top.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from enum import Enum
from pathlib import Path
from typing import NoReturn, TypeVar

import yaml
from yaml.constructor import SafeConstructor
from yaml.nodes import MappingNode, Node, ScalarNode, SequenceNode

from .errors import ModelError, SpecError, UnitError, quote
from .units import (
    exceeds,
    format_quantity,
    format_resistance,
    format_temperature,
    parse_resistance,
)

#: Longest free text (title, labels) a spec may hold: it is shown on one line of the reports.
MAX_TEXT_CHARS = 200

T = TypeVar("T")
E = TypeVar("E", bound=Enum)
Parse = Callable[[object], float]
Read = Callable[[Node, str], T]

_NULL_TAG = "tag:yaml.org,2002:null"
_MAP_TAG = "tag:yaml.org,2002:map"
_SEQ_TAG = "tag:yaml.org,2002:seq"
ZERO_OR_RESISTANCE = "a resistance of zero or more such as 0, 100R or 4.99k"


class Recorded(Exception):
    """Internal: a problem was recorded; the value being read falls back to its placeholder."""


def expected_form(parse: Parse) -> str:
    """The description of what ``parse`` accepts, in the units module's own words."""
    try:
        parse("")
    except UnitError as exc:
        return exc.expected
    return "a value"  # pragma: no cover - every parser refuses the empty string


def node_line(node: Node) -> int:
    return int(node.start_mark.line) + 1


def kind_of(node: Node) -> str:
    if isinstance(node, MappingNode):
        return "a mapping"
    if isinstance(node, SequenceNode):
        return "a list"
    if node.tag == _NULL_TAG:
        return "no value"
    return "a single value"


def join_names(names: Sequence[str]) -> str:
    return ", ".join(names)


def volts_text(value: float) -> str:
    return format_quantity(value, "V", 6)


def ohms_text(value: float) -> str:
    return format_resistance(value, 6)


def hertz_text(value: float) -> str:
    return format_quantity(value, "Hz", 6)


def celsius_text(value: float) -> str:
    return format_temperature(value, 6)


@dataclass
class Section:
    """A mapping node whose keys were checked: ``entries`` maps each key to its value node."""

    reader: Reader
    key: str
    line: int
    entries: dict[str, Node]
    key_lines: dict[str, int]
    suggested: set[str]

    def child(self, name: str) -> str:
        return f"{self.key}.{name}" if self.key else name

    def has(self, name: str) -> bool:
        return name in self.entries

    def line_of(self, name: str) -> int:
        """The line of key ``name`` (this mapping's line when the key is absent)."""
        return self.key_lines.get(name, self.line)

    def opt(self, name: str, read: Read[T], default: T) -> T:
        """The value of an optional key: ``default`` when absent or (after recording) unreadable."""
        node = self.entries.get(name)
        if node is None:
            return default
        return self.reader.attempt(node, self.child(name), read, default)

    def need(self, name: str, read: Read[T], expected: str, placeholder: T) -> T:
        """The value of a required key; a missing key is recorded at this mapping's line."""
        node = self.entries.get(name)
        if node is None:
            if name in self.suggested:  # already reported: "unknown key ...; did you mean ..."
                self.reader.bad.add(self.child(name))
            else:
                self.reader.problem(
                    self.child(name), self.line, f"required key is missing; expected {expected}"
                )
            return placeholder
        return self.reader.attempt(node, self.child(name), read, placeholder)


class Reader:
    """Walks the node tree of one spec file, collecting located problems."""

    def __init__(self, path: str, prefix: str = "") -> None:
        self.path = path
        #: Key path of the spec inside another file (a board file's inline spec); messages
        #: name keys below it (``amplifiers[1].spec.requirements.gain``).
        self.prefix = prefix
        self.folder = Path(path).parent
        self.problems: list[SpecError] = []
        self.warnings: list[tuple[int, str]] = []
        self.bad: set[str] = set()
        self.lines: dict[str, int] = {}
        self._constructor = SafeConstructor()

    # -- problems ---------------------------------------------------------------------------

    def shown(self, key: str) -> str:
        """``key`` as messages name it (below :attr:`prefix`, if any)."""
        if not self.prefix:
            return key
        return f"{self.prefix}.{key}" if key else self.prefix

    def problem(self, key: str, line: int, message: str) -> None:
        self.problems.append(SpecError(message, path=self.path, key=self.shown(key), line=line))
        self.bad.add(key)

    def fail(self, key: str, line: int, message: str) -> NoReturn:
        self.problem(key, line, message)
        raise Recorded

    def warn(self, key: str, line: int, message: str) -> None:
        """A plausibility warning: the value is read, the run goes on."""
        error = SpecError(message, path=self.path, key=self.shown(key), line=line)
        self.warnings.append((line, str(error)))

    def ok(self, *keys: str) -> bool:
        """True when no problem was recorded at, above or below any of ``keys``."""
        for bad in self.bad:
            for key in keys:
                if (
                    bad == key
                    or bad.startswith((f"{key}.", f"{key}["))
                    or key.startswith(f"{bad}.")
                ):
                    return False
        return True

    def attempt(self, node: Node, key: str, read: Read[T], placeholder: T) -> T:
        self.lines.setdefault(key, node_line(node))
        try:
            return read(node, key)
        except Recorded:
            return placeholder

    def model_error(self, exc: ModelError, section: str, fields: Mapping[str, str]) -> None:
        """Record a dataclass's refusal at the key its field came from (or the nearest parent)."""
        key = fields.get(exc.field, section)
        while key not in self.lines and "." in key:
            key = key.rsplit(".", 1)[0]
        line = self.lines.get(key, 1)
        wanted = fields.get(exc.field)
        message = exc.message if wanted == key else f"{exc.field}: {exc.message}"
        self.problem(key, line, message)

    # -- plain values -----------------------------------------------------------------------

    def value(self, node: Node, key: str) -> object:
        """The Python value of a scalar node, built as ``yaml.safe_load`` would build it."""
        try:
            return self._constructor.construct_object(node, deep=True)
        except yaml.YAMLError as exc:
            problem = getattr(exc, "problem", None) or str(exc)
            self.fail(key, node_line(node), f"cannot read this value: {problem}")
        except Exception as exc:  # PyYAML's constructors fail in many ways on
            # an explicit tag the text does not fit: ``!!int 9e9`` (ValueError), ``!!bool 1``
            # (KeyError), ``!!timestamp 1`` (AttributeError) (found by tests/test_fuzz.py)
            self.fail(key, node_line(node), f"cannot read this value as {node.tag}: {exc}")

    def scalar(self, node: Node, key: str, expected: str) -> object:
        if not isinstance(node, ScalarNode):
            self.fail(key, node_line(node), f"expected {expected}, got {kind_of(node)}")
        value = self.value(node, key)
        if value is None:
            self.fail(key, node_line(node), f"no value given; expected {expected}")
        return value

    def quantity(self, parse: Parse) -> Read[float]:
        expected = expected_form(parse)

        def read(node: Node, key: str) -> float:
            value = self.scalar(node, key, expected)
            try:
                return parse(value)
            except UnitError as exc:
                self.fail(key, node_line(node), str(exc))

        return read

    def zero_or_resistance(self, node: Node, key: str) -> float:
        """A resistance that may be zero (a source or REF impedance): ``0``, ``10``, ``4k99``."""
        expected = ZERO_OR_RESISTANCE
        value = self.scalar(node, key, expected)
        try:
            return parse_resistance(value)
        except UnitError as exc:
            # parse_resistance refuses zero and below with this reason; zero is allowed here.
            if exc.reason == "not above zero" and not str(value).lstrip().startswith("-"):
                return 0.0
            if exc.reason == "not above zero":
                self.fail(
                    key, node_line(node), f"cannot read {value!r} (below zero): expected {expected}"
                )
            self.fail(key, node_line(node), str(exc))

    def number(self, expected: str) -> Read[float]:
        def read(node: Node, key: str) -> float:
            value = self.scalar(node, key, expected)
            if isinstance(value, str):
                # YAML 1.1 reads 1e2 (no dot) and quoted numbers as text: read them as numbers.
                try:
                    value = float(value.strip().replace("_", ""))
                except ValueError:
                    self.fail(key, node_line(node), f"expected {expected}, got {quote(node.value)}")
            if isinstance(value, bool) or not isinstance(value, (int, float)):
                self.fail(key, node_line(node), f"expected {expected}, got {quote(node.value)}")
            try:
                number = float(value)
            except OverflowError:  # an int beyond the float range (found by tests/test_fuzz.py)
                number = math.inf
            if not math.isfinite(number):
                self.fail(
                    key,
                    node_line(node),
                    f"expected {expected}, got {node.value!r} (not a finite number)",
                )
            return number

        return read

    def integer(self, expected: str) -> Read[int]:
        def read(node: Node, key: str) -> int:
            value = self.scalar(node, key, expected)
            if isinstance(value, bool) or not isinstance(value, int):
                self.fail(key, node_line(node), f"expected {expected}, got {node.value!r}")
            if abs(value) >= 2**63:  # may be too long to print (found by tests/test_fuzz.py)
                too_large = f"expected {expected}, got a number too large (2^63 or more)"
                self.fail(key, node_line(node), too_large)
            return value

        return read

    def boolean(self, node: Node, key: str) -> bool:
        value = self.scalar(node, key, "true or false")
        if not isinstance(value, bool):
            self.fail(key, node_line(node), f"expected true or false, got {node.value!r}")
        return value

    def text(self, node: Node, key: str) -> str:
        self.scalar(node, key, "text")
        assert isinstance(node, ScalarNode)
        text = str(node.value).strip()
        if not text:
            self.fail(key, node_line(node), "expected text, got an empty value")
        return text

    def line_text(self, node: Node, key: str) -> str:
        """Free text shown in reports: one line of at most MAX_TEXT_CHARS characters."""
        text = self.text(node, key)
        if len(text) > MAX_TEXT_CHARS or "\n" in text:
            self.fail(
                key,
                node_line(node),
                f"expected one line of at most {MAX_TEXT_CHARS} characters, got "
                f"{len(text):,} characters" + (" on several lines" if "\n" in text else ""),
            )
        return text

    def choice(self, enum: type[E]) -> Read[E]:
        valid = [str(member.value) for member in enum]

        def read(node: Node, key: str) -> E:
            self.scalar(node, key, f"one of {join_names(valid)}")
            assert isinstance(node, ScalarNode)
            for member in enum:
                if member.value == node.value:
                    return member
            close = difflib.get_close_matches(str(node.value), valid, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            self.fail(
                key, node_line(node), f"{node.value!r} is not one of {join_names(valid)}{hint}"
            )

        return read

    # -- containers -------------------------------------------------------------------------

    def mapping(
        self, node: Node, key: str, allowed: Sequence[str], *, line: int | None = None
    ) -> Section:
        """Check that ``node`` is a mapping whose keys are all in ``allowed``; unknown keys are
        recorded with a suggestion. ``line`` is where missing keys are reported (default: the
        mapping's own first line)."""
        where = node_line(node) if line is None else line
        if not isinstance(node, MappingNode):
            self.fail(
                key,
                node_line(node),
                f"expected a mapping with keys {join_names(allowed)}, got {kind_of(node)}",
            )
        if node.tag != _MAP_TAG:
            self.fail(
                key,
                node_line(node),
                f"the tag {node.tag!r} is not allowed here; write a plain mapping",
            )
        try:
            self._constructor.flatten_mapping(node)  # YAML merge keys (<<: *anchor)
        except yaml.YAMLError as exc:
            self.fail(key, node_line(node), f"cannot merge: {getattr(exc, 'problem', None) or exc}")
        entries: dict[str, Node] = {}
        key_lines: dict[str, int] = {}
        suggested: set[str] = set()
        for key_node, value_node in node.value:
            child_line = node_line(key_node)
            if not isinstance(key_node, ScalarNode):
                self.problem(key, child_line, f"expected a key name, got {kind_of(key_node)}")
                continue
            name = str(key_node.value)
            child = f"{key}.{name}" if key else name
            if name in entries:
                self.problem(child, child_line, f"key {name!r} is given twice in this mapping")
                continue
            if name not in allowed:
                close = difflib.get_close_matches(name, allowed, n=1)
                if close:
                    suggested.add(close[0])
                    self.problem(
                        child, child_line, f"unknown key {name!r}; did you mean {close[0]!r}?"
                    )
                else:
                    self.problem(
                        child,
                        child_line,
                        f"unknown key {name!r}; valid keys here: {join_names(allowed)}",
                    )
                continue
            entries[name] = value_node
            key_lines[name] = child_line
            self.lines[child] = child_line
        return Section(self, key, where, entries, key_lines, suggested)

    def section(self, parent: Section, name: str, allowed: Sequence[str]) -> Section | None:
        """A child mapping of ``parent`` (None when absent or not a mapping); missing keys in it
        are reported at the line of its own key."""
        node = parent.entries.get(name)
        if node is None:
            return None
        key = parent.child(name)
        try:
            return self.mapping(node, key, allowed, line=parent.line_of(name))
        except Recorded:
            return None

    def sequence(self, node: Node, key: str, expected: str) -> list[Node]:
        if isinstance(node, ScalarNode) and node.tag != _NULL_TAG:
            return [node]  # a single item may be written without brackets
        if not isinstance(node, SequenceNode):
            self.fail(key, node_line(node), f"expected a list of {expected}, got {kind_of(node)}")
        if node.tag != _SEQ_TAG:
            self.fail(
                key,
                node_line(node),
                f"the tag {node.tag!r} is not allowed here; write a plain list",
            )
        return list(node.value)

    def span_pair(
        self,
        node: Node,
        key: str,
        read: Read[float],
        expected: str,
        fmt: Callable[[float], str],
        *,
        strict: bool = False,
    ) -> tuple[float, float]:
        """``{min: .., max: ..}`` with min ≤ max (min < max when ``strict``)."""
        m = self.mapping(node, key, ("min", "max"), line=self.lines.get(key))
        low = m.need("min", read, expected, math.nan)
        high = m.need("max", read, expected, math.nan)
        if not self.ok(key):
            raise Recorded
        if exceeds(low, high) or (strict and low >= high):
            relation = "is not below" if strict else "is above"
            self.fail(
                m.child("min"), m.line_of("min"), f"min {fmt(low)} {relation} max {fmt(high)}"
            )
        # Equal within rounding (units.NUMBER_REL_TOL) counts as equal.
        return min(low, high), high

    def pair(
        self, read: Read[float], expected: str, fmt: Callable[[float], str], *, scalar: bool = False
    ) -> Read[tuple[float, float]]:
        """A reader of ``{min: .., max: ..}``; with ``scalar`` also of one value (min = max)."""

        def inner(node: Node, key: str) -> tuple[float, float]:
            if scalar and not isinstance(node, MappingNode):
                value = read(node, key)
                return value, value
            return self.span_pair(node, key, read, expected, fmt)

        return inner
