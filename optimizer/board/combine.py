"""The exact choice of one design per amplifier kind: the cheapest boards over given
candidate designs (a branch and bound; pure, no solver).

Input: for each kind a list of :class:`Option` (one channel's parts + placements cost
``variable``, its part ids and its unstocked ids) and the kind's quantity. Output: the
``top`` cheapest boards (one option per kind), by the board cost of
``optimizer.board.model``::

    total = Σ_k q_k · variable_k + L · |∪ ids| + S · |∪ unstocked ids|

Why the search is exact:

1. **Private lines are fixed costs.** An id that occurs in the options of only one kind can
   enter the board only through that kind's choice, so it adds exactly ``L`` (+ ``S`` if
   unstocked) whenever that option is chosen. Each option's *own cost*
   ``q·variable + Σ_private (L + S·unstocked)`` is therefore exact, and the board total is
   ``Σ own costs + L·|∪ shared ids| + S·|∪ shared unstocked ids|``.
2. **Interchangeable options.** Options of one kind with the same shared ids (and, under a
   line cap, the same number of private ids) differ only in their own cost; a board that uses
   one of them that is not among the ``top`` cheapest of its group is beaten by the ``top``
   boards that swap in each of those instead. So only the ``top`` cheapest of each group are
   kept.
3. **Bound.** Options are tried in order of own cost; a partial board's total plus the least
   own cost of every kind still open is a lower bound (shared lines only add), so a branch
   whose bound exceeds the ``top``-th best board found is cut, and so are all later options
   of that kind (their own cost is larger).
"""

from __future__ import annotations

import heapq
import math
from collections.abc import Sequence
from dataclasses import dataclass

__all__ = ["Option", "best_boards"]


@dataclass(frozen=True)
class Option:
    """A candidate design of one kind, as the board cost sees it."""

    variable: float
    ids: frozenset[str]
    unstocked: frozenset[str]


@dataclass(frozen=True)
class _Reduced:
    own: float
    shared: frozenset[str]
    shared_unstocked: int  # not used in the bound, kept for clarity
    private_count: int
    index: int  # into the kind's option list


def _reduce(
    options: Sequence[Option],
    quantity: int,
    shared: frozenset[str],
    line_cost: float,
    stock_penalty: float,
    top: int,
    capped: bool,
) -> list[_Reduced]:
    """Each option's own cost and shared ids; the ``top`` cheapest per group (docstring, 2)."""
    groups: dict[tuple[frozenset[str], int], list[_Reduced]] = {}
    for index, option in enumerate(options):
        private = option.ids - shared
        own = quantity * option.variable + sum(
            line_cost + (stock_penalty if i in option.unstocked else 0.0) for i in sorted(private)
        )
        mine = option.ids & shared
        reduced = _Reduced(own, mine, len(mine & option.unstocked), len(private), index)
        groups.setdefault((mine, len(private) if capped else 0), []).append(reduced)
    kept: list[_Reduced] = []
    for members in groups.values():
        members.sort(key=lambda r: (r.own, r.index))
        kept.extend(members[:top])
    kept.sort(key=lambda r: (r.own, r.index))
    return kept


def best_boards(
    kinds: Sequence[Sequence[Option]],
    quantities: Sequence[int],
    *,
    line_cost: float,
    stock_penalty: float,
    unstocked: frozenset[str],
    top: int = 1,
    max_lines: int | None = None,
) -> list[tuple[float, tuple[int, ...]]]:
    """The ``top`` cheapest boards, each as (total, index of the chosen option per kind),
    cheapest first (ties: the earlier options). ``unstocked``: every id that pays the stock
    penalty (pass ``stock_penalty`` 0 when the policy is not "prefer"). ``max_lines`` caps the
    distinct ids of a board. Empty when some kind has no option or no board meets the cap."""
    if not kinds or any(not k for k in kinds):
        return []
    seen: dict[str, int] = {}
    for options in kinds:
        for i in set().union(*(o.ids for o in options)):
            seen[i] = seen.get(i, 0) + 1
    shared = frozenset(i for i, n in seen.items() if n > 1)
    capped = max_lines is not None
    reduced = [
        _reduce(o, q, shared, line_cost, stock_penalty, top, capped)
        for o, q in zip(kinds, quantities, strict=True)
    ]
    # Kinds with fewer options first: a smaller tree near the root.
    order = sorted(range(len(kinds)), key=lambda k: (len(reduced[k]), k))
    rest = [0.0] * (len(order) + 1)
    for depth in range(len(order) - 1, -1, -1):
        rest[depth] = rest[depth + 1] + reduced[order[depth]][0].own
    best: list[tuple[float, tuple[int, ...]]] = []  # max-heap by (-total, -tiebreak)
    heap: list[tuple[float, tuple[int, ...], tuple[int, ...]]] = []
    chosen: list[int] = [0] * len(kinds)
    limit = max_lines if max_lines is not None else math.inf

    def worst() -> float:
        return -heap[0][0] if len(heap) >= top else math.inf

    def visit(depth: int, total: float, used: frozenset[str], lines: int) -> None:
        if depth == len(order):
            key = tuple(chosen)
            entry = (-total, tuple(-i for i in key), key)
            if len(heap) < top:
                heapq.heappush(heap, entry)
            elif (total, key) < (-heap[0][0], heap[0][2]):
                heapq.heapreplace(heap, entry)
            return
        kind = order[depth]
        for option in reduced[kind]:
            if total + option.own + rest[depth + 1] > worst():
                break
            new = option.shared - used
            added = line_cost * len(new) + stock_penalty * len(new & unstocked)
            count = lines + len(new) + option.private_count
            if count > limit:
                continue
            bound = total + option.own + added + rest[depth + 1]
            if bound > worst():
                continue
            chosen[kind] = option.index
            visit(depth + 1, total + option.own + added, used | new, count)

    visit(0, 0.0, frozenset(), 0)
    best = sorted(((-t, key) for t, _, key in heap), key=lambda b: (b[0], b[1]))
    return best
