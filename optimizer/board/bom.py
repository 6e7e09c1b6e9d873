"""The merged bill of materials of a board: one line per part id over every channel of every
amplifier kind, with quantities and reference designators.

Designators (a scheme of our own): channel ``c`` (1-based) of the kind with prefix ``P``
names its discrete parts by position, ``P{c}-R1`` … ``P{c}-R4`` (the labels of the circuit:
R1 input to the inverting node, R2 feedback, R3 input to the non-inverting node, R4 to REF),
and its network packages ``P{c}-RN1``, ``P{c}-RN2`` in the order the design first uses them.
A prefix never ends in a digit (``optimizer.board.boardfile``), so no two designators clash.

Pure: no printing, no files.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from ..design import Design
from ..parts import DiscretePart, NetworkPart
from .model import BoardAmplifier

__all__ = ["BoardBomLine", "board_bom", "channel_designators"]


@dataclass(frozen=True)
class BoardBomLine:
    """One orderable line of the board: ``quantity`` items (discrete parts, or network
    packages) at ``designators``, used by the amplifier kinds named in ``amplifiers``."""

    part: DiscretePart | NetworkPart
    quantity: int
    designators: tuple[str, ...]
    amplifiers: tuple[str, ...]

    @property
    def extended_cost(self) -> float:
        """quantity × unit cost (relative units)."""
        return self.quantity * self.part.unit_cost


def channel_designators(prefix: str, channel: int, design: Design) -> list[tuple[str, str, int]]:
    """(designator, part id, items) of one channel: one per discrete part and per package."""
    out: list[tuple[str, str, int]] = []
    packages = design.packages
    for placement in design.placements:
        key = placement.package_key
        if key is None:
            out.append((f"{prefix}{channel}-{placement.position}", placement.part.part_id, 1))
    for number, (part_id, _) in enumerate(packages, start=1):
        out.append((f"{prefix}{channel}-RN{number}", part_id, 1))
    return out


def board_bom(
    amplifiers: Sequence[BoardAmplifier], designs: Sequence[Design]
) -> tuple[BoardBomLine, ...]:
    """The merged BOM of one design per kind (board order), lines in order of first use."""
    parts: dict[str, DiscretePart | NetworkPart] = {}
    where: dict[str, list[str]] = {}
    users: dict[str, list[str]] = {}
    for amplifier, design in zip(amplifiers, designs, strict=True):
        for placement in design.placements:
            parts.setdefault(placement.part.part_id, placement.part)
        for channel in range(1, amplifier.quantity + 1):
            for designator, part_id, _ in channel_designators(amplifier.prefix, channel, design):
                where.setdefault(part_id, []).append(designator)
                named = users.setdefault(part_id, [])
                if amplifier.name not in named:
                    named.append(amplifier.name)
    return tuple(
        BoardBomLine(parts[i], len(where[i]), tuple(where[i]), tuple(users[i])) for i in where
    )
