"""Quartet benchmark: solve time, CLI wall time, CP-SAT against the exhaustive enumerator,
scaling with catalog size, peak memory and Monte-Carlo throughput.

Run from the repository root::

    python tests/benchmarks/bench_quartet.py --json bench.json     # full run, under 10 minutes
    python tests/benchmarks/bench_quartet.py --quick               # smoke run, 1 run, small sizes

It prints one table per section (figures are MEDIANS over ``--runs`` runs, default 5, unless the
table says fewer) and writes the same figures as JSON (``--json``). This file is not collected
by pytest (its name has no ``test_`` prefix). Speed targets are checked here, never by timed
assertions in tests (project rule).

Generated catalogs are invented demo data (seeded ``random``/``numpy`` streams) on E-series
values from :mod:`optimizer.eseries` (IEC 60063); they are workloads, not check values.
"""

from __future__ import annotations

import argparse
import dataclasses
import glob
import json
import math
import os
import platform
import random
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable, Sequence
from typing import Any

import numpy as np
import pandas as pd

REPO = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
if REPO not in sys.path:
    sys.path.insert(0, REPO)

from optimizer.catalog import load_catalogs  # noqa: E402
from optimizer.eseries import ESeries, decade_values, is_member  # noqa: E402
from optimizer.spec import Spec  # noqa: E402
from optimizer.specfile import load_spec  # noqa: E402

# ---------------------------------------------------------------------------------------------
# Targets (issue 7)
# ---------------------------------------------------------------------------------------------

TARGET_SOLVE_S = 0.5
TARGET_CLI_S = 1.5
TARGET_ENUM_RATIO = 100.0
TARGET_ENUM_AT_S = 10.0
TARGET_1M_SOLVE_S = 10.0
TARGET_1M_SOLVE_OVER_READ = 2.0
TARGET_MC_PER_S = 10e6
TARGET_PEAK_BYTES = 1 << 30

#: Spec used for the generated catalogs (oracle and scaling sections).
WORKLOAD_SPEC = os.path.join(REPO, "examples", "motor_shunt.yaml")
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


def bench_examples(runs: int, names: Sequence[str] | None) -> list[dict[str, Any]]:
    """``pick`` (top 10, default time limit) on every bundled example, on the catalogs the
    example names (the built-in catalog; the ``_stock`` variants add the house stock)."""
    from optimizer.solve.search import pick
    from optimizer.verify import verify

    rows = []
    paths = sorted(glob.glob(os.path.join(REPO, "examples", "*.yaml")))
    for path in paths:
        name = os.path.basename(path)[:-5]
        if name.endswith("_networks") or (names is not None and name not in names):
            continue
        spec = load_spec(path)
        catalog = spec_catalog(spec)
        walls, solves, builds, verifies, statuses = [], [], [], [], []
        wanted = runs
        k = 0
        while k < wanted:
            wall, result = timed(pick, spec, catalog, verify, top=10, time_limit_s=TIME_LIMIT[0])
            walls.append(wall)
            solves.append(result.solve_seconds)
            builds.append(result.build_seconds)
            verifies.append(result.verify_seconds)
            statuses.append(result.status.value)
            if k == 0 and wall * runs > EXAMPLE_BUDGET_S:
                wanted = max(1, min(runs, int(EXAMPLE_BUDGET_S // wall)))
            k += 1
        rows.append(
            {
                "example": name,
                "runs": len(walls),
                "status": statuses[-1],
                "ranked": len(result.ranked),
                "pick_s": median(walls),
                "cp_sat_s": median(solves),
                "build_s": median(builds),
                "verify_s": median(verifies),
            }
        )
    return rows


def cli_has_pick() -> bool:
    proc = subprocess.run(
        [sys.executable, "-m", "optimizer", "pick", "--help"],
        capture_output=True, cwd=REPO, check=False,
    )  # fmt: skip
    return proc.returncode == 0


def bench_cli(runs: int, example: str) -> list[dict[str, Any]]:
    """Whole wall time (interpreter start, imports, catalogs, search, report) of the CLI, as an
    installed package runs: with its bytecode cached. One untimed warm-up run writes the cache
    (``PYTHONDONTWRITEBYTECODE``, if the environment sets it, is dropped for these runs), so the
    figure does not include compiling the package's sources on every start."""
    commands = [["spec", "validate", example]]
    if cli_has_pick():
        commands.append(["pick", example, "--top", "10"])
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    rows = []
    for args in commands:
        walls, codes = [], []
        for attempt in range(runs + 1):
            wall, proc = timed(
                subprocess.run, [sys.executable, "-m", "optimizer", *args],
                capture_output=True, cwd=REPO, check=False, env=env,
            )  # fmt: skip
            if attempt == 0:
                continue  # warm-up: writes the bytecode cache
            walls.append(wall)
            codes.append(proc.returncode)
        rows.append(
            {
                "command": "python -m optimizer "
                + " ".join(os.path.relpath(a, REPO) if os.path.isabs(a) else a for a in args),
                "runs": runs,
                "exit_code": codes[-1],
                "wall_s": median(walls),
            }
        )
    return rows


def bench_oracle(runs: int, sizes: Sequence[int], stop_s: float, tmp: str) -> list[dict[str, Any]]:
    """CP-SAT ``pick`` (top 1) against ``reference_search`` (top 1) on growing generated
    catalogs, until the enumerator needs ``stop_s`` or more. The enumerator runs once per size
    (it is the slow side); the pick's figure is the median of ``runs``."""
    from optimizer.solve.enumerate import TooManyDesigns, reference_search
    from optimizer.solve.search import pick
    from optimizer.verify import verify

    base = workload_spec()
    rows = []
    for n in sizes:
        path = os.path.join(tmp, f"oracle_{n}.csv")
        write_csv(oracle_frame(n, seed=n, gain=base.requirements.gain), path)
        spec = with_catalog(base, [path], builtin=False)
        catalog = spec_catalog(spec)
        try:
            enum_s, ref = timed(
                reference_search, spec, catalog, verify, top=1, max_designs=ORACLE_MAX_DESIGNS
            )
        except TooManyDesigns as exc:
            rows.append({"parts": n, "note": f"enumerator refused: {exc.count:,} designs"})
            break
        picks = []
        for _ in range(runs):
            wall, result = timed(pick, spec, catalog, verify, top=1, time_limit_s=TIME_LIMIT[0])
            picks.append(wall)
        ref_cost = ref.ranked[0][0].total if ref.ranked else None
        pick_cost = result.ranked[0].cost.total if result.ranked else None
        agree = (ref_cost is None and pick_cost is None) or (
            ref_cost is not None
            and pick_cost is not None
            and math.isclose(ref_cost, pick_cost, rel_tol=1e-9, abs_tol=1e-12)
        )
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
                "pick_status": result.status.value,
                "agree": agree,
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
    peak RSS."""
    from optimizer.solve.search import pick
    from optimizer.verify import verify

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
        picks.append(wall)
        cp_sat.append(result.solve_seconds)
        builds.append(result.build_seconds)
        verifies.append(result.verify_seconds)
        if len(picks) == 1 and wall * runs > EXAMPLE_BUDGET_S:
            wanted = max(1, min(runs, int(EXAMPLE_BUDGET_S // wall)))
    # The cheapest design alone (top 1), once: the time to the answer an engineer needs first.
    first_s, first = timed(pick, spec, catalog, verify, top=1, time_limit_s=TIME_LIMIT[0])
    peak_bytes = peak_rss_bytes()
    return {
        "runs": runs,
        "pick_runs": len(picks),
        "top1_s": first_s,
        "top1_status": first.status.value,
        "read_s": median(reads),
        "pick_s": median(picks),
        "cp_sat_s": median(cp_sat),
        "build_s": median(builds),
        "verify_s": median(verifies),
        "status": result.status.value,
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
    process (peak RSS is that child's). A child that runs past ``timeout_s`` is killed and the
    larger sizes are skipped."""
    rows: list[dict[str, Any]] = []
    for n in sizes:
        if rows and "timeout_s" in rows[-1]:
            rows.append({"parts": n, "error": "skipped (a smaller size timed out)"})
            continue
        path = os.path.join(tmp, f"scale_{n}.csv")
        write_s, _ = timed(write_csv, scaling_frame(n, 7, per_part_costs), path)
        n_runs = big_runs if n >= 1_000_000 else runs
        try:
            proc = subprocess.run(
                [sys.executable, os.path.abspath(__file__), "--child-scale", path,
                 "--runs", str(n_runs),
             *(["--time-limit", str(TIME_LIMIT[0])] if TIME_LIMIT[0] else [])],
                capture_output=True, text=True, cwd=REPO, check=False, timeout=timeout_s,
            )  # fmt: skip
        except subprocess.TimeoutExpired:
            rows.append(
                {"parts": n, "timeout_s": timeout_s,
                 "error": f"child killed after {timeout_s:g} s (read + {n_runs} pick(s))"}
            )  # fmt: skip
            os.remove(path)
            continue
        if proc.returncode != 0:
            rows.append({"parts": n, "error": proc.stderr.strip().splitlines()[-1:]})
            continue
        row = {"parts": n, "csv_bytes": os.path.getsize(path), "write_s": write_s}
        row.update(json.loads(proc.stdout.strip().splitlines()[-1]))
        row["pick_over_read"] = row["pick_s"] / row["read_s"]
        row["top1_over_read"] = row["top1_s"] / row["read_s"]
        rows.append(row)
        os.remove(path)
    return rows


def bench_montecarlo(runs: int, samples: int) -> dict[str, Any]:
    """Throughput of :func:`optimizer.analysis.montecarlo.kernel` on one core: ``samples``
    resistor sets (an ``(4, n)`` array transposed, as the module lays them out) at one corner."""
    from optimizer.analysis.montecarlo import kernel

    rng = np.random.default_rng(3)
    nominal = np.array([1e3, 20e3, 1e3, 20e3])
    r = (nominal[:, None] * (1.0 + 1e-3 * rng.standard_normal((4, samples)))).T
    kernel(r[:1000], 0.05, 0.1, 0.5, 1e5, 1.0, 1e6)  # warm-up
    times = [timed(lambda: kernel(r, 0.05, 0.1, 0.5, 1e5, 1.0, 1e6))[0] for _ in range(runs)]
    t = median(times)
    return {"samples": samples, "runs": runs, "kernel_s": t, "samples_per_s": samples / t}


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
    """Each target with the measured figure and the distance (measured / target)."""
    out: list[dict[str, Any]] = []

    def add(name: str, measured: float | None, target: float, higher_is_better: bool) -> None:
        if measured is None:
            out.append({"target": name, "measured": None, "goal": target, "met": None})
            return
        met = measured >= target if higher_is_better else measured <= target
        out.append(
            {"target": name, "measured": measured, "goal": target,
             "measured/goal": measured / target, "met": met}
        )  # fmt: skip

    examples = [r for r in result.get("examples", []) if r["status"] != "infeasible"]
    if examples:
        add("worst example pick (s) <= 0.5", max(r["pick_s"] for r in examples),
            TARGET_SOLVE_S, False)  # fmt: skip
    for row in result.get("cli", []):
        add(f"CLI wall (s) <= 1.5: {row['command'].split(' ', 3)[3]}", row["wall_s"],
            TARGET_CLI_S, False)  # fmt: skip
    oracle = [r for r in result.get("oracle", []) if "ratio" in r]
    if oracle:
        last = oracle[-1]
        add(f"enumerator/pick at {last['parts']} parts ({last['enumerator_s']:.1f} s) >= 100",
            last["ratio"], TARGET_ENUM_RATIO, True)  # fmt: skip
    scaling = [r for r in result.get("scaling", []) if "pick_s" in r]
    if scaling:
        big = scaling[-1]
        add(f"pick at {big['parts']} parts (s) <= 10", big["pick_s"], TARGET_1M_SOLVE_S, False)
        add(f"pick/read at {big['parts']} parts <= 2", big["pick_over_read"],
            TARGET_1M_SOLVE_OVER_READ, False)  # fmt: skip
        add(f"pick, top 1, at {big['parts']} parts (s) <= 10", big["top1_s"],
            TARGET_1M_SOLVE_S, False)  # fmt: skip
        add(f"pick/read, top 1, at {big['parts']} parts <= 2", big["top1_over_read"],
            TARGET_1M_SOLVE_OVER_READ, False)  # fmt: skip
        add(f"peak RSS at {big['parts']} parts (GiB) <= 1", big["peak_rss_bytes"] / 2**30,
            TARGET_PEAK_BYTES / 2**30, False)  # fmt: skip
    mc = result.get("montecarlo")
    if mc:
        add("MC kernel samples/s >= 1e7", mc["samples_per_s"], TARGET_MC_PER_S, True)
    return out


def parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="1 run, small sizes (smoke use)")
    parser.add_argument("--runs", type=int, default=None, help="runs per figure (default 5)")
    parser.add_argument("--json", metavar="OUT", help="write the figures as JSON to OUT")
    parser.add_argument(
        "--sections", default="examples,cli,oracle,scaling,montecarlo",
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
    parser.add_argument("--child-scale", metavar="CSV", help=argparse.SUPPRESS)
    return parser.parse_args(argv)


def main(argv: Sequence[str] | None = None) -> int:
    args = parse_args(argv)
    TIME_LIMIT[0] = args.time_limit
    if args.child_scale:
        print(json.dumps(scale_child(args.child_scale, args.runs or 1)))
        return 0
    quick = args.quick
    runs = args.runs or (1 if quick else 5)
    sections = set(args.sections.split(","))
    names = args.examples.split(",") if args.examples else None
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
    result: dict[str, Any] = {"machine": machine(), "runs": runs, "quick": quick}
    command = "python tests/benchmarks/bench_quartet.py " + " ".join(
        sys.argv[1:] if argv is None else argv
    )
    result["command"] = command.strip()
    print(f"Quartet benchmark ({'quick' if quick else 'full'}; medians of {runs} run(s))")
    print(json.dumps(result["machine"]))
    with tempfile.TemporaryDirectory(prefix="quartet-bench-") as tmp:
        if "examples" in sections:
            result["examples"] = bench_examples(runs, names)
            print(table("\npick on the bundled examples (top 10; catalogs as each example names)",
                        result["examples"],
                        ["example", "runs", "status", "ranked", "pick_s", "cp_sat_s",
                         "build_s", "verify_s"]))  # fmt: skip
        if "cli" in sections:
            example = os.path.join(REPO, "examples", "motor_shunt.yaml")
            result["cli"] = bench_cli(runs, example)
            print(table("\nCLI wall time (new interpreter, imports included)",
                        result["cli"], ["command", "runs", "exit_code", "wall_s"]))  # fmt: skip
        if "oracle" in sections:
            result["oracle"] = bench_oracle(runs, oracle_sizes, stop_s, tmp)
            print(table(f"\nCP-SAT pick vs the exhaustive enumerator (top 1; enumerator 1 run; "
                        f"until it needs {stop_s:g} s)", result["oracle"],
                        ["parts", "designs", "verified", "enumerator_s", "pick_s", "ratio",
                         "pick_status", "agree", "note"]))  # fmt: skip
        if "scaling" in sections:
            timeout_s = args.scale_timeout_s or (60.0 if quick else 200.0)
            result["scaling"] = bench_scaling(
                runs, scale_sizes, big_runs, tmp, timeout_s, args.per_part_costs
            )
            print(table(f"\nScaling on generated catalogs (one child process per size; "
                        f"{big_runs} run(s) at 1M parts)", result["scaling"],
                        ["parts", "runs", "pick_runs", "read_s", "pick_s", "cp_sat_s", "build_s",
                         "verify_s", "pick_over_read", "status", "top1_s", "top1_status",
                         "top1_over_read", "peak_rss_bytes", "error"]))  # fmt: skip
        if "montecarlo" in sections:
            result["montecarlo"] = bench_montecarlo(runs, mc_samples)
            print(table("\nMonte-Carlo kernel (one core)", [result["montecarlo"]],
                        ["samples", "runs", "kernel_s", "samples_per_s"]))  # fmt: skip
    result["targets"] = targets(result)
    result["total_s"] = time.perf_counter() - started
    print(table("\nTargets (measured/goal: below 1 is better for times and memory, above 1 for "
                "rates)", result["targets"], ["target", "measured", "goal", "measured/goal",
                                              "met"]))  # fmt: skip
    print(f"\ntotal {result['total_s']:.1f} s")
    if args.json:
        with open(args.json, "w", encoding="utf-8") as handle:
            json.dump(result, handle, indent=2)
            handle.write("\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
