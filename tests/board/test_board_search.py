"""The board search against an exhaustive board reference, and its properties.

The reference shares no code with the board search (``optimizer.board.search``,
``optimizer.board.combine``, ``optimizer.solve.frontier``, ``optimizer.solve.search``): for
each amplifier kind it lists every design the spec allows with
``optimizer.solve.exhaustive.reference_search`` (which verifies every design its exact-check
screens let through with ``optimizer.verify.verify``), keeps the ones that pass, and then tries
every combination of one passing design per kind, costing each board with its own few lines
of arithmetic over the part fields below (the board cost rule: README "Board pick"). The
minimum over a finite set is exact by construction; that is the check value.

Catalogs and specs are generated from a seeded ``random.Random`` (invented demo data, never
check values); E-series values come from ``optimizer.eseries`` (IEC 60063).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
import random
from dataclasses import dataclass

import pytest

from optimizer.board import Board, BoardAmplifier, BoardStatus, Purchasing, board_search
from optimizer.board.search import alone_spec
from optimizer.catalog import Catalog, catalog_from_parts
from optimizer.design import Design, Topology
from optimizer.parts import Amplifier, DiscretePart, NetworkPart, RailSpan
from optimizer.solve.exhaustive import reference_search
from optimizer.spec import Preferences, Rails, Reference, Requirements, Signal, Spec, StockPolicy
from optimizer.verify import verify

#: Seeded random boards in the sweep (2 or 3 amplifier kinds each).
BOARDS = 100
COST_REL_TOL = 1e-9
FRONTIER_TOPOLOGIES = (
    Topology.DISCRETE,
    Topology.QUAD,
    Topology.EQUAL_PAIRS,
    Topology.DIVIDER_PAIRS,
)
LEVELS = (10_000.0, 20_000.0, 49_900.0)  # E96 values (IEC 60063)
TOLERANCES = (0.01, 0.005, 0.001, 0.0005)
TEMPCOS = (100e-6, 50e-6, 25e-6, 10e-6)

AMPLIFIER = Amplifier(
    "board test amp", 120.0, 130.0, 50e6, 50e6, 50e-6, 1e-9, 10e-9, 0.5e-12,
    RailSpan(0.0, 0.0), RailSpan(0.05, 0.05),
)  # fmt: skip


@dataclass(frozen=True)
class Case:
    board: Board
    catalog: Catalog


def random_catalog(rng: random.Random) -> Catalog:
    """4 or 5 discrete parts on the three levels and 0 to 2 networks (invented costs)."""
    parts = []
    for i in range(rng.randint(4, 5)):
        level = LEVELS[i % 3] if i < 3 else rng.choice(LEVELS)
        tol, tc = rng.choice(TOLERANCES), rng.choice(TEMPCOS)
        cost = round(0.01 + 0.002 / math.sqrt(tol * 100) + 0.2e-6 / tc + rng.uniform(0, 0.03), 2)
        parts.append(
            DiscretePart(
                f"D{i}", level, tol, tc, "0603", 0.1, 75.0, cost, rng.choice([0, 100, 100])
            )
        )
    networks = []
    for j in range(rng.choice([0, 1, 2])):
        a, b = rng.sample(LEVELS, 2)
        values = (a, b, a, b) if rng.random() < 0.5 else (a, b)
        network = NetworkPart(
            f"N{j}", values, abs_tolerance=0.005, ratio_tolerance=rng.choice([0.0005, 0.001]),
            abs_tempco_per_k=25e-6, tracking_tempco_per_k=5e-6, power_per_element_w=0.1,
            max_voltage_v=50.0, unit_cost=round(rng.uniform(0.1, 0.6), 2),
            stock_qty=rng.choice([0, 10]),
        )  # fmt: skip
        networks.append(network)
    return catalog_from_parts(parts, networks, source="board-test")


def random_spec(rng: random.Random, gain: float, topologies: tuple[Topology, ...]) -> Spec:
    """A ±15 V amplifier at 25 °C whose floor and accuracy are loose enough that about two
    thirds of the kinds can be met from the tiny catalogs."""
    prefs = Preferences(topologies=topologies, samples=200)
    requirements = Requirements(gain, rng.choice([0.01, 0.02, 0.03]), rng.uniform(30.0, 52.0))
    signal = Signal(-0.5, 0.5, -2.0, 2.0, 1e3)
    return Spec(AMPLIFIER, Rails(15.0, -15.0), signal, Reference(), requirements, prefs)


def random_case(seed: int) -> Case:
    rng = random.Random(seed)
    catalog = random_catalog(rng)
    gains = [b / a for a in LEVELS for b in LEVELS]
    topologies = FRONTIER_TOPOLOGIES if seed % 10 else tuple(Topology)
    kinds = []
    for k in range(rng.choice([2, 2, 3])):
        spec = random_spec(rng, rng.choice(gains), topologies)
        kinds.append(BoardAmplifier(f"kind {k}", spec, rng.choice([1, 1, 2, 3]), f"K{chr(65 + k)}"))
    stock = rng.choice([StockPolicy.ANY, StockPolicy.ANY, StockPolicy.PREFER, StockPolicy.ONLY])
    purchasing = Purchasing(
        stock=stock,
        stock_penalty=round(rng.uniform(0.05, 0.3), 2) if stock is StockPolicy.PREFER else 0.0,
        line_cost=rng.choice([0.0, 0.05, 0.1, 0.3]),
        placement_cost=rng.choice([0.0, 0.01]),
        max_lines=rng.choice([None, None, None, 3, 4]),
    )
    return Case(Board(tuple(kinds), purchasing), catalog)


# ---------------------------------------------------------------------------------------------
# The reference
# ---------------------------------------------------------------------------------------------


def channel(design: Design, placement_cost: float) -> tuple[float, set[str], set[str]]:
    """One channel: Σ unit costs (a network package once) + placement_cost per discrete part
    and per package; its part ids; its ids not in stock."""
    items: dict[tuple[str, int], float] = {}
    for i, p in enumerate(design.placements):
        key = (p.part.part_id, p.package) if isinstance(p.part, NetworkPart) else ("#", i)
        items[key] = p.part.unit_cost
    ids = {p.part.part_id for p in design.placements}
    unstocked = {p.part.part_id for p in design.placements if p.part.stock_qty <= 0}
    return sum(items.values()) + placement_cost * len(items), ids, unstocked


def feasible(spec: Spec, catalog: Catalog) -> list[Design]:
    """Every design of the kind that passes the exact check (all of them, in any order)."""
    found = reference_search(spec, catalog, verify, top=10**9)
    return [design for _, design, _ in found.ranked]


def reference_boards(case: Case, top: int) -> tuple[list[float], list[list[Design]]]:
    """The ``top`` least board totals over every combination, and each kind's passing designs."""
    p = case.board.purchasing
    per_kind = [feasible(alone_spec(a, p), case.catalog) for a in case.board.amplifiers]
    if any(not designs for designs in per_kind):
        return [], per_kind
    rows = [[channel(d, p.placement_cost) for d in designs] for designs in per_kind]
    quantities = [a.quantity for a in case.board.amplifiers]
    totals = []
    for combo in itertools.product(*rows):
        ids = set().union(*(c[1] for c in combo))
        if p.max_lines is not None and len(ids) > p.max_lines:
            continue
        unstocked = set().union(*(c[2] for c in combo))
        penalty = p.stock_penalty * len(unstocked) if p.stock is StockPolicy.PREFER else 0.0
        totals.append(
            sum(q * c[0] for q, c in zip(quantities, combo, strict=True))
            + p.line_cost * len(ids)
            + penalty
        )
    return sorted(totals)[:top], per_kind


def close(a: float, b: float) -> bool:
    return math.isclose(a, b, rel_tol=COST_REL_TOL, abs_tol=1e-12)


@pytest.mark.parametrize("seed", range(BOARDS))
def test_board_search_matches_exhaustive_reference(seed: int) -> None:
    """Source of the check value: the exhaustive minimum over every combination of passing
    designs (module docstring)."""
    case = random_case(seed)
    top = 3
    expected, per_kind = reference_boards(case, top)
    result = board_search(case.board, case.catalog, verify, top=top, time_limit_s=60.0)
    if any(not designs for designs in per_kind):
        assert result.status is BoardStatus.INFEASIBLE, (seed, result.status)
        assert result.infeasible == tuple(i for i, d in enumerate(per_kind) if not d)
        return
    if not expected:  # only the line cap stops every board
        assert result.status is BoardStatus.INFEASIBLE and not result.infeasible, seed
        return
    assert result.status is BoardStatus.OPTIMAL, (seed, result.status)
    found = [b.cost.total for b in result.boards]
    assert len(found) == len(expected), (seed, found, expected)
    for got, want in zip(found, expected, strict=True):
        assert close(got, want), (seed, found, expected)
    for board in result.boards:  # every design shown passed the exact check
        for chosen, spec in zip(board.chosen, result.specs, strict=True):
            assert verify(chosen.design, spec).passed
    # Property: the board never costs more than each amplifier picked alone.
    assert result.alone is not None
    if case.board.purchasing.max_lines is None:
        assert result.boards[0].cost.total <= result.alone.cost.total * (1 + COST_REL_TOL)
        alone_sum = sum(
            a.quantity * (c.alone_cost.parts + c.alone_cost.placements)
            + c.alone_cost.lines
            + c.alone_cost.stock_penalty
            for a, c in zip(case.board.amplifiers, result.alone.chosen, strict=True)
        )
        assert result.alone.cost.total <= alone_sum * (1 + COST_REL_TOL)


@pytest.mark.parametrize("seed", range(0, BOARDS, 20))
def test_without_line_cost_the_board_is_the_sum_of_its_amplifiers(seed: int) -> None:
    """With no line cost and no stock penalty nothing is shared, so the board optimum is
    Σ quantity × each kind's cheapest passing channel (source: the exhaustive lists)."""
    case = random_case(seed)
    purchasing = dataclasses.replace(
        case.board.purchasing, line_cost=0.0, stock_penalty=0.0, max_lines=None
    )
    board = dataclasses.replace(case.board, purchasing=purchasing)
    case = Case(board, case.catalog)
    _, per_kind = reference_boards(case, 1)
    result = board_search(board, case.catalog, verify, top=1, time_limit_s=60.0)
    if any(not d for d in per_kind):
        assert result.status is BoardStatus.INFEASIBLE
        return
    want = sum(
        a.quantity * min(channel(d, purchasing.placement_cost)[0] for d in designs)
        for a, designs in zip(board.amplifiers, per_kind, strict=True)
    )
    assert result.status is BoardStatus.OPTIMAL
    assert close(result.boards[0].cost.total, want), (seed, result.boards[0].cost, want)
    assert close(result.alone.cost.total if result.alone else math.nan, want)
