"""Board-level pick: several difference amplifiers chosen together, sharing BOM lines.

``model`` holds the board as frozen dataclasses and the board's cost rule, ``boardfile`` reads
a board file, ``combine`` solves the choice of one design per amplifier kind exactly, and
``search`` streams each kind's designs and proves the cheapest boards.
"""

from __future__ import annotations

from .model import Board, BoardAmplifier, BoardCost, Purchasing, board_cost
from .search import BoardResult, BoardStatus, RankedBoard, board_search

__all__ = [
    "Board",
    "BoardAmplifier",
    "BoardCost",
    "BoardResult",
    "BoardStatus",
    "Purchasing",
    "RankedBoard",
    "board_cost",
    "board_search",
]
