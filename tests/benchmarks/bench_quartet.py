"""Quartet benchmark: solve time, CLI wall time, CP-SAT against the exhaustive enumerator,
scaling with catalog size, peak memory and Monte-Carlo throughput.

Run (from the repository root, or from anywhere with the script's path)::

    python tests/benchmarks/bench_quartet.py --json bench.json     # full run, under 10 minutes
    python tests/benchmarks/bench_quartet.py --quick               # smoke run, 1 run, small sizes

It prints one table per section (figures are MEDIANS over ``--runs`` runs, default 5, unless the
table says fewer) and writes the same figures as JSON (``--json``). This file is not collected
by pytest (its name has no ``test_`` prefix). Speed targets are checked here, never by timed
assertions in tests (project rule).

Every timed run is checked before it counts: a command's exit code, a pick's status (proven
optimal unless ``EXPECTED_EXAMPLE_STATUS`` or the section says otherwise), the oracle's
agreement, the Monte-Carlo kernel's output. A row with a failed run shows FAILED and the
failure's message instead of figures (no median is taken over failed runs), every target it
feeds counts as missed, and the script exits with code 1 at the end.

It measures whatever ``import optimizer`` resolves to (an install, plain or editable; a
source checkout used without installing falls back to this checkout's tree), and so do its
child interpreters (the CLI runs and the scaling children). The header names that package
(path, version, how it is installed), the checkout's commit and the date.

Generated catalogs are invented demo data (seeded ``random``/``numpy`` streams) on E-series
values from :mod:`optimizer.eseries` (IEC 60063); they are workloads, not check values.
"""

from __future__ import annotations

import argparse
import dataclasses
import datetime
import glob
import json
import math
import os
import platform
import random
import resource
import site
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Sequence
from importlib import metadata
from typing import Any

import numpy as np
import pandas as pd

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
try:
    import optimizer
except ModuleNotFoundError as exc:  # a source checkout used without installing
    if exc.name != "optimizer":
        raise
    sys.path.append(REPO)
    import optimizer

from optimizer.catalog import load_catalogs  # noqa: E402
from optimizer.eseries import ESeries, decade_values, is_member  # noqa: E402
from optimizer.spec import Spec  # noqa: E402
from optimizer.specfile import load_spec  # noqa: E402

# ---------------------------------------------------------------------------------------------
# Targets (issue 7)
# ---------------------------------------------------------------------------------------------

TARGET_CLI_S = 1.5
#: Issue #11: CLI wall time of ``quartet pick examples/motor_shunt.yaml``.
TARGET_CLI_PICK_S = 1.2
TARGET_ENUM_RATIO = 100.0
TARGET_ENUM_AT_S = 10.0
TARGET_1M_SOLVE_S = 10.0
TARGET_1M_SOLVE_OVER_READ = 2.0
TARGET_MC_PER_S = 10e6
TARGET_PEAK_BYTES = 1 << 30
#: Board pick (issue 16): 4 different amplifiers over the built-in catalog, proven; 16
#: channels of 4 kinds.
TARGET_BOARD4_S = 5.0
TARGET_BOARD16_S = 10.0
#: The board section's amplifiers: four bundled examples, each one kind of the board.
BOARD_KINDS = ("motor_shunt", "industrial_input", "mains_monitor", "bridge_front_end")
#: The board section's purchasing (relative units): a line costs two 5 % resistors.
BOARD_LINE_COST = 2.0
BOARD_PLACEMENT_COST = 0.02

#: A pick's status as the benchmark names it (``SearchStatus`` values and the ``search.status``
#: of ``quartet pick``'s JSON today; "optimal" is read as proven optimal too).
PROVEN = "proven_optimal"
TIME_LIMIT_STATUS = "time_limit"
INFEASIBLE = "infeasible"
#: What the pick on a bundled example must end with; an example not listed here must be proven
#: optimal. bridge_front_end_stock_infeasible is infeasible as written (its stock cannot meet it); the
#: yield-basis examples may stop at the time limit with designs ranked (README, Performance,
#: "Still open" (1)). A time limit counts only with at least one design ranked.
EXPECTED_EXAMPLE_STATUS: dict[str, tuple[str, ...]] = {
    "bridge_front_end_stock_infeasible": (INFEASIBLE,),
    "adc_driver": (PROVEN, TIME_LIMIT_STATUS),
    "adc_driver_stock": (PROVEN, TIME_LIMIT_STATUS),
}
#: The scaling section's ten-design pick may stop at the time limit (README, "Still open" (2));
#: its cheapest-design pick (top 1) must be proven optimal.
EXPECTED_SCALING_TOP10: tuple[str, ...] = (PROVEN, TIME_LIMIT_STATUS)
#: Exit code every CLI run must end with (``optimizer.cli.EXIT_OK``: the spec is met).
EXPECTED_EXIT_CODE = 0

#: Spec used for the generated catalogs (oracle and scaling sections).
WORKLOAD_SPEC = os.path.join(REPO, "examples", "motor_shunt.yaml")
#: Spec of the CLI section (``--cli-spec``): it must be met and proven optimal.
CLI_SPEC = os.path.join(REPO, "examples", "motor_shunt.yaml")
#: Time limit (s) of every pick; None: the solver's default (what ``quartet pick`` uses).
TIME_LIMIT: list[float | None] = [None]
#: CMRR floor (dB) of the oracle sweep's spec (the workload spec with a relaxed floor).
ORACLE_CMRR_DB = 60.0
#: Design count the enumerator accepts in the oracle section (its default is 500,000).
ORACLE_MAX_DESIGNS = 5_000_000
#: Gain accuracy (fraction) of the oracle sweep's spec.
ORACLE_GAIN_ACCURACY = 0.01
#: A pick (example or scaling) whose first run times ``runs`` exceeds this many seconds gets
#: fewer runs (the table says how many).
EXAMPLE_BUDGET_S = 40.0

TOLERANCES = ("1%", "0.5%", "0.25%", "0.1%", "0.05%", "0.02%", "0.01%")
TEMPCOS = ("100ppm/K", "50ppm/K", "25ppm/K", "15ppm/K", "10ppm/K", "5ppm/K")
SIZES = ("0402", "0603", "0805", "1206")
POWERS = {"0402": "0.063W", "0603": "0.1W", "0805": "0.125W", "1206": "0.25W"}
VOLTS = {"0402": "50V", "0603": "75V", "0805": "150V", "1206": "200V"}


def median(values: Sequence[float]) -> float:
    return float(statistics.median(values))


def timed(fn: Callable[..., Any], *args: Any, **kwargs: Any) -> tuple[float, Any]:
    """Wall seconds of ``fn(*args, **kwargs)`` and its result."""
    start = time.perf_counter()
    out = fn(*args, **kwargs)
    return time.perf_counter() - start, out


class RunFailed(Exception):
    """A timed run that did not end as expected; the message says how."""


def failure_text(exc: BaseException) -> str:
    """One line for a failed run: the message of a :class:`RunFailed`, else the exception's
    type and message."""
    text = str(exc) if isinstance(exc, RunFailed) else f"{type(exc).__name__}: {exc}"
    return " ".join(text.split())


def status_name(status: Any) -> str:
    """A pick's status as a plain name: an enum's value or the string itself, with "optimal"
    read as :data:`PROVEN`."""
    name = str(getattr(status, "value", status))
    return PROVEN if name in ("optimal", PROVEN) else name


def json_status(doc: Any) -> str:
    """The status in ``quartet pick``'s JSON document: ``search.proven_optimal`` true, or
    ``search.status``. Raises :class:`RunFailed` when the document has neither."""
    search = doc.get("search") if isinstance(doc, dict) else None
    if not isinstance(search, dict):
        raise RunFailed("the pick's JSON has no 'search' object")
    proven = search.get("proven_optimal")
    if proven is True:
        return PROVEN
    if "status" in search:
        name = status_name(search["status"])
        return "not proven optimal" if proven is False and name == PROVEN else name
    if proven is False:
        return "not proven optimal"
    raise RunFailed(f"the pick's JSON 'search' has no status (keys: {', '.join(search)})")


def check_status(status: str, ranked: int, expected: Sequence[str]) -> None:
    """Raise :class:`RunFailed` unless ``status`` is one of ``expected`` and the ranked count
    fits it (none when infeasible, at least one otherwise)."""
    if status not in expected:
        raise RunFailed(f"status {status}, expected {' or '.join(expected)}")
    if status == INFEASIBLE and ranked:
        raise RunFailed(f"status {status} with {ranked} design(s) ranked")
    if status != INFEASIBLE and not ranked:
        raise RunFailed(f"status {status} with no design ranked")


def child_message(text: str) -> str:
    """A failed child's message in one line (at most 300 characters): a traceback's last line
    (it names the error), else the whole output (a located error that the terminal wrapped)."""
    lines = [line.strip() for line in text.splitlines() if line.strip()]
    if not lines:
        return "(no output)"
    message = lines[-1] if any(line.startswith("Traceback") for line in lines) else " ".join(lines)
    return message[:300]


def failed_row(row: dict[str, Any], exc: BaseException) -> dict[str, Any]:
    """``row`` marked failed: status FAILED and the message under ``failed``."""
    return {**row, "status": "FAILED", "failed": failure_text(exc)}


def package_origin() -> dict[str, Any]:
    """Which ``optimizer`` this process measures: its folder, version and how it got there
    (this checkout's source tree, with or without an editable install, or an installed copy
    and whether its files equal this checkout's)."""
    folder = os.path.dirname(os.path.realpath(str(optimizer.__file__)))
    version = str(getattr(optimizer, "__version__", "unknown"))
    try:
        dist: metadata.Distribution | None = metadata.distribution("quartet")
    except metadata.PackageNotFoundError:
        dist = None
    if dist is not None and os.path.realpath(str(dist.locate_file(""))) == os.path.realpath(REPO):
        dist = None  # quartet.egg-info left in the checkout by a build: not an install
    editable = False
    if dist is not None:
        try:
            direct = json.loads(dist.read_text("direct_url.json") or "{}")
            editable = bool(direct.get("dir_info", {}).get("editable", False))
        except (OSError, ValueError):
            editable = False
    installed = None if dist is None else f"quartet {dist.version}"
    source = os.path.realpath(os.path.join(REPO, "optimizer"))
    if folder == source:
        if dist is None:
            how = "this checkout's source tree, not installed"
        elif editable:
            how = f"this checkout's source tree, editable install ({installed})"
        else:
            how = f"this checkout's source tree, ahead of the installed {installed}"
        same: bool | None = True
    else:
        same = same_files_as_checkout(folder)
        how = f"installed copy ({installed or 'no quartet metadata'}), " + (
            "files equal this checkout's" if same else "files DIFFER from this checkout's"
        )
    return {"path": folder, "version": version, "how": how, "same_as_checkout": same}


def same_files_as_checkout(folder: str) -> bool:
    """Whether every source and data file of the installed package at ``folder`` equals this
    checkout's (``optimizer/catalogs/`` is the checkout's top-level ``catalogs/``)."""
    for root, dirs, files in os.walk(folder):
        dirs[:] = [d for d in dirs if d != "__pycache__"]
        rel = os.path.relpath(root, folder)
        parts = [] if rel == "." else rel.split(os.sep)
        if parts[:1] == ["catalogs"]:
            mine = os.path.join(REPO, *parts)
        else:
            mine = os.path.join(REPO, "optimizer", *parts)
        for name in files:
            if not name.endswith((".py", ".yaml", ".csv", ".typed")):
                continue
            try:
                with (
                    open(os.path.join(root, name), "rb") as a,
                    open(os.path.join(mine, name), "rb") as b,
                ):
                    if a.read() != b.read():
                        return False
            except OSError:
                return False
    return True


def checkout_commit() -> dict[str, Any]:
    """This checkout's commit (``git rev-parse HEAD``) and whether tracked files differ from it;
    ``None`` values when git or the repository is not there."""
    try:
        head = subprocess.run(
            ["git", "-C", REPO, "rev-parse", "HEAD"], capture_output=True, text=True, check=True
        ).stdout.strip()
        changes = subprocess.run(
            ["git", "-C", REPO, "status", "--porcelain", "--untracked-files=no"],
            capture_output=True, text=True, check=True,
        ).stdout.strip()  # fmt: skip
    except (OSError, subprocess.CalledProcessError):
        return {"commit": None, "uncommitted_changes": None}
    return {"commit": head, "uncommitted_changes": bool(changes)}


def child_env() -> dict[str, str]:
    """Environment of the benchmark's child interpreters, so that they import the same
    ``optimizer`` as this process: its parent folder leads ``PYTHONPATH`` unless it is a site
    folder (a child finds that anyway; on ``PYTHONPATH`` it would come before the standard
    library). ``PYTHONDONTWRITEBYTECODE`` is dropped (the CLI is timed with its bytecode cached,
    as an installed package runs)."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    home = os.path.realpath(os.path.dirname(os.path.dirname(str(optimizer.__file__))))
    sites = [*site.getsitepackages(), site.getusersitepackages()]
    if home not in {os.path.realpath(p) for p in sites}:
        env["PYTHONPATH"] = os.pathsep.join(filter(None, (home, os.environ.get("PYTHONPATH"))))
    return env


def with_catalog(spec: Spec, paths: Sequence[str], builtin: bool) -> Spec:
    prefs = dataclasses.replace(
        spec.preferences, catalogs=tuple(paths), use_builtin_catalogs=builtin
    )
    return dataclasses.replace(spec, preferences=prefs)


def workload_spec() -> Spec:
    """The spec of the generated-catalog sections: examples/motor_shunt.yaml with the CMRR
    floor and gain accuracy relaxed. Four discrete parts can hardly hold the example's 80 dB
    and 0.5 % over -40..125 °C and 10 years, so with the example as written every generated
    catalog is infeasible; relaxed, the pick and the enumerator verify and rank real passing
    designs instead of proving infeasibility."""
    base = load_spec(WORKLOAD_SPEC)
    relaxed = dataclasses.replace(
        base.requirements, cmrr_floor_db=ORACLE_CMRR_DB, gain_accuracy=ORACLE_GAIN_ACCURACY
    )
    return dataclasses.replace(base, requirements=relaxed)


def spec_catalog(spec: Spec) -> Any:
    """The catalogs a spec names (as ``quartet pick`` reads them)."""
    return load_catalogs(list(spec.preferences.catalogs), spec.preferences.use_builtin_catalogs)


# ---------------------------------------------------------------------------------------------
# Generated catalogs (invented demo data)
# ---------------------------------------------------------------------------------------------


def scaling_frame(count: int, seed: int, per_part_costs: bool = False) -> pd.DataFrame:
    """``count`` discrete parts: E96 values 10 Ω to 10 MΩ, random grade, tempco, size and
    stock, in the CSV catalog's columns. The cost is a random price per line type (grade,
    tempco, size), as a stockroom prices them; ``per_part_costs`` gives every part its own
    random cost instead (every part then is its own class in the solver)."""
    rng = np.random.default_rng(seed)
    e96 = np.array([v * 10.0**d for d in range(1, 7) for v in decade_values(ESeries.E96)])
    values = e96[rng.integers(0, len(e96), count)]
    tol_idx = rng.integers(0, len(TOLERANCES), count)
    tc_idx = rng.integers(0, len(TEMPCOS), count)
    size_idx = rng.integers(0, len(SIZES), count)
    sizes = np.array(SIZES, dtype=object)[size_idx]
    line = (tol_idx * len(TEMPCOS) + tc_idx) * len(SIZES) + size_idx
    price = rng.uniform(0.0, 0.05, len(TOLERANCES) * len(TEMPCOS) * len(SIZES))
    extra = rng.uniform(0.0, 0.05, count) if per_part_costs else price[line]
    cost = 0.01 + 0.004 * (tol_idx + 1) ** 1.5 + 0.003 * tc_idx + extra
    stock = np.where(rng.random(count) < 0.3, rng.integers(1, 20, count) * 500, 0)
    return pd.DataFrame(
        {
            "part_id": [f"BN-{i:07d}" for i in range(count)],
            "resistance": np.round(values, 4),
            "tolerance": np.array(TOLERANCES, dtype=object)[tol_idx],
            "tempco": np.array(TEMPCOS, dtype=object)[tc_idx],
            "size": sizes,
            "power": [POWERS[s] for s in sizes],
            "max_voltage": [VOLTS[s] for s in sizes],
            "cost": np.round(cost, 4),
            "stock": stock,
            "drift": np.where(tol_idx >= 3, "0.002%", "0.02%"),
        }
    )


def oracle_frame(count: int, seed: int, gain: float) -> pd.DataFrame:
    """``count`` discrete parts around a few levels R (E24, 1 kΩ to 10 kΩ, with ``gain·R``
    also in E24) and ``gain·R``, some one E96 step off, with random grades."""
    rng = random.Random(seed)
    levels = [
        v * 1e3 for v in decade_values(ESeries.E24) if is_member(ESeries.E24, v * 1e3 * gain)
    ][:4]
    e96 = [v * 10.0**d for d in range(2, 7) for v in decade_values(ESeries.E96)]
    rows = []
    for i in range(count):
        level = levels[(i // 2) % len(levels)] if i < 2 * len(levels) else rng.choice(levels)
        ohms = level if i % 2 == 0 else level * gain
        if rng.random() < 0.15:  # a nearby E96 value
            ohms = min(e96, key=lambda v: abs(v - ohms * rng.choice((0.98, 1.02))))
        tol = rng.choice(TOLERANCES)
        tc = rng.choice(TEMPCOS)
        size = rng.choice(SIZES)
        rows.append(
            {
                "part_id": f"OR-{i:04d}",
                "resistance": round(ohms, 4),
                "tolerance": tol,
                "tempco": tc,
                "size": size,
                "power": POWERS[size],
                "max_voltage": VOLTS[size],
                "cost": round(
                    0.01
                    + 0.03 * TOLERANCES.index(tol)
                    + 0.01 * TEMPCOS.index(tc)
                    + rng.uniform(0, 0.04),
                    3,
                ),
                "stock": rng.choice((0, 0, 500, 5000)),
                "drift": "0.002%" if TOLERANCES.index(tol) >= 3 else "0.02%",
            }
        )
    return pd.DataFrame(rows)


def write_csv(frame: pd.DataFrame, path: str) -> None:
    with open(path, "w", encoding="utf-8", newline="") as handle:
        handle.write("# Generated benchmark catalog: invented demo data.\n")
        frame.to_csv(handle, index=False)


# ---------------------------------------------------------------------------------------------
# Sections
# ---------------------------------------------------------------------------------------------


def bench_examples(runs: int, paths: Sequence[str]) -> list[dict[str, Any]]:
    """``pick`` (top 10, default time limit) on every bundled example, on the catalogs the
    example names (the built-in catalog; the ``_stock`` variants add the house stock). Each
    run's status is checked against :data:`EXPECTED_EXAMPLE_STATUS`."""
    from optimizer.solve.search import pick
    from optimizer.verify import verify_candidate as verify  # what the CLI runs

    rows = []
    for path in paths:
        name = os.path.basename(path)[:-5]
        expected = EXPECTED_EXAMPLE_STATUS.get(name, (PROVEN,))
        row: dict[str, Any] = {"example": name, "expected": " or ".join(expected)}
        walls: list[float] = []
        solves: list[float] = []
        builds: list[float] = []
        verifies: list[float] = []
        try:
            spec = load_spec(path)
            catalog = spec_catalog(spec)
            wanted = runs
            while len(walls) < wanted:
                wall, result = timed(
                    pick, spec, catalog, verify, top=10, time_limit_s=TIME_LIMIT[0]
                )
                status = status_name(result.status)
                try:
                    check_status(status, len(result.ranked), expected)
                except RunFailed as exc:
                    raise RunFailed(f"run {len(walls) + 1}: {exc}") from None
                walls.append(wall)
                solves.append(result.solve_seconds)
                builds.append(result.build_seconds)
                verifies.append(result.verify_seconds)
                if len(walls) == 1 and wall * runs > EXAMPLE_BUDGET_S:
                    wanted = max(1, min(runs, int(EXAMPLE_BUDGET_S // wall)))
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({**row, "runs": len(walls)}, exc))
            continue
        rows.append(
            {
                **row,
                "runs": len(walls),
                "status": status,
                "ranked": len(result.ranked),
                "pick_s": median(walls),
                "cp_sat_s": median(solves),
                "build_s": median(builds),
                "verify_s": median(verifies),
            }
        )
    return rows


def timed_searches(
    spec: Spec, parts: Any, runs: int, expected: Sequence[str], searches: list[float]
) -> tuple[Any, str]:
    """``runs`` picks (top 10, 60 s, the CLI's exact check), each ending in an ``expected``
    status; each one's search time (CP-SAT, building, exact checks) is appended to
    ``searches`` as it is measured. The last result and its status."""
    from optimizer.solve.search import pick
    from optimizer.verify import verify_candidate as verify  # what the CLI runs

    result: Any = None
    status = ""
    for _ in range(runs):
        _, result = timed(pick, spec, parts, verify, top=10, time_limit_s=60.0)
        status = status_name(result.status)
        check_status(status, len(result.ranked), expected)
        searches.append(result.solve_seconds + result.build_seconds + result.verify_seconds)
    return result, status


def bench_battery(runs: int, tmp: str) -> list[dict[str, Any]]:
    """``pick`` (top 10) on every spec of the canonical battery (``tests/battery.py``) over its
    catalog, against the independent reference search (``tests/reference/cheapest.py``, run
    once per spec): each must end proven (optimal, or nothing meets it). "agrees" says whether
    the pick's ten costs equal the reference's ten cheapest (1e-9 relative); "search" is the
    pick's own time (enumeration and model building, CP-SAT, exact checks), without the Monte
    Carlo of the shown designs."""

    tests_dir = os.path.join(os.path.dirname(os.path.abspath(__file__)), os.pardir)
    if tests_dir not in sys.path:
        sys.path.insert(0, tests_dir)
    from battery import BATTERY, catalog, spec_text  # the battery's one definition
    from reference.cheapest import cheapest

    rows = []
    for purpose, fields, kind in BATTERY:
        row: dict[str, Any] = {"spec": purpose}
        searches: list[float] = []
        try:
            path = os.path.join(tmp, "battery.yaml")
            with open(path, "w", encoding="utf-8") as handle:
                handle.write(spec_text(fields))
            spec = load_spec(path)
            parts = catalog(kind)
            result, status = timed_searches(spec, parts, runs, (PROVEN, INFEASIBLE), searches)
            ref = cheapest(spec, parts, 10)
            got = [c.cost.total for c in result.ranked]
            agrees = (
                ref.complete
                and len(got) == len(ref.costs)
                and all(
                    math.isclose(a, b, rel_tol=1e-9) for a, b in zip(got, ref.costs, strict=True)
                )
            )
            if not agrees:
                raise RuntimeError(f"pick {got} against the reference {ref.costs}")
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({**row, "runs": len(searches)}, exc))
            continue
        rows.append(
            {
                **row,
                "catalog": kind,
                "runs": len(searches),
                "status": status,
                "ranked": len(result.ranked),
                "optimum": result.ranked[0].cost.total if result.ranked else None,
                "agrees": "yes",
                "search_s": median(searches),
            }
        )
    return rows


def bench_yield(runs: int, tmp: str) -> list[dict[str, Any]]:
    """``pick`` (top 10) on the plain yield-basis specs over the built-in catalog
    (``tests/battery.py``, ``YIELD_BUILTIN``; four discrete parts, 2,000 builds): each must end
    proven. No reference runs (each of its designs would need a Monte Carlo); "search" as in
    the battery section."""
    from optimizer.catalog import builtin_catalog

    tests_dir = os.path.join(os.path.dirname(os.path.abspath(__file__)), os.pardir)
    if tests_dir not in sys.path:
        sys.path.insert(0, tests_dir)
    from battery import YIELD_BUILTIN, spec_text, yield_fields

    parts = builtin_catalog()
    rows = []
    for purpose, fields in YIELD_BUILTIN:
        row: dict[str, Any] = {"spec": purpose}
        searches: list[float] = []
        try:
            path = os.path.join(tmp, "yield.yaml")
            with open(path, "w", encoding="utf-8") as handle:
                handle.write(spec_text(yield_fields(fields)))
            spec = load_spec(path)
            result, status = timed_searches(spec, parts, runs, (PROVEN,), searches)
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({**row, "runs": len(searches)}, exc))
            continue
        rows.append(
            {
                **row,
                "runs": len(searches),
                "status": status,
                "ranked": len(result.ranked),
                "optimum": result.ranked[0].cost.total,
                "search_s": median(searches),
            }
        )
    return rows


#: The sweep section: ``quartet sweep`` over 30 CMRR floors (issue #11: at most 10 s, cost
#: curves monotone).
SWEEP_SPEC = "motor_shunt"
SWEEP_FLOORS = tuple(40.0 + 2.0 * i for i in range(30))
TARGET_SWEEP_S = 10.0


def bench_sweep(runs: int) -> list[dict[str, Any]]:
    """``optimizer.sweep.sweep_cmrr`` of :data:`SWEEP_SPEC` over :data:`SWEEP_FLOORS` (two
    searches per floor, each limited to the CLI's default 10 s): the wall time, how many
    searches ended proven, and whether each cost curve is monotone (a higher floor never
    costs less, and nothing is found above a floor where nothing exists)."""
    from optimizer.solve.search import SearchStatus
    from optimizer.sweep import sweep_cmrr

    spec = load_spec(os.path.join(REPO, "examples", f"{SWEEP_SPEC}.yaml"))
    catalog = spec_catalog(spec)
    row: dict[str, Any] = {"sweep": f"{SWEEP_SPEC}, {len(SWEEP_FLOORS)} floors"}
    walls: list[float] = []
    try:
        for _ in range(runs):
            wall, result = timed(sweep_cmrr, spec, catalog, SWEEP_FLOORS, time_limit_s=10.0)
            walls.append(wall)
        series = [[p.discrete for p in result.points], [p.network for p in result.points]]
        proven = sum(
            1
            for line in series
            for point in line
            if point.status in (SearchStatus.OPTIMAL, SearchStatus.INFEASIBLE)
        )
        searches = sum(1 for line in series for point in line if point.status is not None)
        monotone = True
        for line in series:
            last = -math.inf
            for point in line:
                cost = math.inf if point.cost is None else point.cost
                monotone &= cost >= last - 1e-9
                last = cost
    except Exception as exc:  # a failed run: shown, never measured
        return [failed_row({**row, "runs": len(walls)}, exc)]
    return [
        {
            **row,
            "runs": len(walls),
            "proven": f"{proven}/{searches}",
            "monotone": "yes" if monotone else "NO",
            "wall_s": median(walls),
        }
    ]


def bench_board(runs: int) -> list[dict[str, Any]]:
    """The board pick (``optimizer.board``, top 1) on: the four :data:`BOARD_KINDS` examples
    once each over the built-in catalog; the same four kinds with 4 channels each (16
    channels); and ``examples/drive_board.yaml`` (the house stock). Every run must be proven
    optimal. "search" is the board search's own time, without the Monte Carlo of the report."""
    from optimizer.board import Board, BoardAmplifier, Purchasing, board_search
    from optimizer.board.boardfile import load_board
    from optimizer.catalog import builtin_catalog
    from optimizer.verify import verify_candidate as verify  # what the CLI runs

    specs = [load_spec(os.path.join(REPO, "examples", f"{n}.yaml")) for n in BOARD_KINDS]
    purchasing = Purchasing(line_cost=BOARD_LINE_COST, placement_cost=BOARD_PLACEMENT_COST)

    def kinds(quantity: int) -> Board:
        amplifiers = tuple(
            BoardAmplifier(name, spec, quantity, f"K{chr(65 + i)}")
            for i, (name, spec) in enumerate(zip(BOARD_KINDS, specs, strict=True))
        )
        return Board(amplifiers, purchasing, f"{len(specs)} kinds x {quantity}")

    drive = load_board(os.path.join(REPO, "examples", "drive_board.yaml"))
    workloads = [
        ("4 kinds x 1 (built-in catalog)", kinds(1), builtin_catalog()),
        ("4 kinds x 4 = 16 channels (built-in catalog)", kinds(4), builtin_catalog()),
        ("examples/drive_board.yaml (house stock)", drive,
         load_catalogs([os.path.join(REPO, "examples", "house_stock.csv")], False)),
    ]  # fmt: skip
    rows = []
    for name, board, catalog in workloads:
        row: dict[str, Any] = {"board": name}
        searches: list[float] = []
        try:
            for _ in range(runs):
                wall, result = timed(board_search, board, catalog, verify, top=1, time_limit_s=60.0)
                status = status_name(result.status)
                check_status(status, len(result.boards), (PROVEN,))
                searches.append(wall)
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({**row, "runs": len(searches)}, exc))
            continue
        best, alone = result.boards[0], result.alone
        rows.append(
            {
                **row,
                "runs": len(searches),
                "status": status,
                "board_total": best.cost.total,
                "alone_total": alone.cost.total if alone else None,
                "lines": best.cost.line_count,
                "designs_read": sum(result.read),
                "exact_checks": result.verified,
                "search_s": median(searches),
            }
        )
    return rows


def _is_board(path: str) -> bool:
    """A board file (``optimizer.board``): its first key is ``quartet_board``."""
    with open(path, encoding="utf-8") as handle:
        return any(line.startswith("quartet_board:") for line in handle)


def example_paths(names: Sequence[str] | None) -> list[str]:
    """The bundled example specs (every ``examples/*.yaml`` but the network catalogs and the
    board files, which the board section measures), or those of ``names``; an unknown name
    exits (code 2) with a message listing the known ones."""
    paths = [
        p
        for p in sorted(glob.glob(os.path.join(REPO, "examples", "*.yaml")))
        if not os.path.basename(p)[:-5].endswith("_networks") and not _is_board(p)
    ]
    if names is None:
        return paths
    known = {os.path.basename(p)[:-5]: p for p in paths}
    unknown = [n for n in names if n not in known]
    if unknown:
        listed = ", ".join(known)
        print(f"bench_quartet.py: unknown example(s) {', '.join(unknown)}; known: {listed}",
              file=sys.stderr)  # fmt: skip
        raise SystemExit(2)
    return [known[n] for n in names]


def cli_same_package(cwd: str, env: dict[str, str]) -> None:
    """Raise :class:`RunFailed` unless a child interpreter started as the CLI runs are imports
    the ``optimizer`` this process measures."""
    probe = subprocess.run(
        [sys.executable, "-c", "import optimizer; print(optimizer.__file__)"],
        capture_output=True, text=True, cwd=cwd, env=env, check=False,
    )  # fmt: skip
    if probe.returncode != 0:
        raise RunFailed(
            f"a child interpreter cannot import optimizer: {child_message(probe.stderr)}"
        )
    theirs = os.path.realpath(probe.stdout.strip())
    ours = os.path.realpath(str(optimizer.__file__))
    if theirs != ours:
        raise RunFailed(f"a child interpreter imports {theirs}, not {ours}")


def bench_cli(runs: int, spec_path: str, tmp: str) -> list[dict[str, Any]]:
    """Whole wall time (interpreter start, imports, catalogs, search, report) of the CLI, as an
    installed package runs: with its bytecode cached. One warm-up run (checked, not timed)
    writes the cache (``PYTHONDONTWRITEBYTECODE``, if the environment sets it, is dropped for
    these runs), so the figure does not include compiling the package's sources on every start.

    Every run, the warm-up included, must exit with :data:`EXPECTED_EXIT_CODE`; the pick also
    writes its JSON document (``--json-out``), whose status must be proven optimal. The runs
    start in an empty folder with :func:`child_env`, so they import the measured package."""
    cwd = os.path.join(tmp, "cli-cwd")
    os.makedirs(cwd, exist_ok=True)
    env = child_env()
    try:
        cli_same_package(cwd, env)
        setup_error: RunFailed | None = None
    except RunFailed as exc:
        setup_error = exc
    shown = os.path.relpath(spec_path, REPO) if spec_path.startswith(REPO + os.sep) else spec_path
    commands: list[tuple[str, list[str], bool]] = [
        (f"spec validate {shown}", ["spec", "validate", spec_path], False),
        (
            f"pick {shown} --top 10 --json-out (a temp file)",
            ["pick", spec_path, "--top", "10"],
            True,
        ),
    ]
    rows = []
    for label, args, is_pick in commands:
        row: dict[str, Any] = {"command": f"python -m optimizer {label}"}
        walls, codes = [], []
        try:
            if setup_error is not None:
                raise setup_error
            for attempt in range(runs + 1):
                out = os.path.join(tmp, f"cli-pick-{attempt}.json")
                extra = ["--json-out", out] if is_pick else []
                wall, proc = timed(
                    subprocess.run, [sys.executable, "-m", "optimizer", *args, *extra],
                    capture_output=True, text=True, cwd=cwd, check=False, env=env,
                )  # fmt: skip
                what = "warm-up run" if attempt == 0 else f"run {attempt}"
                if proc.returncode != EXPECTED_EXIT_CODE:
                    raise RunFailed(
                        f"{what}: exit code {proc.returncode}, expected {EXPECTED_EXIT_CODE}: "
                        + child_message(proc.stderr or proc.stdout)
                    )
                if is_pick:
                    try:
                        with open(out, encoding="utf-8") as handle:
                            doc = json.load(handle)
                    except (OSError, ValueError) as exc:
                        raise RunFailed(f"{what}: no readable --json-out document: {exc}") from None
                    os.remove(out)
                    status = json_status(doc)
                    if status != PROVEN:
                        raise RunFailed(f"{what}: status {status}, expected {PROVEN}")
                if attempt == 0:
                    continue  # warm-up: writes the bytecode cache
                walls.append(wall)
                codes.append(proc.returncode)
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({**row, "runs": len(walls)}, exc))
            continue
        rows.append(
            {**row, "runs": runs, "status": "ok", "exit_code": codes[-1], "wall_s": median(walls)}
        )
    return rows


def bench_oracle(runs: int, sizes: Sequence[int], stop_s: float, tmp: str) -> list[dict[str, Any]]:
    """CP-SAT ``pick`` (top 1) against ``reference_search`` (top 1) on growing generated
    catalogs, until the enumerator needs ``stop_s`` or more. The enumerator runs once per size
    (it is the slow side); the pick's figure is the median of ``runs``. The workload is meant to
    be feasible: the enumerator must find a passing design, and every pick must be proven
    optimal at the enumerator's optimum cost. A failed size ends the sweep."""
    from optimizer.solve.exhaustive import TooManyDesigns, reference_search
    from optimizer.solve.search import pick
    from optimizer.verify import verify, verify_candidate

    base = workload_spec()
    rows = []
    for n in sizes:
        path = os.path.join(tmp, f"oracle_{n}.csv")
        write_csv(oracle_frame(n, seed=n, gain=base.requirements.gain), path)
        spec = with_catalog(base, [path], builtin=False)
        try:
            catalog = spec_catalog(spec)
            try:
                enum_s, ref = timed(
                    reference_search, spec, catalog, verify, top=1, max_designs=ORACLE_MAX_DESIGNS
                )
            except TooManyDesigns as exc:
                rows.append({"parts": n, "note": f"enumerator refused: {exc.count:,} designs"})
                break
            if not ref.ranked:
                raise RunFailed(
                    "the enumerator found no passing design (the workload must have one)"
                )
            ref_cost = ref.ranked[0][0].total
            picks = []
            for k in range(runs):
                wall, result = timed(
                    pick, spec, catalog, verify_candidate, top=1, time_limit_s=TIME_LIMIT[0]
                )
                status = status_name(result.status)
                if status != PROVEN:
                    raise RunFailed(f"pick run {k + 1}: status {status}, expected {PROVEN}")
                pick_cost = result.ranked[0].cost.total
                if not math.isclose(ref_cost, pick_cost, rel_tol=1e-9, abs_tol=1e-12):
                    raise RunFailed(
                        f"pick run {k + 1}: optimum cost {pick_cost!r}, "
                        f"the enumerator's {ref_cost!r}"
                    )
                picks.append(wall)
        except Exception as exc:  # a failed run: shown, never measured
            rows.append(failed_row({"parts": n, "pick_status": "FAILED"}, exc))
            break
        pick_s = median(picks)
        rows.append(
            {
                "parts": n,
                "designs": ref.designs,
                "verified": ref.verified,
                "enumerator_s": enum_s,
                "pick_s": pick_s,
                "ratio": enum_s / pick_s,
                "ref_cost": ref_cost,
                "pick_cost": pick_cost,
                "pick_status": status,
                "agree": True,
            }
        )
        if enum_s >= stop_s:
            break
    return rows


def peak_rss_bytes() -> int:
    """This process's peak resident set size: ``VmHWM`` of /proc/self/status (per address
    space, so it starts afresh at exec). ``ru_maxrss`` is the fallback elsewhere; on Linux it
    is not used because it keeps the high-water mark of the forked copy of the parent across
    exec (the benchmark's parent holds the built-in catalog, ~0.5 GB)."""
    try:
        with open("/proc/self/status", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    scale = 1 if sys.platform == "darwin" else 1024  # bytes on macOS, KiB elsewhere
    return int(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss) * scale


def scale_child(path: str, runs: int) -> dict[str, Any]:
    """Run in a child process: read the catalog ``runs`` times and pick on it ``runs`` times
    (fewer when one pick is long: see ``EXAMPLE_BUDGET_S``); report medians and the process's
    peak RSS. Raises :class:`RunFailed` when a pick's status is not the expected one (top 10:
    :data:`EXPECTED_SCALING_TOP10`; top 1: proven optimal)."""
    from optimizer.solve.search import pick
    from optimizer.verify import verify_candidate as verify  # what the CLI runs

    spec = with_catalog(workload_spec(), [path], builtin=False)
    reads: list[float] = []
    picks: list[float] = []
    cp_sat: list[float] = []
    builds: list[float] = []
    verifies: list[float] = []
    for _ in range(runs):
        read_s, catalog = timed(load_catalogs, [path], include_builtin=False)
        reads.append(read_s)
    wanted = runs
    while len(picks) < wanted:
        wall, result = timed(pick, spec, catalog, verify, top=10, time_limit_s=TIME_LIMIT[0])
        try:
            check_status(status_name(result.status), len(result.ranked), EXPECTED_SCALING_TOP10)
        except RunFailed as exc:
            raise RunFailed(f"top 10, run {len(picks) + 1}: {exc}") from None
        picks.append(wall)
        cp_sat.append(result.solve_seconds)
        builds.append(result.build_seconds)
        verifies.append(result.verify_seconds)
        if len(picks) == 1 and wall * runs > EXAMPLE_BUDGET_S:
            wanted = max(1, min(runs, int(EXAMPLE_BUDGET_S // wall)))
    # The cheapest design alone (top 1), once: the time to the answer an engineer needs first.
    first_s, first = timed(pick, spec, catalog, verify, top=1, time_limit_s=TIME_LIMIT[0])
    try:
        check_status(status_name(first.status), len(first.ranked), (PROVEN,))
    except RunFailed as exc:
        raise RunFailed(f"top 1: {exc}") from None
    peak_bytes = peak_rss_bytes()
    return {
        "package": os.path.realpath(str(optimizer.__file__)),
        "runs": runs,
        "pick_runs": len(picks),
        "top1_s": first_s,
        "top1_status": status_name(first.status),
        "read_s": median(reads),
        "pick_s": median(picks),
        "cp_sat_s": median(cp_sat),
        "build_s": median(builds),
        "verify_s": median(verifies),
        "status": status_name(result.status),
        "ranked": len(result.ranked),
        "options": result.option_count,
        "peak_rss_bytes": peak_bytes,
    }


def bench_scaling(
    runs: int,
    sizes: Sequence[int],
    big_runs: int,
    tmp: str,
    timeout_s: float,
    per_part_costs: bool = False,
) -> list[dict[str, Any]]:
    """Per size: write a generated catalog with pandas, then read it and pick on it in a child
    process (peak RSS is that child's; it imports the measured package: :func:`child_env`). A
    child that fails, or runs past ``timeout_s`` and is killed, fails its size; after a
    timeout the larger sizes are not run (they fail as skipped)."""
    rows: list[dict[str, Any]] = []
    env = child_env()
    ours = os.path.realpath(str(optimizer.__file__))
    for n in sizes:
        if any("timeout_s" in r for r in rows):
            rows.append(failed_row({"parts": n}, RunFailed("skipped (a smaller size timed out)")))
            continue
        path = os.path.join(tmp, f"scale_{n}.csv")
        write_s, _ = timed(write_csv, scaling_frame(n, 7, per_part_costs), path)
        csv_bytes = os.path.getsize(path)
        n_runs = big_runs if n >= 1_000_000 else runs
        try:
            proc = subprocess.run(
                [sys.executable, os.path.abspath(__file__), "--child-scale", path,
                 "--runs", str(n_runs),
                 *(["--time-limit", str(TIME_LIMIT[0])] if TIME_LIMIT[0] else [])],
                capture_output=True, text=True, cwd=tmp, env=env, check=False,
                timeout=timeout_s,
            )  # fmt: skip
        except subprocess.TimeoutExpired:
            message = f"child killed after {timeout_s:g} s (read + {n_runs} pick(s))"
            rows.append({**failed_row({"parts": n}, RunFailed(message)), "timeout_s": timeout_s})
            os.remove(path)
            continue
        os.remove(path)
        if proc.returncode != 0:
            message = f"child exit code {proc.returncode}: {child_message(proc.stderr)}"
            rows.append(failed_row({"parts": n}, RunFailed(message)))
            continue
        row: dict[str, Any] = {"parts": n, "csv_bytes": csv_bytes, "write_s": write_s}
        row.update(json.loads(proc.stdout.strip().splitlines()[-1]))
        if row.pop("package") != ours:
            message = f"the child measured another optimizer than {ours}"
            rows.append(failed_row({"parts": n}, RunFailed(message)))
            continue
        row["pick_over_read"] = row["pick_s"] / row["read_s"]
        row["top1_over_read"] = row["top1_s"] / row["read_s"]
        rows.append(row)
    return rows


def bench_montecarlo(runs: int, samples: int) -> dict[str, Any]:
    """Throughput of :func:`optimizer.analysis.montecarlo.kernel` on one core: ``samples``
    resistor sets (an ``(4, n)`` array transposed, as the module lays them out) at one corner.
    Each run's output is checked: ``samples`` finite CMRR and gain figures, the median gain
    within 1 % of the nominal R2/R1 = 20 (the difference amplifier's ideal gain, textbook)."""
    from optimizer.analysis.montecarlo import kernel

    rng = np.random.default_rng(3)
    nominal = np.array([1e3, 20e3, 1e3, 20e3])
    r = (nominal[:, None] * (1.0 + 1e-3 * rng.standard_normal((4, samples)))).T
    row: dict[str, Any] = {"samples": samples, "runs": runs}
    try:
        kernel(r[:1000], 0.05, 0.1, 0.5, 1e5, 1.0, 1e6)  # warm-up
        times = []
        for k in range(runs):
            t, (cmrr_db, gain) = timed(kernel, r, 0.05, 0.1, 0.5, 1e5, 1.0, 1e6)
            cmrr_db, gain = np.asarray(cmrr_db), np.asarray(gain)
            if cmrr_db.shape != (samples,) or gain.shape != (samples,):
                raise RunFailed(f"run {k + 1}: output shapes {cmrr_db.shape}, {gain.shape}")
            if not (np.isfinite(cmrr_db).all() and np.isfinite(gain).all()):
                raise RunFailed(f"run {k + 1}: non-finite CMRR or gain figures")
            if not math.isclose(float(np.median(gain)), 20.0, rel_tol=0.01):
                raise RunFailed(f"run {k + 1}: median gain {float(np.median(gain)):.6g}, not 20")
            times.append(t)
    except Exception as exc:  # a failed run: shown, never measured
        return failed_row(row, exc)
    t = median(times)
    return {**row, "status": "ok", "kernel_s": t, "samples_per_s": samples / t}


# ---------------------------------------------------------------------------------------------
# Report
# ---------------------------------------------------------------------------------------------


def machine() -> dict[str, Any]:
    import ortools

    cpu = ""
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as handle:
            for line in handle:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    return {
        "nproc": os.cpu_count(),
        "cpu": cpu or platform.processor(),
        "python": platform.python_version(),
        "numpy": np.__version__,
        "pandas": pd.__version__,
        "ortools": str(getattr(ortools, "__version__", "unknown")),
    }


def fmt(value: Any) -> str:
    if isinstance(value, bool):
        return "yes" if value else "NO"
    if isinstance(value, float):
        if value == 0.0:
            return "0"
        if abs(value) >= 1e5:
            return f"{value:.3g}"
        return f"{value:.3f}" if abs(value) < 100 else f"{value:.1f}"
    return "-" if value is None else str(value)


def table(title: str, rows: Sequence[dict[str, Any]], columns: Sequence[str]) -> str:
    cells = [[fmt(r.get(c)) for c in columns] for r in rows]
    widths = [max(len(c), *(len(row[i]) for row in cells)) for i, c in enumerate(columns)]
    lines = [title, "  ".join(c.ljust(w) for c, w in zip(columns, widths, strict=True))]
    lines.append("  ".join("-" * w for w in widths))
    lines += ["  ".join(v.rjust(w) for v, w in zip(row, widths, strict=True)) for row in cells]
    return "\n".join(lines)


def targets(result: dict[str, Any]) -> list[dict[str, Any]]:
    """Each target with the measured figure and the distance (measured / target). A target fed
    by a failed row is missed (``met`` false) whatever the other rows measured, and its
    ``note`` names the failed rows."""
    out: list[dict[str, Any]] = []

    def add(
        name: str,
        measured: float | None,
        target: float,
        higher_is_better: bool,
        failed: Sequence[str] = (),
    ) -> None:
        note = ("FAILED: " + "; ".join(failed)) if failed else None
        if measured is None:
            out.append(
                {"target": name, "measured": None, "goal": target, "met": False if failed else None,
                 "note": note}
            )  # fmt: skip
            return
        met = (measured >= target if higher_is_better else measured <= target) and not failed
        out.append(
            {"target": name, "measured": measured, "goal": target,
             "measured/goal": measured / target, "met": met, "note": note}
        )  # fmt: skip

    examples = [r for r in result.get("examples", []) if INFEASIBLE not in r["expected"]]
    if examples:
        ok = [r for r in examples if "failed" not in r]
        failed = [r["example"] for r in examples if "failed" in r]
        picks = [r["pick_s"] for r in ok]
        add("example pick median (s) <= 0.3", median(picks) if picks else None, 0.3, False,
            failed)  # fmt: skip
        add("example pick largest (s) <= 2", max(picks, default=None), 2.0, False, failed)
    battery = result.get("battery", [])
    if battery:
        ok = [r["search_s"] for r in battery if "failed" not in r]
        failed = [r["spec"] for r in battery if "failed" in r]
        add("battery median search (s) <= 0.3", median(ok) if ok else None, 0.3, False, failed)
        add("battery largest search (s) <= 2", max(ok) if ok else None, 2.0, False, failed)
    for row in result.get("sweep", []):
        failed = [row["failed"]] if "failed" in row else []
        add(f"sweep wall (s) <= {TARGET_SWEEP_S:g}: {row['sweep']}", row.get("wall_s"),
            TARGET_SWEEP_S, False, failed)  # fmt: skip
        add(f"sweep cost curves monotone: {row['sweep']}", 1.0 if row.get("monotone") == "yes"
            else 0.0, 1.0, True, failed)  # fmt: skip
    for row in result.get("cli", []):
        goal = TARGET_CLI_PICK_S if " pick " in row["command"] else TARGET_CLI_S
        add(f"CLI wall (s) <= {goal:g}: {row['command'].split(' ', 3)[3]}", row.get("wall_s"),
            goal, False, [row["failed"]] if "failed" in row else [])  # fmt: skip
    oracle = result.get("oracle", [])
    if oracle:
        failed = [f"{r['parts']} parts" for r in oracle if "failed" in r]
        measured = [r for r in oracle if "ratio" in r]
        if measured:
            last = measured[-1]
            add(f"enumerator/pick at {last['parts']} parts ({last['enumerator_s']:.1f} s) >= 100",
                last["ratio"], TARGET_ENUM_RATIO, True, failed)  # fmt: skip
        elif failed:
            add("enumerator/pick >= 100", None, TARGET_ENUM_RATIO, True, failed)
    scaling = result.get("scaling", [])
    if scaling:
        big = scaling[-1]  # the largest size asked for, measured or not
        n = big["parts"]
        failed = [f"{n} parts"] if "failed" in big or "pick_s" not in big else []
        add(f"pick at {n} parts (s) <= 10", big.get("pick_s"), TARGET_1M_SOLVE_S, False, failed)
        add(f"pick/read at {n} parts <= 2", big.get("pick_over_read"),
            TARGET_1M_SOLVE_OVER_READ, False, failed)  # fmt: skip
        add(f"pick, top 1, at {n} parts (s) <= 10", big.get("top1_s"),
            TARGET_1M_SOLVE_S, False, failed)  # fmt: skip
        add(f"pick/read, top 1, at {n} parts <= 2", big.get("top1_over_read"),
            TARGET_1M_SOLVE_OVER_READ, False, failed)  # fmt: skip
        peak = big.get("peak_rss_bytes")
        add(f"peak RSS at {n} parts (GiB) <= 1", None if peak is None else peak / 2**30,
            TARGET_PEAK_BYTES / 2**30, False, failed)  # fmt: skip
    mc = result.get("montecarlo")
    if mc:
        add("MC kernel samples/s >= 1e7", mc.get("samples_per_s"), TARGET_MC_PER_S, True,
            ["Monte-Carlo kernel"] if "failed" in mc else [])  # fmt: skip
    boards = {r["board"]: r for r in result.get("board", [])}
    for label, prefix, goal in (
        ("board of 4 different amplifiers, proven (s) <= 5", "4 kinds x 1", TARGET_BOARD4_S),
        ("board of 16 channels of 4 kinds, proven (s) <= 10", "4 kinds x 4", TARGET_BOARD16_S),
    ):
        rows = [r for name, r in boards.items() if name.startswith(prefix)]
        if rows:
            failed = [r["board"] for r in rows if "failed" in r]
            add(label, None if failed else rows[0]["search_s"], goal, False, failed)
    return out


def failures(result: dict[str, Any]) -> list[str]:
    """Every failed row of every section, as "section key: message"."""
    out = []
    for section, key in (("examples", "example"), ("battery", "spec"), ("yield", "spec"),
                         ("cli", "command"),
                         ("sweep", "sweep"), ("oracle", "parts"),
                         ("scaling", "parts"), ("board", "board")):  # fmt: skip
        out += [f"{section} {r[key]}: {r['failed']}" for r in result.get(section, [])
                if "failed" in r]  # fmt: skip
    mc = result.get("montecarlo")
    if mc and "failed" in mc:
        out.append(f"montecarlo: {mc['failed']}")
    return out


def section(title: str, rows: Sequence[dict[str, Any]], columns: Sequence[str], key: str) -> str:
    """A section's table, then one line per failed row with its message."""
    lines = [table(title, rows, columns)]
    lines += [f"  FAILED {r.get(key)}: {r['failed']}" for r in rows if "failed" in r]
    return "\n".join(lines)


def header(result: dict[str, Any]) -> str:
    """What was measured, where and when: the package, the checkout's commit, the date, the
    machine."""
    pkg = result["package"]
    commit = result["checkout"]["commit"]
    if commit is None:
        where = "commit unknown (no git, or not a git checkout)"
    else:
        dirty = result["checkout"]["uncommitted_changes"]
        where = f"commit {commit}" + (" with uncommitted changes" if dirty else " (clean)")
    return "\n".join(
        [
            f"Quartet benchmark ({'quick' if result['quick'] else 'full'}; medians of "
            f"{result['runs']} run(s)), {result['date_utc']}",
            f"measured: optimizer {pkg['version']} at {pkg['path']} ({pkg['how']})",
            f"checkout: {REPO} at {where}",
            f"command: {result['command']}",
            f"machine: {json.dumps(result['machine'])}",
        ]
    )


def parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="1 run, small sizes (smoke use)")
    parser.add_argument("--runs", type=int, default=None, help="runs per figure (default 5)")
    parser.add_argument("--json", metavar="OUT", help="write the figures as JSON to OUT")
    parser.add_argument(
        "--sections",
        default="examples,battery,yield,cli,sweep,oracle,scaling,montecarlo,board",
        help="comma-separated sections to run",
    )  # fmt: skip
    parser.add_argument("--examples", help="comma-separated example names (default: all)")
    parser.add_argument("--scale-sizes", help="comma-separated catalog sizes for scaling")
    parser.add_argument("--oracle-sizes", help="comma-separated catalog sizes for the oracle")
    parser.add_argument(
        "--oracle-stop-s",
        type=float,
        default=None,
        help="stop the oracle sweep once the enumerator needs this long",
    )
    parser.add_argument("--mc-samples", type=int, default=None)
    parser.add_argument(
        "--scale-timeout-s",
        type=float,
        default=None,
        help="kill a scaling child after this long (default 200 s; quick 60 s)",
    )
    parser.add_argument(
        "--per-part-costs",
        action="store_true",
        help="scaling catalogs with a random cost per part (not per line type)",
    )
    parser.add_argument(
        "--time-limit",
        type=float,
        default=None,
        help="time limit (s) of each pick (default: the solver's default)",
    )
    parser.add_argument(
        "--cli-spec",
        metavar="SPEC",
        default=CLI_SPEC,
        help="spec file of the CLI section (default examples/motor_shunt.yaml); its pick must "
        "meet it and be proven optimal (exit code 0)",
    )
    parser.add_argument("--child-scale", metavar="CSV", help=argparse.SUPPRESS)
    return parser.parse_args(argv)


def main(argv: Sequence[str] | None = None) -> int:
    """Run the sections asked for, print their tables and the targets; 1 when any run failed
    (its row shows FAILED), else 0 (a missed target alone is not a failure)."""
    args = parse_args(argv)
    TIME_LIMIT[0] = args.time_limit
    if args.child_scale:
        try:
            print(json.dumps(scale_child(args.child_scale, args.runs or 1)))
        except RunFailed as exc:
            print(failure_text(exc), file=sys.stderr)
            return 1
        return 0
    quick = args.quick
    runs = args.runs or (1 if quick else 5)
    sections = set(args.sections.split(","))
    names = args.examples.split(",") if args.examples else None
    paths = example_paths(names) if "examples" in sections else []  # unknown names: exit 2
    if args.scale_sizes:
        scale_sizes = [int(s) for s in args.scale_sizes.split(",")]
    else:
        scale_sizes = [1_000, 10_000] if quick else [1_000, 10_000, 100_000, 1_000_000]
    if args.oracle_sizes:
        oracle_sizes = [int(s) for s in args.oracle_sizes.split(",")]
    else:
        # grows until the enumerator needs --oracle-stop-s (10 s); the enumerator's own limit is
        # raised to ORACLE_MAX_DESIGNS for this section (its default refuses above 500,000)
        oracle_sizes = [8, 10, 12, 15, 19, 22, 24, 26, 28, 30, 33, 36, 40]
    stop_s = args.oracle_stop_s or (1.0 if quick else TARGET_ENUM_AT_S)
    big_runs = min(runs, 3)
    mc_samples = args.mc_samples or 1_000_000
    started = time.perf_counter()
    command = "python tests/benchmarks/bench_quartet.py " + " ".join(
        sys.argv[1:] if argv is None else argv
    )
    result: dict[str, Any] = {
        "date_utc": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "package": package_origin(),
        "checkout": checkout_commit(),
        "command": command.strip(),
        "machine": machine(),
        "runs": runs,
        "quick": quick,
    }
    print(header(result), flush=True)
    with tempfile.TemporaryDirectory(prefix="quartet-bench-") as tmp:
        if "examples" in sections:
            result["examples"] = bench_examples(runs, paths)
            print(section("\npick on the bundled examples (top 10; catalogs as each example names)",
                          result["examples"],
                          ["example", "expected", "runs", "status", "ranked", "pick_s", "cp_sat_s",
                           "build_s", "verify_s"], "example"), flush=True)  # fmt: skip
        if "battery" in sections:
            result["battery"] = bench_battery(runs, tmp)
            print(section("\ncanonical battery against the reference (top 10)",
                          result["battery"], ["spec", "catalog", "runs", "status", "ranked",
                                              "optimum", "agrees", "search_s"], "spec"),
                  flush=True)  # fmt: skip
        if "yield" in sections:
            result["yield"] = bench_yield(runs, tmp)
            print(section("\nplain yield-basis specs over the built-in catalog (top 10, four "
                          "discrete parts)", result["yield"],
                          ["spec", "runs", "status", "ranked", "optimum", "search_s"], "spec"),
                  flush=True)  # fmt: skip
        if "cli" in sections:
            result["cli"] = bench_cli(runs, os.path.abspath(args.cli_spec), tmp)
            print(section("\nCLI wall time (new interpreter, imports included)",
                          result["cli"], ["command", "runs", "status", "exit_code", "wall_s"],
                          "command"), flush=True)  # fmt: skip
        if "oracle" in sections:
            result["oracle"] = bench_oracle(runs, oracle_sizes, stop_s, tmp)
            print(section(f"\nCP-SAT pick vs the exhaustive enumerator (top 1; enumerator 1 run; "
                          f"until it needs {stop_s:g} s)", result["oracle"],
                          ["parts", "designs", "verified", "enumerator_s", "pick_s", "ratio",
                           "pick_status", "agree", "note"], "parts"), flush=True)  # fmt: skip
        if "scaling" in sections:
            timeout_s = args.scale_timeout_s or (60.0 if quick else 200.0)
            result["scaling"] = bench_scaling(
                runs, scale_sizes, big_runs, tmp, timeout_s, args.per_part_costs
            )
            print(section(f"\nScaling on generated catalogs (one child process per size; "
                          f"{big_runs} run(s) at 1M parts)", result["scaling"],
                          ["parts", "runs", "pick_runs", "read_s", "pick_s", "cp_sat_s",
                           "build_s", "verify_s", "pick_over_read", "status", "top1_s",
                           "top1_status", "top1_over_read", "peak_rss_bytes"], "parts"),
                  flush=True)  # fmt: skip
        if "montecarlo" in sections:
            result["montecarlo"] = bench_montecarlo(runs, mc_samples)
            print(section("\nMonte-Carlo kernel (one core)", [result["montecarlo"]],
                          ["samples", "runs", "status", "kernel_s", "samples_per_s"], "samples"),
                  flush=True)  # fmt: skip
        if "sweep" in sections:
            result["sweep"] = bench_sweep(1 if args.quick else min(runs, 3))
            print(section("\nquartet sweep (two searches per floor, 10 s each at most)",
                          result["sweep"], ["sweep", "runs", "proven", "monotone", "wall_s"],
                          "sweep"), flush=True)  # fmt: skip
        if "board" in sections:
            result["board"] = bench_board(runs)
            print(section("\nBoard pick (top 1, proven; line cost 2, placement 0.02)",
                          result["board"], ["board", "runs", "status", "board_total",
                                            "alone_total", "lines", "designs_read",
                                            "exact_checks", "search_s"], "board"),
                  flush=True)  # fmt: skip
    result["targets"] = targets(result)
    result["failures"] = failures(result)
    result["total_s"] = time.perf_counter() - started
    print(table("\nTargets (measured/goal: below 1 is better for times and memory, above 1 for "
                "rates)", result["targets"], ["target", "measured", "goal", "measured/goal",
                                              "met", "note"]))  # fmt: skip
    print(f"\ntotal {result['total_s']:.1f} s")
    if result["failures"]:
        print(f"\nFAILED: {len(result['failures'])} row(s) had a failed run (no figure taken):")
        for line in result["failures"]:
            print(f"  {line}")
    else:
        print("every timed run succeeded")
    if args.json:
        with open(args.json, "w", encoding="utf-8") as handle:
            json.dump(result, handle, indent=2)
            handle.write("\n")
    return 1 if result["failures"] else 0


if __name__ == "__main__":
    sys.exit(main())
