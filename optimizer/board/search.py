"""The board pick: one design per amplifier kind, chosen together so that the board's total
cost (``optimizer.board.model``) is least, every chosen design verified by the exact check.

Method (exact; ``v`` is one channel's parts + placements, ``L`` the line cost, ``q`` a kind's
quantity, ``lines`` a design's distinct part ids):

* **Streams.** For each kind, :class:`optimizer.solve.search.OrderedDesigns` streams its
  designs in nondecreasing *key* ``v + (L/q)·lines`` (the spec with line cost ``L/q`` and no
  stock penalty), through the pick's own screens, which only drop designs the exact check
  must fail; a second stream (line cost 0) gives ``lb``, the least ``v`` of the kind (its
  CP-SAT streams bounded by the first design of its exact enumerations, which the least
  design cannot exceed). The exact check is deferred: a design is verified only when the
  alone search or a board needs it, and a design that fails is dropped.
* **Alone.** Each kind's own cheapest design (``v + L·lines + S·unstocked lines``, the cost
  ``quartet pick`` ranks by) comes from the same stream: that cost is at least
  ``key + L·(1 − 1/q)`` (one line or more), so the stream is read until that reaches the best
  verified cost.
* **Board.** A board holding design ``d`` of kind k costs at least
  ``q_k·key(d) + Σ_{j≠k} q_j·lb_j``: its parts, its own lines (each paid once on the board)
  and the least parts of every other kind. Let ``UB`` be the total of the ``top``-th best board
  over the designs read so far, each of its designs verified. Every stream is read while that
  bound of its next design is ``≤ UB``; a design beyond cannot enter the ``top`` boards. Over
  the designs read, the choice of one per kind is solved exactly (``combine.best_boards``); a
  chosen design not yet verified is verified, and if it fails it is removed and the choice
  solved again. When no stream has a design inside its bound and every board shown is
  verified, the ranking is proven: every design left unread costs more than ``UB``, and every
  read design took part in the exact choice. A cap on distinct lines only removes boards, so
  the argument holds with it.
* **CP-SAT streams** (one dual with two discrete parts, the yield basis) are held back at
  first; each round bounds them from above by the largest key any design may have and still
  matter (the alone bound and the board bound above, from the bounds known so far), and
  raises the bound until no kind needs more (after :data:`MAX_CEILING_ROUNDS`, unbounded).

The status is ``time_limit`` when the clock (or a signal) stopped a stream or the loop first;
the boards shown are then verified but not proven best. Pure: no printing, no files.
"""

from __future__ import annotations

import math
import time
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from enum import Enum

from .. import interrupt
from ..catalog import Catalog
from ..cost import CostBreakdown, design_cost
from ..design import Design
from ..solve.search import OrderedDesigns
from ..solve.verdict import Verdict, Verifier
from ..spec import Objective, Spec, StockPolicy
from .combine import Option, best_boards
from .model import (
    Board,
    BoardAmplifier,
    BoardCost,
    Purchasing,
    board_cost,
    channel_cost,
    design_lines,
)

__all__ = [
    "BoardResult",
    "BoardStatus",
    "Chosen",
    "RankedBoard",
    "alone_spec",
    "board_search",
]

#: Default time limit of a board search, seconds.
DEFAULT_TIME_LIMIT_S = 60.0
#: Relative slack on the bounds, far above float rounding of sums of relative costs.
BOUND_SLACK = 1e-9


class BoardStatus(str, Enum):
    """How a board search ended."""

    OPTIMAL = "proven_optimal"
    TIME_LIMIT = "time_limit"
    INFEASIBLE = "infeasible"


@dataclass(frozen=True)
class Chosen:
    """One kind's design in a board, with its exact check and its cost alone (the cost rule of
    one design under the board's purchasing)."""

    design: Design
    verdict: Verdict
    alone_cost: CostBreakdown


@dataclass(frozen=True)
class RankedBoard:
    """A board: one design per amplifier kind (board order) and its cost."""

    chosen: tuple[Chosen, ...]
    cost: BoardCost


@dataclass(frozen=True)
class BoardResult:
    """The outcome of :func:`board_search`.

    ``boards``: the best boards, cheapest first; ``alone``: the board made of each kind's own
    cheapest design (what picking each amplifier alone gives), None when a kind has none;
    ``infeasible``: indices of kinds nothing meets (status INFEASIBLE) — empty when instead no
    board meets the line cap; ``specs``: each kind's spec as searched (purchasing applied);
    ``read``: designs read per kind; ``verified`` and ``rejected``: exact checks run and
    failed."""

    boards: tuple[RankedBoard, ...]
    alone: RankedBoard | None
    status: BoardStatus
    infeasible: tuple[int, ...]
    specs: tuple[Spec, ...]
    read: tuple[int, ...]
    verified: int
    rejected: int
    seconds: float
    build_seconds: float
    verify_seconds: float


@dataclass(frozen=True)
class _Deferred:
    """The verdict of a design whose exact check is left to the board search."""

    passed: bool = True


def _defer(design: Design, spec: Spec) -> Verdict:
    del design, spec
    return _Deferred()


def alone_spec(amplifier: BoardAmplifier, purchasing: Purchasing) -> Spec:
    """The amplifier's spec with the board's purchasing in place of its own catalogs, stock
    policy, costs and objective (the board minimises cost)."""
    prefer = purchasing.stock is StockPolicy.PREFER
    prefs = replace(
        amplifier.spec.preferences,
        catalogs=purchasing.catalogs,
        use_builtin_catalogs=purchasing.use_builtin_catalogs,
        stock=purchasing.stock,
        stock_penalty=purchasing.stock_penalty if prefer else 0.0,
        line_cost=purchasing.line_cost,
        placement_cost=purchasing.placement_cost,
        objective=Objective.COST,
        cost_cap=None,
    )
    return replace(amplifier.spec, preferences=prefs)


@dataclass
class _Entry:
    design: Design
    key: float  # v + (L/q)·ids: the order of the kind's stream
    variable: float  # v: parts + placements of one channel
    ids: frozenset[str]
    unstocked: frozenset[str]
    order: int
    passed: bool | None = None
    verdict: Verdict | None = None


@dataclass
class _Kind:
    amplifier: BoardAmplifier
    spec: Spec
    stream: OrderedDesigns  # by v + (L/q)·ids
    floor_stream: OrderedDesigns  # by v alone: only its first design is needed
    pool: list[_Entry] = field(default_factory=list)
    _floor: float | None = None
    _floor_known: bool = False

    @property
    def quantity(self) -> int:
        return self.amplifier.quantity

    def pull(self) -> bool:
        candidate = self.stream.next()
        if candidate is None:
            return False
        ids, unstocked = design_lines(candidate.design)
        parts, placements = channel_cost(candidate.design, self.spec.preferences.placement_cost)
        self.pool.append(
            _Entry(
                candidate.design,
                candidate.cost.total,
                parts + placements,
                ids,
                unstocked,
                len(self.pool),
            )
        )
        return True

    def live(self) -> list[_Entry]:
        return [e for e in self.pool if e.passed is not False]

    def least(self) -> float | None:
        """The least variable cost ``v`` of any design of the kind (None: it has none): the
        first design of the stream by ``v``, its CP-SAT streams bounded by the first design of
        its exact enumerations (which the least design cannot cost more than)."""
        if not self._floor_known:
            first = self.floor_stream.peek()
            if self.floor_stream.has_cp_sat:
                self.floor_stream.release(math.inf if first is None else first)
            self._floor = self.floor_stream.peek()
            self._floor_known = True
        return self._floor


class _Checker:
    def __init__(self, verifier: Verifier) -> None:
        self.verifier = verifier
        self.verified = 0
        self.rejected = 0
        self.seconds = 0.0

    def check(self, entry: _Entry, spec: Spec) -> bool:
        if entry.passed is None:
            started = time.perf_counter()
            entry.verdict = self.verifier(entry.design, spec)
            self.seconds += time.perf_counter() - started
            entry.passed = bool(entry.verdict.passed)
            self.verified += 1
            self.rejected += 0 if entry.passed else 1
        return bool(entry.passed)


def _out_of_time(deadline: float) -> bool:
    return interrupt.cancelled() or time.perf_counter() >= deadline


def _slack(value: float) -> float:
    return BOUND_SLACK * max(1.0, abs(value))


def _spare(kind: _Kind, purchasing: Purchasing) -> float:
    """What the alone cost of a design adds to its stream key at least: the key charges
    ``L/q`` per line, the alone cost ``L``, and a design has one line or more."""
    return purchasing.line_cost * (1.0 - 1.0 / kind.quantity)


def _alone(
    kind: _Kind, checker: _Checker, purchasing: Purchasing, deadline: float
) -> _Entry | None:
    """The kind's own cheapest verified design (module docstring), or None: the designs read
    are checked in order of their alone cost until one passes; the stream is read on while a
    design still to come could cost less alone (its key plus :func:`_spare` is below)."""
    prefs = kind.spec.preferences
    spare = _spare(kind, purchasing)
    own: dict[int, float] = {}

    def cost(entry: _Entry) -> float:
        if entry.order not in own:
            own[entry.order] = design_cost(entry.design, prefs).total
        return own[entry.order]

    if not kind.pool:
        kind.pull()
    while True:
        best = None
        for entry in sorted(kind.live(), key=lambda e: (cost(e), e.order)):
            if checker.check(entry, kind.spec):
                best = entry
                break
            if _out_of_time(deadline):
                return None
        if best is None:
            if _out_of_time(deadline) or not kind.pull():
                return None
            continue
        limit = cost(best) - _slack(cost(best))
        read = False
        while not _out_of_time(deadline):
            head = kind.stream.peek()
            if head is None or head + spare >= limit:
                break
            kind.pull()
            read = True
        if not read:
            return best


def _options(kind: _Kind) -> tuple[list[_Entry], list[Option]]:
    live = kind.live()
    return live, [Option(e.variable, e.ids, e.unstocked) for e in live]


def _chosen(entry: _Entry, kind: _Kind) -> Chosen:
    assert entry.verdict is not None
    return Chosen(entry.design, entry.verdict, design_cost(entry.design, kind.spec.preferences))


def _ranked(
    entries: Sequence[_Entry], kinds: Sequence[_Kind], purchasing: Purchasing
) -> RankedBoard:
    chosen = tuple(_chosen(e, k) for e, k in zip(entries, kinds, strict=True))
    cost = board_cost(
        ((k.amplifier.quantity, e.design) for e, k in zip(entries, kinds, strict=True)),
        purchasing,
    )
    return RankedBoard(chosen, cost)


def _solve(
    kinds: Sequence[_Kind], purchasing: Purchasing, top: int
) -> list[tuple[float, list[_Entry]]]:
    prefer = purchasing.stock is StockPolicy.PREFER
    lives, options = zip(*(_options(k) for k in kinds), strict=True)
    unstocked = frozenset().union(*(o.unstocked for opts in options for o in opts))
    found = best_boards(
        options,
        [k.amplifier.quantity for k in kinds],
        line_cost=purchasing.line_cost,
        stock_penalty=purchasing.stock_penalty if prefer else 0.0,
        unstocked=unstocked,
        top=top,
        max_lines=purchasing.max_lines,
    )
    return [(total, [lives[k][i] for k, i in enumerate(key)]) for total, key in found]


def _read_more(kinds: Sequence[_Kind], purchasing: Purchasing, ub: float, deadline: float) -> bool:
    """Read every stream up to its bound under ``ub`` (module docstring); with no ``ub`` yet,
    a batch from each stream. True when anything was read."""
    floor: list[float] = []
    for kind in kinds:
        least = kind.least()
        if least is None:
            return False
        floor.append(kind.quantity * least)
    read = False
    for index, kind in enumerate(kinds):
        rest = sum(floor) - floor[index]
        if math.isinf(ub):
            for _ in range(max(4, len(kind.pool))):
                if _out_of_time(deadline) or not kind.pull():
                    break
                read = True
            continue
        while not _out_of_time(deadline):
            head = kind.stream.peek()
            if head is None or kind.quantity * head + rest > ub + _slack(ub):
                break
            kind.pull()
            read = True
    return read


def _needs(
    kinds: Sequence[_Kind], alone: Sequence[_Entry | None], ub: float, purchasing: Purchasing
) -> list[float]:
    """For each kind, the largest stream key a design may have and still be the kind's alone
    optimum (:func:`_alone_need`) or enter a board of total ``ub`` or less
    (``(ub − Σ_{j≠k} q_j·lb_j)/q_k``, ``lb_j`` the least ``v`` of kind j); inf when not
    bounded."""
    lows = [k.least() or 0.0 for k in kinds]
    needs = []
    for index, (kind, entry) in enumerate(zip(kinds, alone, strict=True)):
        if entry is None or not math.isfinite(ub):
            needs.append(math.inf)
            continue
        rest = sum(
            k.quantity * low
            for j, (k, low) in enumerate(zip(kinds, lows, strict=True))
            if j != index
        )
        board = (ub - rest) / kind.quantity
        need = max(_alone_need(kind, entry, purchasing), board)
        needs.append(need + _slack(need))
    return needs


def _alone_need(kind: _Kind, entry: _Entry | None, purchasing: Purchasing) -> float:
    """The largest variable cost of a design that could beat the kind's alone optimum
    ``entry``: ``own − L`` (a design has at least one line); inf without one."""
    if entry is None:
        return math.inf
    need = design_cost(entry.design, kind.spec.preferences).total - _spare(kind, purchasing)
    return need + _slack(need)


#: Rounds of raising the CP-SAT streams' ceilings before they are left unbounded.
MAX_CEILING_ROUNDS = 4


def _board_loop(
    kinds: Sequence[_Kind], checker: _Checker, purchasing: Purchasing, wanted: int, deadline: float
) -> tuple[list[tuple[float, list[_Entry]]], bool]:
    """The exact choice over the designs read, reading more until the bound proves it (module
    docstring); returns the boards and whether the clock stopped it."""
    boards: list[tuple[float, list[_Entry]]] = []
    while True:
        if _out_of_time(deadline):
            return boards, True
        boards = _solve(kinds, purchasing, wanted)
        pending = [
            (entry, kind)
            for _, entries in boards
            for entry, kind in zip(entries, kinds, strict=True)
            if entry.passed is None
        ]
        if pending:
            for entry, kind in pending:
                checker.check(entry, kind.spec)
            continue
        ub = boards[wanted - 1][0] if len(boards) >= wanted else math.inf
        if not _read_more(kinds, purchasing, ub, deadline):
            return boards, False


def board_search(
    board: Board,
    catalog: Catalog,
    verifier: Verifier,
    *,
    top: int | None = None,
    time_limit_s: float | None = None,
) -> BoardResult:
    """The ``top`` cheapest boards (default: the board's ``alternatives``) whose every design
    passes ``verifier``, with the alone board for comparison (module docstring).

    The CP-SAT streams (one dual with two discrete parts, the yield basis) are held back at
    first: the search runs on the exact enumerations alone, and the bounds it proves there
    (each kind's alone optimum, the ``top``-th board) cap the CP-SAT streams' cost before they
    run (``OrderedDesigns.release``); then the search runs again over every stream."""
    started = time.perf_counter()
    wanted = top if top is not None else board.purchasing.alternatives
    deadline = started + (time_limit_s if time_limit_s is not None else DEFAULT_TIME_LIMIT_S)
    purchasing = board.purchasing
    checker = _Checker(verifier)
    kinds = _kinds(board, catalog, deadline)
    tally = _Tally(kinds, checker, started)

    # CP-SAT ceilings per kind: None while held. First round: the exact enumerations
    # alone; then the CP-SAT streams up to each kind's alone bound; then, while the board
    # bound asks for more, up to it (MAX_CEILING_ROUNDS, then unbounded).
    ceilings: list[float | None] = [None] * len(kinds)
    rounds = 0
    while True:
        alone_entries = [_alone(k, checker, purchasing, deadline) for k in kinds]
        boards: list[tuple[float, list[_Entry]]] = []
        timed_out = False
        if all(e is not None for e in alone_entries):
            boards, timed_out = _board_loop(kinds, checker, purchasing, wanted, deadline)
        if timed_out or _out_of_time(deadline):
            break
        ub = boards[wanted - 1][0] if len(boards) >= wanted else math.inf
        # The first release guesses the other kinds' least costs from the exact enumerations
        # alone (CP-SAT may hold cheaper ones); the rounds after it use only known bounds, so a
        # wrong guess costs a round, never a design.
        needs = _needs(kinds, alone_entries, ub, purchasing)
        needs = [max(n, _alone_need(k, e, purchasing))
                 for k, e, n in zip(kinds, alone_entries, needs, strict=True)]  # fmt: skip
        if rounds >= MAX_CEILING_ROUNDS:
            needs = [math.inf] * len(kinds)
        rounds += 1
        if not _raise_ceilings(kinds, ceilings, needs):
            break

    missing = [i for i, e in enumerate(alone_entries) if e is None]
    if missing:
        proven = [i for i in missing if kinds[i].stream.proven and not _out_of_time(deadline)]
        if proven:
            return tally.result((), None, BoardStatus.INFEASIBLE, proven)
        return tally.result((), None, BoardStatus.TIME_LIMIT)
    alone = _ranked([e for e in alone_entries if e is not None], kinds, purchasing)
    verified_boards = [entries for _, entries in boards if all(e.passed for e in entries)]
    ranked = [_ranked(entries, kinds, purchasing) for entries in verified_boards]
    done = not timed_out and all(k.stream.proven for k in kinds) and not _out_of_time(deadline)
    if not ranked:
        return tally.result((), alone, BoardStatus.INFEASIBLE if done else BoardStatus.TIME_LIMIT)
    return tally.result(ranked, alone, BoardStatus.OPTIMAL if done else BoardStatus.TIME_LIMIT)


def _kinds(board: Board, catalog: Catalog, deadline: float) -> list[_Kind]:
    """One kind per amplifier: its alone spec, the stream ordered by its share of the line
    cost and the stream without line costs (the floor), the CP-SAT streams held."""
    purchasing = board.purchasing
    kinds: list[_Kind] = []
    for amplifier in board.amplifiers:
        spec = alone_spec(amplifier, purchasing)
        per_line = purchasing.line_cost / amplifier.quantity
        keyed = replace(
            spec, preferences=replace(spec.preferences, line_cost=per_line, stock_penalty=0.0)
        )
        bare = replace(
            spec, preferences=replace(spec.preferences, line_cost=0.0, stock_penalty=0.0)
        )
        stream = OrderedDesigns(keyed, catalog, _defer, deadline=deadline, hold_cp_sat=True)
        floor = OrderedDesigns(bare, catalog, _defer, deadline=deadline, hold_cp_sat=True)
        kinds.append(_Kind(amplifier, spec, stream, floor))
    return kinds


def _raise_ceilings(
    kinds: Sequence[_Kind], ceilings: list[float | None], needs: Sequence[float]
) -> bool:
    """Release each kind's CP-SAT stream up to its need where that is above its ceiling
    (``ceilings`` updated in place); whether any ceiling rose."""
    raised = False
    for index, (kind, need) in enumerate(zip(kinds, needs, strict=True)):
        current = ceilings[index]
        if not kind.stream.has_cp_sat:
            ceilings[index] = math.inf
            continue
        if current is None or need > current:
            kind.stream.release(need)
            ceilings[index] = need
            raised = True
    return raised


@dataclass(frozen=True)
class _Tally:
    """What a board result counts besides its boards: the kinds' reads and build times, the
    checker's counts and the time since the search started."""

    kinds: Sequence[_Kind]
    checker: _Checker
    started: float

    def result(
        self,
        boards: Sequence[RankedBoard],
        alone: RankedBoard | None,
        status: BoardStatus,
        infeasible: Sequence[int] = (),
    ) -> BoardResult:
        """The board result with these boards and status."""
        kinds, checker = self.kinds, self.checker
        build = sum(
            sum(o.seconds[0] + o.seconds[1] for o in (k.stream, k.floor_stream)) for k in kinds
        )
        return BoardResult(
            boards=tuple(boards),
            alone=alone,
            status=status,
            infeasible=tuple(infeasible),
            specs=tuple(k.spec for k in kinds),
            read=tuple(len(k.pool) for k in kinds),
            verified=checker.verified,
            rejected=checker.rejected,
            seconds=time.perf_counter() - self.started,
            build_seconds=build,
            verify_seconds=checker.seconds,
        )
