"""A design the user brings: four values, four catalog ids, network element mappings, or a mix.

``quartet check`` verifies a design the user already has in mind. This module turns what was
typed on the command line into a :class:`~optimizer.design.Design`; it is pure (no printing,
no files: catalogs arrive already loaded). Every problem raises
:class:`~optimizer.errors.DesignError` naming the option it came from, what was found and what
was expected.

How a position (R1, R2, R3, R4) can be given; each position exactly once:

* **A value** (``--r1 100k``): a part string ``VALUE[/TOL][/TEMPCO]``. The value is in
  engineering notation (``10k``, ``4k99``, ``2.2M``); the optional tokens after it may come in
  either order: a token ending in ``%`` is the initial tolerance (``0.1%``), a token with
  ``ppm`` or a per-kelvin unit is the tempco bound (``25ppm/K``, ``25ppm``, ``0.0025%/K``).
  ``--tolerance`` and ``--tempco`` give the tolerance and tempco for every value that does not
  carry its own; there is no default: a value without a tolerance (or tempco) is an error that
  says how to give one. Such a part becomes a :class:`~optimizer.parts.DiscretePart` with id
  ``user-R1`` (``user-R2`` …), size ``user`` and cost 0; its life drift per 1000 h comes from
  ``--drift`` (none when not given), its power rating at 70 °C from ``--power`` and its
  limiting voltage from ``--max-voltage``. When the ratings are not given they are
  **assumed** (:data:`DEFAULT_POWER_W`, :data:`DEFAULT_MAX_VOLTAGE_V`) and the design carries a
  note saying so (:attr:`UserDesign.assumptions`), which the report prints.
* **A catalog id** (``--parts ID ID ID ID``, one per position R1..R4, ``-`` for a position
  given otherwise): a discrete part id, or ``ID:E`` for element ``E`` (1-based, as a datasheet
  numbers them) of a network. All ``ID:E`` of one network id in ``--parts`` share one package.
* **A network mapping** (``--network ID:E1,E2,E3,E4``): ``Ek`` is the element (1-based) that
  sits at position Rk, or ``-`` when Rk does not come from this network. Each ``--network``
  option is a separate physical package, so two duals are ``--network A:1,2,-,- --network
  B:-,-,1,2`` (R1, R2 from one package of A; R3, R4 from one package of B).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Final

from .catalog import Catalog
from .design import POSITIONS, Design, Placement
from .errors import DesignError, ModelError, UnitError
from .parts import DiscretePart, NetworkPart
from .units import (
    format_fraction,
    format_quantity,
    parse_fraction,
    parse_power,
    parse_resistance,
    parse_tempco,
    parse_voltage,
)

__all__ = [
    "DEFAULT_MAX_VOLTAGE_V",
    "DEFAULT_POWER_W",
    "NOT_HERE",
    "USER_SIZE",
    "NetworkChoice",
    "PartText",
    "UserDesign",
    "build_user_design",
    "design_from_network",
    "design_from_parts",
    "design_from_values",
    "parse_network_choice",
    "parse_part_text",
    "user_part_id",
]

#: Power rating at 70 °C assumed for a part given by value when ``--power`` is not given (W).
DEFAULT_POWER_W: Final = 0.1
#: Limiting element voltage assumed for a part given by value when ``--max-voltage`` is not
#: given (V).
DEFAULT_MAX_VOLTAGE_V: Final = 75.0
#: Size code of a part given by value (not a package size: the user did not name one).
USER_SIZE: Final = "user"
#: The placeholder for "this position is given elsewhere" in ``--parts`` and ``--network``.
NOT_HERE: Final = "-"

_TEMPCO_DENOMINATORS: Final = frozenset({"K", "°C", "C", "degC", "℃"})
_ELEMENT_RE: Final = re.compile(r"^\d+$")
_PART_FORM: Final = "VALUE[/TOL][/TEMPCO], e.g. 10k, 10k/0.1%, 10k/0.1%/25ppm/K"
_NETWORK_FORM: Final = "ID:E1,E2,E3,E4 (the element at R1..R4, 1-based, or - for none)"


def user_part_id(position: str) -> str:
    """The part id of a part given by value at ``position``: ``user-R1`` …"""
    return f"user-{position}"


# ---------------------------------------------------------------------------------------------
# Part strings
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class PartText:
    """A parsed part string: resistance in ohms; tolerance (fraction) and tempco bound (per
    kelvin) when the string carries them, else ``None``."""

    resistance_ohm: float
    tolerance: float | None
    tempco_per_k: float | None


def _tokens(text: str, where: str) -> list[str]:
    """Split a part string on ``/``, keeping ``ppm/K``-style units together."""
    raw = [t.strip() for t in text.split("/")]
    tokens: list[str] = []
    for index, token in enumerate(raw):
        if index > 0 and token in _TEMPCO_DENOMINATORS and tokens:
            tokens[-1] = f"{tokens[-1]}/{token}"
            continue
        if not token:
            raise DesignError(
                f"{where}: {text!r} has an empty part between '/'; expected {_PART_FORM}"
            )
        tokens.append(token)
    return tokens


def _is_tempco(token: str) -> bool:
    return "ppm" in token.lower() or "/" in token


def parse_part_text(text: str, where: str) -> PartText:
    """Read a part string ``VALUE[/TOL][/TEMPCO]`` (module docstring). ``where`` names the
    option for messages (``--r1``)."""
    if not isinstance(text, str) or not text.strip():
        raise DesignError(f"{where}: empty part string; expected {_PART_FORM}")
    tokens = _tokens(text, where)
    try:
        resistance = parse_resistance(tokens[0])
    except UnitError as exc:
        raise DesignError(f"{where} {text!r}: {exc}") from None
    tolerance: float | None = None
    tempco: float | None = None
    for token in tokens[1:]:
        if _is_tempco(token):
            if tempco is not None:
                raise DesignError(f"{where} {text!r}: two tempcos given; expected at most one")
            try:
                tempco = parse_tempco(token)
            except UnitError as exc:
                raise DesignError(f"{where} {text!r}: {exc}") from None
        elif token.endswith("%"):
            if tolerance is not None:
                raise DesignError(f"{where} {text!r}: two tolerances given; expected at most one")
            try:
                tolerance = parse_fraction(token)
            except UnitError as exc:
                raise DesignError(f"{where} {text!r}: {exc}") from None
        else:
            raise DesignError(
                f"{where} {text!r}: cannot tell what {token!r} is; after the value write a "
                "tolerance with % (0.1%) or a tempco with ppm/K (25ppm/K)"
            )
    return PartText(resistance, tolerance, tempco)


def _option(parser: Callable[[object], float], token: str | None, option: str) -> float | None:
    """Parse an option's text with ``parser`` (a units function); ``None`` stays ``None``."""
    if token is None:
        return None
    try:
        return parser(token)
    except UnitError as exc:
        raise DesignError(f"{option}: {exc}") from None


# ---------------------------------------------------------------------------------------------
# Network mappings
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class NetworkChoice:
    """One ``--network ID:E1,E2,E3,E4`` option: the network id and, per position R1..R4, the
    element (1-based) placed there or ``None``; ``text`` is the option as typed."""

    part_id: str
    elements: tuple[int | None, int | None, int | None, int | None]
    text: str


def parse_network_choice(text: str) -> NetworkChoice:
    """Read ``ID:E1,E2,E3,E4`` (checks the form only; the catalog check is in
    :func:`build_user_design`)."""
    where = f"--network {text!r}"
    part_id, sep, mapping = text.rpartition(":")
    part_id = part_id.strip()
    if not sep or not part_id:
        raise DesignError(f"{where}: no element mapping; expected {_NETWORK_FORM}")
    fields = [f.strip() for f in mapping.split(",")]
    if len(fields) != len(POSITIONS):
        raise DesignError(
            f"{where}: {len(fields)} mapping entr{'y' if len(fields) == 1 else 'ies'} "
            f"{mapping!r}; expected 4, one for each of R1, R2, R3, R4: {_NETWORK_FORM}"
        )
    elements: list[int | None] = []
    for position, field in zip(POSITIONS, fields, strict=True):
        if field == NOT_HERE:
            elements.append(None)
        elif _ELEMENT_RE.match(field):
            elements.append(int(field))
        else:
            raise DesignError(
                f"{where}: {position}: {field!r} is not an element number; expected a whole "
                f"number from 1 or - (not from this network)"
            )
    if all(e is None for e in elements):
        raise DesignError(f"{where}: every entry is -; expected at least one element number")
    e1, e2, e3, e4 = elements
    return NetworkChoice(part_id, (e1, e2, e3, e4), text)


def _check_elements(choice: NetworkChoice, part: NetworkPart, where: str) -> None:
    seen: dict[int, str] = {}
    for position, element in zip(POSITIONS, choice.elements, strict=True):
        if element is None:
            continue
        if not 1 <= element <= part.elements:
            raise DesignError(
                f"{where}: {position}: element {element} does not exist; network "
                f"{part.part_id} has elements 1 to {part.elements}"
            )
        if element in seen:
            raise DesignError(
                f"{where}: element {element} is mapped to both {seen[element]} and {position}; "
                "each element of one package can sit at one position only (use a second "
                "--network option for a second package)"
            )
        seen[element] = position


def _as_network(found: DiscretePart | NetworkPart, where: str) -> NetworkPart:
    if not isinstance(found, NetworkPart):
        raise DesignError(
            f"{where}: {found.part_id!r} is a discrete part, not a network; give it in --parts"
        )
    return found


# ---------------------------------------------------------------------------------------------
# Assembling a design
# ---------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class UserDesign:
    """The design built from the user's input, how each position was given (``origins``, in
    the order R1..R4, e.g. ``--r1 100k``) and the assumptions made for missing ratings."""

    design: Design
    origins: tuple[str, str, str, str]
    assumptions: tuple[str, ...]


@dataclass
class _Slots:
    """Which option filled each position so far (for "given twice" messages)."""

    placements: dict[str, Placement]
    origins: dict[str, str]

    def put(self, position: str, placement: Placement, origin: str) -> None:
        if position in self.origins:
            raise DesignError(
                f"{position} is given twice: by {self.origins[position]} and by {origin}; "
                "expected each of R1, R2, R3, R4 exactly once"
            )
        self.placements[position] = placement
        self.origins[position] = origin


def _place(
    position: str, part: DiscretePart | NetworkPart, element: int | None, package: int, where: str
) -> Placement:
    try:
        return Placement(position, part, None if element is None else element - 1, package)
    except ModelError as exc:
        raise DesignError(f"{where}: {exc}") from None


def _value_parts(
    values: Sequence[str | None],
    tolerance: str | None,
    tempco: str | None,
    drift: str | None,
    power: str | None,
    max_voltage: str | None,
    slots: _Slots,
) -> list[str]:
    """Parts given by value; returns the assumption notes."""
    given = [(pos, text) for pos, text in zip(POSITIONS, values, strict=True) if text is not None]
    if not given:
        for option, token in (("--tolerance", tolerance), ("--tempco", tempco), ("--drift", drift),
                              ("--power", power), ("--max-voltage", max_voltage)):  # fmt: skip
            if token is not None:
                raise DesignError(
                    f"{option} {token!r} applies to values given with --r1 .. --r4, "
                    "and none is given"
                )
        return []
    common_tol = _option(parse_fraction, tolerance, f"--tolerance {tolerance!r}")
    common_tc = _option(parse_tempco, tempco, f"--tempco {tempco!r}")
    drift_value = _option(parse_fraction, drift, f"--drift {drift!r}")
    power_value = _option(parse_power, power, f"--power {power!r}")
    voltage_value = _option(parse_voltage, max_voltage, f"--max-voltage {max_voltage!r}")
    if voltage_value is not None and voltage_value <= 0.0:
        raise DesignError(
            f"--max-voltage {max_voltage!r}: expected a voltage above zero such as 75 V"
        )
    for position, text in given:
        option = f"--{position.lower()}"
        parsed = parse_part_text(text, option)
        tol = parsed.tolerance if parsed.tolerance is not None else common_tol
        tc = parsed.tempco_per_k if parsed.tempco_per_k is not None else common_tc
        if tol is None:
            raise DesignError(
                f"{option} {text!r}: no tolerance given; give one for every value with "
                f"--tolerance (e.g. --tolerance 0.1%) or for this part as {text.split('/')[0]}/0.1%"
            )
        if tc is None:
            raise DesignError(
                f"{option} {text!r}: no tempco given; give one for every value with --tempco "
                f"(e.g. --tempco 25ppm/K) or for this part as {text.split('/')[0]}/25ppm/K"
            )
        try:
            part = DiscretePart(
                part_id=user_part_id(position),
                resistance_ohm=parsed.resistance_ohm,
                tolerance=tol,
                tempco_per_k=tc,
                size=USER_SIZE,
                power_w=DEFAULT_POWER_W if power_value is None else power_value,
                max_voltage_v=DEFAULT_MAX_VOLTAGE_V if voltage_value is None else voltage_value,
                unit_cost=0.0,
                drift_1000h=0.0 if drift_value is None else drift_value,
            )
        except ModelError as exc:
            raise DesignError(f"{option} {text!r}: {exc.field}: {exc.message}") from None
        slots.put(position, Placement(position, part), f"{option} {text}")
    positions = ", ".join(p for p, _ in given)
    notes: list[str] = []
    if power_value is None:
        notes.append(
            f"power rating of {positions}: {format_quantity(DEFAULT_POWER_W, 'W')} each at 70 °C, "
            "assumed (not given; set it with --power)"
        )
    if voltage_value is None:
        notes.append(
            f"limiting voltage of {positions}: {format_quantity(DEFAULT_MAX_VOLTAGE_V, 'V')} "
            "assumed (not given; set it with --max-voltage)"
        )
    if drift_value is None:
        notes.append(
            f"life drift of {positions}: none (not given; set the drift per 1000 h with --drift, "
            "e.g. --drift 0.05%)"
        )
    else:
        notes.append(f"life drift of {positions}: {format_fraction(drift_value)} per 1000 h")
    return notes


def _catalog_parts(
    parts: Sequence[str], catalog: Catalog, slots: _Slots, first_package: dict[str, int]
) -> None:
    if len(parts) != len(POSITIONS):
        raise DesignError(
            f"--parts: {len(parts)} ids given; expected 4, one for each of R1, R2, R3, R4 "
            "(- for a position given otherwise)"
        )
    packages: dict[str, int] = {}
    for position, token in zip(POSITIONS, parts, strict=True):
        token = token.strip()
        if token == NOT_HERE:
            continue
        where = f"--parts {position} {token!r}"
        part_id, sep, element_text = token.rpartition(":")
        if not sep:
            part_id, element_text = token, ""
        try:
            found = catalog.find(part_id)
        except DesignError as exc:
            raise DesignError(f"--parts {position}: {exc}") from None
        if isinstance(found, NetworkPart):
            if not sep:
                raise DesignError(
                    f"{where}: {part_id!r} is a network with {found.elements} elements; say which "
                    f"element sits at {position} as {part_id}:E (E from 1 to {found.elements}), "
                    f"or map the whole network with --network {part_id}:E1,E2,E3,E4"
                )
            if not _ELEMENT_RE.match(element_text):
                raise DesignError(
                    f"{where}: {element_text!r} is not an element number; expected a whole "
                    f"number from 1 to {found.elements}"
                )
            element = int(element_text)
            if not 1 <= element <= found.elements:
                raise DesignError(
                    f"{where}: element {element} does not exist; network {part_id} has "
                    f"elements 1 to {found.elements}"
                )
            package = packages.setdefault(part_id, first_package.get(part_id, 0))
            for other, placement in slots.placements.items():
                if placement.package_key == (part_id, package) and placement.element == element - 1:
                    raise DesignError(
                        f"{where}: element {element} of {part_id} already sits at {other}; each "
                        "element of one package can sit at one position only"
                    )
            slots.put(
                position, _place(position, found, element, package, where), f"--parts {token}"
            )
        else:
            if sep:
                raise DesignError(
                    f"{where}: {part_id!r} is a discrete part and has no elements; "
                    f"drop ':{element_text}'"
                )
            slots.put(position, _place(position, found, None, 0, where), f"--parts {token}")


def build_user_design(
    *,
    values: Sequence[str | None] = (None, None, None, None),
    parts: Sequence[str] | None = None,
    networks: Sequence[str] = (),
    catalog: Catalog | None = None,
    tolerance: str | None = None,
    tempco: str | None = None,
    drift: str | None = None,
    power: str | None = None,
    max_voltage: str | None = None,
) -> UserDesign:
    """The design from everything the user typed (module docstring for the forms).

    ``values``: the part strings of ``--r1`` .. ``--r4`` (``None`` where not given);
    ``parts``: the four tokens of ``--parts``; ``networks``: the ``--network`` options;
    ``catalog``: where ids are looked up (needed when ``parts`` or ``networks`` is given);
    ``tolerance``, ``tempco``, ``drift``, ``power``, ``max_voltage``: the option texts for the
    parts given by value. Each position must be given exactly once."""
    if len(values) != len(POSITIONS):
        raise DesignError(f"expected 4 values (R1, R2, R3, R4), got {len(values)}")
    if (parts is not None or networks) and catalog is None:
        raise DesignError("part ids need a catalog to look them up in")
    slots = _Slots({}, {})
    assumptions = _value_parts(values, tolerance, tempco, drift, power, max_voltage, slots)
    next_package: dict[str, int] = {}
    for text in networks:
        choice = parse_network_choice(text)
        where = f"--network {text!r}"
        assert catalog is not None
        try:
            found = catalog.find(choice.part_id)
        except DesignError as exc:
            raise DesignError(f"{where}: {exc}") from None
        part = _as_network(found, where)
        _check_elements(choice, part, where)
        package = next_package.get(choice.part_id, 0)
        next_package[choice.part_id] = package + 1
        for position, element in zip(POSITIONS, choice.elements, strict=True):
            if element is not None:
                slots.put(
                    position,
                    _place(position, part, element, package, where),
                    f"--network {text} (element {element})",
                )
    if parts is not None:
        assert catalog is not None
        _catalog_parts(parts, catalog, slots, next_package)
    missing = [p for p in POSITIONS if p not in slots.placements]
    if missing:
        given = "nothing" if not slots.origins else ", ".join(sorted(slots.origins))
        raise DesignError(
            f"{', '.join(missing)} not given (given: {given}); give each of R1, R2, R3, R4 "
            "with --r1 .. --r4 VALUE, a part id in --parts, or an element of "
            "--network ID:E1,E2,E3,E4"
        )
    try:
        design = Design(
            (
                slots.placements["R1"],
                slots.placements["R2"],
                slots.placements["R3"],
                slots.placements["R4"],
            )
        )
    except ModelError as exc:
        raise DesignError(str(exc)) from None
    o = slots.origins
    return UserDesign(design, (o["R1"], o["R2"], o["R3"], o["R4"]), tuple(assumptions))


# ---------------------------------------------------------------------------------------------
# Single-form entry points
# ---------------------------------------------------------------------------------------------


def design_from_values(
    r1: str,
    r2: str,
    r3: str,
    r4: str,
    *,
    tolerance: str | None = None,
    tempco: str | None = None,
    drift: str | None = None,
    power: str | None = None,
    max_voltage: str | None = None,
) -> Design:
    """Four part strings (``10k``, ``10k/0.1%/25ppm/K``); ``tolerance`` and ``tempco`` apply to
    every string that does not carry its own (module docstring)."""
    return build_user_design(
        values=(r1, r2, r3, r4),
        tolerance=tolerance,
        tempco=tempco,
        drift=drift,
        power=power,
        max_voltage=max_voltage,
    ).design


def design_from_parts(ids: Sequence[str], catalog: Catalog) -> Design:
    """Four catalog ids, R1..R4: discrete ids, or ``ID:E`` for element E of a network."""
    return build_user_design(parts=ids, catalog=catalog).design


def design_from_network(part_id: str, mapping: Sequence[int], catalog: Catalog) -> Design:
    """One network package filling all four positions: ``mapping[k]`` is the element (1-based)
    at position R(k+1)."""
    text = f"{part_id}:{','.join(str(m) for m in mapping)}"
    return build_user_design(networks=(text,), catalog=catalog).design
