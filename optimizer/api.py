"""Quartet from Python: load a spec and catalogs, pick, check, sweep.

The same steps the command line takes, with the defaults it uses::

    import optimizer

    spec = optimizer.load_spec("examples/motor_shunt.yaml")
    result = optimizer.pick(spec)                  # the spec's catalogs and the built-in ones
    best = result.ranked[0]
    print(best.cost.total, [p.part.part_id for p in best.design.placements])
    verdict = optimizer.check(best.design, spec)   # the exact check, every requirement
    assert verdict.passed

Nothing here prints or writes files; the results are the frozen dataclasses the command line
renders (:class:`PickResult`, :class:`Verification`, :class:`SweepResult`).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Sequence

from .catalog import Catalog, load_catalogs
from .design import Design
from .solve import search
from .solve.search import PickResult
from .spec import Spec
from .specfile import load_spec
from .sweep import SweepAxis, SweepResult
from .sweep import sweep as _sweep
from .verify import Verification, verify, verify_candidate

__all__ = [
    "PickResult",
    "SweepResult",
    "Verification",
    "check",
    "load_catalogs",
    "load_spec",
    "pick",
    "spec_catalogs",
    "sweep",
]


def spec_catalogs(spec: Spec, extra: Sequence[str] = ()) -> Catalog:
    """The catalogs a spec names (``preferences.catalogs``), then the ``extra`` files (a file
    named twice, under any path, is read once), plus the built-in catalogs unless the spec
    says ``builtin_catalogs: false``. The reading notes are in :attr:`Catalog.notes`."""
    paths: dict[str, str] = {}
    for path in (*spec.preferences.catalogs, *extra):
        paths.setdefault(os.path.realpath(path), path)
    return load_catalogs(list(paths.values()), spec.preferences.use_builtin_catalogs)


def pick(
    spec: Spec,
    catalog: Catalog | None = None,
    *,
    top: int | None = None,
    time_limit_s: float | None = None,
    distinct: bool = True,
) -> PickResult:
    """The ``top`` cheapest choices (the spec's ``alternatives`` by default) that pass the exact
    check, from ``catalog`` (by default :func:`spec_catalogs` of the spec), best first, with
    the search's status (optimal, best found, infeasible, out of time). ``distinct`` (as the
    command line ranks): ``top`` counts distinct choices and ``ranked`` holds every member of
    each, numbered in ``choices``; False counts single designs."""
    chosen = catalog if catalog is not None else spec_catalogs(spec)
    return search.pick(
        spec, chosen, verify_candidate, top=top, time_limit_s=time_limit_s, distinct=distinct
    )


def check(
    design: Design, spec: Spec, *, statistics: bool | None = None, samples: int | None = None
) -> Verification:
    """The exact check of ``design`` against ``spec``: every requirement with its margin, the
    worst case, the Monte Carlo (always on the yield basis; elsewhere when ``statistics``),
    the other checks and the safety cautions."""
    return verify(design, spec, statistics=statistics, samples=samples)


def sweep(
    spec: Spec,
    levels: Sequence[float],
    *,
    axis: SweepAxis = "cmrr",
    catalog: Catalog | None = None,
    time_limit_s: float = 30.0,
    progress: Callable[[int, float], None] | None = None,
) -> SweepResult:
    """The cheapest discrete and network designs at each level: CMRR floors in dB
    (``axis="cmrr"``) or gain accuracies as fractions (``"gain_accuracy"``)."""
    chosen = catalog if catalog is not None else spec_catalogs(spec)
    return _sweep(spec, chosen, axis, levels, time_limit_s=time_limit_s, progress=progress)
