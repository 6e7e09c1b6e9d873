"""Distinct choices, tie-breaks after cost and the screens of ``quartet pick``.

Hand-made designs test the rules of ``optimizer.solve.ranking`` one by one; one pick on the
motor-shunt example (cached) tests what the screen shows at 80, 120 and 160 columns.
Sources are named beside each check.
"""

from __future__ import annotations

import dataclasses
import io
import re
from functools import cache
from types import SimpleNamespace

import pytest
from helpers import ROOT
from rich.console import Console

from optimizer.catalog import load_catalogs
from optimizer.cost import design_cost
from optimizer.design import Design, Placement, Topology
from optimizer.parts import DiscretePart, NetworkPart
from optimizer.report.pick import buy_lines, render_pick, trade_text
from optimizer.report.pickjson import pick_to_json
from optimizer.report.pickreport import PickReport, build_pick_report
from optimizer.solve.ranking import (
    base_values,
    binding_requirement,
    family_key,
    margin_steps,
    series_rank,
    tie_key,
    unbalanced_pairs,
)
from optimizer.solve.search import PickResult, SearchStatus, pick
from optimizer.solve.trade import KindBest, Trade, cost_per_db, kind_trade
from optimizer.spec import Preferences
from optimizer.specfile import load_spec
from optimizer.statistics import with_statistics
from optimizer.verify import verify

EXAMPLE = ROOT / "examples" / "motor_shunt.yaml"
PREFS = Preferences()


def _chip(part_id: str, ohms: float, tol: float = 0.001, tempco: float = 25e-6) -> DiscretePart:
    """Invented demo parts (not check values: the checks below are on the rules)."""
    return DiscretePart(part_id, ohms, tol, tempco, "0603", 0.1, 75.0, 1.0)


def _discrete(values: tuple[float, float, float, float], tol: float = 0.001) -> Design:
    ids = [f"T-{i}-{v:g}" for i, v in enumerate(values)]
    return Design(
        tuple(  # type: ignore[arg-type]
            Placement(f"R{i + 1}", _chip(ids[i], v, tol)) for i, v in enumerate(values)
        )
    )


def _quad(part_id: str, values: tuple[float, ...], order: tuple[int, ...] = (0, 1, 2, 3)) -> Design:
    net = NetworkPart(part_id, values, 0.001, 1e-4, 10e-6, 1e-6, 0.1, 80.0, 5.0)
    return Design(
        tuple(  # type: ignore[arg-type]
            Placement(f"R{i + 1}", net, order[i]) for i in range(4)
        )
    )


# ---------------------------------------------------------------------------------------------
# families
# ---------------------------------------------------------------------------------------------


def test_one_grade_at_two_base_values_is_one_family() -> None:
    """All four values scaled by 10 with the same grade and cost: one choice (our rule,
    README "Distinct choices")."""
    a = _discrete((1e3, 2e4, 1e3, 2e4))
    b = _discrete((1e4, 2e5, 1e4, 2e5))
    assert family_key(a, design_cost(a, PREFS)) == family_key(b, design_cost(b, PREFS))
    assert base_values(a) == (1e3,) and base_values(b) == (1e4,)


def test_another_grade_or_another_ratio_is_another_family() -> None:
    a = _discrete((1e3, 2e4, 1e3, 2e4))
    tighter = _discrete((1e3, 2e4, 1e3, 2e4), tol=0.0005)
    other_ratio = _discrete((1e3, 2e4, 2e3, 4e4))
    key = family_key(a, design_cost(a, PREFS))
    assert key != family_key(tighter, design_cost(tighter, PREFS))
    assert key != family_key(other_ratio, design_cost(other_ratio, PREFS))


def test_gain_network_and_attenuator_used_backwards_are_one_choice() -> None:
    """A gain-2 quad (1k, 2k, 1k, 2k) and an attenuate-by-2 quad (2k, 1k, 2k, 1k) placed
    element 2 at R1, 1 at R2, 4 at R3, 3 at R4 give the same four resistances from the same
    grade: electrically identical, one choice."""
    gain = _quad("DEMO-G2", (1e3, 2e3, 1e3, 2e3))
    backwards = _quad("DEMO-A2", (2e3, 1e3, 2e3, 1e3), order=(1, 0, 3, 2))
    assert gain.resistances_ohm == backwards.resistances_ohm
    assert family_key(gain, design_cost(gain, PREFS)) == family_key(
        backwards, design_cost(backwards, PREFS)
    )
    assert buy_lines(backwards)[0][:3] == ("DEMO-A2", 1, "R1=#2 R2=#1 R3=#4 R4=#3")


# ---------------------------------------------------------------------------------------------
# the tie-break rules one by one
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("values", "rank"),
    [
        # IEC 60063: 1.0, 2.2, 4.7 are E3 values; 1.5 is E6; 1.2 is E12; 1.1 is E24;
        # 1.05 is E48; 4.99 is E96; 1.01 is E192 only.
        ((1e3, 2.2e3, 4.7e3, 10e3), 0),
        ((1e3, 1.5e3, 1e3, 1.5e3), 1),
        ((1.2e3, 1e3, 1e3, 1e3), 2),
        ((1.1e3, 1e3, 1e3, 1e3), 3),
        ((1.05e3, 1e3, 1e3, 1e3), 4),
        ((4.99e3, 1e3, 1e3, 1e3), 5),
        ((1.01e3, 1e3, 1e3, 1e3), 6),
        ((1.234e3, 1e3, 1e3, 1e3), 7),
    ],
)
def test_shortest_series(values: tuple[float, ...], rank: int) -> None:
    assert series_rank(values) == rank


def test_balanced_inputs() -> None:
    """R1 = R3 and R2 = R4: balanced (common practice for a difference amplifier)."""
    assert unbalanced_pairs((1e3, 2e4, 1e3, 2e4)) == 0
    assert unbalanced_pairs((229e3, 458e3, 499e3, 998e3)) == 2
    assert unbalanced_pairs((1e3, 2e4, 1e3, 2.1e4)) == 1


@pytest.mark.parametrize(
    ("margin", "limit", "unit", "steps"),
    [(2.62, 80.0, "dB", 2), (2.24, 80.0, "dB", 2), (4.9, 80.0, "dB", 4), (-0.5, 80.0, "dB", -1),
     (0.0021, 0.005, "", 4), (0.0004, 0.005, "", 0)],
)  # fmt: skip
def test_margin_counts_in_whole_steps(margin: float, limit: float, unit: str, steps: int) -> None:
    """1 dB steps for dB figures, a tenth of the limit otherwise (our rule, module docstring)."""
    assert margin_steps(margin, limit, unit) == steps


def _verdict(cmrr_margin_db: float, noise_v: float) -> SimpleNamespace:
    cmrr = SimpleNamespace(name="cmrr_worst_case", margin=cmrr_margin_db, limit=80.0, unit="dB")
    noise = SimpleNamespace(name="output_noise", value=noise_v)
    return SimpleNamespace(requirements=(cmrr,), tightest=cmrr, checks=(noise,), passed=True)


def _order(items: list[tuple[Design, SimpleNamespace]]) -> list[Design]:
    binding = binding_requirement([v for _, v in items])
    return [d for d, v in sorted(items, key=lambda dv: tie_key(dv[0], dv[1], binding))]


def test_more_margin_first_then_fewer_lines() -> None:
    """The issue's case: four different values beat by a 100k / 49.9k design with two fewer
    BOM lines and 2.3 dB more margin: the latter ranks first; with equal margin steps the
    design with fewer lines still ranks first."""
    four = _discrete((58.3e3, 29.1e3, 49.9e3, 24.9e3))
    chip_a, chip_b = _chip("T-A", 100e3), _chip("T-B", 49.9e3)
    two = Design(
        (Placement("R1", chip_a), Placement("R2", chip_b), Placement("R3", chip_a),
         Placement("R4", chip_b))
    )  # fmt: skip
    assert _order([(four, _verdict(1.0, 1e-5)), (two, _verdict(3.3, 1e-5))]) == [two, four]
    assert _order([(four, _verdict(1.2, 1e-5)), (two, _verdict(1.6, 1e-5))]) == [two, four]
    # More margin wins over fewer lines.
    assert _order([(four, _verdict(3.1, 1e-5)), (two, _verdict(1.9, 1e-5))]) == [four, two]


def test_balanced_before_noise_and_lower_noise_before_series() -> None:
    balanced = _discrete((249e3, 499e3, 249e3, 499e3))
    unbalanced = _discrete((229e3, 458e3, 499e3, 998e3))
    assert _order([(unbalanced, _verdict(2.0, 1e-6)), (balanced, _verdict(2.0, 9e-6))]) == [
        balanced,
        unbalanced,
    ]
    # The case: the 1 kΩ version (48.7 µV) before the 1 MΩ one (145 µV).
    low = _quad("DEMO-Q-1K", (1e3, 20e3, 1e3, 20e3))
    high = _quad("DEMO-Q-50K", (50e3, 1e6, 50e3, 1e6))
    ranked = _order([(high, _verdict(2.65, 145e-6)), (low, _verdict(2.24, 48.7e-6))])
    assert ranked == [low, high]
    # Equal noise: the shorter series first (E12's 1.2 before E96's 4.99).
    e12 = _discrete((1.2e3, 12e3, 1.2e3, 12e3))
    e96 = _discrete((4.99e3, 49.9e3, 4.99e3, 49.9e3))
    assert _order([(e96, _verdict(2.0, 1e-6)), (e12, _verdict(2.0, 1e-6))]) == [e12, e96]


# ---------------------------------------------------------------------------------------------
# the screen, on the motor-shunt example
# ---------------------------------------------------------------------------------------------


@cache
def _report() -> PickReport:
    spec = load_spec(EXAMPLE)
    catalog = load_catalogs(
        list(spec.preferences.catalogs), include_builtin=spec.preferences.use_builtin_catalogs
    )
    result = pick(spec, catalog, verify, top=10, time_limit_s=60, distinct=True)
    result, seconds = with_statistics(result, spec)
    return build_pick_report(
        spec, result, designs_asked=10, time_limit_s=60, cautions=(), stock_known=False,
        statistics_seconds=seconds,
    )  # fmt: skip


def _screen(width: int, stock: bool = False) -> str:
    console = Console(file=io.StringIO(), width=width, color_system=None)
    report = dataclasses.replace(_report(), stock_known=stock)
    console.print(render_pick(report, width=width))
    return console.file.getvalue()  # type: ignore[attr-defined]


def test_each_family_is_one_row_with_its_other_values() -> None:
    """The built-in quad grade QN4-G20 at 1k ... 50k is one row (not six), whose other base
    values are named; the ranking has one row per family key."""
    report = _report()
    keys = [family_key(s.design, s.cost) for s in report.ranked]
    assert len(keys) == len(set(keys))
    first = report.ranked[0]
    assert first.design.topology is Topology.QUAD
    assert len(report.members[0]) == 5
    # Equal cost inside a family; the representative is the lowest-noise member.
    noise = [m.verification for m in report.members[0]]
    assert all(m.cost.total == first.cost.total for m in report.members[0])
    shown_noise = next(c.value for c in first.verification.checks if c.name == "output_noise")
    for v in noise:
        assert shown_noise <= next(c.value for c in v.checks if c.name == "output_noise")
    assert first.design.resistances_ohm == (1e3, 20e3, 1e3, 20e3)
    text = _screen(160)
    assert "also at this cost: 2kΩ, 5kΩ, 10kΩ, 20kΩ, 50kΩ" in text
    screen = text.split("The best design in full")[0]
    assert screen.count("QN4-G20-") == 2  # the ranking row and the buy block (not six rows)


def test_json_keeps_every_member_with_its_family_key() -> None:
    document = pick_to_json(_report())
    ranked, members = document["ranked"], document["family_members"]
    assert ranked[0]["family_size"] == 1 + len(_report().members[0])
    same = [m for m in members if m["family_key"] == ranked[0]["family_key"]]
    assert len(same) == ranked[0]["family_size"] - 1
    assert {m["rank"] for m in same} == {1}
    assert len({r["family_key"] for r in ranked}) == len(ranked)


@pytest.mark.parametrize("stock", [False, True])
@pytest.mark.parametrize("width", [80, 120, 160])
def test_ids_and_cost_are_never_cut(width: int, stock: bool) -> None:
    """Every part id of the ranking appears whole (with no ellipsis) at 80, 120 and 160
    columns, with and without the stock column, and so does each cost; the ranking table
    fits the screen (its right border is on every row)."""
    text = _screen(width, stock)
    ranking = text.split("Buy this")[0]
    assert "…" not in ranking.replace("… (", "")  # "… (29 values in all)" is ours
    for shown in _report().ranked:
        for placement in shown.design.placements:
            whole = rf"(?<![\w-]){re.escape(placement.part.part_id)}(?![\w-])"
            assert re.search(whole, ranking)
        assert f"{shown.cost.total:.3f}" in ranking
    assert max(len(line) for line in text.splitlines()) <= width
    rows = [line for line in ranking.splitlines() if line.startswith("│")]
    assert rows and all(line.rstrip().endswith("│") for line in rows)
    if stock:
        assert "in stock: no" in ranking


def test_buy_block_lists_each_part_once() -> None:
    text = _screen(120)
    block = text.split("Buy this")[1].split("Status:")[0]
    winner = _report().ranked[0]
    part_id = winner.design.placements[0].part.part_id
    assert block.count(part_id) == 1
    assert "R1=#1 R2=#2 R3=#3 R4=#4" in block
    assert f"Total relative cost {winner.cost.total:.3f}" in block


# ---------------------------------------------------------------------------------------------
# the discrete-versus-network trade line
# ---------------------------------------------------------------------------------------------


def test_cost_per_db_by_hand() -> None:
    """(40 − 20) / (90 − 80) = 2 per dB (arithmetic by hand)."""
    assert cost_per_db(20.0, 80.0, 40.0, 90.0) == pytest.approx(2.0)


def test_trade_line_says_the_numbers() -> None:
    spec = load_spec(EXAMPLE)
    both = Trade(
        KindBest("four discrete", True, 20.0, 81.0), KindBest("network", True, 34.57, 88.5), 80.0
    )
    text = trade_text(both, spec)
    assert "four discrete: cheapest at cost 20.000 with 81.00 dB worst case" in text
    assert "network: cheapest at cost 34.570 with 88.50 dB worst case" in text
    # 7.50 dB more for 14.570 more: 14.57 / 7.5 = 1.943 per dB (by hand).
    assert "extra 7.50 dB cost 14.570 more (1.943 per dB)" in text
    none = Trade(
        KindBest("four discrete", False, 380.23, 74.7, floor_db=74.0, out_of_reach_db=77.0),
        KindBest("network", True, 34.57, 82.24),
        80.0,
    )
    assert (
        "no four-discrete design reaches 80 dB (nor 77 dB); the cheapest at 74 dB costs 380.230 "
        "with 74.70 dB worst case" in trade_text(none, spec)
    )
    nothing = Trade(
        KindBest("four discrete", False, None, None, out_of_reach_db=50.0),
        KindBest("network", True, 34.57, 82.24),
        80.0,
    )
    assert "no four-discrete design reaches 80 dB (nor 50 dB), nor any lower floor tried" in (
        trade_text(nothing, spec)
    )


def test_trade_on_the_example_searches_the_missing_kind() -> None:
    """Motor shunt: no discrete design meets the 80 dB floor (the ranking holds networks only),
    so the trade picks the cheapest discrete design at the first relaxed floor that has one; the
    network figures are the winner's. Checked against the pick itself run at each floor: the
    floors above the one reported have no discrete design, and the reported one is the pick's
    optimum there."""
    spec = load_spec(EXAMPLE)
    catalog = load_catalogs(list(spec.preferences.catalogs))
    result = _report().result
    trade = kind_trade(spec, catalog, verify, result, time_limit_s=30.0)
    assert trade is not None
    winner = _report().ranked[0]
    assert trade.network.meets and trade.network.cost == winner.cost.total
    assert trade.network.cmrr_db == winner.verification.worst_case.cmrr_db
    d = trade.discrete
    assert not d.meets and not d.timed_out
    assert d.floor_db is not None and d.out_of_reach_db is not None
    assert d.floor_db < d.out_of_reach_db <= 80.0
    assert d.cmrr_db is not None and d.floor_db <= d.cmrr_db < d.out_of_reach_db

    def discrete_at(floor: float) -> PickResult:
        req = dataclasses.replace(spec.requirements, cmrr_floor_db=floor)
        prefs = dataclasses.replace(spec.preferences, topologies=(Topology.DISCRETE,))
        return pick(
            dataclasses.replace(spec, requirements=req, preferences=prefs),
            catalog,
            verify,
            top=1,
            time_limit_s=30.0,
        )

    above = discrete_at(d.out_of_reach_db)
    assert above.status is SearchStatus.INFEASIBLE and not above.ranked
    at = discrete_at(d.floor_db)
    assert at.status is SearchStatus.OPTIMAL
    assert d.cost == pytest.approx(at.ranked[0].cost.total, rel=1e-12)


def test_trade_of_a_kind_searched_below_a_ceiling_tries_the_asked_floor() -> None:
    """A kind the pick searched only below the ranking's last cost (``PickResult.capped``: the
    CP-SAT streams of discrete parts on the yield basis, bounded by the network enumeration)
    may still meet the spec. Motor shunt at the first relaxed floor where a discrete design
    exists, the ranking made of networks only: the trade must report the kind as meeting the
    spec at the cost of the discrete pick's own optimum there (checked against that pick), and
    not as out of reach; unsearched figures are said to be not found, not unreachable."""
    spec = load_spec(EXAMPLE)
    catalog = load_catalogs(list(spec.preferences.catalogs))
    first = kind_trade(spec, catalog, verify, _report().result, time_limit_s=30.0)
    assert first is not None and first.discrete.floor_db is not None
    floor = first.discrete.floor_db
    req = dataclasses.replace(spec.requirements, cmrr_floor_db=floor)
    relaxed = dataclasses.replace(spec, requirements=req)
    networks = tuple(t for t in relaxed.preferences.topologies if t is not Topology.DISCRETE)
    only_networks = dataclasses.replace(
        relaxed, preferences=dataclasses.replace(relaxed.preferences, topologies=networks)
    )
    result = pick(only_networks, catalog, verify, top=3, time_limit_s=30.0)
    assert result.ranked and all(c.design.topology is not Topology.DISCRETE for c in result.ranked)
    capped = dataclasses.replace(result, extras=(), capped=frozenset({Topology.DISCRETE}))
    trade = kind_trade(relaxed, catalog, verify, capped, time_limit_s=30.0)
    assert trade is not None
    discrete_only = dataclasses.replace(
        relaxed,
        preferences=dataclasses.replace(relaxed.preferences, topologies=(Topology.DISCRETE,)),
    )
    truth = pick(discrete_only, catalog, verify, top=1, time_limit_s=30.0)
    assert truth.status is SearchStatus.OPTIMAL and truth.ranked
    assert trade.discrete.meets
    assert trade.discrete.cost == pytest.approx(truth.ranked[0].cost.total, rel=1e-12)
    unknown = Trade(
        KindBest("four discrete", False, None, None, timed_out=True),
        KindBest("network", True, 34.57, 82.24),
        80.0,
    )
    text = trade_text(unknown, spec)
    assert "no four-discrete design found at 80 dB within the search's time bound" in text
    assert "reaches" not in text
    cut = Trade(
        KindBest("four discrete", True, 247.03, 54.74, timed_out=True),
        KindBest("network", True, 9.27, 54.46),
        54.0,
    )
    assert "four discrete: best found within the search's time bound at cost 247.030" in (
        trade_text(cut, spec)
    )


# ---------------------------------------------------------------------------------------------
# user text is never read as markup or emoji
# ---------------------------------------------------------------------------------------------


def test_error_message_keeps_colons_literally() -> None:
    """ "40:100:2" in a message must not become an emoji (Rich reads ":100:" as one)."""
    from optimizer.cli import main

    out = Console(file=io.StringIO(), width=200, color_system=None)
    err = Console(file=io.StringIO(), width=200, color_system=None)
    code = main(["spec", "validate", "no/such/:100:[bold].yaml"], console=out, err=err)
    text = err.file.getvalue()  # type: ignore[attr-defined]
    assert code != 0
    assert ":100:[bold].yaml" in text
    assert "\N{HUNDRED POINTS SYMBOL}" not in text


def test_check_shows_the_cost_and_one_row_per_statistic() -> None:
    """``quartet check`` prints the relative cost; the Monte-Carlo table has no two rows for
    the same figure (the CMRR at the yield target appeared twice under two names)."""
    from optimizer.cli import main

    out = Console(file=io.StringIO(), width=200, color_system=None)
    err = Console(file=io.StringIO(), width=200, color_system=None)
    argv = ["check", str(EXAMPLE), "--r1", "1k", "--r2", "20k", "--r3", "1k", "--r4", "20k",
            "--tolerance", "0.1%", "--tempco", "25ppm", "--samples", "2000"]  # fmt: skip
    main(argv, console=out, err=err)
    text = out.file.getvalue()  # type: ignore[attr-defined]
    # The cost by the module docstring of optimizer.cost: 4 placements × 0.02 + 4 lines × 0.05
    # (the example's preferences), parts given by value cost 0.
    assert "Relative cost 0.280: parts 0.000, placements 0.080, BOM lines 0.200" in text
    assert "How the resistors are bought: 4 discrete" in text
    rows = [line.split("│")[1].strip() for line in text.splitlines() if "of builds" in line]
    assert len(rows) == len(set(rows)) and "CMRR reached by 99.9 % of builds" in rows


# ---------------------------------------------------------------------------------------------
# the sweep's text chart
# ---------------------------------------------------------------------------------------------


def test_text_chart_scales_from_the_lowest_cost_and_marks_none_found() -> None:
    """Hand-made sweep (demo numbers): networks at 20.77 and 34.57, discrete at 380.18 then
    none (proven: ``x``) and none in time (``?``). The bottom label is the lowest cost found
    (20.77), not 0, and the levels without a design are marked, not dropped."""
    from optimizer.report.sweep import sweep_text_chart
    from optimizer.solve.search import SearchStatus
    from optimizer.sweep import SeriesPoint, SweepPoint, SweepResult

    ok, none, late = SearchStatus.OPTIMAL, SearchStatus.INFEASIBLE, SearchStatus.TIME_LIMIT
    quad, four = Topology.QUAD, Topology.DISCRETE
    points = (
        SweepPoint(50.0, SeriesPoint(380.18, ok, four), SeriesPoint(20.77, ok, quad)),
        SweepPoint(52.0, SeriesPoint(None, none, None), SeriesPoint(34.57, ok, quad)),
        SweepPoint(54.0, SeriesPoint(None, late, None), SeriesPoint(None, none, None)),
    )
    chart = sweep_text_chart(SweepResult(points, 5.0))
    lines = chart.splitlines()
    assert lines[0].startswith("380.2 |d")
    assert lines[11].startswith("20.77 |n n")  # 34.57 rounds to the bottom row too
    assert " no d |  x ?" in chart and " no n |    x" in chart
    assert "x = none exists, ? = none found in time" in chart


def test_collection_bound_is_reported_and_keeps_cost_order(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """With the bound on extra designs set to 3 the collection stops early: the result says so
    and the ranked designs stay in cost order (the exact ranking of what is shown)."""
    import optimizer.solve.search as search

    monkeypatch.setattr(search, "MAX_EXTRA_DESIGNS", 3)
    spec = load_spec(EXAMPLE)
    catalog = load_catalogs(list(spec.preferences.catalogs))
    result = pick(spec, catalog, verify, top=10, time_limit_s=60, distinct=True)
    assert result.ties_cut
    assert len(result.ranked) <= 13
    costs = [c.cost.total for c in result.ranked]
    assert costs == sorted(costs)
    assert list(result.choices) == sorted(result.choices)
