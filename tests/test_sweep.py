"""``quartet sweep``: the cheapest design against the CMRR floor.

Source of the checks: a looser floor admits every design a tighter floor admits (the feasible
set of the tighter requirement is a subset), so the proven-cheapest cost can never rise as the
floor falls, and once a kind is proven infeasible it stays infeasible at every higher floor
(set inclusion; common practice). Plot files are checked against the PNG signature (PNG
specification, ISO/IEC 15948, section 5.2) and the SVG root element (W3C SVG 1.1, the ``svg``
element in the ``http://www.w3.org/2000/svg`` namespace).
"""

from __future__ import annotations

import io
import itertools
import xml.etree.ElementTree as ET
from dataclasses import replace
from pathlib import Path

import pytest
from helpers import EXAMPLES
from rich.console import Console

from optimizer.api import spec_catalogs
from optimizer.cli import main
from optimizer.errors import SpecError
from optimizer.report.sweep import last_feasible, render_sweep_table, sweep_plot, sweep_text_chart
from optimizer.solve.search import SearchStatus
from optimizer.specfile import load_spec
from optimizer.sweep import SweepResult, parse_range, sweep, sweep_cmrr

INDUSTRIAL = str(EXAMPLES / "industrial_input.yaml")
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _run(argv: list[str]) -> tuple[int, str, str]:
    out = Console(file=io.StringIO(), width=200, color_system=None)
    err = Console(file=io.StringIO(), width=200, color_system=None)
    code = main(argv, console=out, err=err)
    text = out.file.getvalue(), err.file.getvalue()  # type: ignore[attr-defined]
    assert "Traceback" not in text[0] + text[1]
    return code, text[0], text[1]


@pytest.fixture(scope="module")
def industrial_sweep() -> SweepResult:
    spec = load_spec(INDUSTRIAL)
    catalog = spec_catalogs(spec)
    seen: list[float] = []
    result = sweep_cmrr(
        spec,
        catalog,
        parse_range("50:60:5"),
        time_limit_s=10.0,
        progress=lambda done, floor: seen.append(floor),
    )
    assert seen == [50.0, 55.0, 60.0]
    return result


@pytest.mark.parametrize(
    ("text", "expected"),
    [("40:50:5", (40.0, 45.0, 50.0)), ("40:49:5", (40.0, 45.0)), ("60", (60.0,)),
     ("0.5:1.5:0.5", (0.5, 1.0, 1.5))],
)  # fmt: skip
def test_parse_range(text: str, expected: tuple[float, ...]) -> None:
    assert parse_range(text) == expected


@pytest.mark.parametrize("text", ["40:30:2", "40:50:0", "a:b:c", "40:50", "40:50:-1", "nan:1:1"])
def test_parse_range_rejects(text: str) -> None:
    with pytest.raises(SpecError, match="--cmrr"):
        parse_range(text)


def test_cost_never_rises_as_the_floor_falls(industrial_sweep: SweepResult) -> None:
    for kind in ("discrete", "network"):
        series = [getattr(p, kind) for p in industrial_sweep.points]
        proven = [(p.level, s.cost) for p, s in zip(industrial_sweep.points, series,
                  strict=True) if s.status is SearchStatus.OPTIMAL]  # fmt: skip
        for (_, low_cost), (_, high_cost) in itertools.pairwise(proven):
            assert low_cost is not None and high_cost is not None
            assert low_cost <= high_cost + 1e-12
        infeasible = [i for i, s in enumerate(series) if s.status is SearchStatus.INFEASIBLE]
        if infeasible:
            assert all(s.cost is None for s in series[infeasible[0] :])
    # This example: both kinds feasible at 50 dB, nothing at 60 dB; the network is cheaper.
    first, last = industrial_sweep.points[0], industrial_sweep.points[-1]
    assert first.discrete.cost is not None and first.network.cost is not None
    assert first.cheaper == "network"
    assert last.discrete.cost is None and last.network.cost is None
    assert last_feasible(industrial_sweep, "discrete") == 0
    assert last_feasible(industrial_sweep, "network") == 1


def test_text_chart(industrial_sweep: SweepResult) -> None:
    chart = sweep_text_chart(industrial_sweep)
    assert "d" in chart and "n" in chart and "CMRR floor 50 dB ... 60 dB" in chart


def test_plots(industrial_sweep: SweepResult) -> None:
    pytest.importorskip("matplotlib")
    png = sweep_plot(industrial_sweep, "png", "t")
    assert png is not None and png.startswith(PNG_SIGNATURE)
    svg = sweep_plot(industrial_sweep, "svg", "t")
    assert svg is not None
    root = ET.fromstring(svg)
    assert root.tag == "{http://www.w3.org/2000/svg}svg"


def test_sweep_command(tmp_path: Path) -> None:
    plot = tmp_path / "curve.png"
    code, out, err = _run(
        ["sweep", INDUSTRIAL, "--cmrr", "50:55:5", "--time-limit", "10", "--plot", str(plot)]
    )
    assert code == 0, err
    assert "Cheapest design against the CMRR floor" in out
    assert "50 dB" in out and "55 dB" in out and "last feasible" in out
    try:
        import matplotlib  # noqa: F401
    except ImportError:
        assert "matplotlib is not installed" in out and not plot.exists()
    else:
        assert plot.read_bytes().startswith(PNG_SIGNATURE)
        # An existing plot is kept without --force (checked before any search runs).
        before = plot.read_bytes()
        code, _, err = _run(["sweep", INDUSTRIAL, "--cmrr", "50", "--plot", str(plot)])
        assert code == 2 and str(plot) in err and plot.read_bytes() == before


@pytest.mark.parametrize(
    ("argv", "message"),
    [(["--cmrr", "60:40:2"], "--cmrr"), (["--cmrr", "50", "--plot", "x.gif"], ".png or .svg")],
)
def test_sweep_command_bad_input(argv: list[str], message: str) -> None:
    code, _, err = _run(["sweep", INDUSTRIAL, *argv])
    assert code == 2 and message in err


def test_text_chart_places_the_highest_cost_on_top() -> None:
    # Layout check on hand-made points (the figures are arbitrary, not reference values).
    from optimizer.sweep import SeriesPoint, SweepPoint

    def point(floor: float, discrete: float | None, network: float) -> SweepPoint:
        status = SearchStatus.OPTIMAL if discrete is not None else SearchStatus.INFEASIBLE
        return SweepPoint(
            floor,
            SeriesPoint(discrete, status, None),
            SeriesPoint(network, SearchStatus.OPTIMAL, None),
        )

    result = SweepResult((point(40, 300, 20), point(45, 380, 20), point(50, None, 380)), 5.0)
    lines = sweep_text_chart(result).splitlines()
    assert lines[0].split("|")[1] == "  d n"
    widths = {line.index("|") for line in lines[:12]}
    assert len(widths) == 1  # the axis is straight


def test_gain_accuracy_sweep() -> None:
    # A looser gain accuracy admits every design a tighter one admits (set inclusion): the
    # proven cheapest cost never rises as the accuracy loosens.
    spec = load_spec(INDUSTRIAL)
    result = sweep(
        spec, spec_catalogs(spec), "gain_accuracy", (0.0005, 0.001, 0.002), time_limit_s=10
    )
    assert result.axis == "gain_accuracy"
    costs = [p.network.cost for p in result.points if p.network.status is SearchStatus.OPTIMAL]
    assert len(costs) >= 2
    assert all(a >= b for a, b in itertools.pairwise(c for c in costs if c is not None))
    mark = last_feasible(result, "network")
    if mark is not None:  # the tightest feasible accuracy has an infeasible tighter one
        assert result.points[0].network.cost is None
    table = io.StringIO()
    Console(file=table, width=200, color_system=None).print(render_sweep_table(result, "t"))
    assert "gain accuracy" in table.getvalue() and "±0.05 %" in table.getvalue()


def test_gain_accuracy_of_zero_is_refused() -> None:
    code, _, err = _run(["sweep", INDUSTRIAL, "--gain-accuracy", "0:0.1:0.05"])
    assert code == 2 and "gain_accuracy" in err


MOTOR = str(EXAMPLES / "motor_shunt.yaml")


@pytest.mark.parametrize(
    ("axis", "levels"),
    [("cmrr", (62.0, 58.0, 60.0, 86.0, 84.0)), ("gain_accuracy", (0.001, 0.004, 0.002))],
)
def test_a_sweep_point_is_the_pick_at_that_level(
    axis: str, levels: tuple[float, ...], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Set inclusion (common practice): the designs meeting a tighter level are a subset of those
    # meeting a looser one, so a looser level's proven cheapest design that still passes is the
    # cheapest, and a kind proven infeasible stays so. The sweep leans on that to skip searches;
    # here every point is compared with a search of its own at that level.
    import optimizer.sweep as sweep_module
    from optimizer.solve.search import pick
    from optimizer.spec import Objective
    from optimizer.sweep import DISCRETE_TOPOLOGIES, NETWORK_TOPOLOGIES
    from optimizer.verify import verify_candidate

    spec = load_spec(MOTOR)
    catalog = spec_catalogs(spec)
    searches: list[float] = []

    def counted(*args: object, **kwargs: object) -> object:
        searches.append(1.0)
        return pick(*args, **kwargs)  # type: ignore[arg-type]

    monkeypatch.setattr(sweep_module, "pick", counted)
    result = sweep(spec, catalog, axis, levels, time_limit_s=20.0)  # type: ignore[arg-type]
    assert [p.level for p in result.points] == list(levels)
    assert len(searches) < 2 * len(levels)  # some level was inherited
    for point in result.points:
        for kinds, shown in ((DISCRETE_TOPOLOGIES, point.discrete), (NETWORK_TOPOLOGIES,
                             point.network)):  # fmt: skip
            allowed = tuple(t for t in spec.preferences.topologies if t in kinds)
            one = replace(
                spec,
                requirements=replace(spec.requirements, cmrr_floor_db=point.level)
                if axis == "cmrr"
                else replace(spec.requirements, gain_accuracy=point.level),
                preferences=replace(spec.preferences, topologies=allowed,
                                    objective=Objective.COST),
            )  # fmt: skip
            own = pick(one, catalog, verify_candidate, top=1, time_limit_s=20.0)
            assert own.status is shown.status
            if own.ranked:
                assert shown.cost == pytest.approx(own.ranked[0].cost.total, abs=1e-9)
                assert shown.topology is own.ranked[0].design.topology
            else:
                assert shown.cost is None
