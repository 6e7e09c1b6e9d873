"""A design: which part (or which element of which network package) sits at R1, R2, R3, R4.

Labels: R1 input to the inverting node, R2 feedback, R3 input to the non-inverting node, R4
non-inverting node to REF; G = R2/R1.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

from .errors import ModelError
from .parts import DiscretePart, NetworkPart

__all__ = ["NETWORK_TOPOLOGIES", "POSITIONS", "Design", "Placement", "Topology"]

POSITIONS = ("R1", "R2", "R3", "R4")


class Topology(str, Enum):
    """How the four resistors are bought (names of our own; the spec uses the values)."""

    DISCRETE = "four_discrete"  # four separate chip resistors
    QUAD = "quad_network"  # one four-element network
    EQUAL_PAIRS = "equal_pairs"  # two equal-value duals: (R1, R3) and (R2, R4)
    DIVIDER_PAIRS = "divider_pairs"  # two divider duals: (R1, R2) and (R3, R4)
    PAIR_PLUS_DISCRETE = "pair_plus_discrete"  # one dual network and two discrete parts

    @classmethod
    def from_text(cls, text: str) -> Topology:
        for member in cls:
            if member.value == text:
                return member
        valid = ", ".join(m.value for m in cls)
        raise ModelError("topology", "value", f"unknown topology {text!r}; expected one of {valid}")


#: The topologies with a network in them (every one but four discrete parts), in enum order.
NETWORK_TOPOLOGIES: tuple[Topology, ...] = tuple(t for t in Topology if t is not Topology.DISCRETE)


@dataclass(frozen=True)
class Placement:
    """One position's part. For a network, ``element`` is the 0-based element index and
    ``package`` tells apart two packages of the same network part in one design."""

    position: str
    part: DiscretePart | NetworkPart
    element: int | None = None
    package: int = 0

    def __post_init__(self) -> None:
        if self.position not in POSITIONS:
            raise ModelError(
                "placement", "position", f"expected one of R1, R2, R3, R4, got {self.position!r}"
            )
        if isinstance(self.part, NetworkPart):
            if self.element is None or not 0 <= self.element < self.part.elements:
                raise ModelError(
                    f"placement {self.position}",
                    "element",
                    f"network {self.part.part_id} has elements 1..{self.part.elements}, got "
                    f"{None if self.element is None else self.element + 1}",
                )
        elif self.element is not None:
            raise ModelError(
                f"placement {self.position}", "element", "a discrete part has no element index"
            )

    @property
    def resistance_ohm(self) -> float:
        if isinstance(self.part, NetworkPart):
            assert self.element is not None
            return self.part.values_ohm[self.element]
        return self.part.resistance_ohm

    @property
    def package_key(self) -> tuple[str, int] | None:
        """Identifies the physical network package this element belongs to (None: discrete)."""
        return (self.part.part_id, self.package) if isinstance(self.part, NetworkPart) else None


@dataclass(frozen=True)
class Design:
    """Four placements in the order R1, R2, R3, R4."""

    placements: tuple[Placement, Placement, Placement, Placement]

    def __post_init__(self) -> None:
        if tuple(p.position for p in self.placements) != POSITIONS:
            raise ModelError(
                "design", "placements", "expected placements for R1, R2, R3, R4 in order"
            )
        used: set[tuple[str, int, int]] = set()
        for placement in self.placements:
            key = placement.package_key
            if key is None:
                continue
            assert placement.element is not None
            slot = (key[0], key[1], placement.element)
            if slot in used:
                raise ModelError(
                    "design",
                    placement.position,
                    f"element {placement.element + 1} of network {key[0]} is already used",
                )
            used.add(slot)

    @property
    def resistances_ohm(self) -> tuple[float, float, float, float]:
        r1, r2, r3, r4 = (p.resistance_ohm for p in self.placements)
        return r1, r2, r3, r4

    @property
    def nominal_gain(self) -> float:
        """G = R2/R1 from the nominal values."""
        r1, r2, _, _ = self.resistances_ohm
        return r2 / r1

    @property
    def packages(self) -> tuple[tuple[str, int], ...]:
        """Distinct network packages, in order of first use."""
        seen: list[tuple[str, int]] = []
        for placement in self.placements:
            key = placement.package_key
            if key is not None and key not in seen:
                seen.append(key)
        return tuple(seen)

    @property
    def topology(self) -> Topology:
        """The topology this design realises, derived from which positions share a package."""
        groups: dict[tuple[str, int], list[str]] = {}
        for placement in self.placements:
            key = placement.package_key
            if key is not None:
                groups.setdefault(key, []).append(placement.position)
        shapes = sorted(tuple(v) for v in groups.values())
        if not shapes:
            return Topology.DISCRETE
        if shapes == [("R1", "R2", "R3", "R4")]:
            return Topology.QUAD
        if shapes == [("R1", "R3"), ("R2", "R4")]:
            return Topology.EQUAL_PAIRS
        if shapes == [("R1", "R2"), ("R3", "R4")]:
            return Topology.DIVIDER_PAIRS
        return Topology.PAIR_PLUS_DISCRETE

    @property
    def placement_count(self) -> int:
        """Parts to place on the board: each network package counts once."""
        discrete = sum(1 for p in self.placements if p.package_key is None)
        return discrete + len(self.packages)
