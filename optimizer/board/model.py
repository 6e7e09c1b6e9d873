"""A board: several difference amplifiers bought together, as frozen dataclasses, and the
board's cost rule.

The cost of a board (relative units) extends the cost rule of one design
(``optimizer.cost``) to every channel of every amplifier kind on the board::

    total = Σ_kinds quantity × (parts + placements of one channel)
          + line_cost × distinct part ids on the whole board
          + stock_penalty × distinct part ids on the board not in house stock ("prefer")

A part id used by several channels or several amplifier kinds is one BOM line: it pays the
line cost (and the stock penalty) once. That is how purchasing pays for a line (setup, reels,
feeder slots, qualification), and it is the only way the board differs from the sum of its
amplifiers (common practice).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from ..design import Design
from ..errors import ModelError
from ..spec import Spec, StockPolicy

__all__ = [
    "Board",
    "BoardAmplifier",
    "BoardCost",
    "Purchasing",
    "board_cost",
    "channel_cost",
    "design_lines",
]


@dataclass(frozen=True)
class Purchasing:
    """Board-wide buying preferences: the catalogs, the stock policy and the cost of a
    placement, of a line and of an unstocked line (relative units), an optional cap on the
    distinct lines of the board, and how many boards to rank."""

    catalogs: tuple[str, ...] = ()
    use_builtin_catalogs: bool = True
    stock: StockPolicy = StockPolicy.ANY
    stock_penalty: float = 0.0
    line_cost: float = 0.0
    placement_cost: float = 0.0
    max_lines: int | None = None
    alternatives: int = 3

    def __post_init__(self) -> None:
        for name in ("stock_penalty", "line_cost", "placement_cost"):
            value = getattr(self, name)
            if not isinstance(value, (int, float)) or not value >= 0.0 or value == float("inf"):
                raise ModelError("purchasing", name, f"expected zero or more, got {value!r}")
        if self.max_lines is not None and self.max_lines < 1:
            raise ModelError("purchasing", "max_lines", "expected 1 or more")
        if not 1 <= self.alternatives <= 100:
            raise ModelError("purchasing", "alternatives", "expected a whole number from 1 to 100")


@dataclass(frozen=True)
class BoardAmplifier:
    """One amplifier kind of the board: its ``name``, its spec (own requirements and op-amp),
    ``quantity`` channels built alike, and the designator ``prefix`` of its channels."""

    name: str
    spec: Spec
    quantity: int
    prefix: str

    def __post_init__(self) -> None:
        if self.quantity < 1:
            raise ModelError(f"amplifier {self.name}", "quantity", "expected 1 or more")


@dataclass(frozen=True)
class Board:
    """A board file's content: title, amplifier kinds (in file order) and purchasing."""

    amplifiers: tuple[BoardAmplifier, ...]
    purchasing: Purchasing
    title: str | None = None
    source_path: str | None = None
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not self.amplifiers:
            raise ModelError("board", "amplifiers", "expected at least one amplifier")


@dataclass(frozen=True)
class BoardCost:
    """The parts of :func:`board_cost` (relative units)."""

    parts: float
    placements: float
    lines: float
    stock_penalty: float
    line_count: int

    @property
    def total(self) -> float:
        return self.parts + self.placements + self.lines + self.stock_penalty


def design_lines(design: Design) -> tuple[frozenset[str], frozenset[str]]:
    """The part ids of ``design`` and, of those, the ones not in house stock."""
    ids = {p.part.part_id: p.part.in_stock for p in design.placements}
    return frozenset(ids), frozenset(i for i, stocked in ids.items() if not stocked)


def channel_cost(design: Design, placement_cost: float) -> tuple[float, float]:
    """(parts, placements) of one channel built as ``design``: each discrete part and each
    network package once, ``placement_cost`` per placement (``optimizer.cost``)."""
    parts = 0.0
    seen: set[tuple[str, int]] = set()
    count = 0
    for placement in design.placements:
        key = placement.package_key
        if key is not None:
            if key in seen:
                continue
            seen.add(key)
        parts += placement.part.unit_cost
        count += 1
    return parts, placement_cost * count


def board_cost(chosen: Iterable[tuple[int, Design]], purchasing: Purchasing) -> BoardCost:
    """The board total of ``chosen`` (quantity, design) per amplifier kind (module docstring):
    Σ quantity × (parts + placements) + line_cost × distinct ids + stock_penalty × distinct
    unstocked ids (stock policy "prefer" only)."""
    parts = placements = 0.0
    ids: set[str] = set()
    unstocked: set[str] = set()
    for quantity, design in chosen:
        p, q = channel_cost(design, purchasing.placement_cost)
        parts += quantity * p
        placements += quantity * q
        mine, missing = design_lines(design)
        ids |= mine
        unstocked |= missing
    prefer = purchasing.stock is StockPolicy.PREFER
    return BoardCost(
        parts=parts,
        placements=placements,
        lines=purchasing.line_cost * len(ids),
        stock_penalty=purchasing.stock_penalty * len(unstocked) if prefer else 0.0,
        line_count=len(ids),
    )
